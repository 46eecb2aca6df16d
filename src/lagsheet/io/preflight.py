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
  :data:`MAX_PART` (512 MiB) uncompressed, a package over :data:`MAX_TOTAL` (512 MiB),
  or a compression ratio above :data:`MAX_RATIO` (200:1) for a part, or the whole
  package, above :data:`RATIO_FLOOR` (8 MiB);
- a zip without ``[Content_Types].xml`` (``.xlsx``) or ``content.xml`` (``.ods``);
- an XML part whose prolog declares a DTD (``<!DOCTYPE``: entity expansion, external
  entities) — spreadsheet XML never has one, except the external manifest DTD that
  OpenOffice.org 1-2 named in an ``.ods`` manifest, allowed there alone — or whose prolog runs past
  :data:`PROLOG_BYTES` without reaching the root element.

Then :func:`_scan_content` streams every XML part once through expat (64 KiB at a time: time
linear in the part, memory bounded, no regular expression over the input) and refuses a part
not in UTF-8 (``.vml`` included), damaged XML, markup inside a comment or CDATA of a part
lagsheet patches (its patterns then only ever meet real tags), cells, rows, columns, ranges and
table row counts outside ``XFD1048576``, and a shared-strings count larger than its part can
hold; it returns each sheet's value count and the rectangle from A1 its values span, which
:meth:`SheetStats.too_big` judges before calamine fills that rectangle (all tables of an
``.ods`` at once, since calamine reads them all when it opens the file). A worksheet whose rows
are in the plain form spreadsheet programs write has them counted by numpy instead of element by
element (:func:`_plain_sheet`, io/sheetrows.py: the same statistics, the XML still checked whole
by expat); a part in any other form, or with any fault, is scanned again element by element
(at most twice the time), which says what is wrong.

