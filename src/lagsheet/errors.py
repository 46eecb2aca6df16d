"""Errors and notes.

A user-fixable problem is an :class:`InputError` whose words say where it is and how to fix it.
A doubt that does not stop the work is a :class:`Note`: a value collected and returned,
never printed from deep inside; only the CLI prints.
"""

from __future__ import annotations

from dataclasses import dataclass

LEVELS = ("error", "warning", "caution", "info")


class LagsheetError(Exception):
    """Base of every error lagsheet raises on purpose."""


class InputError(LagsheetError, ValueError):
    """A problem in the user's workbook or options that the user can fix: one sentence saying
    where it is and how to fix it."""


class WorkbookError(LagsheetError, OSError):
    """The file cannot be read or written safely: nothing is written (exit 2)."""


@dataclass(frozen=True)
class Note:
    """One warning or caution: level, a stable code, the cell it is about, and the words."""

    level: str
    code: str
    message: str
    sheet: str = ""
    cell: str = ""

    def __post_init__(self):
        if self.level not in LEVELS:
            raise ValueError(f"unknown note level {self.level!r}")

    def as_dict(self) -> dict:
        return {"level": self.level, "code": self.code, "cell": self.cell,
                "sheet": self.sheet, "message": self.message}
