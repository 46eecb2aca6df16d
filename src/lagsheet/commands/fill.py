"""The one-way flow of a run: read -> check -> solve/specify -> write. No printing here.

Before anything is read, :func:`fill` settles where it will write and refuses (exit 2)
what could damage a file (:func:`lagsheet.io.save.refuse_unsafe`): an output that is
the input (unless ``in_place``), a report that is the input or the output, a missing
folder, a link or special file, and an output (or, in place, the input) that a
spreadsheet program holds open. Everything that can fail on the workbook's content
happens before the first byte is written, and the renames come last: the backup, the
workbook and the report are each written and verified first, then renamed in that
order (see :func:`lagsheet.io.save.writing`).
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from ..design.select import Results, specify
from ..errors import Note, WorkbookError
from ..io import open_book
from ..io.locks import find_lock
from ..io.save import atomic_copy, refuse_unsafe, remove_stale_temps, same_file, writing
from ..outputs import report
from ..outputs.columns import lines_edits
from ..outputs.summary import quantities_table, summary
from ..workbook.inputs import Inputs, read_inputs


@dataclass
class Outcome:
    inputs: Inputs
    results: Results
    report: dict
    exit_code: int


def backup_path(path: Path) -> Path:
    """Where ``--in-place`` keeps the input's previous bytes: the first free name of
    ``NAME.backup.xlsx``, ``NAME.backup-2.xlsx``, ``NAME.backup-3.xlsx``, ... (an earlier
    backup is never replaced)."""
    for k in range(1, 10_000):
        candidate = path.with_name(f"{path.stem}.backup{'' if k == 1 else f'-{k}'}{path.suffix}")
        if not os.path.lexists(candidate):
            return candidate
    raise WorkbookError(f"{path.name}: 9,999 backups of it exist beside it; move some away")


def load(path: Path, sheet: str = "Lines", header_map: dict[str, str] | None = None,
         companion: Path | None = None):
    """Open and check a workbook; exit-2 problems (no Lines sheet, header or required column, a
    --map that names no column) raise."""
    book = open_book(Path(path), companion, sheet)
    inputs = read_inputs(book, sheet, header_map)
    fatal = [n for n in inputs.notes if n.level == "error" and n.code in
             ("no-lines-sheet", "no-header", "missing-column", "map-unused")]
    if fatal:
        raise WorkbookError("; ".join(n.message for n in fatal))
    return book, inputs


def fill(path: Path, out: Path | None, *, sheet: str = "Lines", report_path: Path | None = None,
         in_place: bool = False, ignore_lock: bool = False, allow_loss: bool = False,
         progress=None, header_map: dict[str, str] | None = None, companion: Path | None = None) -> Outcome:
    """Size and evaluate every line of ``path`` and write the filled workbook to ``out``.

    ``progress``, if given, is called with the name of each stage as it starts
    ('reading', 'solving', 'writing'); the CLI shows it. ``companion``: for a ``.csv``
    schedule, the workbook its other sheets come from (``--with``).
    """
    step = progress or (lambda stage: None)
    path = Path(path)
    out = _output_path(path, out, in_place)
    rules = {"inputs": [path, *([Path(companion)] if companion is not None else [])], "in_place": path if in_place else None, "lock_option": "--ignore-lock"}
    report_path = Path(report_path) if report_path is not None else None
    notes = _refuse_unsafe_paths(path, out, report_path, in_place, ignore_lock, rules)
    step("reading")
    book, inputs = load(path, sheet, header_map, companion)
    inputs.notes[:0] = notes
    step("solving")
    res = specify(inputs)
    step("writing")
    rep = _write(book, inputs, res, path, out, report_path, in_place=in_place, allow_loss=allow_loss,
                 ignore_lock=ignore_lock, rules=rules)
    errors = any(s == "error" for s in res.status) or any(
        n.level == "error" for n in inputs.notes) or any(c["status"] == "error" for c in inputs.columns)
    return Outcome(inputs, res, rep, 1 if errors else 0)


def _output_path(path: Path, out: Path | None, in_place: bool) -> Path:
    """The file to write (the input itself with ``in_place``); refuses a missing input, an output
    that would overwrite the input without ``in_place``, and an output of another file type
    (but for a ``.csv`` schedule, which may also be written as a new ``.xlsx``)."""
    if in_place:
        out = path
    if out is None:
        raise WorkbookError("give the output file with -o OUT.xlsx (or --in-place to overwrite the input)")
    out = Path(out)
    if not path.is_file():
        raise WorkbookError(f"{path}: no such file")
    if same_file(path, out) and not in_place:
        raise WorkbookError(f"{out}: the output would overwrite the input; choose another -o, "
                            "or give --in-place (a backup copy is kept)")
    if out.suffix.lower() != path.suffix.lower():
        if path.suffix.lower() != ".csv":
            raise WorkbookError(f"{out.name}: the output must have the input's type ({path.suffix})")
        if out.suffix.lower() != ".xlsx":
            raise WorkbookError(f"{out.name}: a CSV schedule is written as .csv or .xlsx")
    return out


def _refuse_unsafe_paths(path: Path, out: Path, report_path: Path | None, in_place: bool,
                         ignore_lock: bool, rules: dict) -> list[Note]:
    """Refuse a report or output that could damage a file (:func:`refuse_unsafe`); the warnings
    of a run whose output lock is ignored or whose input is open in a spreadsheet program."""
    if report_path is not None:
        if same_file(report_path, path) or same_file(report_path, out):
            raise WorkbookError(f"{report_path}: the report would overwrite the workbook; "
                                "choose another --report file")
        refuse_unsafe(report_path, what="report", ignore_lock=ignore_lock,
                      **{**rules, "inputs": [*rules["inputs"], out]})
    notes: list[Note] = []
    lock = refuse_unsafe(out, ignore_lock=ignore_lock, **rules)
    if lock is not None:
        notes.append(Note("warning", "lock-ignored",
                          f"{out.name} looked open in a spreadsheet program ({lock.by()}, lock file "
                          f"{lock.path.name}); written anyway because --ignore-lock was given"))
    if not in_place:
        in_lock = find_lock(path)
        if in_lock is not None:
            notes.append(Note("warning", "input-open",
                              f"{path.name} is open in a spreadsheet program ({in_lock.by()}): "
                              "the last saved version is read; unsaved changes there are not included"))
    return notes


def _write(book, inputs: Inputs, res: Results, path: Path, out: Path, report_path: Path | None, *,
           in_place: bool, allow_loss: bool, ignore_lock: bool, rules: dict) -> dict:
    """Write the backup (in place), the filled workbook and the report; gives the report."""
    edits = [lines_edits(book.sheet(inputs.lines.sheet), inputs.lines, res, inputs.us_units,
                         str(inputs.settings["currency"]))]
    stale = remove_stale_temps(out)
    if stale:
        inputs.notes.append(Note("info", "stale-temporary",
                                 f"removed {len(stale)} temporary file(s) an interrupted run left: "
                                 + ", ".join(stale)))
    # every file of the run is written and verified first; the renames come last, in this
    # order: backup, workbook, report (a failure of a rename names what was written)
    with writing(ignore_lock=ignore_lock, **rules, deferred=True):
        if in_place:
            backup = backup_path(path)
            atomic_copy(path, backup, exclusive=True)
            inputs.notes.append(Note("info", "backup", f"the input was kept as {backup.name}"))
        losses = book.save(edits, out, [summary(inputs, res), quantities_table(inputs, res)],
                           allow_loss=allow_loss)
        del edits  # the report is built once the workbook is saved: the two are never held at once
        for loss in losses:  # only with --allow-loss: otherwise the save refused
            inputs.notes.append(Note("warning", "content-lost",
                                     f"{loss}; written anyway because --allow-loss was given"))
        rep = report.build(inputs, res, path, out)
        if report_path is not None:
            report.write(rep, report_path, inputs=[out])
    return rep