The limits are generous for real schedules: a filled 50,000-line schedule has a sheet
part of about 70 MB at 6.5:1, comments at 50:1 and notes drawings at 40:1.
Time and memory are bounded: the directory is read once, and at most
:data:`PROLOG_BYTES` of each XML part is inflated.
"""

from __future__ import annotations

import codecs
import re
import struct
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from xml.parsers import expat

import numpy as np

from ..errors import WorkbookError

MAX_MEMBERS = 10_000
MAX_DIRECTORY = 16 * 2**20  # bytes of central directory
# A filled 50,000-line schedule unpacks to about 75 MB (a 70 MB sheet); 512 MiB is seven times
# that, and what lagsheet streams through its scan in about 10 s. More is no schedule to read.
MAX_PART = 512 * 2**20  # uncompressed, any one part
MAX_TOTAL = 512 * 2**20  # uncompressed, all parts
MAX_RATIO = 200  # uncompressed : compressed ...
RATIO_FLOOR = 8 * 2**20  # ... only judged above this many uncompressed bytes
PROLOG_BYTES = 64 * 2**10  # how much of each XML part is inflated to check its prolog

OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_EOCD = b"PK\x05\x06"
_EOCD64_LOCATOR = b"PK\x06\x07"
_LOCAL = b"PK\x03\x04"
_XML_PARTS = (".xml", ".rels", ".vml")
_DRIVE = re.compile(r"^[A-Za-z]:")
_LEGACY_MANIFEST = re.compile(r'<!DOCTYPE\s+manifest:manifest\s+PUBLIC\s+"-//OpenOffice\.org//DTD Manifest 1\.0//EN"'
                              r'\s+"Manifest\.dtd"\s*>')


def check_package(path: Path) -> Scan:
    """Refuse a hostile or broken workbook package before anything parses it; what its sheets hold."""
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
            if path.suffix.lower() == ".ods" and _flat_ods(fh):
                raise WorkbookError(f"{name}: a flat OpenDocument spreadsheet (.fods, one XML file) named .ods; "
                                    "open it in LibreOffice and save it as .ods or .xlsx")
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
            scan = _scan_content(zf, infos, name, ods=ods)
    except WorkbookError:
        raise
    except (zipfile.BadZipFile, zipfile.LargeZipFile, EOFError, ValueError, NotImplementedError,
            RuntimeError, OSError, UnicodeDecodeError, struct.error):
        raise WorkbookError(f"{name}: the zip package is damaged and cannot be read; open it in a spreadsheet "
                            "program and save it again") from None
    return scan


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
        if name.lower().endswith(".ods"):
            raise WorkbookError(f"{name}: not an OpenDocument spreadsheet (the file is not a zip package)")
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
            if "\\" in n and not (n.startswith("\\") or _DRIVE.match(n) or "\x00" in n or ".." in parts):
                raise WorkbookError(f"{name}: the package names its parts with backslashes ({_q(n)} ...), "
                                    "which the format does not allow; open the workbook in a spreadsheet "
                                    "program and save it again")
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


# -- the content scan: every XML part, streamed once through expat ----------------------------

SHEET_ROWS, SHEET_COLS = 1_048_576, 16_384  # the sheet limits of Excel and of LibreOffice (7.4 and later)
# The reader (calamine) fills the rectangle from A1 to the farthest value, about 90 bytes a cell
# (measured: 1,048,576 x 14 cells took 1.3 GB). A filled 50,000-line schedule spans about 2 million.
MAX_AREA = 4_000_000  # cells of that rectangle, at most (about 0.36 GB)
SPARSE_AREA = 2_000_000  # ... and above this, a quarter of it must hold values (a stray far cell is refused)
_CHUNK = 2**16
# xlsx parts the writer patches with tag patterns: markup hidden in their comments is refused. The
# .ods parts are not here: the ods writer walks content.xml with a linear scanner that steps over
# comments, CDATA and processing instructions whole (io/xmlscan.py), so such a file is filled.
_PATCHED_ROOTS = {"worksheet", "comments", "table", "Relationships", "Types", "styleSheet", "workbook", "sst"}


@dataclass
class SheetStats:
    """What a sheet part holds, from the scan: value cells and the rectangle from A1 they span."""

    cells: int = 0
    rows: int = 0  # 1 + the last row holding a value (0: none)
    cols: int = 0  # 1 + the last column holding a value
    far: tuple[int, int] = (0, 0)  # 1-based (row, column) of a value that lies farthest out

    @property
    def area(self) -> int:
        return self.rows * self.cols

    def too_big(self) -> bool:
        return self.area > MAX_AREA or (self.area > SPARSE_AREA and 4 * self.cells < self.area)

    def refusal(self, book: str, sheet: str) -> str:
        from .table import column_letter

        span = f"{self.rows:,} rows x {self.cols:,} columns from A1 to {column_letter(self.cols - 1)}{self.rows}"
        if 4 * self.cells >= self.area:
            return (f"{book}: sheet {_q(sheet)} holds {self.cells:,} values over {span} (limit {MAX_AREA:,} "
                    "cells); split the schedule into workbooks of fewer lines")
        return (f"{book}: sheet {_q(sheet)} has a value at {_addr(*self.far)}, so reading it means filling {span} "
                f"for {self.cells:,} values; clear or move the cells far below or right of the schedule "
                "and save again")


@dataclass
class Scan:
    """What the content scan learnt: sheet statistics by part name (xlsx) or by table name (ods)."""

    sheets: dict[str, SheetStats] = field(default_factory=dict)


def _q(text: str) -> str:
    return "'" + str(text).replace("\\", "/") + "'"


class _NotPlain(Exception):
    """A part the plain-sheet scan does not read (see _plain_sheet)."""


class _Refuse(Exception):
    def __init__(self, message: str):
        super().__init__(message)
        self.message = message


_REF = re.compile(r"\$?([A-Za-z]{1,4})\$?([0-9]{1,12})")
_COLUMNS: dict[str, int] = {}  # column letters -> 1-based index, filled as sheets are scanned


def _ref(ref: str) -> tuple[int, int] | None:
    """'XFD1048576' -> (row, col), 1-based; None if it is no cell reference."""
    m = _REF.fullmatch(ref)
    if not m:
        return None
    col = 0
    for ch in m.group(1).upper():
        col = col * 26 + ord(ch) - 64
    return int(m.group(2)), col


class _PartScan:
    """Streams one XML part through expat: UTF-8 only, no DTD, no markup inside comments,
    and, by its root element, the statistics of a sheet, shared strings or an ods content part."""

    def __init__(self, part: str, size: int, package_size: int, ods: bool, legacy_dtd: bool, *,
                 plain_sheet: bool = False):
        self.part, self.size, self.package_size, self.ods, self.legacy_dtd = part, size, package_size, ods, legacy_dtd
        self.plain_sheet = plain_sheet  # only check the XML of a worksheet (see _plain_sheet); refuse any other part
        self.root: str | None = None
        self.stats: dict[str, SheetStats] = {}
        self.p = p = expat.ParserCreate()
        if hasattr(p, "SetReparseDeferralEnabled"):  # expat 2.6+: every complete element seen when fed
            p.SetReparseDeferralEnabled(False)
        p.buffer_text = True
        p.StartDoctypeDeclHandler = self._doctype
        p.EntityDeclHandler = self._entity
        p.XmlDeclHandler = self._decl
        p.StartElementHandler = self._first
        p.CommentHandler = self._comment
        p.ProcessingInstructionHandler = self._pi
        p.StartCdataSectionHandler = self._cdata

    # -- the generic checks
    def _doctype(self, name, sysid, pubid, has_internal):
        if not (self.legacy_dtd and not has_internal):
            raise _Refuse("dtd")

    def _entity(self, *args):
        raise _Refuse("dtd")

    def _decl(self, version, encoding, standalone):
        if encoding and encoding.lower().replace("_", "-") not in ("utf-8", "utf8", "us-ascii", "ascii"):
            raise _Refuse(f"encoding {encoding}")

    def _comment(self, data):
        if "<" in data and self.root in _PATCHED_ROOTS | {None}:
            raise _Refuse("markup in a comment")

    def _pi(self, target, data):
        if "<" in data and self.root in _PATCHED_ROOTS | {None}:
            raise _Refuse("markup in a comment")

    def _cdata(self):
        if self.root in _PATCHED_ROOTS:
            raise _Refuse("markup in a comment")

    def _first(self, name, attrs):
        self.root = local = name.rpartition(":")[2]
        if self.plain_sheet:
            if name != "worksheet":
                raise _NotPlain
            self.p.StartElementHandler = None
        elif local == "worksheet" and not self.ods:
            self.sheet = SheetStats()
            self.stats[self.part] = self.sheet
            self.row, self.col, self.cell, self.row_text = 0, 0, False, "0"
            self.p.StartElementHandler = self._sheet
        elif local == "sst" and not self.ods:
            self._sst(attrs)
            self.p.StartElementHandler = None
        elif local == "table" and not self.ods:  # an Excel table: its range and row counts
            for ref in attrs.get("ref", "").split(":") if attrs.get("ref") else ():
                rc = _ref(ref)
                if rc is None or not (1 <= rc[0] <= SHEET_ROWS and 1 <= rc[1] <= SHEET_COLS):
                    raise _Refuse(f"bad range {attrs.get('ref', '')}")
            for key in ("headerRowCount", "totalsRowCount"):
                v = attrs.get(key, "0")
                if not v.isdigit() or len(v) > 7 or int(v) > SHEET_ROWS:
                    raise _Refuse(f"bad row count {key}={v}")
            self.p.StartElementHandler = None
        elif local in ("document-content", "document") and self.ods:
            self.table: SheetStats | None = None
            self.p.StartElementHandler = self._ods_start
            self.p.EndElementHandler = self._ods_end
            self.depth_cell = 0
        else:
            self.p.StartElementHandler = None

    # -- xlsx sheets (called for every element of the sheet: the common cases come first, no regex)
    def _sheet(self, name, attrs):
        local = name if len(name) < 3 else name[name.find(":") + 1:]
        if local == "c":
            r = attrs.get("r")
            if r is not None:
                letters = r.rstrip("0123456789")
                col = _COLUMNS.get(letters)
                if col is None or r[len(letters):] != self.row_text:
                    col = self._cell_ref(r)
                self.col = col
            else:
                self.col += 1
                if self.col > SHEET_COLS:
                    raise _Refuse(f"outside column {self.col}")
            self.cell = True
        elif local == "v" or local == "is" or local == "f":
            if self.cell:
                self.cell = False  # counted once
                s = self.sheet
                s.cells += 1
                if self.row > s.rows or self.col > s.cols:
                    s.rows, s.cols = max(s.rows, self.row), max(s.cols, self.col)
                    s.far = (self.row, self.col)
        elif local == "row":
            r = attrs.get("r")
            if r is not None:
                if not r.isdigit() or len(r) > 12:
                    raise _Refuse(f"bad row {r}")
                self.row = int(r)
            else:
                self.row += 1
            if self.row > SHEET_ROWS or self.row < 1:
                raise _Refuse(f"outside row {self.row}")
            self.row_text = str(self.row)
            self.col = 0
        elif local == "dimension":
            for ref in attrs.get("ref", "").split(":") if attrs.get("ref") else ():
                rc = _ref(ref)
                if rc is None or not (1 <= rc[0] <= SHEET_ROWS and 1 <= rc[1] <= SHEET_COLS):
                    raise _Refuse(f"bad range {attrs.get('ref', '')}")
        elif local == "col":
            lo, hi = attrs.get("min", "1"), attrs.get("max", "1")
            if not (lo.isdigit() and hi.isdigit() and len(lo) < 7 and len(hi) < 7
                    and 1 <= int(lo) <= int(hi) <= SHEET_COLS):
                raise _Refuse(f"bad columns {lo}:{hi}")

    def _cell_ref(self, r: str) -> int:
        """The column of cell reference ``r`` in the current row (the slow path: checks it whole)."""
        rc = _ref(r)
        if rc is not None and rc[0] != self.row and 1 <= rc[0] <= SHEET_ROWS and 1 <= rc[1] <= SHEET_COLS:
            raise _Refuse(f"misplaced {r} {self.row}")  # a cell of another row inside this one
        if rc is None or rc[0] != self.row:
            raise _Refuse(f"bad cell {r}")
        if rc[1] > SHEET_COLS:
            raise _Refuse(f"outside cell {r}")
        letters = r.rstrip("0123456789")
        if letters.isupper() and len(_COLUMNS) < 20_000:
            _COLUMNS[letters] = rc[1]
        return rc[1]

    def _sst(self, attrs):
        for key, most in (("uniqueCount", self.size // 5 + 1), ("count", self.package_size // 10 + 1)):
            v = attrs.get(key)
            if v is None:
                continue
            if not v.isdigit() or len(v) > 12 or int(v) > most:
                raise _Refuse(f"count {key}={v}")

    # -- ods content
    def _ods_start(self, name, attrs):
        local = name[name.find(":") + 1:]
        if self.depth_cell:
            self.depth_cell += 1
            if self.cell_rep:
                self._ods_value()
            return
        if local == "table":
            self.table = SheetStats()
            self.table_name = attrs.get("table:name", "")
            self.stats[self.table_name] = self.table
            self.row = 0
        elif local == "table-row" and self.table is not None:
            rep = _repeat(attrs.get("table:number-rows-repeated"))
            self.row_rep, self.row_cells, self.row_last, self.col = rep, 0, 0, 0
        elif local in ("table-cell", "covered-table-cell") and self.table is not None:
            self.cell_rep = _repeat(attrs.get("table:number-columns-repeated"))
            self.depth_cell = 1
            self.col += self.cell_rep
            if "office:value-type" in attrs or "table:formula" in attrs:
                self._ods_value()

    def _ods_value(self):
        rep, self.cell_rep = self.cell_rep, 0
        if self.col > SHEET_COLS:
            raise _Refuse(f"outside column {self.col}")
        self.row_cells += rep
        self.row_last = self.col

    def _ods_end(self, name):
        if self.depth_cell:
            self.depth_cell -= 1
            return
        local = name[name.find(":") + 1:]
        if local == "table-row" and self.table is not None:
            s = self.table
            self.row += self.row_rep
            if self.row_cells:
                if self.row > SHEET_ROWS:
                    raise _Refuse(f"outside row {self.row}")
                s.cells += self.row_cells * self.row_rep
                if self.row > s.rows or self.row_last > s.cols:
                    s.rows, s.cols = max(s.rows, self.row), max(s.cols, self.row_last)
                    s.far = (self.row, self.row_last)
        elif local == "table":
            self.table = None

    def feed(self, chunk: bytes, final: bool = False) -> None:
        self.p.Parse(chunk, final)


def _repeat(v: str | None) -> int:
    if v is None:
        return 1
    if not v.isdigit() or len(v) > 10 or int(v) < 1:
        raise _Refuse(f"bad repeat {v}")
    return int(v)


def _addr(row: int, col: int) -> str:
    from .table import address

    return address(row - 1, col - 1)


def _flat_ods(fh) -> bool:
    """True when the file is one XML document of an OpenDocument office (a .fods), not a zip."""
    fh.seek(0)
    head = fh.read(4096)
    if head.startswith(b"PK"):
        return False
    return b"<office:document" in head or b":document " in head and b"opendocument" in head


def _scan_content(zf: zipfile.ZipFile, infos: list[zipfile.ZipInfo], name: str, *, ods: bool) -> Scan:
    """Stream every XML part once (expat, 64 KiB at a time: linear time, bounded memory) and
    refuse, in one sentence, what no spreadsheet program writes and what would make a reader
    allocate far beyond the file's content."""
    scan = Scan()
    if ods and any(i.filename == "META-INF/manifest.xml" for i in infos) and \
            b"encryption-data" in zf.read("META-INF/manifest.xml"):
        return scan  # saved with a password: its parts are ciphertext, and the reader refuses it in words
    total = sum(i.file_size for i in infos)
    for info in infos:
        part = info.filename
        low = part.lower()
        if info.is_dir() or not low.endswith(_XML_PARTS):
            continue
        legacy = ods and part == "META-INF/manifest.xml"
        if not ods and not low.endswith(".vml"):
            stats = _plain_sheet(zf, info, total)
            if stats is not None:
                scan.sheets.update(stats)
                continue
        ps = _PartScan(part, info.file_size, total, ods, legacy) if not low.endswith(".vml") else None
        where = f"part {_q(part)}"
        try:
            _stream_part(zf, info, ps)
        except UnicodeDecodeError:
            raise WorkbookError(f"{name}: {where} is not UTF-8 text, which the format asks for; open the "
                                "workbook in a spreadsheet program and save it again") from None
        except expat.ExpatError as exc:
            raise WorkbookError(f"{name}: {where} is damaged (not well-formed XML at line {exc.lineno}); "
                                "open the workbook in a spreadsheet program and save it again") from None
        except _Refuse as r:
            raise _refusal(r.message, zf, info, ps, name, ods=ods) from None
        if ps is not None:
            scan.sheets.update(ps.stats)
    if ods:
        for table, stats in scan.sheets.items():
            if stats.too_big():
                raise WorkbookError(stats.refusal(name, table))
    return scan


