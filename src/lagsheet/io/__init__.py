"""Spreadsheet access: adapters that read a workbook into neutral tables and write edits back."""

from __future__ import annotations

from pathlib import Path

from ..errors import WorkbookError
from .table import Book


def open_book(path: Path, companion: Path | None = None, sheet: str = "Lines") -> Book:
    """Open a workbook by its suffix; only ``io`` knows which library does it.

    A ``.csv`` schedule is one sheet named ``sheet``; ``companion`` (``--with BOOK``) gives
    its other sheets (:func:`lagsheet.io.csv.open_csv`).

    The package is checked first (:func:`lagsheet.io.preflight.check_package`): no
    library parses a file that is broken or hostile.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix == ".csv":
        from .csv import open_csv

        return open_csv(path, companion, sheet)
    if companion is not None:
        raise WorkbookError(f"{path.name}: --with is for a .csv schedule; a workbook has its own sheets")
    if suffix in (".xlsx", ".xlsm"):
        from .preflight import check_package
        from .xlsx import XlsxBook

        return XlsxBook.open(path, scan=check_package(path))
    if suffix == ".ods":
        from .ods import OdsBook
        from .preflight import check_package

        check_package(path)
        return OdsBook.open(path)
    if suffix == ".xls":
        raise WorkbookError(
            f"{path.name}: legacy .xls is not supported; save it as .xlsx in your spreadsheet program")
    raise WorkbookError(f"{path.name}: not a workbook lagsheet reads (.xlsx, .xlsm, .ods, .csv)")
