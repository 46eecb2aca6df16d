"""'Economic': among the systems that meet every target, the cheapest over its life."""

from __future__ import annotations

import numpy as np

from ...physics.balance import System
from .. import economics, process, tracing
from ..build import installed_cost
from .base import Context


class Economic:
    """Not a limit but a choice: an ``Economic`` line takes, among the systems that meet
    every target, the one with the lowest annualised cost: capital recovery factor ×
    installed cost + the energy bought in a year at the first named condition (a flowing
    line: the heat its fluid gives up along the line)."""

    name, columns = "economic", ("economic",)
    needs_fluid = False

    def check(self, L, cells):
        """'Economic' needs the cost per volume of its materials, the jacket and labour costs."""
        if not (L.economic and L.materials):
            return
        st = cells.settings
        missing = [f"'Cost per volume' of {m.name} (Materials sheet)" for m in L.materials
                   if not np.isfinite(m.cost_per_volume)]
        missing += [f"the setting {name!r}" for name, key in (("Jacket cost per area", "jacket_cost_per_area"),
                                                           ("Labour per layer", "labour_per_layer"))
                    if not np.isfinite(float(st[key]))]
        if missing:
            cells.err("economic-costs", "economic", "'Economic' needs " + ", ".join(missing) + "; give them, or "
                      "leave 'Economic' blank")

    def given(self, ctx: Context) -> np.ndarray:
        return np.array([L.economic for L in ctx.lines]) & ctx.ok

    def annualised(self, ctx: Context, base: System) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(annualised cost, installed cost) of every candidate (lines × candidates) and the
        operating hours of every line at its first named condition."""
        lines, st = ctx.lines, ctx.settings
        cost = installed_cost(lines, ctx.cand, base, st)
        whole = economics.whole_heat_flow(base.geometry, ctx.c.heat_rate[ctx.starts],
                                          np.array([L.length for L in lines]), np.array([L.area for L in lines]))
        whole = process.flowing_candidates(ctx, self.given(ctx), whole)
        whole = whole * tracing.loss_factor(lines)[:, None]  # fittings and thermal bridges, as reported
        hours = np.array([L.conditions[0].hours if ctx.ok[i] else 0.0 for i, L in enumerate(lines)])
        energy_cost = economics.energy_cost(whole, hours[:, None], st)
        crf = float(economics.capital_recovery_factor(float(st["discount_rate"]), float(st["service_life"])))
        return crf * cost + energy_cost, cost, hours

    @staticmethod
    def choose(feasible: np.ndarray, annualised: np.ndarray) -> np.ndarray:
        """Per line: the feasible candidate of the lowest annualised cost."""
        return np.argmin(np.where(feasible & np.isfinite(annualised), annualised, np.inf), axis=1)
