"""Results -> the cells ``fill`` writes into the Lines sheet (a neutral SheetEdits).

Output columns go to the right of the last used column in the contract's order; a
column whose header (without its unit) already exists is overwritten in place.
Units follow the input's unit system. Knows the output schema, not the spreadsheet library.
"""

from __future__ import annotations

import numpy as np

from ..design.select import Results
from ..io.table import RawSheet, SheetEdits, fold
from ..workbook.results import COLUMNS, Result, si_unit
from ..workbook.tables import Table, split_header
from ..workbook.units import from_si

# Characters one spreadsheet cell holds: 32,767 (Excel's published specifications and limits,
# from memory; counted in UTF-16 code units). A longer text is cut to fit; comments likewise.
CELL_LIMIT = 32_767


def _units(text: str) -> int:
    return len(text.encode("utf-16-le", "surrogatepass")) // 2


def fit_cell(text: str | None, full_text_in: str = "the JSON report (fill --report)", *,
             limit: int = CELL_LIMIT) -> str | None:
    """``text`` if a cell holds it (``limit`` units); else its start and a marker saying where the whole text is."""
    if text is None or len(text) <= limit // 2 or _units(text) <= limit:
        return text
    mark = (f" [… cut at the {CELL_LIMIT:,} characters a cell holds; the whole text "
            f"({len(text):,} characters) is in {full_text_in}]")
    keep = limit - _units(mark)
    head = text[:keep]
    while _units(head) > keep:  # a character outside the BMP takes two units
        head = head[:-((_units(head) - keep + 1) // 2)]  # never more than needed
    return head + mark


def fit_comments(comments: dict, full_text_in: str = "the JSON report (fill --report)") -> None:
    """Cut every comment of ``comments`` to what a cell holds (as :func:`fit_cell`), with room for
    the writer's 'lagsheet: ' mark."""
    for pos, text in comments.items():
        comments[pos] = fit_cell(text, full_text_in, limit=CELL_LIMIT - 16)


def note_text(notes) -> str:
    return "; ".join(f"{n.level}: {n.message}" if n.level in ("error", "warning") else n.message
                     for n in notes)


def lines_edits(raw: RawSheet, t: Table, res: Results, us: bool, currency: str) -> SheetEdits:
    header_row = t.header_row
    e = SheetEdits(raw.name, header_row)
    existing = {}
    for col, text in enumerate(raw.grid[header_row] if header_row < len(raw.grid) else []):
        if isinstance(text, str) and text.strip():
            existing.setdefault(fold(split_header(text)[0]), col)
    next_col = max(t.last_col, 1)
    for out in COLUMNS:
        unit = out.unit(us, currency)
        header = f"{out.header} [{unit}]" if unit else out.header
        col = existing.get(fold(out.header))
        if out.optional and col is None and not _has_values(out, res):
            continue  # a process result no line has: no empty column for it
        if col is None:
            col = next_col
            next_col += 1
        e.values[(header_row, col)] = header
        values = _column(out, res, us)
        if col not in existing.values():
            e.headers[(header_row, col)] = (header_row, _style_source(raw, header_row))
            # wide enough for the header (up to 24) and for the longest text written (up to 40)
            longest = max(map(len, [v for v in values if isinstance(v, str)]), default=0)
            e.widths[col] = 60.0 if out.key == "notes" else max(10.0, min(len(header) + 2.0, 24.0),
                                                                 min(longest + 2.0, 40.0))
        if t.units_row is not None:
            e.values[(t.units_row, col)] = unit or None
        # one column of cells (no entry per cell): the number format goes with those that are numbers
        e.values.column(col, t.rows, values, out.fmt)
    for nt in t.notes:  # column notes (a header without its unit, a unit that does not parse)
        pos = _parse_address(nt.cell) if nt.cell and nt.level in ("error", "warning") else None
        if pos is not None:
            e.comments[pos] = (e.comments[pos] + "\n" if pos in e.comments else "") + nt.message
    for i, r in enumerate(t.rows):
        for nt in res.notes[i]:
            if nt.cell and nt.level in ("error", "warning") and nt.sheet == raw.name:
                pos = _parse_address(nt.cell)
                if pos is not None and pos[0] == r:
                    e.comments[pos] = (e.comments[pos] + "\n" if pos in e.comments else "") + nt.message
    fit_comments(e.comments)
    return e


def _has_values(out: Result, res: Results) -> bool:
    arr = res.values[out.key]
    return bool(np.isfinite(arr).any()) if arr.dtype != object else any(v is not None for v in arr)


def _style_source(raw: RawSheet, header_row: int) -> int:
    """The last header cell holding text: new headers copy its look."""
    row = raw.grid[header_row] if header_row < len(raw.grid) else []
    for c in range(len(row) - 1, -1, -1):
        if row[c] not in ("", None):
            return c
    return 0


def _column(out: Result, res: Results, us: bool) -> list:
    if out.key == "notes":
        return [fit_cell(note_text(ns) or None) for ns in res.notes]
    arr = res.values[out.key]
    if arr.dtype == object:
        return [None if v is None else str(v) for v in arr]
    unit, held_in = out.unit(us), si_unit(out)
    conv = from_si(np.nan_to_num(arr), held_in, unit) if unit and unit != held_in else arr
    out = np.round(np.asarray(conv, dtype=float), 6).tolist()
    for i in np.flatnonzero(~np.isfinite(arr)):
        out[i] = None
    return out


def _parse_address(a: str) -> tuple[int, int] | None:
    letters = "".join(ch for ch in a if ch.isalpha())
    digits = "".join(ch for ch in a if ch.isdigit())
    if not letters or not digits:
        return None
    col = 0
    for ch in letters.upper():
        col = col * 26 + (ord(ch) - 64)
    return int(digits) - 1, col - 1
