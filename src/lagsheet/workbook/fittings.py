"""Fittings: the equivalent length of pipe of a valve, a flange pair and a support.

A fitting on a line loses as much heat as ``Equivalent length`` metres of the same pipe in
the same state: an insulated fitting (a removable box over a valve, a cover over a flange
pair, a support through the insulation) as that length of the insulated line, an
uninsulated one as that length of the bare pipe. The line's fittings count as insulated
when the line is insulated (README, "Fittings and thermal bridges").

The built-in rows are rough and each says where it comes from; a row of the workbook's
``Fittings`` sheet with the same item, size range and state replaces the built-in one, and
its own rows come first (the first row that fits a line's size is used).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import Note
from ..io.table import Book, fold
from . import fields as schema
from . import library
from .tables import read_table, unused_columns
from .units import UnitTextError, is_unit, parse_quantity_text, to_si

ITEMS = ("valve", "flange", "support")
ITEM_WORDS = {"valve": "valve", "valves": "valve", "flange": "flange", "flanges": "flange",
              "flange pair": "flange", "flanged joint": "flange", "support": "support", "supports": "support",
              "pipe support": "support", "hanger": "support"}


@dataclass(frozen=True)
class Fitting:
    item: str  # valve, flange or support
    min_od: float  # m, inclusive (0: open)
    max_od: float  # m, exclusive (inf: open)
    insulated: bool | None  # None: both states
    length: float  # equivalent length of the same pipe [m]
    source: str

    def fits(self, od: float, insulated: bool) -> bool:
        return (self.min_od <= od < self.max_od) and self.insulated in (None, insulated)


# The bare valve: a bare 6-inch gate valve at 400 °F loses about 5,800 Btu/h, 1.7 kW (US DOE steam
# tip sheet table, REFERENCES.md), as much as about 1.0 m of the bare NPS 6 pipe beside it at 204 °C in
# still air at 21 °C (1.77 kW/m with emissivity 0.8 by a separate surface balance: 0.96 m;
# tests/reference/test_tracing.py).
_MEMORY = "from memory: a rough value; give your own on the Fittings sheet"
BUILTIN: tuple[Fitting, ...] = (
    Fitting("valve", 0.0, math.inf, True, 1.5, "built-in, " + _MEMORY + " (a removable box over the valve)"),
    Fitting("valve", 0.0, math.inf, False, 1.0, "built-in, from a bare 6-inch gate valve (US DOE steam tip "
            "sheet, 1.7 kW at 400 °F) against the bare pipe; other sizes and valve types " + _MEMORY),
    Fitting("flange", 0.0, math.inf, True, 0.6, "built-in, " + _MEMORY + " (a cover over the flange pair)"),
    Fitting("flange", 0.0, math.inf, False, 0.5, "built-in, " + _MEMORY + " (a bare flange pair)"),
    Fitting("support", 0.0, math.inf, True, 0.3, "built-in, " + _MEMORY + " (steel through the insulation)"),
    Fitting("support", 0.0, math.inf, False, 0.2, "built-in, " + _MEMORY + " (a clamp on the bare pipe)"),
)


def find(table: tuple[Fitting, ...], item: str, od: float, insulated: bool) -> Fitting | None:
    """The first row of ``table`` for ``item`` that fits outside diameter ``od`` [m] in that state."""
    return next((f for f in table if f.item == item and f.fits(od, insulated)), None)


def size_od(text) -> float:
    """A size bound as the Codes and Fittings sheets write it: a nominal size as the ``Size``
    column spells it (NPS 2, 2", DN 50) or an outside diameter with its unit (60.3 mm);
    raises ValueError in our own words."""
    s = str(text).strip()
    od = library.pipe_outside_diameter(s)
    if od is not None:
        return od
    try:
        number, unit = parse_quantity_text(s)
    except UnitTextError:
        unit = None
    if unit is None or not is_unit(unit, "mm"):
        raise ValueError(f"{s!r} is neither a nominal size (NPS 2, 2\", DN 50) nor an outside diameter "
                         "with its unit (60.3 mm)")
    return float(to_si([number], unit, "m")[0])


def read(book: Book, notes: list[Note], columns: list[dict]) -> tuple[Fitting, ...]:
    """The workbook's Fittings rows first, then the built-in rows they do not replace."""
    name = next((n for n in book.sheet_names() if fold(n) == "fittings"), None)
    if name is None:
        return BUILTIN
    t = read_table(book.sheet(name), schema.FITTING_FIELDS, "Item")
    if t is None:
        notes.append(Note("warning", "no-header", "sheet 'Fittings' has no header cell 'Item'; it is ignored",
                          name))
        return BUILTIN
    notes.extend(t.notes)
    notes.extend(unused_columns(t, schema.FITTING_FIELDS))
    columns.extend(c.report(t.sheet) for c in t.columns.values())
    own = [f for i in range(len(t.rows)) if (f := _row(t, i, name, notes)) is not None]
    kept = [b for b in BUILTIN if not any((o.item, o.min_od, o.max_od) == (b.item, b.min_od, b.max_od)
                                          and o.insulated in (None, b.insulated) for o in own)]
    return tuple(own) + tuple(kept)


def _row(t, i: int, sheet: str, notes: list[Note]) -> Fitting | None:
    """Row ``i`` of the Fittings sheet, or None (with an error note naming the cell) when unusable."""
    notes.extend(t.cell_notes.get(i, []))
    if t.bad[i]:
        return None

    def col(key):
        v = t.get(key)
        return None if v is None else v[i]

    def bad(key, message):
        notes.append(Note("error", "bad-fitting", f"Fittings row {t.rows[i] + 1}: {message}; the row is "
                          "not used", sheet, t.cell(i, key)))

    item = col("item")
    if not item:
        return None
    word = ITEM_WORDS.get(fold(str(item)))
    if word is None:
        bad("item", f"item {item!r} is not known; write valve, flange or support")
        return None
    length = col("equivalent_length")
    if length is None or not np.isfinite(length):
        bad("equivalent_length", "'Equivalent length' [m] is blank; give the metres of the same pipe that lose "
            "as much heat as one item")
        return None
    bounds = []
    for key, open_end in (("min_size", 0.0), ("max_size", math.inf)):
        v = col(key)
        try:
            bounds.append(open_end if v in (None, "") else size_od(v))
        except ValueError as exc:
            bad(key, f"{exc}; fix the size or leave it blank for all sizes")
            return None
    if bounds[0] >= bounds[1]:
        bad("max_size", "'Max size' must be larger than 'Min size' (min inclusive, max exclusive)")
        return None
    ins = col("insulated")
    return Fitting(word, bounds[0], bounds[1], ins if isinstance(ins, bool) else None, float(length),
                   f"{sheet}!{t.cell(i, 'item')}")
