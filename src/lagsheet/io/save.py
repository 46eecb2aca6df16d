"""The one way lagsheet writes a file: checked target, temporary file, verify, one rename.

Every file any command writes (a filled workbook, the ``--in-place`` backup, an
annotated copy, a template, the demo files, a plot, a JSON report) goes through
:func:`atomic_write`. Before anything is written and again just before the rename,
:func:`refuse_unsafe` refuses (one plain sentence, :class:`WorkbookError`) a target that

- is an input of the run under any name (a symbolic or hard link, ``./``), unless it is
  the file ``--in-place`` replaces;
- is a symbolic link: lagsheet never writes through a link, nor replaces one (give the
  real file's path);
- exists and is not a regular file (a FIFO, a device such as ``/dev/null``, a socket,
  a folder);
- is open in a spreadsheet program (Excel's ``~$NAME`` or LibreOffice's
  ``.~lock.NAME#`` beside it), unless the run was told to ignore locks;
- has a name a spreadsheet program uses for its lock files, or a name longer than
  the 255 bytes a folder entry holds, or lies in a folder that does not exist.

The steps of a save:

1. remove temporary files an interrupted run left for the same output: only names of
   lagsheet's own pattern, and only those no live process holds locked;
2. create ``.<name>.<pid>-<random>.lagsheet-tmp`` in the destination folder (mode
   0600) and hold an advisory lock (``flock``) on it for as long as it exists;
3. write into it; verify it (a workbook: every zip member's CRC, and a reopen);
4. give it the input's permission bits (or the replaced file's, or the umask's);
5. fsync it, check the target again, ``os.replace`` it over the destination (or, for a
   file that must not replace anything, link it to a new name that must not exist),
   fsync the folder.

Any failure removes the temporary file and leaves the destination as it was. Inside
:func:`writing` with ``deferred=True``, steps 1-4 happen for every file of the run
first and the renames come last, in order; if a rename then fails, the error names
exactly the files that were written and those that were not.
"""

from __future__ import annotations

import contextlib
import errno
import fcntl
import os
import re
import shutil
import stat
import tempfile
import zipfile
from collections.abc import Callable, Iterable, Iterator
from contextvars import ContextVar
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import WorkbookError
from .locks import find_lock

TMP_SUFFIX = ".lagsheet-tmp"
# names a spreadsheet program keeps for its own lock files: never a name we write
LOCK_PREFIXES = ("~$", ".~lock.")
NAME_MAX = 255  # bytes in one folder entry on the usual file systems (ext4, XFS, APFS, NTFS)
_TMP_ROOM = 48  # '.' + '.<pid>-<8 random>' + '.lagsheet-tmp', with room to spare


def _tmp_stem(out: Path) -> str:
    """The output's name as it appears in its temporary files: cut so the whole name fits NAME_MAX."""
    raw = os.fsencode(Path(out).name)
    if len(raw) <= NAME_MAX - _TMP_ROOM:
        return Path(out).name
    raw = raw[:NAME_MAX - _TMP_ROOM]
    while raw and raw[-1] & 0xC0 == 0x80:  # never end inside a UTF-8 character
        raw = raw[:-1]
    if raw and raw[-1] >= 0xC0:
        raw = raw[:-1]
    return os.fsdecode(raw)


def temp_pattern(out: Path) -> re.Pattern:
    """Our temporary names for ``out``: '.<name>.<pid>-<random>.lagsheet-tmp'; group 1 is the pid."""
    return re.compile(rf"^\.{re.escape(_tmp_stem(out))}\.(\d{{1,10}})-[a-z0-9_]+{re.escape(TMP_SUFFIX)}$")


def _take_lock(fd: int) -> bool:
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        return False
    return True


def remove_stale_temps(out: Path) -> list[str]:
    """Remove temporary files of ours for ``out`` that no live run holds; their names.

    A run holds an advisory lock on its temporary file from creation to rename, and the
    kernel drops it when the process ends, however it ends. A file is removed only if
    its name is ours, it is a regular file, and its lock can be taken: the process
    number in the name is not trusted (another container or host sharing the folder
    has its own numbers).
    """
    out = Path(out)
    folder = out.parent if str(out.parent) else Path(".")
    pattern = temp_pattern(out)
    removed = []
    try:
        names = os.listdir(folder)
    except OSError:
        return removed
    for n in names:
        if pattern.match(n) is None:
            continue
        p = folder / n
        try:
            fd = os.open(p, os.O_RDONLY | os.O_NOFOLLOW | os.O_NONBLOCK)
        except OSError:
            continue
        try:
            st = os.fstat(fd)
            if not stat.S_ISREG(st.st_mode) or not _take_lock(fd):
                continue
            with contextlib.suppress(OSError):
                now = os.lstat(p)
                if (now.st_dev, now.st_ino) == (st.st_dev, st.st_ino):
                    os.unlink(p)
                    removed.append(n)
        finally:
            os.close(fd)
    return removed


