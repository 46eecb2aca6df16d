"""'Max heat loss': per metre of line, or per square metre of outer surface, at every named condition."""

from __future__ import annotations

import numpy as np

from ...physics.candidates import per_line
from ...physics.layers import CYLINDER, FLAT, SPHERE
from ...physics.surface import linearised_h
from ...workbook.display import show
from .base import Target, finite, worst_at

# A search may bisect 'Max heat loss' on a cylinder or sphere whose thinnest candidate's outer
# radius is at least this many times the critical radius at both ends of its candidates. With a
# constant h the loss falls with thickness beyond r_c = k/h (2k/h for a sphere); h falling with
# the diameter as d^-a (a ≤ 1/2 for the free and forced correlations used: Churchill-Chu 1/4,
# Churchill-Bernstein at most about 1/2) moves it to k/(h(1 - a)) ≤ 2k/h; 3 leaves room for k(T)
# and h(T) changing along the candidates. (Derived here from the closed form; checked against
# the full scan in tests/test_search.py.)
CRITICAL_FACTOR = 3.0


class HeatLoss(Target):
    name, order, columns = "heat loss", 2, ("max_heat_loss",)
    monotone = False  # below the critical radius a thicker system loses more (the 'more-than-bare' note)

    def monotone_lines(self, ctx, ends):
        """Flat lines (a thicker layer only adds resistance), and cylinders and spheres well
        beyond the critical radius (:data:`CRITICAL_FACTOR`), judged at every case."""
        c, table = ctx.c, ctx.table
        at = np.arange(len(ctx.case_line))
        rc = np.zeros(len(at))
        for col in (ends[:, 0][ctx.case_line], ends[:, 1][ctx.case_line]):
            faces = c.faces[at, col]
            done = np.isfinite(faces).all(axis=1) & np.isfinite(c.r_outer[at, col])
            rc[~done] = np.inf
            s, f, k = per_line(ctx.cases, at[done]), faces[done], c.material[done, 0]
            k = table.mean_conductivity(k, f[:, 0], f[:, 1])
            h = linearised_h(s.shape, f[:, -1], s.t_air, s.t_surroundings, s.wind, s.emissivity,
                             2 * c.r_outer[at, col][done], s.height, s.flow_length)
            rc[done] = np.fmax(rc[done], np.nan_to_num(np.where(s.geometry == SPHERE, 2.0, 1.0) * k / h, nan=np.inf))
        worst = np.maximum.reduceat(rc, ctx.starts)
        s = ctx.cases
        thinnest = c.r_outer[ctx.starts, ends[:, 0]]
        return (s.geometry[ctx.starts] == FLAT) | (thinnest >= CRITICAL_FACTOR * worst)

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
        if "per_area" not in ctx.memo:
            col = ctx.t.columns["max_heat_loss"]
            ctx.memo["per_area"] = np.array([col.si_of(i) == "W/m**2" for i in range(ctx.n)], dtype=bool)
        return ctx.memo["per_area"]

    def given(self, ctx):
        qmax = ctx.t.get("max_heat_loss")
        return None if qmax is None else np.isfinite(qmax)

    def measure(self, ctx, given):
        return np.where(ctx.per_case(self.per_area(ctx)), np.abs(ctx.c.q), np.abs(ctx.c.heat_rate))

    def case_meets(self, ctx, measure):
        return measure <= ctx.per_case(ctx.t.get("max_heat_loss")) * (1 + 1e-12)

    def meets(self, ctx, given, measure):
        return ctx.all_cases(self.case_meets(ctx, measure))

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
