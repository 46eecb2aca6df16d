"""Minimum-thickness tables of energy codes: the built-in ones and the user's ``Codes`` sheet.

A table is rows of (fluid temperature range, size range, thickness, rating conductivity,
rating mean temperature). Ranges include their lower end and exclude their upper end;
an open end is ±inf. Sizes are compared as diameters: outside diameters for the tables by
nominal size (a nominal size stands for its outside diameter, ASME B36.10M, so a line given
by its outside diameter alone finds its row too), inside diameters for GEG.

Built in (data with their sources; :mod:`lagsheet.design.codes` applies them to a line):

``ASHRAE 90.1``
    ASHRAE/IES Standard 90.1-2016, minimum pipe insulation thickness, heating and
    cooling systems, by fluid temperature range and nominal pipe size; each row with its
    range of rating conductivity and its rating mean temperature. In the table's own units
    (°F, inches, Btu·in/(h·ft²·°F)) as gathered in the project's reference notes.
    The correction for another conductivity, T = r[(1 + t/r)^(K/k) − 1] (r the pipe's
    actual outside radius, t the table's thickness, K the material's conductivity at the
    row's rating mean temperature, k the upper end of the row's range; K within the range:
    the table as it is) is the standard's footnote from memory.
``GEG``
    Germany, Gebäudeenergiegesetz 2024, Anlage 8 (a public law): heat distribution and
    hot-water pipes at λ 0.035 W/(m·K) and 40 °C mean, by inside diameter: up to 22 mm
    20 mm; over 22 to 35 mm 30 mm; over 35 to 100 mm equal to the inside diameter; over
    100 mm 100 mm; 200 % for pipes in outdoor air. Cold distribution pipes: 9 mm up to
    22 mm inside diameter, 19 mm above (a trade press report of the 2024 amendment;
    verify against the law's text). For another λ the same log equivalence (VDI 2055-1).
    The law names the service (heat or cold distribution), not a temperature: lagsheet
    takes a fluid below 20 °C as cold (our choice, the usual indoor design air). Half the
    thickness in wall and ceiling penetrations is not applied (give 'Min thickness').
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..errors import Note
from ..io.table import Book, fold
from . import fields as schema
from . import library
from .tables import Table, read_table, unused_columns
from .units import UnitTextError, parse_quantity_text, to_si

OUTSIDE, INSIDE = "outside diameter", "inside diameter"  # what a table's sizes are
EDGE = 1e-9  # K or m: an upper end the code includes ('105–140 °F', 'up to 22 mm') lets itself in


@dataclass(frozen=True)
class CodeRow:
    t_min: float  # fluid temperature [K], inclusive (-inf: open)
    t_max: float  # [K], exclusive (inf: open)
    d_min: float  # diameter [m] on the code's basis, inclusive (0: open)
    d_max: float  # [m], exclusive (inf: open)
    thickness: float  # [m]; NaN: equal to the inside diameter (GEG)
    k_rating: float  # W/(m·K): the k of the correction (ASHRAE: the upper end of the row's range)
    t_rating: float  # rating mean temperature [K]
    k_low: float = math.nan  # the lower end of the row's range (ASHRAE); NaN: a single value
    outdoor: float = 1.0  # factor on the thickness for a line in outdoor air (GEG hot rows: 2)
    where: str = ""  # the Codes sheet cell of the row, or the built-in table's row


@dataclass(frozen=True)
class Code:
    name: str
    rows: tuple[CodeRow, ...]
    basis: str = OUTSIDE
    source: str = ""


def _f(x: float) -> float:
    return (x - 32.0) / 1.8 + 273.15


_BTU_IN = 0.1442279  # W/(m·K) per Btu·in/(h·ft²·°F) (NIST SP 811)
_IN = 0.0254  # m (exact)
_NPS = (None, 1.0, 1.5, 4.0, 8.0, None)  # ASHRAE size columns: <1, 1–<1½, 1½–<4, 4–<8, ≥8
# (label, low °F or None, high °F or None, k low, k high [Btu·in/(h·ft²·°F)], rating mean °F,
#  thickness per size column [in]); a low end marked 'above' excludes itself
_ASHRAE_ROWS = (
    ("heating above 350 °F", 350.0, None, 0.32, 0.34, 250.0, (4.5, 5, 5, 5, 5)),
    ("heating 251–350 °F", 250.0, 350.0, 0.29, 0.31, 200.0, (3, 4, 4.5, 4.5, 4.5)),
    ("heating 201–250 °F", 200.0, 250.0, 0.27, 0.30, 150.0, (2.5, 2.5, 2.5, 3, 3)),
    ("heating 141–200 °F", 140.0, 200.0, 0.25, 0.29, 125.0, (1.5, 1.5, 2, 2, 2)),
    ("heating 105–140 °F", 105.0, 140.0, 0.22, 0.28, 100.0, (1, 1, 1.5, 1.5, 1.5)),
    ("cooling 40–60 °F", 40.0, 60.0, 0.21, 0.27, 75.0, (0.5, 0.5, 1, 1, 1)),
    ("cooling below 40 °F", None, 40.0, 0.20, 0.26, 50.0, (0.5, 1, 1, 1, 1.5)),
)
_ABOVE = {350.0, 250.0, 200.0, 140.0}  # low ends the rows exclude: '251–350' is above 250 up to 350


def _nps_od(nps: float | None, open_end: float) -> float:
    return open_end if nps is None else library.nominal_sizes()[nps]


def _ashrae() -> Code:
    """The ASHRAE 90.1-2016 pipe tables as rows. The published ranges are whole °F ('141–200'):
    each row runs from above the next colder row's upper end to its own upper end included,
    105 and 40 °F included (60–105 °F: no row, the standard sets no minimum there)."""
    rows = []
    for label, lo, hi, k_lo, k_hi, tm, th in _ASHRAE_ROWS:
        t_min = -math.inf if lo is None else _f(lo) + (EDGE if lo in _ABOVE else 0.0)
        t_max = math.inf if hi is None else _f(hi) + (EDGE if hi != 40.0 else 0.0)  # 'below 40': 40 not in it
        for c, t in enumerate(th):
            rows.append(CodeRow(t_min, t_max, _nps_od(_NPS[c], 0.0), _nps_od(_NPS[c + 1], math.inf), t * _IN,
                                k_hi * _BTU_IN, _f(tm), k_lo * _BTU_IN, where=f"ASHRAE 90.1, {label}, size column {c + 1}"))
    return Code("ASHRAE 90.1", tuple(rows), OUTSIDE, "ASHRAE/IES 90.1-2016 minimum pipe insulation (heating and "
                "cooling tables); the correction for another conductivity from memory")


def _geg() -> Code:
    """GEG 2024 Anlage 8 (hot rows, 200 % outdoors) and the cold rows (trade press report; verify)."""
    lam, tm, split = 0.035, 313.15, 293.15
    hot = ((0.0, 0.022, 0.020), (0.022, 0.035, 0.030), (0.035, 0.100, math.nan), (0.100, math.inf, 0.100))
    rows = [CodeRow(split, math.inf, lo + (EDGE if lo else 0.0), hi + EDGE, th, lam, tm, outdoor=2.0,
                    where="GEG Anlage 8") for lo, hi, th in hot]
    rows += [CodeRow(-math.inf, split, 0.0, 0.022 + EDGE, 0.009, lam, tm, where="GEG cold rows (verify)"),
             CodeRow(-math.inf, split, 0.022 + EDGE, math.inf, 0.019, lam, tm, where="GEG cold rows (verify)")]
    return Code("GEG", tuple(rows), INSIDE, "Germany GEG 2024 Anlage 8 (hot pipes); cold rows from a trade "
                "press report of the 2024 amendment (verify against the law's text)")


@lru_cache(maxsize=1)
def builtin() -> dict[str, Code]:
    return {fold(c.name): c for c in (_ashrae(), _geg())}


def read_codes(book: Book, notes: list[Note], columns: list[dict]) -> tuple[dict[str, Code], dict[str, str]]:
    """The built-in codes with the Codes sheet's tables added or replacing them (a user's table
    of a built-in's name replaces it whole), and the codes not usable (folded name -> the
    cell of the error) because a row of theirs has an error."""
    out = dict(builtin())
    name = next((n for n in book.sheet_names() if fold(n) == "codes"), None)
    if name is None:
        return out, {}
    t = read_table(book.sheet(name), schema.CODE_FIELDS, "Code")
    if t is None:
        notes.append(Note("warning", "no-header", f"sheet {name!r} has no header cell 'Code'; it is ignored", name))
        return out, {}
    notes.extend(t.notes)
    notes.extend(unused_columns(t, schema.CODE_FIELDS))
    columns.extend(c.report(t.sheet) for c in t.columns.values())
    tables: dict[str, list[CodeRow]] = {}
    labels: dict[str, str] = {}
    bad: dict[str, str] = {}
    for i in range(len(t.rows)):
        notes.extend(t.cell_notes.get(i, []))
        label = t.get("code")[i] if t.get("code") is not None else None
        if not label:
            if any(_num(t, k, i) == _num(t, k, i) for k in ("thickness", "rating_conductivity")):
                notes.append(Note("error", "code-blank", "this row of a code table has no 'Code' name; "
                                  "name the table it belongs to", name, t.cell(i, "code")))
            continue
        key = fold(str(label))
        labels.setdefault(key, str(label))
        row, cell = _row(t, i, notes)
        if row is None:
            bad.setdefault(key, f"{name}!{cell}")
        else:
            tables.setdefault(key, []).append(row)
    for key, rows in tables.items():
        if key in bad:
            continue
        if key in out:
            notes.append(Note("info", "code-override", f"the Codes sheet's table {labels[key]!r} replaces the "
                              "built-in table of that name", name))
        out[key] = Code(labels[key], tuple(rows), OUTSIDE, f"{name} sheet")
    for key in bad:
        out.pop(key, None)
    return out, bad


def _row(t: Table, i: int, notes: list[Note]) -> tuple[CodeRow | None, str]:
    """Row ``i`` of the Codes sheet, or (None, the cell in error) with its error noted."""
    sheet = t.sheet
    if t.bad[i]:
        cells = [n.cell for n in t.cell_notes.get(i, []) if n.level == "error" and n.cell]
        return None, (cells[0] if cells else t.cell(i, "code"))
    for key, what in (("thickness", "the minimum thickness [mm]"),
                      ("rating_conductivity", "the conductivity the thickness is rated at [W/(m·K)]"),
                      ("rating_mean_temperature", "the mean temperature of that rating [°C]")):
        if not np.isfinite(_num(t, key, i)):
            notes.append(Note("error", "code-incomplete", f"{schema.code_header(key)!r} is blank; give "
                              f"{what}", sheet, t.cell(i, key)))
            return None, t.cell(i, key)
    t_min, t_max = _num(t, "min_fluid_temperature", i), _num(t, "max_fluid_temperature", i)
    t_min, t_max = (t_min if np.isfinite(t_min) else -math.inf), (t_max if np.isfinite(t_max) else math.inf)
    if t_min >= t_max:
        notes.append(Note("error", "code-range", "'Min fluid temperature' must be below 'Max fluid "
                          "temperature'; swap them or correct one", sheet, t.cell(i, "max_fluid_temperature")))
        return None, t.cell(i, "max_fluid_temperature")
    sizes = []
    for key, open_end in (("min_size", 0.0), ("max_size", math.inf)):
        d, message = size_bound(t.get(key)[i] if t.get(key) is not None else None, open_end)
        if message:
            notes.append(Note("error", "code-size", f"{schema.code_header(key)!r} {message}", sheet, t.cell(i, key)))
            return None, t.cell(i, key)
        sizes.append(d)
    if sizes[0] >= sizes[1]:
        notes.append(Note("error", "code-range", "'Min size' must be smaller than 'Max size'; swap them or "
                          "correct one", sheet, t.cell(i, "max_size")))
        return None, t.cell(i, "max_size")
    return CodeRow(t_min, t_max, sizes[0], sizes[1], _num(t, "thickness", i), _num(t, "rating_conductivity", i),
                   _num(t, "rating_mean_temperature", i), where=f"{sheet}!{t.cell(i, 'code')}"), ""


def size_bound(value, open_end: float) -> tuple[float, str]:
    """A 'Min size'/'Max size' cell -> (outside diameter [m], '') or (NaN, what is wrong and the fix).

    A nominal size as the 'Size' column spells it (NPS 4, 4", DN 100) stands for its outside
    diameter; an outside diameter needs its unit (114.3 mm); blank: the open end."""
    if value is None or (isinstance(value, str) and not value.strip()):
        return open_end, ""
    text = str(value).strip()
    od = library.pipe_outside_diameter(text)
    if od is not None:
        return od, ""
    fix = "write a nominal size (NPS 4, 4\", DN 100) or an outside diameter with its unit (114.3 mm)"
    try:
        number, unit = parse_quantity_text(text)
        if unit is None:
            return math.nan, f"{text!r} has no unit; {fix}"
        d = float(to_si([number], unit, "m")[0])
    except (UnitTextError, ValueError, TypeError):
        return math.nan, f"{text!r} is not a size; {fix}"
    if not 0 < d <= 20.0:
        return math.nan, f"{text!r} is not a diameter from 0 to 20 m; {fix}"
    return d, ""


def _num(t: Table, key: str, i: int) -> float:
    v = t.get(key)
    return float(v[i]) if v is not None else math.nan

