"""``lagsheet.size``: the schedule's sizing for scripts and notebooks, on the path ``fill`` takes.

The tables a script hands over become an in-memory book of sheets (headers in the first
row, units in the headers, as on a sheet); the book is read and checked as a workbook is
(:func:`~lagsheet.workbook.inputs.read_inputs`), sized (:func:`~lagsheet.design.select.specify`)
and its results are the cells ``fill`` would write (:func:`~lagsheet.outputs.columns.lines_edits`):
the same headers, units, rounding and notes. pandas is optional: a DataFrame in gives a
DataFrame out, a list of dicts gives a list of dicts.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from .errors import InputError, Note, WorkbookError
from .io.table import fold

STATUS = "Status"
FATAL = ("no-lines-sheet", "no-header", "missing-column", "map-unused")


class SizeError(InputError):
    """An input error in the tables given to :func:`size`, with where it is: the table
    (``sheet``: 'Lines', 'Conditions', ...), the ``row`` (the DataFrame's index label, or the
    position in the list; None for a whole column) and the ``column`` (its header).
    ``notes`` holds every input error found, this one first."""

    def __init__(self, message: str, *, sheet: str = "", row: Any = None, column: str | None = None,
                 notes: Sequence[Note] = ()):
        super().__init__(message)
        self.sheet, self.row, self.column, self.notes = sheet, row, column, list(notes)


def size(lines, conditions=None, materials=None, settings=None, *, sheets: Mapping | None = None,
         errors: str = "raise"):
    """Size and evaluate every line; return the lines with the results ``fill`` writes.

    Parameters
    ----------
    lines : pandas.DataFrame or list of dict
        One row per line, keyed by the Lines sheet's headers with their units
        (``'Operating temperature [°C]'``, ``'Size'``, ...).
    conditions, materials : DataFrame or list of dict, optional
        Rows of the Conditions and Materials sheets; None: the built-in ones.
    settings : dict, DataFrame or list of dict, optional
        ``{'Energy price': (0.05, 'EUR/kWh'), 'Currency': 'EUR'}`` (a value, or a value and its
        unit), or rows with ``Setting``, ``Value``, ``Unit``; None: the built-in defaults.
    sheets : dict, optional
        Other sheets by name (``Fluids``, ``Codes``, ``Fittings``), as tables.
    errors : 'raise' or 'report'
        'raise' (default): an input error raises :class:`SizeError`; 'report': such lines get
        ``Status`` 'error' and the error in ``Notes``, as ``fill`` writes them.

    Returns
    -------
    The lines (a DataFrame with the same index if a DataFrame came in, else a list of dicts),
    each with the output columns (``'Thickness [mm]'``, ..., ``'Notes'``) and ``'Status'``
    ('ok', 'warning' or 'error'; None for a row that holds no line).
    """
    from .design.select import specify
    from .io.memory import MemoryBook
    from .outputs.columns import lines_edits
    from .workbook.inputs import read_inputs

    if errors not in ("raise", "report"):
        raise ValueError(f"errors must be 'raise' or 'report', not {errors!r}")
    tables = {"Lines": lines, "Conditions": conditions, "Materials": materials, **(sheets or {})}
    given = {name: _rows(t, name) for name, t in tables.items() if t is not None}
    grids = {name: _grid(headers, rows) for name, (headers, rows) in given.items()}
    if settings is not None:
        given["Settings"] = _settings_rows(settings)
        grids["Settings"] = _grid(*given["Settings"])
    book = MemoryBook(grids)
    inputs = read_inputs(book)
    labels = {name: _labels(t, len(given[name][1])) for name, t in tables.items() if t is not None}
    labels["Settings"] = [r.get("Setting") for r in given.get("Settings", ([], []))[1]]
    fatal = [n for n in inputs.notes if n.level == "error" and n.code in FATAL]
    if fatal:
        raise _error(fatal, grids, labels)
    res = specify(inputs)
    wrong = _input_errors(inputs, res)
    if wrong and errors == "raise":
        raise _error(wrong, grids, labels)
    t = inputs.lines
    edits = lines_edits(book.sheet("Lines"), t, res, inputs.us_units,
                        str(inputs.settings["currency"]))
    return _results(lines, given["Lines"], edits.values, {r: i for i, r in enumerate(t.rows)}, res.status)


def _input_errors(inputs, res) -> list[Note]:
    """Every error in the input (not those only the calculation finds), once, in order."""
    from .commands.check import COMPUTED

    found = [n for n in inputs.notes if n.level == "error"]
    found += [n for notes in res.notes for n in notes if n.level == "error" and n.code not in COMPUTED]
    return list(dict.fromkeys(found))


def _error(notes: list[Note], grids: dict, labels: dict) -> SizeError:
    first = notes[0]
    row = column = None
    where = ""
    if first.sheet in grids and first.cell:
        r, c = _position(first.cell)
        header = grids[first.sheet][0]
        column = str(header[c]) if c < len(header) and header[c] != "" else None
        if r >= 1 and r - 1 < len(labels.get(first.sheet, [])):
            row = labels[first.sheet][r - 1]
        where = ", ".join(w for w in (f"row {row!r}" if row is not None else "",
                                      f"column {column!r}" if column else "") if w)
    table = first.sheet or "Lines"
    more = f" (and {len(notes) - 1} more input error{'s' if len(notes) > 2 else ''}: see .notes)" \
        if len(notes) > 1 else ""
    text = f"{first.message} ({table}{': ' + where if where else ''}){more}"
    return SizeError(text, sheet=first.sheet, row=row, column=column, notes=notes)


def _position(cell: str) -> tuple[int, int]:
    letters = "".join(ch for ch in cell if ch.isalpha()).upper()
    digits = "".join(ch for ch in cell if ch.isdigit())
    col = 0
    for ch in letters:
        col = col * 26 + ord(ch) - 64
    return (int(digits) - 1 if digits else -1), col - 1


def _is_frame(table) -> bool:
    return hasattr(table, "columns") and hasattr(table, "itertuples") and hasattr(table, "index")


def _rows(table, name: str) -> tuple[list[str], list[dict]]:
    """A table's headers (first seen first) and its rows as dicts of cell values."""
    if _is_frame(table):
        headers = [str(c) for c in table.columns]
        return headers, [dict(zip(headers, row, strict=True)) for row in table.itertuples(index=False, name=None)]
    if isinstance(table, (str, bytes, Mapping)) or not isinstance(table, Sequence):
        raise TypeError(f"{name}: give a pandas DataFrame or a list of dicts (one per row), not "
                        f"{type(table).__name__}")
    headers: dict[str, None] = {}
    rows = []
    for k, row in enumerate(table):
        if not isinstance(row, Mapping):
            raise TypeError(f"{name}: row {k} is a {type(row).__name__}, not a dict of header -> value; give a list of dicts or a DataFrame")
        rows.append({str(h): v for h, v in row.items()})
        headers.update(dict.fromkeys(str(h) for h in row))
    return list(headers), rows


