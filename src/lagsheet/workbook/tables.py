"""Check: raw sheets -> SI arrays, with a note for every doubtful column or cell.

Knows fields and units (``schema``, ``units``), nothing of heat. Every problem is a
:class:`~lagsheet.errors.Note` naming the sheet and cell, and the fix.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass, field, replace
from itertools import repeat
from operator import is_not, itemgetter
from typing import Any

import numpy as np

from ..errors import InputError, Note
from ..io.table import RawSheet, address, fold
from . import fields as schema
from .units import (
    UnitTextError,
    from_si,
    is_unit,
    parse_quantity_text,
    parse_unit,
    to_si,
    unit_label,
)
from .words import did_you_mean, nearest, suggest

_HEADER_UNIT = re.compile(r"^(.*?)\s*[\[(]\s*([^\[\]()]*(?:\([^()]*\)[^\[\]()]*)*)\s*[\])]\s*$")


def split_header(text: str) -> tuple[str, str | None]:
    """'Operating temperature [°C]' -> ('Operating temperature', '°C'); no unit -> None."""
    t = str(text).strip()
    m = _HEADER_UNIT.match(t)
    if m and m.group(1):
        return m.group(1).strip(), m.group(2).strip()
    return t, None


@dataclass
class Column:
    """One recognised input column: where it is, its field, its unit and its SI values."""

    field: schema.Field
    col: int
    header: str
    unit_text: str | None
    unit: Any = None
    unit_cell: str | None = None  # the units-row cell the unit came from (None: the header)
    status: str = "ok"
    message: str = ""
    si_unit: str = ""
    values: np.ndarray | None = None  # SI floats (numbers) or object array (text)
    alternate: dict[int, str] = field(default_factory=dict)  # row -> the other SI unit its cell gave

    def si_of(self, i: int) -> str:
        """The SI unit of row ``i``'s value: the column's, or the other one its own cell gave."""
        return self.alternate.get(i, self.si_unit)

    def report(self, sheet: str) -> dict:
        return {"sheet": sheet, "header": self.header, "field": self.field.key,
                "unit": str(self.unit) if self.unit is not None else None,
                "status": self.status, "message": self.message}


@dataclass
class Table:
    """A checked sheet: its columns by field key, its data rows, and the notes found."""

    sheet: str
    header_row: int
    rows: list[int]  # 0-based sheet rows of data
    columns: dict[str, Column] = field(default_factory=dict)
    notes: list[Note] = field(default_factory=list)
    cell_notes: dict[int, list[Note]] = field(default_factory=dict)  # by position in rows
    bad: np.ndarray | None = None  # True where a row has an error from its cells
    last_col: int = 0  # last used column (0-based, exclusive)
    units_row: int | None = None
    unused: list[tuple[int, str]] = field(default_factory=list)  # (column, header) read as no field

    def get(self, key: str, default=None):
        c = self.columns.get(key)
        return default if c is None or c.values is None else c.values

    def add(self, i: int, note: Note):
        self.cell_notes.setdefault(i, []).append(note)
        if note.level == "error":
            self.bad[i] = True

    def cell(self, i: int, key: str) -> str:
        c = self.columns.get(key)
        return address(self.rows[i], c.col) if c else address(self.rows[i], 0)

    def take(self, idx: list[int]) -> Table:
        """The lines ``idx`` (positions in :attr:`rows`) alone, in that order: their rows,
        values, cell notes and errors; the sheet's own notes as they are."""
        pos = {i: k for k, i in enumerate(idx)}
        at = np.asarray(idx, dtype=np.intp)
        cols = {key: replace(c, values=None if c.values is None else c.values[at],
                             alternate={pos[i]: u for i, u in c.alternate.items() if i in pos})
                for key, c in self.columns.items()}
        return replace(self, rows=[self.rows[i] for i in idx], columns=cols,
                       cell_notes={pos[i]: ns for i, ns in self.cell_notes.items() if i in pos},
                       bad=None if self.bad is None else self.bad[at])


def _known(fields, row: list) -> int:
    """How many of ``fields`` the cells of ``row`` name (as headers, with or without a unit)."""
    found = set()
    for v in row:
        if isinstance(v, str) and v.strip():
            f = schema.match(fields, fold(split_header(v)[0]))
            if f is not None:
                found.add(f.key)
    return len(found)