PLAIN_SHEETS = True  # read worksheets in the plain form by numpy (tests compare both ways)
_PLAIN_HEAD = 8 * 2**20  # bytes before <sheetData> that the plain scan holds, at most
_PLAIN_BLOCK = 2**20  # bytes of rows read at once
_PLAIN_ROW = 16 * 2**20  # ... and the longest row it waits for


def _plain_sheet(zf: zipfile.ZipFile, info: zipfile.ZipInfo, total: int) -> dict[str, SheetStats] | None:
    """The statistics of a worksheet part, with its rows read by numpy (io/sheetrows.py), or None
    when the part must be scanned element by element (:class:`_PartScan`): it is no worksheet, or
    not in the plain form, or anything at all is wrong with it (that scan then says what).

    The part is streamed once through expat with no handler per element (the XML, its encoding,
    DTD and comments are checked as by :class:`_PartScan`); the text before the rows and after
    them goes through a :class:`_PartScan` of its own, which counts what it holds and takes the
    rows' count and position where the rows end, as if it had read them itself.
    """
    if not PLAIN_SHEETS:
        return None
    xml = _PartScan(info.filename, info.file_size, total, False, False, plain_sheet=True)
    rest = _PartScan(info.filename, info.file_size, total, False, False)
    rows = _SheetRows(rest)
    try:
        _stream_part(zf, info, xml, rows)
    except Exception:  # the element-by-element scan reads it again, and says what is wrong
        return None
    return rest.stats if rows.done and xml.root == "worksheet" else None