# -- what may be written -----------------------------------------------------------------------


def same_file(a: Path, b: Path) -> bool:
    """``a`` and ``b`` name the same file (links followed); for a missing file, the same resolved path."""
    try:
        sa, sb = os.stat(a), os.stat(b)
        return (sa.st_dev, sa.st_ino) == (sb.st_dev, sb.st_ino)
    except (OSError, ValueError):
        pass
    try:
        return os.path.realpath(a) == os.path.realpath(b)
    except (OSError, ValueError):
        return False


_KINDS = ((stat.S_ISFIFO, "a FIFO (named pipe)"), (stat.S_ISCHR, "a character device"),
          (stat.S_ISBLK, "a block device"), (stat.S_ISSOCK, "a socket"), (stat.S_ISDIR, "a folder"))


@dataclass
class _Policy:
    inputs: list[Path] = field(default_factory=list)
    in_place: Path | None = None
    ignore_lock: bool = False
    lock_option: str | None = None
    staged: list | None = None  # deferred saves, renamed when the run's block ends


_POLICY: ContextVar[_Policy | None] = ContextVar("lagsheet_save_policy", default=None)


def refuse_unsafe(out: Path, *, inputs: Iterable[Path] = (), what: str = "output",
                  in_place: Path | None = None, ignore_lock: bool | None = None,
                  lock_option: str | None = None):
    """Raise a :class:`WorkbookError` (one sentence, with the fix) if ``out`` must not be written.

    The rules are in this module's docstring; those of the enclosing :func:`writing`
    block apply too. Returns the spreadsheet program's lock found on ``out`` when locks
    are ignored (the caller says so), else None.
    """
    out = Path(out)
    pol = _POLICY.get() or _Policy()
    in_place = in_place if in_place is not None else pol.in_place
    ignore_lock = pol.ignore_lock if ignore_lock is None else ignore_lock
    lock_option = lock_option or pol.lock_option
    name = out.name
    if not name:
        raise WorkbookError(f"{out}: give a file name for the {what}")
    if name == "-" and not str(out.parent).strip("."):
        raise WorkbookError(f"'-' is not a file name for the {what}: give one (only --report takes '-', "
                            "for standard output)")
    if len(os.fsencode(name)) > NAME_MAX:
        raise WorkbookError(f"the {what} file name is {len(os.fsencode(name))} bytes long; a folder holds names "
                            f"of at most {NAME_MAX} bytes: choose a shorter name")
    if name.startswith(LOCK_PREFIXES):
        raise WorkbookError(f"{name}: names starting with '~$' or '.~lock.' are spreadsheet programs' "
                            f"lock files; choose another {what} name")
    folder = out.parent if str(out.parent) else Path(".")
    try:
        folder_ok = folder.is_dir()
    except OSError:
        folder_ok = False
    if not folder_ok:
        raise WorkbookError(f"{out}: the folder {folder} does not exist; create it or choose another {what}")
    for src in [*pol.inputs, *inputs]:
        if same_file(out, src) and not (in_place is not None and same_file(out, in_place)):
            raise WorkbookError(f"{out}: the {what} would overwrite the input {Path(src).name}; "
                                f"choose another {what} file")
    try:
        st = os.lstat(out)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise WorkbookError(f"{out}: cannot be examined ({exc.strerror or exc}); choose another {what}") from None
    if st is not None:
        if stat.S_ISLNK(st.st_mode):
            try:
                target = os.readlink(out)
            except OSError:
                target = "?"
            raise WorkbookError(f"{out}: is a symbolic link (to {target}); lagsheet neither writes through nor "
                                f"replaces a link: give the real file's path, or another {what} name")
        for test, kind in _KINDS:
            if test(st.st_mode):
                raise WorkbookError(f"{out}: is {kind}, not a regular file; lagsheet writes only regular "
                                    f"files: choose another {what} file")
    lock = find_lock(out)
    if lock is not None:
        if not ignore_lock:
            fix = (f"close it, or pass {lock_option} if the lock is stale" if lock_option else
                   f"close it there (if no program has it open, the lock file {lock.path.name} is stale: "
                   "delete it)")
            raise WorkbookError(f"{name} is open in a spreadsheet program ({lock.by()}): {fix}")
        return lock
    return None