def header_map(pairs: dict[str, str], fields) -> dict[str, str]:
    """``--map`` pairs 'Their header' -> 'Our header' as folded their name -> our header text.

    Each of ours must be a field of ``fields``; otherwise an :class:`InputError` names the
    nearest fields.
    """
    out = {}
    for theirs, ours in pairs.items():
        name = split_header(ours)[0]
        if schema.match(fields, fold(name)) is None:
            near = suggest(name, [f.header.lower() for f in fields], n=3)
            raise InputError(f"--map: {ours!r} is not a column lagsheet reads on this sheet{near}")
        out[fold(split_header(theirs)[0])] = ours
    return out


def _mapped(text: str, mapping: dict[str, str] | None) -> tuple[str, str | None]:
    """A header's field name and unit text, after ``--map``: their unit wins, else the one in the map."""
    name, unit_text = split_header(str(text))
    if mapping and fold(name) in mapping:
        ours, ours_unit = split_header(mapping[fold(name)])
        return ours, unit_text or ours_unit
    return name, unit_text


def find_header_row(sheet: RawSheet, fields, marker: str,
                    mapping: dict[str, str] | None = None) -> tuple[int | None, list[int]]:
    """The header row: of the rows with a cell equal to ``marker`` or one of its aliases ('Tag',
    'ID', 'Line'...) or a header mapped to it, the one naming the most known fields (the first
    of equals); with the other such rows."""
    key = next((f for f in fields if fold(f.header) == fold(marker)), None)
    names = (marker, *key.aliases) if key is not None else (marker,)
    names += tuple(t for t, ours in (mapping or {}).items()
                   if key is not None and schema.match(fields, fold(split_header(ours)[0])) is key)
    rows = sheet.header_rows(names)
    if len(rows) <= 1:
        return (rows[0] if rows else None), []
    score = {r: _known(fields, sheet.grid[r]) for r in rows}
    best = max(rows, key=lambda r: (score[r], -r))
    return best, [r for r in rows if r != best]


def read_table(sheet: RawSheet, fields, marker: str, mapping: dict[str, str] | None = None) -> Table | None:
    """Find the header row (:func:`find_header_row`), map headers to fields, convert.

    ``mapping`` (from :func:`header_map`) reads a header of the user's as one of ours; a
    mapped header not in the header row is an error note (code ``map-unused``).
    """
    hr, others = find_header_row(sheet, fields, marker, mapping)
    if hr is None:
        return None
    header_cells = sheet.grid[hr]
    cols: dict[str, Column] = {}
    t = Table(sheet.name, hr, [], last_col=sheet.used_width())
    if others and others[0] < hr:
        t.notes.append(Note("info", "header-row",
                            f"row {hr + 1} is taken as the header row of sheet {sheet.name!r}: it names more "
                            f"known columns than row {others[0] + 1} above it", sheet.name, address(hr, 0)))
    seen = set()
    for c, text in enumerate(header_cells):
        if text in ("", None):
            continue
        seen.add(fold(split_header(str(text))[0]))
        name, unit_text = _mapped(text, mapping)
        f = schema.match(fields, fold(name))
        if f is None:
            t.unused.append((c, str(text).strip()))  # the user's own column: never touched, but reported
            continue
        if f.key in cols:
            t.notes.append(Note("error", "duplicate-column",
                                f"column {name!r} appears twice; the second ({address(hr, c)}) is ignored",
                                sheet.name, address(hr, c)))
            continue
        cols[f.key] = Column(f, c, str(text).strip(), unit_text)
    for theirs, ours in (mapping or {}).items():
        if theirs not in seen:
            t.notes.append(Note("error", "map-unused",
                                f"--map names a column {theirs!r} (read as {ours!r}) that is not in the header "
                                f"row of sheet {sheet.name!r} (row {hr + 1}); give their header as written there",
                                sheet.name, address(hr, 0)))
    # a units row: most unit-less numeric columns have a unit just below ('m', '[m]', '(F)');
    # a cell there that is no unit is an error on that cell, not a reason to read the row as data
    numeric = [c for c in cols.values() if c.field.kind in (schema.NUMBER, schema.TEMPERATURE, schema.DIFFERENCE)]
    bare = [c for c in numeric if c.unit_text is None]
    first = hr + 1
    below = {c.col: _unwrap(sheet.value(hr + 1, c.col)) for c in bare}
    if bare and 2 * sum(_parses(u) for u in below.values()) > len(bare):
        for c in bare:
            u = below[c.col]
            if u not in (None, ""):
                c.unit_text = str(u).strip()
                c.unit_cell = address(hr + 1, c.col)
        first = hr + 2
        t.units_row = hr + 1
    t.rows = _data_rows(sheet, first, [c.col for c in cols.values()])
    t.bad = np.zeros(len(t.rows), dtype=bool)
    t.columns = cols
    column = _columns(sheet, t.rows)
    for c in cols.values():
        _convert(sheet, t, c, column(c.col))
    return t


