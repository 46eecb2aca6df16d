"""Excel workbooks (.xlsx, .xlsm) through openpyxl, with values read by calamine.

openpyxl holds the workbook that is written back (formulas, styles, validations,
VBA with ``keep_vba``); calamine reads the cell values, cached formula results
included, many times faster than openpyxl's ``data_only`` pass. A formula cell that
calamine reads as empty and openpyxl knows as a formula has no cached value.
"""

from __future__ import annotations

import zipfile
from pathlib import Path
from typing import Any

from ..errors import WorkbookError
from .save import atomic_write
from .table import RawSheet, SheetEdits, fold

AUTHOR = "lagsheet"
MARK = "lagsheet: "  # our comments start with this, so that a later run replaces them


class XlsxBook:
    def __init__(self, path: Path, wb, values):
        self.path = path
        self._wb = wb
        self._values = values
        self._sheets: dict[str, RawSheet] = {}

    @classmethod
    def open(cls, path: Path) -> XlsxBook:
        import openpyxl
        import python_calamine

        if not zipfile.is_zipfile(path):
            raise WorkbookError(f"{path.name}: not an Excel workbook (the file is not a zip package)")
        try:
            wb = openpyxl.load_workbook(path, keep_vba=path.suffix.lower() == ".xlsm",
                                        keep_links=True, rich_text=True)
            values = python_calamine.CalamineWorkbook.from_path(str(path))
        except Exception as exc:  # any library failure means the file cannot be read
            raise WorkbookError(f"{path.name}: cannot be read as a workbook ({exc})") from exc
        return cls(path, wb, values)

    def sheet_names(self) -> list[str]:
        return list(self._wb.sheetnames)

    def sheet(self, name: str) -> RawSheet:
        if name not in self._sheets:
            grid = self._values.get_sheet_by_name(name).to_python(skip_empty_area=False)
            ws = self._wb[name]
            uncached = set()
            for r, row in enumerate(grid):
                for c, v in enumerate(row):
                    if v == "" and ws.cell(r + 1, c + 1).data_type == "f":
                        uncached.add((r, c))
            self._sheets[name] = RawSheet(name, grid, uncached)
        return self._sheets[name]

    def save(self, edits: list[SheetEdits], out: Path) -> None:
        from copy import copy

        from openpyxl.comments import Comment
        from openpyxl.utils import get_column_letter

        for e in edits:
            ws = self._wb[e.sheet] if e.sheet in self._wb.sheetnames else self._wb.create_sheet(e.sheet)
            for cell in [c for row in ws.iter_rows() for c in row if c.comment is not None]:
                if _ours(cell.comment):
                    cell.comment = None
            for (r, c), v in e.values.items():
                cell = ws.cell(r + 1, c + 1)
                _set(cell, v)
                fmt = e.number_formats.get((r, c))
                if fmt:
                    cell.number_format = fmt
            for (r, c), (sr, sc) in e.headers.items():
                src, dst = ws.cell(sr + 1, sc + 1), ws.cell(r + 1, c + 1)
                if src.has_style:
                    dst._style = copy(src._style)  # the header row's look, as openpyxl copies styles
            for c, width in e.widths.items():
                letter = get_column_letter(c + 1)
                if ws.column_dimensions[letter].width in (None, 13.0):
                    ws.column_dimensions[letter].width = width
            for (r, c), text in e.comments.items():
                cell = ws.cell(r + 1, c + 1)
                if cell.comment is None:  # a person's comment is never replaced
                    cell.comment = Comment(MARK + text, AUTHOR, width=320, height=120)
        atomic_write(out, self._wb.save, like=self.path)


def _ours(comment) -> bool:
    return comment.author == AUTHOR or str(comment.text).startswith(MARK)


def _set(cell, value: Any) -> None:
    cell.value = value
    if isinstance(value, str) and cell.data_type == "f":
        cell.data_type = "s"  # text we write is never a formula


def find_sheet(names: list[str], wanted: str) -> str | None:
    for n in names:
        if fold(n) == fold(wanted):
            return n
    return None
