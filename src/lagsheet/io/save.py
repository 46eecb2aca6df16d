"""Atomic saving: a temporary file in the destination folder, then one rename."""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from collections.abc import Callable
from pathlib import Path

TMP_SUFFIX = ".lagsheet-tmp"


def atomic_write(out: Path, write: Callable[[str], None], *, like: Path | None = None) -> None:
    """Call ``write(tmp_path)``, fsync, and rename over ``out``; nothing partial is ever at ``out``.

    The result takes the permission bits of ``like`` (the input) when given.
    """
    out = Path(out)
    folder = out.parent if str(out.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{out.stem}.", suffix=TMP_SUFFIX, dir=folder)
    os.close(fd)
    try:
        write(tmp)
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        if like is not None:
            shutil.copymode(like, tmp)
        os.replace(tmp, out)
        with contextlib.suppress(OSError):
            dfd = os.open(folder, os.O_RDONLY)
            try:
                os.fsync(dfd)
            finally:
                os.close(dfd)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
