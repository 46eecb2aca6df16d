"""'Hold time': time for a vessel's contents to cool to 'Min temperature', at the coldest named condition."""

from __future__ import annotations

import numpy as np

from .. import process
from .freeze_protection import FreezeProtection


class HoldTime(FreezeProtection):
    """Time for a vessel's contents to cool to 'Min temperature', at the coldest named condition,
    its linked lines ('Part of') at their own chosen systems: judged once they are chosen."""

    name, order, columns = "hold time", 5, ("hold_time", "contents_volume", "min_temperature", "part_of")
    need, late = "hold", True

    def check(self, L, cells):
        if np.isfinite(L.process.hold):
            process.hold_inputs(L, cells.num, cells.err)

    def given(self, ctx):
        g = np.array([ctx.ok[i] and np.isfinite(L.process.hold) and np.isfinite(L.process.volume)
                      and np.isfinite(L.process.t_limit) for i, L in enumerate(ctx.lines)])
        return g if g.any() else None

    def measure(self, ctx, given):
        idx = np.flatnonzero(given)
        out = np.full(ctx.total.shape, np.nan)
        out[idx] = process.cool_time(ctx, idx, ctx.cand[idx], ctx.picked, process.SELECT_NODES)
        return out

    def meets(self, ctx, given, measure):
        idx = np.flatnonzero(given)
        met = np.zeros(ctx.total.shape, dtype=bool)
        met[idx] = measure[idx] >= np.array([ctx.lines[i].process.hold for i in idx])[:, None]
        return met

    def unmet(self, ctx, j, i, last, thick, names):
        return (f"'Hold time' is not met by any sold thickness: the contents cool in {j.value[i, last] / 3600:.1f} h "
                f"at {thick}, the thickest of {names}"), ctx.starts[i] + process.coldest(ctx.lines[i])
