"""'Prevent condensation': the surface stays above the dew point plus the margin, every named condition,
judged in the shade (the sun never keeps a cold surface dry: it may set or be clouded over)."""

from __future__ import annotations

import numpy as np

from ...workbook.display import show
from .base import Target, finite, worst_at


class Condensation(Target):
    """The surface stays at or above the dew point plus the 'Condensation margin' setting."""

    name, order, columns = "condensation", 1, ("prevent_condensation",)

    def given(self, ctx):
        prevent = ctx.t.get("prevent_condensation")
        return None if prevent is None else np.array([v is True for v in prevent])

    def measure(self, ctx, given):
        return -(ctx.ts("shade") - (ctx.dew + ctx.margin)[:, None])  # how far below; larger is worse

    def case_meets(self, ctx, measure):
        return -measure >= -1e-9

    def meets(self, ctx, given, measure):
        return ctx.all_cases(self.case_meets(ctx, measure))

    def margin(self, ctx, j, pick, case_pick):
        return finite(j.given, -worst_at(ctx, j.worst, case_pick), "difference")

    def unmet(self, ctx, j, i, last, thick, names):
        us, ts, dew = ctx.us, ctx.ts("shade"), ctx.dew
        k = min(ctx.cases_of(i), key=lambda k: ts[k, last] - dew[k])
        return (f"condensation is not prevented by any sold thickness: surface "
                f"{show(ts[k, last], 'temperature', us)} at {thick}{ctx.at(i, k)} against a dew "
                f"point of {show(dew[k], 'temperature', us)} plus {show(ctx.margin, 'difference', us)}"), k
