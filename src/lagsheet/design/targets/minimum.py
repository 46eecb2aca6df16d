"""'Min thickness': the total thickness is at least it."""

from __future__ import annotations

import numpy as np

from ...workbook.display import show
from .base import Target


class Minimum(Target):
    name, order, columns = "minimum", 7, ("min_thickness",)

    def given(self, ctx):
        tmin = ctx.t.get("min_thickness")
        return None if tmin is None else np.isfinite(tmin)

    def meets(self, ctx, given, measure):
        return ctx.total >= ctx.t.get("min_thickness")[:, None] - 1e-9

    def margin(self, ctx, j, pick, case_pick):
        tmin = ctx.t.get("min_thickness")
        return {int(i): (float(ctx.total[i, pick[i]] - tmin[i]), "thickness") for i in np.flatnonzero(j.given)}

    def unmet(self, ctx, j, i, last, thick, names):
        tmin = ctx.t.get("min_thickness")[i]
        return (f"'Min thickness' {show(tmin, 'thickness', ctx.us)} is more than the thickest sold {thick} "
                f"of {names}"), ctx.starts[i]