class _SheetRows:
    """Splits a worksheet part at its ``<sheetData>`` and ``</sheetData>``: the text around the
    rows goes to ``scan`` (a :class:`_PartScan`), the rows to :func:`sheetrows.read_block`."""

    def __init__(self, scan: _PartScan):
        self.scan, self.phase, self.done = scan, "head", False
        self.pending: list[bytes] = []
        self.size = 0
        self.wait = 0  # bytes to hold before looking again (twice what was looked at: linear time)

    def feed(self, chunk: bytes, final: bool = False) -> None:
        phase = self.phase
        if phase == "head":
            self._head(chunk)
        elif phase == "rows":
            self._rows(chunk, final)
        else:
            self.scan.feed(chunk, final)
        if final:
            if self.phase == "rows":  # the rows began with this last look
                self._rows(b"", True)
            if self.phase != "tail":
                raise _NotPlain
            if phase != "tail":  # ... or the text after them
                self.scan.feed(b"", True)
            self.done = True

    def _head(self, chunk: bytes) -> None:
        self.pending.append(chunk)
        self.size += len(chunk)
        if self.size < self.wait and chunk:
            return
        head = b"".join(self.pending)
        i = head.find(b"<sheetData")
        if i < 0:
            if self.size > _PLAIN_HEAD or not chunk:
                raise _NotPlain
            self.pending, self.size, self.wait = [head], len(head), 2 * len(head)
            return
        j = i + len(b"<sheetData>")
        if head[i:j] != b"<sheetData>":
            raise _NotPlain
        self.scan.feed(head[:j])  # at once: its elements are all seen before the rows are counted
        s = self.scan
        if getattr(s, "sheet", None) is None or s.p.StartElementHandler != s._sheet:
            raise _NotPlain
        self.state = (s.row, s.col, s.cell, s.row_text)
        self.phase, self.pending, self.size, self.wait = "rows", [], 0, _PLAIN_BLOCK
        self._rows(head[j:], False)

    def _rows(self, chunk: bytes, final: bool) -> None:
        self.pending.append(chunk)
        self.size += len(chunk)
        if self.size < self.wait and not final:
            return
        data = b"".join(self.pending)
        end = data.find(b"</sheetData>")
        if end >= 0:
            self._block(data[:end])
            s = self.scan
            s.row, s.col, s.cell, s.row_text = self.state
            self.phase, self.pending = "tail", []
            self.scan.feed(data[end:])
            return
        cut = data.rfind(b"<row ")
        if cut <= 0:
            if len(data) > _PLAIN_ROW:
                raise _NotPlain
            self.pending, self.size, self.wait = [data], len(data), 2 * len(data)
            return
        self._block(data[:cut])
        self.pending, self.size, self.wait = [data[cut:]], len(data) - cut, _PLAIN_BLOCK

    def _block(self, data: bytes) -> None:
        """Count the value cells of whole rows as _PartScan._sheet would, and move to the last row."""
        from .sheetrows import Unusual, read_block

        try:
            b = read_block(data)
        except Unusual:
            raise _NotPlain from None
        s = self.scan.sheet
        if b.rows.size:
            rows = np.maximum.accumulate(np.concatenate(([s.rows], b.rows)))[:-1]  # before each cell
            cols = np.maximum.accumulate(np.concatenate(([s.cols], b.cols)))[:-1]
            moved = np.flatnonzero((b.rows > rows) | (b.cols > cols))
            if moved.size:
                s.far = (int(b.rows[moved[-1]]), int(b.cols[moved[-1]]))
            s.rows, s.cols = max(s.rows, int(b.rows.max())), max(s.cols, int(b.cols.max()))
            s.cells += int(b.rows.size)
        row, col, cell, row_text = self.state
        if b.last_row is not None:
            row, col, row_text = b.last_row, b.last_col, str(b.last_row)
        if b.cells:
            cell = not b.last_has_value
        self.state = (row, col, cell, row_text)