@contextlib.contextmanager
def writing(*, inputs: Iterable[Path] = (), in_place: Path | None = None, ignore_lock: bool = False,
            lock_option: str | None = None, deferred: bool = False) -> Iterator[_Policy]:
    """Every save inside the block obeys these rules; with ``deferred``, renames wait for the block's end.

    ``inputs`` are never written (``in_place`` excepted); ``ignore_lock`` writes over a
    spreadsheet program's lock (``lock_option`` is the option that asked for it). With
    ``deferred``, each :func:`atomic_write` only prepares its verified temporary file;
    when the block ends normally they are renamed in the order they were made, and if
    it raises they are all removed.
    """
    pol = _Policy([Path(p) for p in inputs], Path(in_place) if in_place is not None else None,
                  ignore_lock, lock_option, [] if deferred else None)
    token = _POLICY.set(pol)
    try:
        yield pol
    except BaseException as exc:
        for s in pol.staged or ():
            s.discard()
        if deferred and isinstance(exc, WorkbookError) and str(exc).endswith("; nothing was replaced"):
            # no file of the run was renamed: say so for all of them
            raise WorkbookError(str(exc).removesuffix("; nothing was replaced") + "; nothing was written") from None
        raise
    finally:
        _POLICY.reset(token)
    if pol.staged:
        commit_all(pol.staged)


def commit_all(staged: list) -> None:
    """Rename each prepared file in order; on a failure, say which were written and which not."""
    done: list[Path] = []
    for k, s in enumerate(staged):
        try:
            s.commit()
        except WorkbookError as exc:
            for rest in staged[k + 1:]:
                rest.discard()
            left = [str(r.out) for r in staged[k + 1:]]
            if not done:
                tail = "; nothing was written" + (f" ({', '.join(left)} neither)" if left else "")
            else:
                tail = (f"; written: {', '.join(str(d) for d in done)}; not written: "
                        f"{', '.join([str(s.out), *left])}")
            raise WorkbookError(f"{str(exc).removesuffix('; nothing was replaced')}{tail}") from None
        done.append(s.out)


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
    except Exception:  # any failure to reopen means the file must not replace anything
        raise WorkbookError("the written file failed its check: it could not be reopened as a "
                            "spreadsheet; please report this with the workbook") from None
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


def _oserror(out: Path, exc: OSError) -> WorkbookError:
    return WorkbookError(f"{out}: cannot be written ({exc.strerror or exc}); nothing was replaced")


class Staged:
    """A verified temporary file beside ``out``, locked by this process, waiting for its rename."""

    def __init__(self, out: Path, tmp: str, fd: int, *, exclusive: bool, rules: dict):
        self.out, self.tmp, self._fd, self.exclusive, self._rules = out, tmp, fd, exclusive, rules

    def commit(self) -> None:
        """Check the target again, then rename (or, ``exclusive``, link to a name that must not exist)."""
        if self._fd is None:
            raise WorkbookError(f"{self.out}: this save was already finished")
        folder = self.out.parent if str(self.out.parent) else Path(".")
        try:
            refuse_unsafe(self.out, **self._rules)
            os.fsync(self._fd)
            if self.exclusive:
                _link_new(self.tmp, self.out)
            else:
                os.replace(self.tmp, self.out)
        except BaseException as exc:
            self.discard()
            if isinstance(exc, FileExistsError):
                raise WorkbookError(f"{self.out}: already exists; nothing was replaced") from None
            if isinstance(exc, WorkbookError):
                raise
            if isinstance(exc, OSError):
                raise _oserror(self.out, exc) from None
            raise
        self._close()
        _fsync_dir(folder)

    def discard(self) -> None:
        """Remove the temporary file (if still there) and drop its lock."""
        if self._fd is None:
            return
        with contextlib.suppress(OSError):
            now, mine = os.lstat(self.tmp), os.fstat(self._fd)
            if (now.st_dev, now.st_ino) == (mine.st_dev, mine.st_ino):
                os.unlink(self.tmp)
        self._close()

    def _close(self) -> None:
        fd, self._fd = self._fd, None
        if fd is not None:
            with contextlib.suppress(OSError):
                os.close(fd)


