"""Two materials: the face between them stays within the outer material's limit."""

from __future__ import annotations

import numpy as np

from ...workbook.display import show
from .base import Target, finite, worst_at


class Interface(Target):
    """The face between two materials stays within the outer material's service limit."""

    name, order, columns = "interface", 6, ("outer_insulation",)
    monotone = False  # it follows the inner layer, not the total the candidates run by

    @staticmethod
    def limit(ctx) -> np.ndarray:
        return np.array([L.materials[1].max_temperature if len(L.materials) == 2 else np.inf for L in ctx.lines])

    def given(self, ctx):
        if ctx.slots != 2:
            return None
        return np.array([len(L.materials) == 2 for L in ctx.lines]) & ctx.ok

    def measure(self, ctx, given):
        return ctx.c.faces[:, :, 1]

    def meets(self, ctx, given, measure):
        return ctx.all_cases(measure <= ctx.per_case(self.limit(ctx)) + 1e-9)

    def margin(self, ctx, j, pick, case_pick):
        limit = np.array([L.materials[1].max_temperature if len(L.materials) == 2 else np.nan for L in ctx.lines])
        return finite(j.given, limit - worst_at(ctx, j.worst, case_pick), "difference")

    def unmet(self, ctx, j, i, last, thick, names):
        inner, outer = ctx.lines[i].materials
        return (f"no sold inner thickness of {inner.name} keeps the interface within "
                f"{show(outer.max_temperature, 'temperature', ctx.us)}, the limit of {outer.name}"), ctx.starts[i]
