"""``lagsheet calcs``: the calculation package of a schedule, as a PDF a reviewer signs.

The schedule (filled or not) is read and sized exactly as ``fill`` and ``explain`` do; the
lines to give a calculation sheet are chosen (:func:`choose`), their numbers gathered
(:mod:`lagsheet.commands.calcs_sheet`) and the package written through the one safe save.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass
from pathlib import Path

from ..design.select import Results, specify
from ..errors import WorkbookError
from ..io.save import refuse_unsafe, same_file
from ..io.table import fold
from ..outputs.calcs import package
from ..workbook.inputs import Inputs
from .calcs_sheet import gather
from .explain import find_line
from .fill import load


@dataclass
class Outcome:
    inputs: Inputs
    results: Results
    chosen: list[int]
    scope: str
    pages: int
    exit_code: int
    stale: list[str]  # results the workbook holds that differ from this calculation


def default_lines(res: Results) -> list[int]:
    """The lines with warnings or errors, and the first line governed by each target."""
    picked = {i for i in range(res.n) if res.status[i] in ("warning", "error")}
    first: dict[str, int] = {}
    for i in range(res.n):
        gov = res.values["governing"][i]
        if gov and res.status[i] != "error":
            first.setdefault(str(gov), i)
    return sorted(picked | set(first.values()))


def choose(inputs: Inputs, res: Results, tags: list[str], areas: list[str], every: bool) -> tuple[list[int], str]:
    """The lines to give a sheet, in schedule order, and words saying which they are."""
    if every:
        return list(range(res.n)), "every line"
    sheet = inputs.lines.sheet
    picked: set[int] = set()
    wanted = [t.strip() for text in tags for t in text.split(",") if t.strip()]
    for tag in wanted:
        i = find_line(res, tag)
        if i is None:
            raise WorkbookError(f"--tags: no line with Tag {tag!r} in {sheet}; give Tags as the sheet writes "
                                "them, separated by commas")
        picked.add(i)
    col = inputs.lines.get("area")
    names = [str(col[i]) if col is not None and col[i] else "" for i in range(res.n)]
    for area in areas:
        hit = [i for i in range(res.n) if fold(names[i]) == fold(area)]
        if not hit:
            known = ", ".join(repr(a) for a in dict.fromkeys(n for n in names if n)) or "none"
            raise WorkbookError(f"--area: no line of {sheet} has Area {area!r} (its areas: {known})")
        picked.update(hit)
    if wanted or areas:
        words = ([f"Tags {', '.join(wanted)}"] if wanted else []) + ([f"Area {', '.join(areas)}"] if areas else [])
        return sorted(picked), "the lines of " + " and ".join(words)
    return default_lines(res), "the lines with warnings or errors, and the first line governed by each target"


def calcs(path: Path, out: Path | None, *, sheet: str = "Lines", tags: list[str] = (), areas: list[str] = (),
          every: bool = False, date: _dt.date | None = None) -> Outcome:
    """Read and size ``path``, and write its calculation package to ``out`` (a .pdf)."""
    path = Path(path)
    if out is None:
        raise WorkbookError("give the package's file with -o OUT.pdf")
    out = Path(out)
    if out.suffix.lower() != ".pdf":
        raise WorkbookError(f"{out.name}: the calculation package is a PDF; give a name ending in .pdf")
    if same_file(path, out):
        raise WorkbookError(f"{out}: the package would overwrite the workbook; choose another -o")
    refuse_unsafe(out, inputs=[path], what="calculation package")
    book, inputs = load(path, sheet)
    res = specify(inputs)
    idx, scope = choose(inputs, res, list(tags), list(areas), every)
    sheets, stale = gather(inputs, book.sheet(inputs.lines.sheet), res, idx)
    col = inputs.lines.get("area")
    index = [(s.tag, str(col[i]) if col is not None and col[i] else "", res.values["governing"][i] or "",
              res.status[i]) for s, i in zip(sheets, idx, strict=True)]
    pages = package.write(inputs, res, sheets, out, workbook=path.name, scope=scope, index=index,
                          never=[path], date=date, stale=stale)
    errors = any(s == "error" for s in res.status) or any(n.level == "error" for n in inputs.notes) or any(
        c["status"] == "error" for c in inputs.columns)
    return Outcome(inputs, res, idx, scope, pages, 1 if errors else 0, stale)



