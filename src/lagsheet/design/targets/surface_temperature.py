"""'Max surface temperature': the surface at every named condition stays at or below it."""

from __future__ import annotations

import numpy as np

from ...workbook.display import show
from .base import Target, finite, worst_at


class SurfaceTemperature(Target):
    name, order, columns = "surface temperature", 0, ("max_surface_temperature",)

    def given(self, ctx):
        tmax = ctx.t.get("max_surface_temperature")
        return None if tmax is None else np.isfinite(tmax)

    def measure(self, ctx, given):
        return ctx.c.t_surface

    def case_meets(self, ctx, measure):
        return measure <= ctx.per_case(ctx.t.get("max_surface_temperature")) + 1e-9

    def meets(self, ctx, given, measure):
        return ctx.all_cases(self.case_meets(ctx, measure))

    def margin(self, ctx, j, pick, case_pick):
        return finite(j.given, ctx.t.get("max_surface_temperature") - worst_at(ctx, j.worst, case_pick),
                       "difference")

    def unmet(self, ctx, j, i, last, thick, names):
        us, ts = ctx.us, ctx.c.t_surface
        k = max(ctx.cases_of(i), key=lambda k: ts[k, last])
        limit = ctx.t.get("max_surface_temperature")[i]
        return (f"'Max surface temperature' {show(limit, 'temperature', us)} is not met by any sold thickness: "
                f"{show(ts[k, last], 'temperature', us)} at {thick}{ctx.at(i, k)}, the thickest of {names}"), k