def unused_columns(t: Table, fields, outputs=()) -> list[Note]:
    """A warning for every header of ``t`` that is no field and none of ``outputs``: the column is
    not used, with the nearest field if one is close."""
    known = {}
    for f in fields:
        known.setdefault(fold(f.header), f)
        for a in f.aliases:
            known.setdefault(a, f)
    skip = {fold(o) for o in outputs}
    notes = []
    for c, text in t.unused:
        name = fold(split_header(text)[0])
        if name in skip:
            continue
        where = address(t.header_row, c)
        near = nearest(name, known, n=1, cutoff=0.75)
        if near:
            f = known[near[0]]
            aliases = ", ".join(repr(a) for a in f.aliases) or "none"
            hint = (did_you_mean([f"{f.header!r}{' [' + f.unit + ']' if f.unit else ''}"])
                    + f" (also accepted: {aliases})")
        else:
            hint = "; it is kept as it is (rename it to a lagsheet header if it was meant as an input)"
        notes.append(Note("warning", "unknown-header",
                          f"column {text!r} on {t.sheet!r} is not used by lagsheet" + hint, t.sheet, where))
    return notes


def _data_rows(sheet: RawSheet, first: int, cols: list[int]) -> list[int]:
    """Rows from ``first`` with a value (or an uncached formula) in one of the columns ``cols``."""
    wanted = set(cols)
    uncached = {r for r, c in sheet.uncached if c in wanted}
    rows = []
    grid = sheet.grid
    totals = sheet.totals_rows
    for r in range(first, len(grid)):
        if totals and r in totals:  # a table's totals row (SUBTOTAL formulas), not a line
            continue
        row = grid[r]
        n = len(row)
        for col in cols:
            if col < n:
                v = row[col]
                if v is not None and v != "":
                    rows.append(r)
                    break
        else:
            if r in uncached:
                rows.append(r)
    return rows


_BLANK = {"": None}


def _columns(sheet: RawSheet, rows: list[int]):
    """A function of a column: ``sheet.value(r, col)`` for every row of ``rows`` ('' read as None).
    The rows are looked up once for all the columns."""
    lines = list(map(sheet.grid.__getitem__, rows))
    reach = min(map(len, lines), default=0)

    def column(col: int) -> list:
        if col < reach or not lines:  # every row reaches the column (calamine's grid)
            cells = list(map(itemgetter(col), lines))
        else:
            cells = [row[col] if col < len(row) else None for row in lines]
        try:  # '' read as None, a column at a time ({'': None}.get(v, v) is None exactly where v == '')
            return list(map(_BLANK.get, cells, cells))
        except TypeError:  # an unhashable value (not from a workbook reader)
            return [None if v == "" else v for v in cells]

    return column


def shown(v) -> str:
    """A cell's value as a spreadsheet shows it, for a message: text in quotes, a date as
    2024-03-04, a number without a trailing '.0', TRUE/FALSE (never a Python repr)."""
    if isinstance(v, str):
        return repr(v)
    if isinstance(v, bool):
        return "TRUE" if v else "FALSE"
    if isinstance(v, dt.datetime):
        return v.isoformat(sep=" ", timespec="minutes") if (v.hour, v.minute, v.second) != (0, 0, 0) \
            else v.date().isoformat()
    if isinstance(v, (dt.date, dt.time)):
        return v.isoformat()
    if isinstance(v, dt.timedelta):
        secs = int(v.total_seconds())
        return f"{secs // 3600}:{secs % 3600 // 60:02d}:{secs % 60:02d}"
    if isinstance(v, float) and not v.is_integer():
        return repr(v)
    return _text(v) if isinstance(v, (int, float)) else str(v)


