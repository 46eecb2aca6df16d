"""Checks of a workbook package before any library parses it: never trust a file.

A ``.xlsx``/``.xlsm`` (or ``.ods``) file is a zip package of XML parts. Before calamine or any XML
parser sees it, :func:`check_package` reads only the zip's directory records and the
first bytes of each XML part, and refuses (``WorkbookError``, exit 2, one line):

- an empty file; an OLE compound file (``D0 CF 11 E0``: a legacy ``.xls``, or an
  ``.xlsx`` saved with a password, which Office wraps the same way); a file that is
  not a zip; a truncated zip (local records but no directory at the end);
- more than :data:`MAX_MEMBERS` parts, or a directory larger than :data:`MAX_DIRECTORY`
  (checked from the end record, before the directory is loaded);
- part names that leave the package (``../``, ``/abs``, ``C:``, backslashes, NUL) or
  that repeat (part names compare case-insensitively in a package);
- encrypted parts, compression methods other than stored/deflate, parts whose data
  lies outside the file or overlaps another part's (an overlapping-entry zip bomb);
- zip bombs by the sizes the directory declares (calamine and Python's zipfile stop
  at the declared size, so the declared size bounds what they inflate): a part over
  :data:`MAX_PART` (1 GiB) uncompressed, a package over :data:`MAX_TOTAL` (2 GiB),
  or a compression ratio above :data:`MAX_RATIO` (200:1) for a part, or the whole
  package, above :data:`RATIO_FLOOR` (8 MiB);
- a zip without ``[Content_Types].xml`` (``.xlsx``) or ``content.xml`` (``.ods``);
- an XML part whose prolog declares a DTD (``<!DOCTYPE``: entity expansion, external
  entities) — spreadsheet XML never has one, except the external manifest DTD that
  OpenOffice.org 1-2 named in an ``.ods`` manifest, allowed there alone — or whose prolog runs past
  :data:`PROLOG_BYTES` without reaching the root element.

The limits are generous for real schedules: a filled 50,000-line schedule has a sheet
part of about 70 MB at 6.5:1, comments at 50:1 and notes drawings at 40:1.
Time and memory are bounded: the directory is read once, and at most
:data:`PROLOG_BYTES` of each XML part is inflated.
"""

from __future__ import annotations

import re
import struct
import zipfile
from pathlib import Path

from ..errors import WorkbookError

MAX_MEMBERS = 10_000
MAX_DIRECTORY = 16 * 2**20  # bytes of central directory
MAX_PART = 2**30  # 1 GiB uncompressed, any one part
MAX_TOTAL = 2 * 2**30  # 2 GiB uncompressed, all parts
MAX_RATIO = 200  # uncompressed : compressed ...
RATIO_FLOOR = 8 * 2**20  # ... only judged above this many uncompressed bytes
PROLOG_BYTES = 64 * 2**10  # how much of each XML part is inflated to check its prolog

OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_EOCD = b"PK\x05\x06"
_EOCD64_LOCATOR = b"PK\x06\x07"
_LOCAL = b"PK\x03\x04"
_XML_PARTS = (".xml", ".rels")
_DRIVE = re.compile(r"^[A-Za-z]:")
_LEGACY_MANIFEST = re.compile(r'<!DOCTYPE\s+manifest:manifest\s+PUBLIC\s+"-//OpenOffice\.org//DTD Manifest 1\.0//EN"'
                              r'\s+"Manifest\.dtd"\s*>')