def _labels(table, n: int) -> list:
    """What a row is called in an error: its DataFrame index label, or its position in the list."""
    return list(table.index) if _is_frame(table) else list(range(n))


def _settings_rows(settings) -> tuple[list[str], list[dict]]:
    if isinstance(settings, Mapping):
        rows = []
        for name, v in settings.items():
            value, unit = v if isinstance(v, tuple) and len(v) == 2 else (v, None)
            rows.append({"Setting": str(name), "Value": value, "Unit": unit})
        return ["Setting", "Value", "Unit"], rows
    return _rows(settings, "settings")


def _grid(headers: list[str], rows: list[dict]) -> list[list[Any]]:
    return [list(headers)] + [[_cell(r.get(h)) for h in headers] for r in rows]


def _cell(v: Any) -> Any:
    """A value as a sheet holds it: numbers as floats, blanks (None, NaN, pandas' NA) as ''."""
    if v is None or type(v).__name__ in ("NAType", "NaTType"):
        return ""
    if hasattr(v, "item") and not isinstance(v, (str, bytes)):  # a numpy scalar
        v = v.item()
    if isinstance(v, bool):
        return v
    if isinstance(v, (int, float)):
        return "" if isinstance(v, float) and math.isnan(v) else float(v)
    return v


def _results(lines, given: tuple[list[str], list[dict]], values: dict, line_of_row: dict[int, int], status):
    """The input rows with the output columns (as ``fill`` writes them) and the status."""
    headers, rows = given
    out_cols = sorted(c for (r, c) in values if r == 0)
    names = {c: str(values[(0, c)]) for c in out_cols}
    replaced = [headers[c] for c in out_cols if c < len(headers) and fold(headers[c]) != fold(names[c])]
    columns = {names[c]: [values.get((k + 1, c)) for k in range(len(rows))] for c in out_cols}
    columns[STATUS] = [status[line_of_row[k + 1]] if k + 1 in line_of_row else None for k in range(len(rows))]
    if _is_frame(lines):
        frame = lines.drop(columns=[h for h in lines.columns if str(h) in replaced]).copy()
        for name, col in columns.items():
            frame[name] = col
        return frame
    result = []
    for k, row in enumerate(rows):
        d = {h: v for h, v in row.items() if h not in replaced}
        d.update({name: col[k] for name, col in columns.items()})
        result.append(d)
    return result


__all__ = ["SizeError", "size", "WorkbookError"]
