"""`lagsheet check`: every column, unit and cell of a workbook, without computing heat.

Collects what reading and resolving find — headers lagsheet does not know (with the
closest known header and its aliases), units that do not parse or have the wrong
dimension, columns without a unit, values outside a field's range, likely mislabelled
units, text quantities, formulas without cached values, blank required cells,
duplicate tags, unknown materials, conditions, finishes and shapes — as notes with
sheet and cell. ``--annotate`` saves a copy with a comment on every offending cell.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from ..design.lines import resolve_lines
from ..errors import Note, WorkbookError
from ..io import open_book
from ..io.table import SheetEdits
from ..workbook.inputs import Inputs, read_inputs

# Error codes only the calculation can give (a target no sold thickness meets, a balance that
# does not converge, a conductivity outside its data): `fill` reports them, `check` cannot.
# Every other error is an input error, decided by reading and resolving, which both commands share.
COMPUTED = frozenset({"target-not-met", "not-converged", "k-out-of-range"})


@dataclass
class CheckOutcome:
    inputs: Inputs
    notes: list[Note] = field(default_factory=list)  # every note, workbook and cells
    exit_code: int = 0


def check(path: Path, sheet: str = "Lines", annotate: Path | None = None,
          header_map: dict[str, str] | None = None, companion: Path | None = None) -> CheckOutcome:
    if annotate is not None and Path(annotate).suffix.lower() == ".csv":
        raise WorkbookError(f"{Path(annotate).name}: a CSV file holds no comments; give --annotate OUT.xlsx "
                            "for a copy with a comment on every offending cell")
    book = open_book(Path(path), companion, sheet)
    inputs = read_inputs(book, sheet, header_map)
    out = CheckOutcome(inputs)
    out.notes.extend(inputs.notes)
    t = inputs.lines
    if t is not None:
        for line_notes in resolve_lines(inputs)[1]:  # the input errors `fill` finds, by the same code
            out.notes.extend(line_notes)
    if annotate is not None:
        if t is None:
            raise WorkbookError("nothing to annotate: the workbook has no Lines table")
        e = SheetEdits(t.sheet, t.header_row)
        for n in out.notes:
            if n.sheet == t.sheet and n.cell and n.level in ("error", "warning"):
                from ..outputs.columns import _parse_address

                pos = _parse_address(n.cell)
                if pos is not None:
                    e.comments[pos] = (e.comments[pos] + "\n" if pos in e.comments else "") + n.message
        from ..outputs.columns import fit_comments

        fit_comments(e.comments, "check's printed list and its --report")
        book.save([e], Path(annotate))
    out.exit_code = 1 if any(n.level == "error" for n in out.notes) else 0
    return out
