"""Atomic saving: a temporary file in the destination folder, verified, then one rename.

What is at the destination is always a complete file: the previous one until the
rename, the new one after it. The steps of :func:`atomic_write`:

1. remove temporary files an interrupted run left for the same output (only names of
   lagsheet's own pattern, and only when the process named in them is gone);
2. create ``.<name>.<pid>-<random>.lagsheet-tmp`` in the destination folder (mode 0600);
3. write into it; verify it (a workbook: every zip member's CRC, and a reopen);
4. give it the input's permission bits (or the replaced file's, or the umask's);
5. fsync it, ``os.replace`` it over the destination, fsync the folder.

Any failure removes the temporary file and leaves the destination as it was.
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import stat
import tempfile
import zipfile
from collections.abc import Callable, Iterable
from pathlib import Path

from ..errors import WorkbookError

TMP_SUFFIX = ".lagsheet-tmp"
# names a spreadsheet program keeps for its own lock files: never a name we write
LOCK_PREFIXES = ("~$", ".~lock.")


def temp_pattern(out: Path) -> re.Pattern:
    """Our temporary names for ``out``: '.<name>.<pid>-<random>.lagsheet-tmp'; group 1 is the pid."""
    return re.compile(rf"^\.{re.escape(Path(out).name)}\.(\d{{1,10}})-[a-z0-9_]+{re.escape(TMP_SUFFIX)}$")


def _alive(pid: int) -> bool:
    if pid <= 0:
        return True  # not a pid we could have written: never treat it as stale
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError, OSError):
        return True  # another user's live process, or a pid we cannot judge: keep the file
    return True


def remove_stale_temps(out: Path) -> list[str]:
    """Remove temporary files of ours for ``out`` whose writing process has gone; their names."""
    out = Path(out)
    folder = out.parent if str(out.parent) else Path(".")
    pattern = temp_pattern(out)
    removed = []
    try:
        names = os.listdir(folder)
    except OSError:
        return removed
    for n in names:
        m = pattern.match(n)
        if m is None:
            continue
        pid = int(m.group(1))
        if pid == os.getpid() or _alive(pid):
            continue
        p = folder / n
        with contextlib.suppress(OSError):
            if stat.S_ISREG(os.lstat(p).st_mode):
                os.unlink(p)
                removed.append(n)
    return removed


def verify_workbook(path: Path, *, required: str = "[Content_Types].xml"):
    """A written workbook is a sound zip (every member's CRC) holding ``required``, that calamine opens.

    Returns the calamine workbook it opened (the post-write check reads it further)."""
    import python_calamine

    try:
        with zipfile.ZipFile(path) as zf:
            bad = zf.testzip()
            if bad is not None:
                raise WorkbookError(f"the written file failed its check (member {bad!r} is corrupt)")
            if required not in zf.namelist():
                raise WorkbookError(f"the written file failed its check (no {required})")
        reopened = python_calamine.CalamineWorkbook.from_path(str(path))
        reopened.sheet_names  # noqa: B018
    except WorkbookError:
        raise
    except Exception as exc:  # any failure to reopen means the file must not replace anything
        raise WorkbookError(f"the written file failed its check ({type(exc).__name__}: {exc})") from None
    return reopened


BLOCK = 1 << 20  # characters encoded and compressed at a time by write_pieces


def write_pieces(dst: zipfile.ZipFile, info: zipfile.ZipInfo, pieces: Callable[[], Iterable[str]],
                 size_hint: int) -> None:
    """Write the member ``info`` of ``dst`` from the strings ``pieces()`` yields, UTF-8 encoded.

    The same bytes as ``dst.writestr(info, "".join(pieces()).encode())``, without ever
    holding the whole text: blocks of about :data:`BLOCK` characters are compressed by one
    worker thread while the next block is made (zlib and the file write release the GIL).
    ``size_hint`` (an overestimate of the size in bytes) decides whether the entry needs zip64.
    """
    from collections import deque
    from concurrent.futures import ThreadPoolExecutor

    force = size_hint * 1.05 > zipfile.ZIP64_LIMIT
    with dst.open(info, "w", force_zip64=force) as fh, ThreadPoolExecutor(1) as pool:
        pending: deque = deque()
        buf: list[str] = []
        n = 0
        for piece in pieces():
            buf.append(piece)
            n += len(piece)
            if n >= BLOCK:
                pending.append(pool.submit(fh.write, "".join(buf).encode("utf-8")))
                buf, n = [], 0
                if len(pending) > 2:
                    pending.popleft().result()
        if buf:
            pending.append(pool.submit(fh.write, "".join(buf).encode("utf-8")))
        while pending:
            pending.popleft().result()


VERIFIERS: dict[str, Callable[[Path], object]] = {
    ".xlsx": verify_workbook, ".xlsm": verify_workbook,
    ".ods": lambda p: verify_workbook(p, required="content.xml"),
}


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _fsync_dir(folder: Path) -> None:
    with contextlib.suppress(OSError):
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)


def atomic_write(out: Path, write: Callable[[str], None], *, like: Path | None = None,
                 verify: Callable[[Path], None] | None = None) -> None:
    """Call ``write(tmp_path)``, verify, fsync, and rename over ``out``; nothing partial is ever at ``out``.

    ``like`` (the input) gives the permission bits; without it the replaced file's are
    kept, or a new file gets the umask's. ``verify`` defaults by suffix (workbooks are
    checked, other files are not). An ``OSError`` becomes a :class:`WorkbookError`.
    """
    out = Path(out)
    if out.name.startswith(LOCK_PREFIXES):
        raise WorkbookError(f"{out.name}: names starting with '~$' or '.~lock.' are spreadsheet programs' "
                            "lock files; choose another name")
    folder = out.parent if str(out.parent) else Path(".")
    check = verify if verify is not None else VERIFIERS.get(out.suffix.lower())
    remove_stale_temps(out)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.{os.getpid()}-", suffix=TMP_SUFFIX, dir=folder)
    except OSError as exc:
        raise WorkbookError(f"{out}: cannot write in {folder} ({exc.strerror or exc}); nothing was written") from None
    os.close(fd)
    try:
        write(tmp)
        if check is not None:
            check(Path(tmp))
        if like is not None:
            shutil.copymode(like, tmp)
        elif out.exists():
            shutil.copymode(out, tmp)
        else:
            os.chmod(tmp, 0o666 & ~_umask())
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        os.replace(tmp, out)
    except BaseException as exc:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if isinstance(exc, WorkbookError):
            tail = "" if "nothing was" in str(exc) else "; nothing was replaced"
            raise WorkbookError(f"{out}: {exc}{tail}") from None
        if isinstance(exc, OSError):
            raise WorkbookError(f"{out}: cannot be written ({exc.strerror or exc}); "
                                "nothing was replaced") from None
        raise
    _fsync_dir(folder)


def atomic_copy(src: Path, dst: Path) -> None:
    """Copy ``src`` to ``dst`` (bytes, times and mode) through :func:`atomic_write`."""
    def write(tmp: str) -> None:
        shutil.copyfile(src, tmp)
        shutil.copystat(src, tmp)

    atomic_write(dst, write, like=src, verify=lambda _p: None)