def _text(v) -> str:
    """A cell as text: a whole float without its '.0'."""
    return str(v).strip() if not isinstance(v, float) or not v.is_integer() else str(int(v))


def _unwrap(v):
    """A units-row cell without its brackets: '[m]' and '(F)' -> 'm' and 'F'."""
    if isinstance(v, str):
        m = re.fullmatch(r"\s*[\[(]\s*(.*?)\s*[\])]\s*", v)
        if m and m.group(1):
            return m.group(1)
    return v


def _parses(v) -> bool:
    if not isinstance(v, str) or not v.strip():
        return False
    try:
        parse_unit(v)
        return True
    except UnitTextError:
        return False


def _convert(sheet: RawSheet, t: Table, c: Column, raw: list) -> None:
    """Read column ``c`` of ``t``'s rows (``raw``, '' read as None) into ``c.values`` (SI floats,
    or text), noting each cell in doubt."""
    f = c.field
    here = address(t.header_row, c.col)
    if sheet.uncached:
        _uncached_formulas(sheet, t, c)
    if f.kind in (schema.TEXT, schema.YESNO) and f.key != "thicknesses":
        _text_column(sheet, t, c, raw)
        return
    if f.key == "thicknesses":
        unit_ok = _column_unit(t, c, here)
        c.values = np.array(raw, dtype=object)
        if not unit_ok:
            c.values[:] = None
        return
    if not _column_unit(t, c, here):
        c.values = np.full(len(raw), np.nan)
        for i, v in enumerate(raw):
            if v is not None:
                t.add(i, Note("error", "column-unit", f"not computed: {c.message}",
                              sheet.name, address(t.rows[i], c.col)))
        return
    _number_column(sheet, t, c, raw)


def _uncached_formulas(sheet: RawSheet, t: Table, c: Column) -> None:
    """An error on each cell of the column that is a formula with no saved result."""
    for i, r in enumerate(t.rows):
        if (r, c.col) in sheet.uncached:
            t.add(i, Note("error", "formula-not-cached",
                          f"{c.field.header!r} is a formula with no saved result; open the workbook in a "
                          "spreadsheet program, recalculate and save it, then run lagsheet again",
                          sheet.name, address(r, c.col)))


def _text_column(sheet: RawSheet, t: Table, c: Column, raw: list) -> None:
    """A text column as stripped text; a yes/no column as True, False or None (with an error)."""
    f = c.field
    texts = [None if v is None else v.strip() if type(v) is str else _text(v) for v in raw]
    if f.kind == schema.YESNO:
        for i, w in enumerate(texts):
            if w is None:
                continue
            w = fold(w)
            if w in schema.YES:
                texts[i] = True
            elif w in schema.NO:
                texts[i] = False
            else:
                t.add(i, Note("error", "not-yes-no", f"{f.header!r} must be yes or no: {shown(raw[i])}",
                              sheet.name, address(t.rows[i], c.col)))
                texts[i] = None
    vals = np.empty(len(raw), dtype=object)
    vals[:] = texts
    c.values = vals


def _number_column(sheet: RawSheet, t: Table, c: Column, raw: list) -> None:
    """A quantity column in SI: number cells converted from the column's unit, any other cell read
    by :func:`_other_cell`; then the range and plausibility checks."""
    f = c.field
    difference = f.kind == schema.DIFFERENCE
    # numbers as they are (float or int cells); every other cell is looked at below, in order
    nan = np.nan
    floats = _floats(raw)
    if floats is not None:  # the usual column: floats and empty cells only, read a column at a time
        nums = floats[0].copy()
        plain, others = np.flatnonzero(floats[1]).tolist(), []
    else:
        nums = np.array([v if type(v) is float else float(v) if type(v) is int else nan for v in raw], dtype=float)
        plain = [i for i, v in enumerate(raw) if type(v) is float or type(v) is int]
        others = [i for i, v in enumerate(raw) if v is not None and type(v) is not float and type(v) is not int]
    if sheet.percent and plain:
        read = _percent_cells(sheet, t, c, plain, raw, nums)
        if read is not raw:
            raw, floats = read, None
    for i in others:
        number = _other_cell(sheet, t, c, i, raw[i], nums)
        if number is not None:
            plain.append(i)
            nums[i] = float(number)
    if plain:
        idx = np.array(sorted(plain))
        vals = nums[idx]
        finite = np.isfinite(vals)
        out = np.full(len(idx), np.nan)
        out[finite] = to_si(vals[finite], c.unit, c.si_unit, difference=difference)
        nums[idx] = out
    _out_of_range(sheet, t, c, raw, nums, floats)
    c.values = nums
    _plausibility(sheet, t, c, raw, nums, floats)


