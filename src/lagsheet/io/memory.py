"""Books put together in memory: tables handed over by a script, and a CSV with a companion workbook."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from ..errors import WorkbookError
from .table import Book, NewSheet, RawSheet, SheetEdits, fold


class MemoryBook:
    """Sheets given as grids of values (a script's tables); nothing to save."""

    def __init__(self, sheets: dict[str, list[list[Any]]], path: Path = Path("<memory>")):
        self.path = Path(path)
        self._sheets = {name: RawSheet(name, grid) for name, grid in sheets.items()}

    def sheet_names(self) -> list[str]:
        return list(self._sheets)

    def sheet(self, name: str) -> RawSheet:
        return self._sheets[name]

    def save(self, edits: list[SheetEdits], out: Path, new_sheets: list[NewSheet] = (),
             allow_loss: bool = False) -> list[str]:
        raise WorkbookError("tables given in memory are not saved to a file")


class WithBook:
    """A schedule's lines from one book (a CSV), its other sheets (Conditions, Materials, Settings,
    Codes, Fittings, Fluids) from a companion workbook (``--with BOOK.xlsx``).

    The companion's own sheet of the lines' name is hidden (the CSV's lines are the lines);
    saving writes the lines' book, never the companion.
    """

    def __init__(self, lines: Book, companion: Book):
        self.lines, self.companion = lines, companion
        self.path = lines.path
        self._name = lines.sheet_names()[0]

    def sheet_names(self) -> list[str]:
        return [self._name] + [n for n in self.companion.sheet_names() if fold(n) != fold(self._name)]

    def sheet(self, name: str) -> RawSheet:
        return self.lines.sheet(name) if fold(name) == fold(self._name) else self.companion.sheet(name)

    def save(self, edits: list[SheetEdits], out: Path, new_sheets: list[NewSheet] = (),
             allow_loss: bool = False) -> list[str]:
        return self.lines.save(edits, out, new_sheets, allow_loss)
