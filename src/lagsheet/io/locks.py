"""Lock files that spreadsheet programs keep beside a workbook they have open.

Excel keeps an owner file ``~$name.xlsx`` beside ``name.xlsx``: its first byte is the
length of the user name, then the name in the ANSI code page padded with spaces, and
later a UTF-16 copy of the name (preceded by the same length). LibreOffice keeps
``.~lock.name.xlsx#``, one CSV record ``user name,system user,host,date,url;`` with
``\\`` escaping ``,`` ``;`` and itself. Both are parsed defensively: a lock file that is
empty, short, binary or unreadable still counts as a lock, with no name.

This module only finds and reads locks; what a command does about them is policy
(see :mod:`lagsheet.commands.fill`). Lagsheet never creates, changes or removes them.
"""

from __future__ import annotations

import contextlib
from dataclasses import dataclass
from pathlib import Path

READ_LIMIT = 4096  # a lock file is a few hundred bytes; never read more than this


@dataclass(frozen=True)
class Lock:
    """A lock file found beside a workbook: where it is, which program's, and who holds it."""

    path: Path
    program: str  # "Excel" or "LibreOffice"
    owner: str | None  # the user name in the lock file, when one could be read

    def by(self) -> str:
        return f"by {self.owner}" if self.owner else "by an unknown user"


def lock_names(workbook: Path) -> list[tuple[Path, str]]:
    """The lock files a spreadsheet program would keep for ``workbook``, with the program's name."""
    workbook = Path(workbook)
    folder, name = workbook.parent, workbook.name
    return [(folder / f"~${name}", "Excel"), (folder / f".~lock.{name}#", "LibreOffice")]


def find_lock(workbook: Path) -> Lock | None:
    """The lock on ``workbook`` if a spreadsheet program holds one, else None."""
    for path, program in lock_names(workbook):
        try:
            if not path.is_file():
                continue
        except OSError:
            continue
        data = b""
        with contextlib.suppress(OSError):
            with open(path, "rb") as fh:
                data = fh.read(READ_LIMIT)
        owner = excel_owner(data) if program == "Excel" else libreoffice_owner(data)
        return Lock(path, program, owner)
    return None


def _clean(name: str) -> str | None:
    name = name.strip().strip("\x00").strip()
    if not name or not name.isprintable() or len(name) > 200:
        return None
    return name


def excel_owner(data: bytes) -> str | None:
    """The user name in an Excel owner file (``~$name``), or None if none can be read.

    Prefers the UTF-16 copy (it holds any script); falls back to the ANSI one.
    """
    if not data:
        return None
    n = data[0]
    if n == 0 or len(data) < 1 + n:
        return None
    k = 1 + n
    while k < len(data) and data[k] == 0x20:  # the ANSI name is padded with spaces
        k += 1
    if k + 1 < len(data):
        m = data[k]
        for start in ((k + 2, k + 1) if data[k + 1] == 0 else (k + 1,)):
            raw = data[start:start + 2 * m]
            if m == 0 or len(raw) < 2 * m:
                continue
            try:
                wide = _clean(raw.decode("utf-16-le"))
            except UnicodeDecodeError:
                continue
            if wide and len(wide) == m:
                return wide
    return _clean(data[1:1 + n].decode("cp1252", "replace"))


def libreoffice_owner(data: bytes) -> str | None:
    """The user name in a LibreOffice lock file (``.~lock.name#``), or None."""
    if not data:
        return None
    text = data.decode("utf-8", "replace")
    fields, cur, i = [], [], 0
    while i < len(text):
        ch = text[i]
        if ch == "\\" and i + 1 < len(text):
            cur.append(text[i + 1])
            i += 2
            continue
        if ch in ",;":
            fields.append("".join(cur))
            cur = []
            if ch == ";":
                break
        else:
            cur.append(ch)
        i += 1
    else:
        fields.append("".join(cur))
    for f in fields[:2]:  # the program's user name, then the system user name
        name = _clean(f)
        if name:
            return name
    return None