def check_package(path: Path) -> None:
    """Refuse a hostile or broken workbook package before anything parses it."""
    path = Path(path)
    name = path.name
    try:
        size = path.stat().st_size
        with open(path, "rb") as fh:
            head = fh.read(8)
            if size == 0:
                raise WorkbookError(f"{name}: the file is empty (0 bytes)")
            if head.startswith(OLE_MAGIC):
                raise WorkbookError(f"{name}: encrypted or legacy .xls; save it as .xlsx without a password")
            entries, cd_size = _end_record(fh, size, name, head)
    except WorkbookError:
        raise
    except OSError as exc:
        raise WorkbookError(f"{name}: cannot be read ({exc.strerror or exc})") from None
    if entries > MAX_MEMBERS:
        raise WorkbookError(f"{name}: the package has {entries:,} parts (limit {MAX_MEMBERS:,}); "
                            "not a workbook lagsheet reads")
    if cd_size > MAX_DIRECTORY:
        raise WorkbookError(f"{name}: the package directory is {_size(cd_size)} (limit {_size(MAX_DIRECTORY)}); "
                            "not a workbook lagsheet reads")
    try:
        with zipfile.ZipFile(path) as zf:
            infos = zf.infolist()
            _check_names(infos, name)
            _check_sizes(infos, name)
            _check_layout(path, infos, size, name)
            ods = path.suffix.lower() == ".ods"
            lower = {i.filename.lower() for i in infos}
            if ods and "content.xml" not in lower:
                raise WorkbookError(f"{name}: cannot be read as a spreadsheet (a zip package without "
                                    "content.xml, so not an OpenDocument file)")
            if not ods and "[content_types].xml" not in lower:
                raise WorkbookError(f"{name}: cannot be read as a workbook (a zip package without "
                                    "[Content_Types].xml, so not an Office document)")
            for info in infos:
                if info.filename.lower().endswith(_XML_PARTS) and not info.is_dir():
                    _check_prolog(zf, info, name, ods=ods)
    except WorkbookError:
        raise
    except (zipfile.BadZipFile, zipfile.LargeZipFile, EOFError, ValueError, NotImplementedError,
            RuntimeError, OSError, UnicodeDecodeError, struct.error) as exc:
        raise WorkbookError(f"{name}: damaged zip package ({exc}); re-save it in a spreadsheet program") from None


def _end_record(fh, size: int, name: str, head: bytes) -> tuple[int, int]:
    """(number of entries, central directory size) from the end record, before zipfile loads it."""
    tail_len = min(size, 22 + 65535 + 20)
    fh.seek(size - tail_len)
    tail = fh.read(tail_len)
    at = tail.rfind(_EOCD)
    while at >= 0 and len(tail) - at < 22:
        at = tail.rfind(_EOCD, 0, at)
    if at < 0:
        if head.startswith(_LOCAL):
            raise WorkbookError(f"{name}: the file is truncated or damaged (a zip package with no directory "
                                "at its end); copy it again or re-save it")
        raise WorkbookError(f"{name}: not an Excel workbook (the file is not a zip package)")
    (_sig, _disk, _cd_disk, _n_disk, entries, cd_size, _cd_off, _clen) = struct.unpack(
        "<4sHHHHIIH", tail[at:at + 22])
    loc = at - 20
    if loc >= 0 and tail[loc:loc + 4] == _EOCD64_LOCATOR:
        (_s, _d, off64, _t) = struct.unpack("<4sIQI", tail[loc:loc + 20])
        if off64 + 56 <= size:
            fh.seek(off64)
            rec = fh.read(56)
            if rec[:4] == b"PK\x06\x06":
                (_s, _rs, _vm, _vn, _dn, _dcd, _nd, entries, cd_size, _o) = struct.unpack("<4sQHHIIQQQQ", rec)
    return entries, cd_size


def _check_names(infos: list[zipfile.ZipInfo], name: str) -> None:
    seen: set[str] = set()
    for info in infos:
        n = info.orig_filename
        parts = re.split(r"[/\\]", n)
        if (not n or n.startswith(("/", "\\")) or _DRIVE.match(n) or "\\" in n or "\x00" in n
                or ".." in parts):
            raise WorkbookError(f"{name}: unsafe part name {n!r} in the package (a path outside the "
                                "workbook); lagsheet does not read it")
        key = n.lower()
        if key in seen:
            raise WorkbookError(f"{name}: the package holds two parts named {n!r}; "
                                "not a workbook lagsheet reads")
        seen.add(key)
        if info.flag_bits & 0x1:
            raise WorkbookError(f"{name}: part {n!r} is encrypted; save the workbook without a password")
        if info.compress_type not in (zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED):
            raise WorkbookError(f"{name}: part {n!r} uses a compression method workbooks do not use "
                                f"({info.compress_type}); re-save it in a spreadsheet program")