_EMPTY_NAN = {None: np.nan}


def _floats(raw: list) -> tuple[np.ndarray, np.ndarray] | None:
    """(the values, NaN where empty; which cells are not empty) when every cell of ``raw`` is a
    float or empty (None), else None; with no Python work per cell."""
    n = len(raw)
    types = list(map(type, raw))
    if types.count(float) + types.count(type(None)) != n:
        return None
    values = np.array(list(map(_EMPTY_NAN.get, raw, raw)), dtype=float)
    return values, np.fromiter(map(is_not, raw, repeat(None)), dtype=bool, count=n)


def _other_cell(sheet: RawSheet, t: Table, c: Column, i: int, v, nums) -> float | None:
    """A cell of a quantity column that is no plain number: the number it holds in the column's
    unit, or None when it is an error or was read into ``nums[i]`` already (with a note)."""
    f = c.field
    if isinstance(v, (dt.date, dt.time, dt.timedelta)):
        kind = "time" if isinstance(v, (dt.time, dt.timedelta)) else "date"
        t.add(i, Note("error", "not-a-number",
                      f"{f.header!r} holds a {kind} ({shown(v)}) where a {_dimension_word(f)} belongs: the "
                      f"cell is formatted as a {kind}. Format it as a number (Format Cells, Number) and check "
                      "the value", sheet.name, address(t.rows[i], c.col)))
        return None
    if isinstance(v, bool) or not isinstance(v, (int, float, str)):
        t.add(i, Note("error", "not-a-number", f"{f.header!r} must be a number: {shown(v)}",
                      sheet.name, address(t.rows[i], c.col)))
        return None
    if isinstance(v, str):
        return _quantity_text(sheet, t, c, i, v, nums)
    return v


def _quantity_text(sheet: RawSheet, t: Table, c: Column, i: int, v: str, nums) -> float | None:
    """A quantity typed as text ('50', '2 in', '60 W/m²'): the bare number in the column's unit,
    or None when it is an error or its own unit was converted into ``nums[i]`` (with a note)."""
    f = c.field
    where = address(t.rows[i], c.col)
    try:
        number, unit = parse_quantity_text(v)
    except UnitTextError:
        t.add(i, Note("error", "not-a-number",
                      f"{f.header!r} must be a number in {unit_label(c.unit)}: {v!r}; "
                      "type the number alone", sheet.name, where))
        return None
    if unit is None:
        return number
    if f.key == "outside_diameter" and str(unit) == "inch" and str(c.unit) != "inch":
        od = _nominal_od(v)
        if od is not None:  # '2"' among millimetres: a practitioner's nominal size, NPS 2
            nums[i] = od
            t.add(i, Note("warning", "od-as-nominal-size",
                          f"{v!r} in {c.header!r} is read as the nominal size NPS {_text(number)} "
                          f"(outside diameter {_fmt(to_si([od], parse_unit('m'), str(c.unit))[0])} "
                          f"{unit_label(c.unit)}, ASME B36.10M), not as {_fmt(to_si([number], unit, str(c.unit))[0])} "
                          f"{unit_label(c.unit)}; put sizes in 'Size', or type the diameter in "
                          f"{unit_label(c.unit)}", sheet.name, where))
            return None
    difference = f.kind == schema.DIFFERENCE
    si = _cell_si(unit, c)
    if si is None:
        t.add(i, Note("error", "cell-unit", f"{v!r} is not a {f.header.lower()} (column unit {unit_label(c.unit)})",
                      sheet.name, where))
        return None
    if si != c.si_unit:
        c.alternate[i] = si  # e.g. '60 W/m²' typed in a W/m column
        nums[i] = to_si([number], unit, si, difference=difference)[0]
        t.add(i, Note("info", "text-quantity", f"{f.header!r} typed as text {v!r}: read "
                      f"as {_fmt(nums[i])} {si.replace('**2', '²')}", sheet.name, where))
        return None
    nums[i] = to_si([number], unit, c.si_unit, difference=difference)[0]
    t.add(i, Note("info", "text-quantity",
                  f"{f.header!r} typed as text {v!r}: read as "
                  f"{_fmt(to_si([number], unit, str(c.unit), difference=difference)[0])} "
                  f"{unit_label(c.unit)}", sheet.name, where))
    return None