def _stream_part(zf: zipfile.ZipFile, info: zipfile.ZipInfo, ps, also=None) -> None:
    """Read one part in chunks, decoding it as UTF-8 and feeding it to ``ps`` (if any) and then to
    ``also`` (if any); raises UnicodeDecodeError, expat.ExpatError or _Refuse."""
    decoder = codecs.getincrementaldecoder("utf-8")()
    with zf.open(info) as fh:
        first = True
        while True:
            chunk = fh.read(_CHUNK)
            if first:
                first = False
                if chunk.startswith((b"\xff\xfe", b"\xfe\xff", b"<\x00", b"\x00<")):
                    raise _Refuse("encoding UTF-16")
            decoder.decode(chunk, not chunk)
            if ps is not None:
                ps.feed(chunk, not chunk)
            if also is not None:
                also.feed(chunk, not chunk)
            if not chunk:
                break


def _refusal(why: str, zf: zipfile.ZipFile, info: zipfile.ZipInfo, ps, name: str, *, ods: bool) -> WorkbookError:
    """The one sentence refusing a part for the reason ``why`` that the scan of ``ps`` gave."""
    part = info.filename
    where = f"part {_q(part)}"
    if why == "dtd":
        return WorkbookError(f"{name}: {where} declares a DTD (<!DOCTYPE ...>), which workbooks never "
                             "do; lagsheet does not read XML entities")
    if why.startswith("encoding "):
        return WorkbookError(f"{name}: {where} is stored as {why[9:]} text; lagsheet reads parts stored "
                             "as UTF-8, as spreadsheet programs write them: open the workbook in one "
                             "and save it again")
    if why.startswith("markup"):
        return WorkbookError(f"{name}: {where} hides XML markup inside a comment, which spreadsheet "
                             "programs never write; open the workbook in one and save it again")
    if why.startswith("count "):
        key, _, v = why[6:].partition("=")
        return WorkbookError(f"{name}: the shared strings part claims {_num(v)} strings ({key}), more than "
                             f"its {_size(info.file_size)} can hold; the file is damaged or was not "
                             "written by a spreadsheet program: open it in one and save it again")
    names = {} if ods else _sheet_names(zf)
    if ods and getattr(ps, "table_name", None) is not None:
        names[part] = ps.table_name
    sheet = f"sheet {_q(names[part])}" if part in names else where
    if why.startswith("misplaced "):
        _, ref, row = why.split(" ")
        return WorkbookError(f"{name}: {sheet} has the cell {ref} inside row {row}, where no spreadsheet program "
                             "puts it; the file is damaged or was not written by a spreadsheet program: open it "
                             "in one and save it again")
    return WorkbookError(f"{name}: {sheet} has {_what(why)}, outside any sheet (the last cell of a "
                         "sheet is XFD1048576); the file is damaged or was not written by a spreadsheet "
                         "program: open it in one and save it again")


