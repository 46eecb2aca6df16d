"""The calculation package of a schedule, as one PDF: title page (approval block, cautions,
contents), 1 design basis, 2 Summary, 3 Quantities, 4 results by area, 5 one calculation
sheet per chosen line, 6 the index of the sheets. Written through the one safe save."""

from __future__ import annotations

import datetime as _dt
from pathlib import Path

from ... import __version__
from ...design.select import Results
from ...workbook.inputs import Inputs
from ..summary import quantities_table, summary
from .basis import design_basis, title_page
from .document import Document
from .records import LineSheet
from .sheet import draw_sheet
from .tables import results_by_area, sheet_index, summary_pages


def build(inputs: Inputs, res: Results, sheets: list[LineSheet], *, workbook: str, scope: str,
          date: _dt.date, index: list[tuple[str, str, str, str]], stale: list[str] = ()) -> Document:
    """The whole document in memory; ``index`` is (tag, area, governing, status) per sheet;
    ``stale`` the workbook's results that differ from this calculation (said on the title page)."""
    pdf = Document(workbook, date.isoformat())
    title_page(pdf, inputs, res, scope, len(sheets), __version__, list(stale))
    design_basis(pdf, inputs, res, summary(inputs, res, date))
    summary_pages(pdf, summary(inputs, res, date), quantities_table(inputs, res))
    results_by_area(pdf, inputs, res)
    pages = []
    for k, s in enumerate(sheets):
        pages.append(draw_sheet(pdf, s, inputs.us_units, "5 Calculation sheets" if k == 0 else None))
    if sheets:
        sheet_index(pdf, [(*e, p) for e, p in zip(index, pages, strict=True)])
    return pdf


def write(inputs: Inputs, res: Results, sheets: list[LineSheet], out: Path, *, workbook: str, scope: str,
          index: list[tuple[str, str, str, str]], never=(), date: _dt.date | None = None,
          stale: list[str] = ()) -> int:
    """Write the package to ``out`` (never onto one of ``never``); returns its number of pages."""
    from ...io.save import atomic_write

    pdf = build(inputs, res, sheets, workbook=workbook, scope=scope, date=date or _dt.date.today(), index=index,
                stale=stale)

    def write_pdf(tmp: str) -> None:
        pdf.output(tmp)

    atomic_write(Path(out), write_pdf, inputs=never, what="calculation package")
    return pdf.pages_count
