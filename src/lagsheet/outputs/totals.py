"""The one way lagsheet adds results up over lines (the JSON summary, the Summary sheet):
a line without a value (NaN) is left out, and :func:`covered` says how many lines a total holds."""

from __future__ import annotations

import numpy as np


def total(values: np.ndarray, rows=None, *, sign: int = 0) -> float:
    """Σ of ``values`` over ``rows`` (all when None), blanks left out; ``sign`` +1 or -1 adds only
    the positive or the negative ones (heat lost and heat gained), 0 adds every one."""
    v = np.asarray(values, dtype=float)
    v = v if rows is None else v[rows]
    v = v[np.isfinite(v)]
    if sign:
        v = v[v * sign > 0]
    return float(v.sum())


def covered(values: np.ndarray, rows=None) -> int:
    """How many of ``rows`` have a value to add up."""
    v = np.asarray(values, dtype=float)
    return int(np.isfinite(v if rows is None else v[rows]).sum())
