"""`lagsheet check`: every column, unit and cell of a workbook, without computing heat.

Collects what reading and resolving find — headers lagsheet does not know (with the
closest known header and its aliases), units that do not parse or have the wrong
dimension, columns without a unit, values outside a field's range, likely mislabelled
units, text quantities, formulas without cached values, blank required cells,
duplicate tags, unknown materials, conditions, finishes and shapes — as notes with
sheet and cell. ``--annotate`` saves a copy with a comment on every offending cell.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from pathlib import Path

from . import schema
from .check import split_header
from .errors import Note, WorkbookError
from .inputs import Inputs, read_inputs
from .io import open_book
from .io.table import SheetEdits, address, fold
from .resolve import Columns, resolve


@dataclass
class CheckOutcome:
    inputs: Inputs
    notes: list[Note] = field(default_factory=list)  # every note, workbook and cells
    exit_code: int = 0


def unknown_headers(inputs: Inputs, raw_header: list) -> list[Note]:
    """Headers of Lines that are no field: a note with the closest known header and its aliases."""
    t = inputs.lines
    known = {f.header.lower(): f for f in schema.LINE_FIELDS}
    for f in schema.LINE_FIELDS:
        for a in f.aliases:
            known.setdefault(a, f)
    outputs = {fold(o.header) for o in schema.OUTPUTS}
    notes = []
    for c, text in enumerate(raw_header):
        if not isinstance(text, str) or not text.strip():
            continue
        name = fold(split_header(text)[0])
        if name in known or name in outputs:
            continue
        near = difflib.get_close_matches(name, list(known), n=1, cutoff=0.75)
        if not near:
            continue  # a column of the user's own: not ours to judge
        f = known[near[0]]
        aliases = ", ".join(repr(a) for a in f.aliases) or "none"
        notes.append(Note("warning", "unknown-header",
                          f"header {text!r} is not one lagsheet reads; did you mean {f.header!r}"
                          f"{' [' + f.unit + ']' if f.unit else ''}? (also accepted: {aliases})",
                          t.sheet, address(t.header_row, c)))
    return notes


def check(path: Path, sheet: str = "Lines", annotate: Path | None = None) -> CheckOutcome:
    book = open_book(Path(path))
    inputs = read_inputs(book, sheet)
    out = CheckOutcome(inputs)
    out.notes.extend(inputs.notes)
    t = inputs.lines
    if t is not None:
        raw = book.sheet(t.sheet)
        out.notes.extend(unknown_headers(inputs, raw.grid[t.header_row]))
        tags = t.get("tag")
        seen: dict[str, int] = {}
        cols = Columns(t)
        for i in range(len(t.rows)):
            line_notes = list(t.cell_notes.get(i, []))
            resolve(t, inputs, i, line_notes, cols)
            tag = tags[i] if tags is not None else None
            if not tag:
                line_notes.append(Note("error", "blank-tag", "'Tag' is blank; give every line a unique tag",
                                       t.sheet, t.cell(i, "tag")))
            elif fold(tag) in seen:
                line_notes.append(Note("error", "duplicate-tag", f"tag {tag!r} is used again (first in row "
                                       f"{t.rows[seen[fold(tag)]] + 1})", t.sheet, t.cell(i, "tag")))
            else:
                seen[fold(tag)] = i
            out.notes.extend(line_notes)
    if annotate is not None:
        if t is None:
            raise WorkbookError("nothing to annotate: the workbook has no Lines table")
        e = SheetEdits(t.sheet, t.header_row)
        for n in out.notes:
            if n.sheet == t.sheet and n.cell and n.level in ("error", "warning"):
                from .writeback import _parse_address

                pos = _parse_address(n.cell)
                if pos is not None:
                    e.comments[pos] = (e.comments[pos] + "\n" if pos in e.comments else "") + n.message
        from .writeback import fit_comments

        fit_comments(e.comments, "check's printed list and its --report")
        book.save([e], Path(annotate))
    out.exit_code = 1 if any(n.level == "error" for n in out.notes) else 0
    return out
