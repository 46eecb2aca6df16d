"""'Max surface temperature': the surface at every named condition stays at or below it: on its
sun-facing side in full sun, at the condition's wind and (unless the 'Touch check in still air'
setting is no) with no wind, as a person touches a line on a calm day (the 'touch' surface of
:func:`lagsheet.design.sun.grids`)."""

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
        return ctx.ts("touch")

    def case_meets(self, ctx, measure):
        return measure <= ctx.per_case(ctx.t.get("max_surface_temperature")) + 1e-9

    def meets(self, ctx, given, measure):
        return ctx.all_cases(self.case_meets(ctx, measure))

    def margin(self, ctx, j, pick, case_pick):
        return finite(j.given, ctx.t.get("max_surface_temperature") - worst_at(ctx, j.worst, case_pick),
                       "difference")

    def unmet(self, ctx, j, i, last, thick, names):
        us, ts = ctx.us, ctx.ts("touch")
        k = max(ctx.cases_of(i), key=lambda k: ts[k, last])
        limit = ctx.t.get("max_surface_temperature")[i]
        return (f"'Max surface temperature' {show(limit, 'temperature', us)} is not met by any sold thickness: "
                f"{show(ts[k, last], 'temperature', us)} at {thick}{ctx.at(i, k)}, the thickest of {names}"
                + self._sun_hint(ctx, k, last)), k

    @staticmethod
    def _sun_hint(ctx, k, last) -> str:
        """On a sunny case: how hot the sun alone makes the surface, and what lowers it."""
        sunny, design = ctx.ts("sun")[k, last], ctx.c.t_surface[k, last]
        if not sunny > design + 1e-6:
            return ""
        return (f" (the sun raises its sun-facing side by {show(sunny - design, 'difference', ctx.us)} at "
                "the condition's wind: a finish of lower 'Solar absorptance', or shade, lowers it)")
