"""The one-way flow of a run: read -> check -> solve/specify -> write. No printing here."""

from __future__ import annotations

import shutil
from dataclasses import dataclass
from pathlib import Path

from . import report
from .errors import Note, WorkbookError
from .inputs import Inputs, read_inputs
from .io import open_book
from .spec import Results, specify
from .writeback import lines_edits


@dataclass
class Outcome:
    inputs: Inputs
    results: Results
    report: dict
    exit_code: int


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (b.exists() and a.samefile(b))
    except OSError:
        return False


def fill(path: Path, out: Path | None, *, sheet: str = "Lines", report_path: Path | None = None,
         in_place: bool = False) -> Outcome:
    """Size and evaluate every line of ``path`` and write the filled workbook to ``out``."""
    path = Path(path)
    if in_place:
        out = path
    if out is None:
        raise WorkbookError("give the output file with -o OUT.xlsx (or --in-place to overwrite the input)")
    out = Path(out)
    if not path.is_file():
        raise WorkbookError(f"{path}: no such file")
    if _same_file(path, out) and not in_place:
        raise WorkbookError(f"{out}: the output would overwrite the input; choose another -o, "
                            "or give --in-place (a backup copy is kept)")
    if out.suffix.lower() != path.suffix.lower():
        raise WorkbookError(f"{out.name}: the output must have the input's type ({path.suffix})")
    book = open_book(path)
    inputs = read_inputs(book, sheet)
    fatal = [n for n in inputs.notes if n.level == "error" and n.code in
             ("no-lines-sheet", "no-header", "missing-column")]
    if fatal:
        raise WorkbookError("; ".join(n.message for n in fatal))
    res = specify(inputs)
    edits = [lines_edits(book.sheet(inputs.lines.sheet), inputs.lines, res, inputs.us_units,
                         str(inputs.settings["currency"]))]
    if in_place:
        backup = path.with_name(f"{path.stem}.backup{path.suffix}")
        shutil.copy2(path, backup)
        inputs.notes.append(Note("info", "backup", f"the input was kept as {backup.name}"))
    book.save(edits, out)
    rep = report.build(inputs, res, path, out)
    if report_path is not None:
        report.write(rep, Path(report_path))
    errors = any(s == "error" for s in res.status) or any(
        n.level == "error" for n in inputs.notes) or any(c["status"] == "error" for c in inputs.columns)
    return Outcome(inputs, res, rep, 1 if errors else 0)