def _check_sizes(infos: list[zipfile.ZipInfo], name: str) -> None:
    total = packed = 0
    for info in infos:
        n, u, c = info.filename, info.file_size, info.compress_size
        if u > MAX_PART:
            raise WorkbookError(f"{name}: part {n!r} would expand to {_size(u)} (limit {_size(MAX_PART)} a part); "
                                "a zip bomb, or not a workbook lagsheet reads")
        if u > RATIO_FLOOR and u > MAX_RATIO * max(c, 1):
            raise WorkbookError(f"{name}: part {n!r} would expand {u / max(c, 1):,.0f}:1 to {_size(u)} "
                                f"(limit {MAX_RATIO}:1 above {_size(RATIO_FLOOR)}): the mark of a zip bomb")
        total += u
        packed += c
    if total > MAX_TOTAL:
        raise WorkbookError(f"{name}: the package would expand to {_size(total)} (limit {_size(MAX_TOTAL)}); "
                            "a zip bomb, or not a workbook lagsheet reads")
    if total > RATIO_FLOOR and total > MAX_RATIO * max(packed, 1):
        raise WorkbookError(f"{name}: the package would expand {total / max(packed, 1):,.0f}:1 to {_size(total)} "
                            f"(limit {MAX_RATIO}:1): the mark of a zip bomb")


def _check_layout(path: Path, infos: list[zipfile.ZipInfo], size: int, name: str) -> None:
    """Every part's local record is where the directory says, inside the file, and parts do not overlap."""
    with open(path, "rb") as fp:
        _check_records(fp, infos, size, name)


def _check_records(fp, infos: list[zipfile.ZipInfo], size: int, name: str) -> None:
    end = 0
    for info in sorted(infos, key=lambda i: i.header_offset):
        off = info.header_offset
        if off < end:
            raise WorkbookError(f"{name}: part {info.filename!r} overlaps another part's data "
                                "(a crafted zip, as used for zip bombs); not read")
        fp.seek(off)
        rec = fp.read(30)
        if len(rec) < 30 or rec[:4] != _LOCAL:
            raise WorkbookError(f"{name}: the file is truncated or damaged (part {info.filename!r} "
                                "is missing); copy it again or re-save it")
        nlen, elen = struct.unpack("<HH", rec[26:30])
        end = off + 30 + nlen + elen + info.compress_size
        if end > size:
            raise WorkbookError(f"{name}: the file is truncated or damaged (part {info.filename!r} "
                                "runs past the end of the file); copy it again or re-save it")


def _check_prolog(zf: zipfile.ZipFile, info: zipfile.ZipInfo, name: str, *, ods: bool = False) -> None:
    with zf.open(info) as fh:
        head = fh.read(PROLOG_BYTES)
    text = _decode(head)
    problem, at = _prolog_problem(text, complete=len(head) >= info.file_size)
    if problem == "dtd" and ods and info.filename == "META-INF/manifest.xml" and \
            _LEGACY_MANIFEST.match(text, at):
        return  # OpenOffice.org 1-2 named this external DTD (no internal subset, no entities)
    if problem == "dtd":
        raise WorkbookError(f"{name}: part {info.filename!r} declares a DTD (<!DOCTYPE ...>), which "
                            "workbooks never do; lagsheet does not read XML entities")
    if problem == "long":
        raise WorkbookError(f"{name}: part {info.filename!r} does not reach its first element within "
                            f"{_size(PROLOG_BYTES)}; not a workbook lagsheet reads")


def _decode(head: bytes) -> str:
    if head.startswith((b"\xff\xfe", b"<\x00")):
        return head.decode("utf-16-le", "replace")
    if head.startswith((b"\xfe\xff", b"\x00<")):
        return head.decode("utf-16-be", "replace")
    return head.decode("utf-8", "replace")


def _prolog_problem(text: str, *, complete: bool) -> tuple[str | None, int]:
    """('dtd', where) when the prolog has a <!DOCTYPE> (or any declaration); ('long', -1) when it
    does not end within ``text``; (None, -1) otherwise."""
    i, n = 0, len(text)
    while True:
        while i < n and text[i] in " \t\r\n\ufeff":
            i += 1
        if i >= n:
            return (None if complete else "long"), -1
        if text.startswith("<?", i):
            j = text.find("?>", i + 2)
            if j < 0:
                return (None if complete else "long"), -1
            i = j + 2
        elif text.startswith("<!--", i):
            j = text.find("-->", i + 4)
            if j < 0:
                return (None if complete else "long"), -1
            i = j + 3
        elif text.startswith("<!", i):
            return "dtd", i
        else:
            return None, -1  # the root element, or text the parser itself will refuse


def _size(n: int) -> str:
    for unit, scale in (("GiB", 2**30), ("MiB", 2**20), ("KiB", 2**10)):
        if n >= scale:
            return f"{n / scale:.4g} {unit}"
    return f"{n} bytes"
