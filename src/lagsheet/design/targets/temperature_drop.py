"""'Max temperature drop' of a flowing line, every named condition."""

from __future__ import annotations

import numpy as np

from ...workbook.display import show
from .. import process
from .base import ProcessTarget


class TemperatureDrop(ProcessTarget):
    """A flowing line's inlet-to-outlet change, closed form with U′ at the inlet, every named condition."""

    name, order, columns = "temperature drop", 3, ("max_temperature_drop", "flow_rate", "fluid")
    need, sign, kind = "max_drop", -1, "difference"

    def check(self, L, cells):
        process.drop_inputs(L, cells.err)

    def given(self, ctx):
        g = np.array([ctx.ok[i] and L.process.flowing and np.isfinite(L.process.max_drop)
                      for i, L in enumerate(ctx.lines)])
        return g if g.any() else None

    def measure(self, ctx, given):
        return process.closed_drop(ctx.lines, ctx.cases, ctx.case_line, ctx.c)

    def meets(self, ctx, given, measure):
        limit = ctx.per_case(np.array([L.process.max_drop for L in ctx.lines]))
        return ctx.all_cases(np.where(np.isfinite(measure), measure <= limit + 1e-9, False))

    def value(self, ctx, given, measure):
        return np.maximum.reduceat(np.nan_to_num(measure, nan=np.inf), ctx.starts, axis=0)

    def unmet(self, ctx, j, i, last, thick, names):
        return (f"'Max temperature drop' is not met by any sold thickness: the temperature changes by "
                f"{show(j.value[i, last], 'difference', ctx.us)} at {thick}, the thickest of {names}"), ctx.starts[i]