def _num(v: str) -> str:
    return f"{int(v):,}" if v.isdigit() else repr(v)


def _what(why: str) -> str:
    kind, _, what = why.partition(" ")
    if kind in ("bad", "outside"):
        sort, _, value = what.partition(" ")
        if sort == "repeat":
            return f"a repeat count of {value!s}"
        if sort == "row" and value.startswith("count "):
            return f"a table claiming {value[6:]} rows"
        return {"cell": "a cell reference", "row": "a row number", "range": "a range", "columns": "a column range",
                "column": "a column number"}.get(sort, sort) + f" {value}"
    return why


def _sheet_names(zf: zipfile.ZipFile) -> dict[str, str]:
    """Sheet part -> sheet name, best effort (for messages), from xl/workbook.xml and its relationships."""
    import posixpath

    out: dict[str, str] = {}
    try:
        targets: dict[str, str] = {}
        sheets: list[tuple[str, str]] = []

        def rel(tag, attrs):
            if tag.rpartition(":")[2] == "Relationship" and "Id" in attrs:
                targets[attrs["Id"]] = attrs.get("Target", "")

        def sheet(tag, attrs):
            if tag.rpartition(":")[2] == "sheet":
                rid = next((v for k, v in attrs.items() if k.endswith(":id")), "")
                sheets.append((attrs.get("name", ""), rid))

        for part, handler in (("xl/_rels/workbook.xml.rels", rel), ("xl/workbook.xml", sheet)):
            p = expat.ParserCreate()
            p.StartElementHandler = handler
            p.Parse(zf.read(part), True)
        for sname, rid in sheets:
            t = targets.get(rid, "")
            part = t.lstrip("/") if t.startswith("/") else posixpath.normpath(posixpath.join("xl", t))
            out[part] = sname
    except Exception:  # only for a message: the part name serves as well
        pass
    return out
