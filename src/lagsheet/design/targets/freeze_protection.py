"""'Freeze protection': time for standing water to freeze, at the coldest named condition."""

from __future__ import annotations

import numpy as np

from .. import process
from .base import ProcessTarget


class FreezeProtection(ProcessTarget):
    """Time for standing water to freeze, at the coldest named condition."""

    name, order, columns = "freeze protection", 4, ("freeze_protection", "inside_diameter", "schedule")
    need, coldest, judged_at = "freeze", True, "at the coldest named condition, "

    def check(self, L, cells):
        if np.isfinite(L.process.freeze):
            process.freeze_inputs(cells.t, cells.i, L, cells.num, cells.text, cells.err, cells.warn)

    def given(self, ctx):
        g = np.array([ctx.ok[i] and np.isfinite(L.process.freeze) and np.isfinite(L.process.bore)
                      for i, L in enumerate(ctx.lines)])
        return g if g.any() else None

    def measure(self, ctx, given):
        idx = np.flatnonzero(given)
        out = np.full(ctx.total.shape, np.nan)
        out[idx] = process.freeze_time(ctx, idx, ctx.cand[idx], process.SELECT_NODES)
        return out

    def meets(self, ctx, given, measure):
        idx = np.flatnonzero(given)
        met = np.zeros(ctx.total.shape, dtype=bool)
        met[idx] = measure[idx] >= np.array([ctx.lines[i].process.freeze for i in idx])[:, None]
        return met

    def value(self, ctx, given, measure):
        return measure

    def unmet(self, ctx, j, i, last, thick, names):
        return (f"'Freeze protection' is not met by any sold thickness: water freezes in "
                f"{j.value[i, last] / 3600:.1f} h at {thick}, the thickest of {names}; add heat tracing"), ctx.starts[i] + process.coldest(ctx.lines[i])
