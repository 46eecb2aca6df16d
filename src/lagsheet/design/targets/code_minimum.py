"""'Code': the total thickness is at least the line's code minimum (:mod:`lagsheet.design.codes`),
the code's thickness corrected to the line's material; the first sold size at or above it."""

from __future__ import annotations

import numpy as np

from ...io.table import fold
from ...workbook.display import show
from .. import codes
from .base import Target


class CodeMinimum(Target):
    name, order, columns = "code minimum", 8, ("code",)

    def check(self, L, cells):


        label = cells.text("code")
        if label is None or cells.inputs is None:
            return
        inputs = cells.inputs
        if fold(label) in inputs.bad_codes:
            cells.err("bad-code", "code", f"code {label!r} has a cell in error on its table "
                      f"({inputs.bad_codes[fold(label)]}); fix it there")
            return
        code = inputs.codes.get(fold(label))
        if code is None:
            names = ", ".join(sorted(c.name for c in inputs.codes.values()))
            cells.err("unknown-code", "code", f"code {label!r} is not known; use one of: {names}, or add its "
                      "table to the Codes sheet")
            return
        codes.apply(L, cells, code)

    def given(self, ctx):
        if ctx.t.get("code") is None:
            return None
        return np.array([np.isfinite(L.code_thickness) for L in ctx.lines])

    def _floor(self, ctx):
        return np.array([L.code_thickness for L in ctx.lines])

    def meets(self, ctx, given, measure):
        return ctx.total >= self._floor(ctx)[:, None] - 1e-9

    def margin(self, ctx, j, pick, case_pick):
        floor = self._floor(ctx)
        return {int(i): (float(ctx.total[i, pick[i]] - floor[i]), "thickness") for i in np.flatnonzero(j.given)}

    def unmet(self, ctx, j, i, last, thick, names):
        L = ctx.lines[i]
        return (f"the code minimum {show(L.code_thickness, 'thickness', ctx.us)} ({L.code_row.where}, corrected "
                f"to {names}) is more than the thickest sold {thick}"), ctx.starts[i]
