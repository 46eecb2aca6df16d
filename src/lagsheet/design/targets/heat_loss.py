"""'Max heat loss': per metre of line, or per square metre of outer surface, at every named condition."""

from __future__ import annotations

import numpy as np

from ...physics.layers import CYLINDER
from ...workbook.display import show
from .base import Target, finite, worst_at


class HeatLoss(Target):
    name, order, columns = "heat loss", 2, ("max_heat_loss",)
    monotone = False  # below the critical radius a thicker system loses more (the 'more-than-bare' note)

    def check(self, L, cells):
        q = cells.t.columns.get("max_heat_loss")
        if (q is not None and np.isfinite(cells.num("max_heat_loss")) and q.si_of(cells.i) != "W/m**2"
                and L.geometry != CYLINDER):
            cells.err("heat-loss-unit", "max_heat_loss",
                      "'Max heat loss' is per length (W/m) but this line is flat or a sphere; type its limit "
                      "with its unit, e.g. '60 W/m²'")

    @staticmethod
    def per_area(ctx) -> np.ndarray:
        """Per line: is its 'Max heat loss' per square metre of outer surface (else per metre)?
        (A per-length limit on a flat line is an input error: see lines.resolve.)"""
        col = ctx.t.columns["max_heat_loss"]
        return np.array([col.si_of(i) == "W/m**2" for i in range(ctx.n)], dtype=bool)

    def given(self, ctx):
        qmax = ctx.t.get("max_heat_loss")
        return None if qmax is None else np.isfinite(qmax)

    def measure(self, ctx, given):
        return np.where(ctx.per_case(self.per_area(ctx)), np.abs(ctx.c.q), np.abs(ctx.c.heat_rate))

    def meets(self, ctx, given, measure):
        return ctx.all_cases(measure <= ctx.per_case(ctx.t.get("max_heat_loss")) * (1 + 1e-12))

    def margin(self, ctx, j, pick, case_pick):
        kinds = ["per_area" if a else "per_length" for a in self.per_area(ctx)]
        return finite(j.given, ctx.t.get("max_heat_loss") - worst_at(ctx, j.worst, case_pick), kinds)

    def unmet(self, ctx, j, i, last, thick, names):
        us, c = ctx.us, ctx.c
        per_area = ctx.t.columns["max_heat_loss"].si_of(i) == "W/m**2"
        kind = "per_area" if per_area else "per_length"
        size = np.abs(c.q[:, last]) if per_area else np.abs(c.heat_rate[:, last])
        k = max(ctx.cases_of(i), key=lambda k: size[k])
        limit = ctx.t.get("max_heat_loss")[i]
        return (f"'Max heat loss' {show(limit, kind, us)} is not met by any sold thickness: "
                f"{show(size[k], kind, us)} at {thick}{ctx.at(i, k)}, the thickest of {names}"), k
