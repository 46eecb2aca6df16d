"""A line's code minimum: the row of its ``Code`` table that covers it, corrected to its material.

The row is found by the line's fluid (operating) temperature and its diameter: the outside
diameter for tables by nominal size, the inside diameter for GEG ('Inside diameter', else
from 'Size' and 'Schedule', schedule 40 when blank, ASME B36.10M, as for process lines).

The row's thickness t holds for insulation of the row's rating conductivity k at its rating
mean temperature; for the line's material, whose design conductivity there is K (the
larger of its two layers'), the equivalent thickness on a pipe of outside radius r is
T = r[(1 + t/r)^(K/k) − 1]: the same heat loss per metre through the layer with the same
surface temperatures (ASHRAE 90.1's footnote, from memory; VDI 2055-1 for GEG). An ASHRAE
row gives a range of k: within it the table holds as it is, outside it k is the range's
upper end. A GEG line in outdoor air takes 200 % (its hot rows); a line counts as outdoor
when a condition it names has wind (speed above 0) or has 'outdoor' in its name.

Code minimums are for pipes and risers: another shape naming a code gets a note and no minimum.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from ..io.table import fold
from ..physics.layers import CYLINDER, MaterialTable
from ..workbook import library
from ..workbook.codes import INSIDE, Code, CodeRow
from ..workbook.display import show
from .process import DEFAULT_SCHEDULE

PIPE_WORDS = ("pipe", "riser")


def equivalent_thickness(t: float, r: float, k_rating: float, k_line: float) -> float:
    """T = r[(1 + t/r)^(K/k) − 1]: the thickness of conductivity K on outside radius r that
    passes the heat of t at k (equal log ratios, ln(1 + T/r) K⁻¹ = ln(1 + t/r) k⁻¹)."""
    return r * ((1.0 + t / r) ** (k_line / k_rating) - 1.0)


@lru_cache(maxsize=1024)
def _design_k(mean_temperatures: tuple, conductivities: tuple, t: float) -> float:
    """k [W/(m·K)] at ``t`` of a material's design curve, extended as the engine extends it."""
    table = MaterialTable.build({"m": (np.array(mean_temperatures), np.array(conductivities))})
    return float(table.conductivity(np.array([0]), np.array([t]))[0])


def line_k(materials, t: float) -> float:
    """K: the largest design conductivity of the line's layers at ``t`` [K] (the safe side)."""
    return max(_design_k(m.mean_temperatures, m.design_conductivities, t) for m in materials)


def outdoor(L) -> bool:
    return any(c.wind > 0 or "outdoor" in fold(c.name) for c in L.conditions)


def row_thickness(row: CodeRow, bore: float, outdoors: bool) -> float:
    """The row's thickness [m] as the code states it: GEG's 'equal to the inside diameter' and its
    200 % outdoors applied."""
    t = bore if math.isnan(row.thickness) else row.thickness
    return t * (row.outdoor if outdoors else 1.0)


def corrected(row: CodeRow, t: float, r: float, k_line: float) -> float:
    """The row's thickness ``t`` for conductivity ``k_line`` on outside radius ``r``."""
    if np.isfinite(row.k_low) and row.k_low - 1e-12 <= k_line <= row.k_rating + 1e-12:
        return t  # within the row's range of conductivity: the table as it is
    return equivalent_thickness(t, r, row.k_rating, k_line)


def find_row(code: Code, t_op: float, d: float) -> CodeRow | None:
    for row in code.rows:
        if row.t_min <= t_op < row.t_max and row.d_min <= d < row.d_max:
            return row
    return None


def bore_of(L, cells) -> tuple[float, str]:
    """The line's inside diameter [m] and '' , or (NaN, why it is not known)."""
    bore = cells.num("inside_diameter")
    if np.isfinite(bore):
        return bore, ""
    size, sch = cells.text("size"), cells.text("schedule")
    if size is None:
        return math.nan, "give 'Inside diameter', or 'Size' with 'Schedule'"
    wall = library.pipe_wall_thickness(size, sch or DEFAULT_SCHEDULE)
    if wall is None:
        return math.nan, (f"schedule {sch or DEFAULT_SCHEDULE!r} of size {size!r} is not in the table "
                          f"({', '.join(library.SCHEDULES)}); give 'Inside diameter'")
    if sch is None:
        cells.info("schedule-assumed", "schedule", f"'Schedule' is blank: schedule {DEFAULT_SCHEDULE} (ASME "
                   "B36.10M) taken for the inside diameter the code goes by")
    return 2 * L.r_inner - 2 * wall, ""


def apply(L, cells, code: Code) -> None:
    """Set ``L.code_thickness`` (the corrected thickness [m]) from ``code``, or note why not."""
    us = cells.inputs.us_units
    if L.word not in PIPE_WORDS or L.geometry != CYLINDER:
        cells.info("code-shape", "code", f"'Code' {code.name} is a table for pipes and risers: no code "
                   f"minimum for a {L.word}; give 'Min thickness' for it")
        return
    if not (np.isfinite(L.r_inner) and np.isfinite(L.t_op)) or not (L.materials or L.fixed):
        return  # the line's own errors say what is missing
    if code.basis == INSIDE:
        d, why = bore_of(L, cells)
        if not np.isfinite(d):
            cells.warn("code-no-bore", "inside_diameter", f"'Code' {code.name} goes by inside diameter: {why}; "
                       "no code minimum applied")
            return
    else:
        d = 2 * L.r_inner
    row = find_row(code, L.t_op, d)
    if row is None:
        what = "inside" if code.basis == INSIDE else "outside"
        cells.warn("code-no-row", "code", f"no row of code {code.name!r} covers a fluid at "
                   f"{show(L.t_op, 'temperature', us)} on {what} diameter {show(d, 'radius', us)}: "
                   "no code minimum applied; give 'Min thickness' or add a row on the Codes sheet")
        return
    t = row_thickness(row, d, outdoor(L))
    if not L.materials:  # a bare line ('Fixed thickness' 0): nothing to correct, and nothing meets it
        if t > 0:
            cells.warn("code-bare", "fixed_thickness", f"the bare line does not meet code {code.name!r}, which "
                       f"asks for {show(t, 'thickness', us)} at its rating conductivity ({row.where})")
        return
    k_line = line_k(L.materials, row.t_rating)
    L.code_thickness = corrected(row, t, L.r_inner, k_line)
    L.code_row = row
    L.code_basis = (code.name, t, k_line)
