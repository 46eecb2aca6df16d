"""The blank workbooks of ``lagsheet new``: the shipped templates, copied byte for byte.

The templates are built by ``sheet_templates/build_templates.py`` (the source of truth)
and shipped in ``lagsheet/templates_data``; nothing here builds or parses a workbook.
"""

from __future__ import annotations

import os
from importlib.resources import files
from pathlib import Path

from ..errors import WorkbookError

TEMPLATES = {".xlsx": "lagsheet.xlsx", ".ods": "lagsheet.ods"}


def template_bytes(suffix: str) -> bytes:
    """The bytes of the blank workbook for ``suffix`` ('.xlsx' or '.ods')."""
    name = TEMPLATES.get(suffix.lower())
    if name is None:
        raise WorkbookError(f"no template for {suffix or 'a name without a suffix'}; "
                            f"give a file name ending in {' or '.join(TEMPLATES)}")
    return files("lagsheet.templates_data").joinpath(name).read_bytes()


def write_new(path: Path, *, force: bool = False) -> Path:
    """Write the blank workbook to ``path`` (its type by suffix); refuse to replace a file unless ``force``."""
    from ..io.save import atomic_write, refuse_unsafe

    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in TEMPLATES:
        raise WorkbookError(f"{path.name}: lagsheet new writes {' or '.join(TEMPLATES)} workbooks; "
                            f"give a file name ending in one of them")
    refuse_unsafe(path, what="workbook")  # a link, a special file, an open workbook, a name too long
    if os.path.lexists(path) and not force:
        raise WorkbookError(f"{path}: already exists; nothing was written (give --force to replace it)")
    data = template_bytes(suffix)

    def write(tmp: str) -> None:
        with open(tmp, "wb") as fh:
            fh.write(data)

    # without --force the file is given its name only if no file has it by then
    atomic_write(path, write, exclusive=not force, what="workbook")
    return path