def _link_new(tmp: str, out: Path) -> None:
    """Give ``tmp`` the name ``out`` only if no file has it (FileExistsError otherwise); drop ``tmp``."""
    try:
        os.link(tmp, out, follow_symlinks=False)
    except FileExistsError:
        raise
    except OSError as exc:  # a file system without hard links: check, then rename
        if exc.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EMLINK, errno.ENOSYS):
            raise
        if os.path.lexists(out):
            raise FileExistsError(errno.EEXIST, "File exists", str(out)) from None
        os.replace(tmp, out)
        return
    os.unlink(tmp)


def _locked_temp(out: Path, folder: Path) -> tuple[int, str]:
    """Create our temporary file for ``out`` and take its lock; retried if a cleaner removed it first."""
    for _ in range(5):
        fd, tmp = tempfile.mkstemp(prefix=f".{_tmp_stem(out)}.{os.getpid()}-", suffix=TMP_SUFFIX, dir=folder)
        fcntl.flock(fd, fcntl.LOCK_EX)  # held until the file is renamed or removed, or the process ends
        if os.fstat(fd).st_nlink > 0:
            return fd, tmp
        os.close(fd)  # another run's cleanup took it between its creation and our lock
    raise OSError(errno.EAGAIN, "temporary files keep disappearing")


def stage(out: Path, write: Callable[[str], None], *, like: Path | None = None,
          verify: Callable[[Path], None] | None = None, inputs: Iterable[Path] = (),
          exclusive: bool = False, what: str = "output") -> Staged:
    """Write and verify ``out``'s temporary file; the rename is :meth:`Staged.commit`.

    ``like`` (the input) gives the permission bits and is never the target; without it
    the replaced file's bits are kept, or a new file gets the umask's. ``verify``
    defaults by suffix (workbooks are checked, other files are not). ``exclusive``: the
    file must not exist at the rename (a backup, ``new`` without ``--force``).
    """
    out = Path(out)
    pol = _POLICY.get() or _Policy()
    # the rules are kept with the file: its rename may come after the writing() block has ended
    rules = {"inputs": [*pol.inputs, *inputs, *([like] if like is not None else [])], "what": what,
             "in_place": pol.in_place, "ignore_lock": pol.ignore_lock, "lock_option": pol.lock_option}
    refuse_unsafe(out, **rules)
    folder = out.parent if str(out.parent) else Path(".")
    check = verify if verify is not None else VERIFIERS.get(out.suffix.lower())
    remove_stale_temps(out)
    try:
        fd, tmp = _locked_temp(out, folder)
    except OSError as exc:
        raise WorkbookError(f"{out}: cannot write in {folder} ({exc.strerror or exc}); nothing was written") from None
    staged = Staged(out, tmp, fd, exclusive=exclusive, rules=rules)
    try:
        write(tmp)
        if check is not None:
            check(Path(tmp))
        if like is not None:
            shutil.copymode(like, tmp)
        elif not exclusive and os.path.isfile(out):
            shutil.copymode(out, tmp)
        else:
            os.chmod(tmp, 0o666 & ~_umask())
    except BaseException as exc:
        staged.discard()
        if isinstance(exc, WorkbookError):
            tail = "" if "nothing was" in str(exc) else "; nothing was replaced"
            raise WorkbookError(f"{out}: {exc}{tail}") from None
        if isinstance(exc, OSError):
            raise _oserror(out, exc) from None
        raise
    return staged


def atomic_write(out: Path, write: Callable[[str], None], *, like: Path | None = None,
                 verify: Callable[[Path], None] | None = None, inputs: Iterable[Path] = (),
                 exclusive: bool = False, what: str = "output") -> Staged:
    """Call ``write(tmp_path)``, verify, fsync, and rename over ``out``; nothing partial is ever at ``out``.

    The arguments are :func:`stage`'s. Inside a deferred :func:`writing` block the rename
    waits for the block's end; otherwise it happens now. An ``OSError`` becomes a
    :class:`WorkbookError`.
    """
    staged = stage(out, write, like=like, verify=verify, inputs=inputs, exclusive=exclusive, what=what)
    pol = _POLICY.get()
    if pol is not None and pol.staged is not None:
        pol.staged.append(staged)
    else:
        staged.commit()
    return staged


def atomic_copy(src: Path, dst: Path, *, exclusive: bool = False) -> Staged:
    """Copy ``src`` to ``dst`` (bytes, times and mode) through :func:`atomic_write`."""
    def write(tmp: str) -> None:
        shutil.copyfile(src, tmp)
        shutil.copystat(src, tmp)

    return atomic_write(dst, write, like=src, verify=lambda _p: None, exclusive=exclusive, what="backup")