def _out_of_range(sheet: RawSheet, t: Table, c: Column, raw: list, nums, floats=None) -> None:
    """An error on each cell whose SI value is outside the field's range (its value becomes NaN)."""
    f = c.field
    # a cell is range-checked when it holds something that gave a number (or is a float: NaN)
    floats = floats or _floats(raw)  # (``floats``: _floats(raw) if the caller has it)
    if floats is not None:  # every cell not empty is a float
        looked = floats[1]
    else:
        looked = np.array([v is not None for v in raw], dtype=bool)
        looked &= ~np.isnan(nums) | np.array([isinstance(v, float) for v in raw], dtype=bool)
    with np.errstate(invalid="ignore"):
        out_of_range = ~np.isfinite(nums)
        if f.minimum is not None:
            out_of_range |= nums <= f.minimum
        if f.maximum is not None:
            out_of_range |= nums > f.maximum
    for i in np.flatnonzero(looked & out_of_range).tolist():
        t.add(i, Note("error", "out-of-range", _range_message(f, c, raw[i]),
                      sheet.name, address(t.rows[i], c.col)))
        nums[i] = np.nan


def _percent_cells(sheet: RawSheet, t: Table, c: Column, plain: list[int], raw: list, nums) -> list:
    """Read a number cell formatted as a percentage as the fraction it holds: a typed '80%' is
    stored as 0.8, so in a % column it is 80 (an info note says so). Gives ``raw`` with those
    cells as read, for the plausibility checks; a column of another kind is left as it is."""
    if not is_unit(c.unit, "1"):
        return raw
    hits = [i for i in plain if (t.rows[i], c.col) in sheet.percent]
    if not hits:
        return raw
    raw = list(raw)
    label = unit_label(c.unit)
    for i, x in zip(hits, from_si([nums[i] for i in hits], "1", str(c.unit)).tolist(), strict=True):
        shown_as = f"{_fmt(nums[i] * 100)}%"
        read = f"the fraction {_fmt(x)}" if label == "1" else f"{_fmt(x)} {label}"
        t.add(i, Note("info", "percent-cell",
                      f"{c.field.header!r} is formatted as a percentage ({shown_as}, stored as "
                      f"{_fmt(nums[i])}): read as {read}", sheet.name, address(t.rows[i], c.col)))
        nums[i] = x
        raw[i] = x
    return raw


def _plausibility(sheet: RawSheet, t: Table, c: Column, raw, nums, floats=None) -> None:
    """Column-level: do the values suggest another unit? Cell-level: outside the plausible range?"""
    from . import plausibility

    key = c.field.key
    floats = floats or _floats(raw)  # (``floats``: _floats(raw) if the caller has it)
    written = floats[0] if floats is not None else np.array(
        [v if type(v) is float else float(v) if isinstance(v, (int, float)) and not isinstance(v, bool)
         else np.nan for v in raw], dtype=float)
    hint = plausibility.suggest(key, str(c.unit), written, nums)
    if hint:
        c.status = "warning" if c.status == "ok" else c.status
        c.message = f"{c.field.header!r} is labelled {unit_label(c.unit)} but its values suggest {hint}; check the header"
        t.notes.append(Note("warning", "likely-mislabelled", c.message, sheet.name, address(t.header_row, c.col)))
        if key == "relative_humidity" and str(c.unit) == "percent":  # sized on it, too dry: never silently
            for i in np.flatnonzero((written > 0) & (written <= 1)).tolist():
                t.add(i, Note("error", "percent-as-fraction",
                              f"{c.field.header!r} {_fmt(written[i])} % looks like {_fmt(written[i] * 100)} % "
                              f"stored as a fraction (as a cell formatted as a percentage stores it); type "
                              f"{_fmt(written[i] * 100)}", sheet.name, address(t.rows[i], c.col)))
                nums[i] = np.nan
    rng = plausibility.PLAUSIBLE.get(key)
    if rng is None:
        return
    lo, hi = rng
    for i in np.flatnonzero(np.isfinite(nums) & ((nums < lo) | (nums > hi))):
        t.cell_notes.setdefault(int(i), []).append(Note(
            "warning", "implausible", f"{c.field.header!r} of {raw[i]!r} {unit_label(c.unit)} is outside the "
            "usual range for this field; check the value and its unit", sheet.name, address(t.rows[i], c.col)))


def _nominal_od(text: str) -> float | None:
    """The outside diameter [m] of an inch-marked nominal size ('2"', '1 1/2 in'), or None."""
    from .library import pipe_outside_diameter

    return pipe_outside_diameter(text.strip())


def _fmt(x: float) -> str:
    return f"{x:.4g}"


def _range_message(f: schema.Field, c: Column, raw) -> str:
    lo = f.minimum if f.minimum is not None else None
    hi = f.maximum
    if f.kind == schema.TEMPERATURE:
        return f"{f.header!r} must be above absolute zero and at most {hi - 273.15:.0f} °C: {raw!r}"
    parts = []
    if lo is not None:
        whole = round(lo)  # a bound just below a whole number (1 - 1e-9) lets that number in: '>= 1'
        parts.append(f">= {whole:g}" if 0 < whole - lo < 1e-6 else f"> {max(lo, 0):g}" if lo >= 0 else ">= 0")
    if hi is not None:
        parts.append(f"<= {hi:g} {c.si_unit}")
    return f"{f.header!r} must be {' and '.join(parts)} (in SI): {raw!r}"


def _cell_si(unit, c: Column) -> str | None:
    """The SI unit a cell's own unit converts to: the column's, an accepted alternative, or None."""
    if is_unit(unit, c.si_unit):
        return c.si_unit
    for dim, si in ((c.field.unit, c.field.si), *c.field.alt_units):
        if is_unit(unit, dim):
            return si
    return None


def _column_unit(t: Table, c: Column, here: str) -> bool:
    """Settle the column's unit; False (with the column marked error) when unusable."""
    f = c.field
    here = c.unit_cell or here
    if (c.unit_text is None or c.unit_text == "") and f.count:  # a number of items: nothing to write
        c.unit, c.si_unit = parse_unit("1"), f.si
        return True
    if c.unit_text is None or c.unit_text == "":
        c.unit = parse_unit(f.unit)
        c.si_unit = f.si
        c.status, c.message = "warning", (
            f"{f.header!r} has no unit in its header; read as {f.unit}. "
            f"Write it as '{f.header} [{f.unit}]' to be sure")
        t.notes.append(Note("warning", "no-unit", c.message, t.sheet, here))
        return True
    try:
        c.unit = parse_unit(c.unit_text)
    except UnitTextError:
        c.status, c.message = "error", (
            f"unit {c.unit_text!r} of {f.header!r} does not parse; write it like '{f.header} [{f.unit}]'")
        t.notes.append(Note("error", "bad-unit", c.message, t.sheet, here))
        return False
    for dim, si in ((f.unit, f.si), *f.alt_units):
        if is_unit(c.unit, dim):
            c.si_unit = si
            return True
    c.status, c.message = "error", (
        f"unit {c.unit_text!r} of {f.header!r} is not a {_dimension_word(f)}; "
        f"expected a unit like {f.unit}")
    t.notes.append(Note("error", "wrong-dimension", c.message, t.sheet, here))
    return False


def _dimension_word(f: schema.Field) -> str:
    return {"mm": "length", "m": "length", "°C": "temperature", "K": "temperature difference",
            "W/m": "heat loss per length or per area", "m/s": "speed", "%": "fraction",
            "h": "time", "W/(m·K)": "conductivity", "m²": "area"}.get(f.unit, "quantity of the right kind")
