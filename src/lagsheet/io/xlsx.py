"""Excel workbooks (.xlsx, .xlsm), read by calamine and written at the package level.

Reading: calamine gives typed cell values, cached formula results included; formula
cells with no cached value are found in the sheet XML (calamine reads them as empty).

Writing changes only what lagsheet adds. Every zip member it has no reason to touch is
copied unchanged. In the parts it must touch — the sheet (new cells, column widths,
dimension), its comments and VML drawing (our notes), the sheet's relationships,
``[Content_Types].xml``, ``styles.xml`` (number formats of our cells) and the Lines
table if there is one — the original text is kept and only our pieces are spliced
in. Text is written as inline strings, never as a formula.
"""

from __future__ import annotations

import bisect
import copy
import io
import posixpath
import re
import time
import weakref
import zipfile
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape

from ..errors import WorkbookError
from .save import VERIFIERS, atomic_write, write_pieces
from .table import (
    Cells,
    RawSheet,
    SheetEdits,
    _Block,
    address,
    calamine_grid,
    column_letter,
    post_write_check,
    sheet_name_for,
)
from .xmlscan import START, Scanner

AUTHOR = "lagsheet"
MARK = "lagsheet: "  # our comments start with this, so that a later run replaces them

NS_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
NS_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
NS_PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
REL_COMMENTS = NS_REL + "/comments"
REL_VML = NS_REL + "/vmlDrawing"
REL_TABLE = NS_REL + "/table"
REL_STYLES = NS_REL + "/styles"
CT_STYLES = "application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"
CT_COMMENTS = "application/vnd.openxmlformats-officedocument.spreadsheetml.comments+xml"
CT_VML = "application/vnd.openxmlformats-officedocument.vmlDrawing"

_OTHER = object()  # a written value that is neither a number, a text nor empty (see _SheetPatch)
# a name starts where no name character precedes it: each character is tried once (linear time)
_ATTR = re.compile(r"""(?<![\w:.-])([\w:.-]+)\s*=\s*(?:"([^"]*)"|'([^']*)')""")
_INVALID_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def _attrs(tag_text: str) -> dict[str, str]:
    return {k: a or b for k, a, b in _ATTR.findall(tag_text)}


def _text(s: str) -> str:
    return escape(_INVALID_XML.sub("", s))


def _col_index(ref: str) -> int:
    col = 0
    for ch in ref:
        if ch.isalpha():
            col = col * 26 + (ord(ch.upper()) - 64)
        else:
            break
    return col - 1


def _rel_target(base_part: str, target: str) -> str:
    """Resolve a relationship target against the part that holds the relationship."""
    if target.startswith("/"):
        return target.lstrip("/")
    return posixpath.normpath(posixpath.join(posixpath.dirname(base_part), target))


def _rels_path(part: str) -> str:
    d, f = posixpath.split(part)
    return posixpath.join(d, "_rels", f + ".rels")


_LOWER: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()  # zip -> {lower-case name: name}


def _member(zf: zipfile.ZipFile, name: str) -> str | None:
    """The zip member that is part ``name``: part names compare ignoring case (ECMA-376 Part 2, 9.1.1)."""
    if name in zf.NameToInfo:
        return name
    count, lower = _LOWER.get(zf, (-1, {}))
    if count != len(zf.NameToInfo):
        lower = {}
        for n in zf.NameToInfo:
            lower.setdefault(n.lower(), n)
        _LOWER[zf] = (len(zf.NameToInfo), lower)
    return lower.get(name.lower())


def _read_rels(zf: zipfile.ZipFile, part: str) -> list[dict[str, str]]:
    path = _member(zf, _rels_path(part))
    if path is None:
        return []
    xml = zf.read(path).decode("utf-8")
    return [_attrs(m.group(0)) for m in re.finditer(r"<(?:\w+:)?Relationship\b[^>]*>", xml)]


@dataclass
class _Sheet:
    name: str
    part: str  # e.g. xl/worksheets/sheet1.xml


class XlsxBook:
    def __init__(self, path: Path, zf: zipfile.ZipFile, sheets: list[_Sheet], values,
                 kinds: list[tuple[str, str]] = ()):
        self.path = path
        self._zip = zf
        self._sheets = sheets
        self._values = values
        self._raw: dict[str, RawSheet] = {}
        self._kinds = list(kinds) or [(s.name, "worksheet") for s in sheets]  # (name, kind) of every sheet
        self._fixed: set[str] = set()  # sheet parts calamine reads from a mended copy (see _calamine_fixes)
        self._scan = None  # what preflight's content scan found (sheet statistics by part)

    @classmethod
    def open(cls, path: Path, scan=None) -> XlsxBook:
        if not zipfile.is_zipfile(path):
            raise WorkbookError(f"{path.name}: not an Excel workbook (the file is not a zip package)")
        try:
            zf = zipfile.ZipFile(path)
            wb_part = _workbook_part(zf)
            rels = {r.get("Id"): r for r in _read_rels(zf, wb_part)}
            xml = zf.read(wb_part).decode("utf-8")
            sheets, kinds = [], []
            for m in re.finditer(r"<(?:\w+:)?sheet\b[^>]*>", xml):
                a = _attrs(m.group(0))
                rid = next((v for k, v in a.items() if k.endswith(":id")), None)
                rel = rels.get(rid)
                name = _unescape(a.get("name", ""))
                kind = rel.get("Type", "").rsplit("/", 1)[-1] if rel is not None else ""
                kinds.append((name, kind))
                if kind != "worksheet":
                    continue
                target = _rel_target(wb_part, rel["Target"])
                sheets.append(_Sheet(name, _member(zf, target) or target))
            values = _calamine(path, zf, _calamine_fixes(zf, ()))
        except WorkbookError:
            raise
        except BaseException as exc:  # any library failure (a native panic too) means it cannot be read
            _reraise_interrupt(exc)
            raise WorkbookError(f"{path.name}: cannot be read as a workbook (its parts are damaged or not "
                                "as spreadsheet programs write them); open it in a spreadsheet program and "
                                "save it again") from None
        book = cls(path, zf, sheets, values, kinds)
        book._scan = scan
        return book

    def sheet_names(self) -> list[str]:
        return [s.name for s in self._sheets]

    def all_sheet_names(self) -> list[str]:
        """Every sheet's name: worksheets, chart sheets, dialog and macro sheets (names are shared)."""
        return [n for n, _ in self._kinds]

    def _part(self, name: str) -> str:
        return next(s.part for s in self._sheets if s.name == name)

    def sheet(self, name: str) -> RawSheet:
        if name not in self._raw:
            part = self._part(name)
            stats = self._scan.sheets.get(part) if self._scan is not None else None
            if stats is not None and stats.too_big():  # before calamine fills the rectangle from A1
                raise WorkbookError(stats.refusal(self.path.name, name))
            data = self._zip.read(part)
            at = data.find(b"mergeCell")  # merges follow the cells: no regular expression over the rows
            if at >= 0 and part not in self._fixed and _LINE_MERGE.search(data, max(at - 64, 0)):
                self._fixed.add(part)  # calamine cannot read a merge of whole columns or rows: mend its copy
                self._values = _calamine(self.path, self._zip, _calamine_fixes(self._zip, self._fixed))
            grid = calamine_grid(self._values, name, self.path)
            uncached = _uncached(data) if _has_formula(data) else set()
            xfs = self._percent_xfs()
            percent = _percent_cells(data, xfs) if xfs and any(b's="%d"' % x in data for x in xfs) else set()
            del data
            self._raw[name] = RawSheet(name, grid, uncached, self._totals_rows(part), percent)
        return self._raw[name]

    def _percent_xfs(self) -> frozenset[int]:
        """Indices of the cell formats (the ``s`` of a cell) that show a number as a percentage."""
        if not hasattr(self, "_pct_xfs"):
            try:
                wb_part = _workbook_part(self._zip)
                target = next((r.get("Target", "") for r in _read_rels(self._zip, wb_part)
                               if r.get("Type") == REL_STYLES and r.get("TargetMode") != "External"), None)
                part = _member(self._zip, _rel_target(wb_part, target)) if target else None
                self._pct_xfs = _percent_styles(self._zip.read(part)) if part else frozenset()
            except Exception:  # a styles part that cannot be read: no cell is known to be a percentage
                self._pct_xfs = frozenset()
        return self._pct_xfs

    def _totals_rows(self, part: str) -> set[int]:
        """0-based rows that are the totals rows of the sheet's tables (not schedule lines)."""
        rows: set[int] = set()
        for rel in _read_rels(self._zip, part):
            if rel.get("Type") != REL_TABLE or rel.get("TargetMode") == "External":
                continue
            tpart = _member(self._zip, _rel_target(part, rel.get("Target", "")))
            if tpart is None:
                continue
            m = re.search(r"<(?:\w+:)?table\b[^>]*>", self._zip.read(tpart).decode("utf-8"))
            a = _attrs(m.group(0)) if m else {}
            n = int(a["totalsRowCount"]) if a.get("totalsRowCount", "").isdigit() else 0
            end = re.fullmatch(r"[A-Za-z]+\d+:[A-Za-z]+(\d+)", a.get("ref", ""))
            if n and end:
                last = int(end.group(1)) - 1
                rows.update(range(last - n + 1, last + 1))
        return rows

    def save(self, edits: list[SheetEdits], out: Path, new_sheets=(), allow_loss: bool = False) -> list[str]:
        pkg = _Package(self._zip)
        for e in edits:
            if e.sheet not in self.sheet_names():
                raise WorkbookError(f"sheet {e.sheet!r} is not in the workbook")
            _SheetPatch(pkg, self._part(e.sheet), e).run()
        for sheet in new_sheets:
            _put_sheet(pkg, self, sheet)
        parts = pkg.finish()

        def write(tmp: str) -> None:
            with zipfile.ZipFile(tmp, "w") as dst:
                done = set()
                for info in self._zip.infolist():
                    if info.filename in pkg.removed:
                        continue
                    info = copy.copy(info)  # writing fills in sizes: the input's entries stay as read
                    if info.filename in pkg.streams:
                        write_pieces(dst, info, *pkg.streams[info.filename])
                    else:
                        data = parts.get(info.filename)
                        dst.writestr(info, data if data is not None else self._zip.read(info.filename),
                                     compress_type=info.compress_type)
                    done.add(info.filename)
                for name, data in parts.items():
                    if name not in done:
                        dst.writestr(name, data, compress_type=zipfile.ZIP_DEFLATED)
                for name, (pieces, hint) in pkg.streams.items():
                    if name not in done:
                        info = zipfile.ZipInfo(name, time.localtime(time.time())[:6])
                        info.compress_type = zipfile.ZIP_DEFLATED
                        write_pieces(dst, info, pieces, hint)
            pkg.streams.clear()  # what they hold (the original rows, the cells by row) is no longer needed

        before = {e.sheet: self.sheet(e.sheet) for e in edits}
        written = {e.sheet: e.values.keys() for e in edits}  # a view: no copy of every position
        names = set(self._zip.namelist())

        losses: list[str] = []

        edited = {self._part(e.sheet) for e in edits}

        def verify(tmp: Path) -> None:
            with zipfile.ZipFile(tmp) as z:
                fixes = _calamine_fixes(z, self._fixed)
                if fixes:  # calamine reads a mended copy of this workbook (see _calamine_fixes)
                    if z.testzip() is not None:
                        raise WorkbookError("the written file failed its check (a part is corrupt)")
                    reopened = _calamine(tmp, z, fixes)
            if not fixes:
                reopened = VERIFIERS[out.suffix.lower()](tmp)
            with zipfile.ZipFile(tmp) as z:
                _check_package(z, self._zip, edited, pkg.owned)
            losses.extend(post_write_check(tmp, before, written, names, pkg.removed, reopened=reopened,
                                           allow_loss=allow_loss, results={e.sheet: e.values for e in edits}))

        atomic_write(out, write, like=self.path, verify=verify)
        return losses


def _check_package(out: zipfile.ZipFile, inp: zipfile.ZipFile, edited: set[str], owned: set[str]) -> None:
    """The written package before it replaces anything: no two part names or sheet names equal
    ignoring case, and no relationship of a person's part added, dropped or changed, but for
    the notes (comments and their drawing) of the sheets lagsheet writes in, the workbook's
    relationships to lagsheet's new sheets, and to a styles part when it had none. Raises
    WorkbookError (nothing is written).
    """
    tail = "; nothing was written. Please report this with the workbook"
    seen: dict[str, str] = {}
    for n in out.namelist():
        if n.lower() in seen:
            raise WorkbookError(f"the written file would hold two parts named {seen[n.lower()]} and {n}, "
                                f"which spreadsheet programs take for one{tail}")
        seen[n.lower()] = n
    wb_part = _workbook_part(out)
    sheets: dict[str, str] = {}
    for m in re.finditer(r"<(?:\w+:)?sheet\b[^>]*>", out.read(wb_part).decode("utf-8")):
        name = _unescape(_attrs(m.group(0)).get("name", ""))
        if name.casefold() in sheets:
            raise WorkbookError(f"the written file would hold two sheets named {sheets[name.casefold()]!r} "
                                f"and {name!r}, which spreadsheet programs take for one{tail}")
        sheets[name.casefold()] = name
    before = {n.lower() for n in inp.namelist()}
    with_rels = {n.lower() for z in (inp, out) for n in z.namelist() if n.lower().endswith(".rels")}
    allowed = {REL_COMMENTS, REL_VML}
    for part in inp.namelist():
        if part in owned or _rels_path(part).lower() not in with_rels:
            continue
        old, new = _rels_by_id(inp, part), _rels_by_id(out, part)
        if old == new:
            continue
        for rid, rel in new.items():
            if old.get(rid) == rel:
                continue
            rtype, external, target = rel
            fresh = not external and target not in before
            no_styles = not any(t == REL_STYLES for t, _e, _t in old.values())  # then ours is the first
            if rid in old or not fresh or not (
                    (part in edited and rtype in allowed) or (part == wb_part and rtype == REL_WORKSHEET)
                    or (part == wb_part and rtype == REL_STYLES and no_styles)):
                raise WorkbookError(f"the written file would give the workbook's part {part} a relationship "
                                    f"it did not have (to {target}){tail}")
        dropped = sorted(set(old) - set(new))
        if dropped:
            raise WorkbookError(f"the written file would lose the relationship {dropped[0]} of the workbook's "
                                f"part {part}{tail}")


def _rels_by_id(zf: zipfile.ZipFile, part: str) -> dict[str, tuple[str, bool, str]]:
    """``part``'s relationships: Id -> (type, external, target part in lower case or external address)."""
    out = {}
    for r in _read_rels(zf, part):
        external = r.get("TargetMode") == "External"
        target = r.get("Target", "")
        out[r.get("Id", "")] = (r.get("Type", ""), external, target if external else _rel_target(part, target).lower())
    return out


def _unescape(s: str) -> str:
    return (s.replace("&lt;", "<").replace("&gt;", ">").replace("&quot;", '"')
            .replace("&apos;", "'").replace("&amp;", "&"))


def _workbook_part(zf: zipfile.ZipFile) -> str:
    for r in _read_rels(zf, ""):
        if r.get("Type", "").endswith("/officeDocument"):
            target = _rel_target("", r["Target"])
            return _member(zf, target) or target
    return _member(zf, "xl/workbook.xml") or "xl/workbook.xml"


# Sheets calamine reads; any other kind (an Excel 4 macro sheet) makes it refuse the whole workbook.
_CALAMINE_KINDS = ("worksheet", "chartsheet", "dialogsheet")
# A merge of whole columns ('A:A') or rows ('3:5'): calamine refuses the sheet that has one.
_LINE_MERGE = re.compile(rb'(<(?:\w+:)?mergeCell\b[^>]*?\bref=")([A-Za-z]{1,3}:[A-Za-z]{1,3}|\d{1,7}:\d{1,7})"')


def _calamine_fixes(zf: zipfile.ZipFile, sheet_parts: Iterable[str]) -> dict[str, bytes]:
    """Parts to mend in the copy of the package that calamine reads (never in what is written).

    The workbook part loses its ``<sheet>`` entries that are not a worksheet, a chart sheet
    or a dialog sheet (Excel 4 macro sheets: lagsheet never reads them, and they stay in
    the output as they were); each part of ``sheet_parts`` with a merge of whole columns or
    rows gets it written as the cell range it covers ('A:A' -> 'A1:A1048576').
    """
    out: dict[str, bytes] = {}
    wb_part = _workbook_part(zf)
    rels = {r.get("Id"): r for r in _read_rels(zf, wb_part)}
    xml = zf.read(wb_part).decode("utf-8")

    def keep(m: re.Match) -> str:
        rid = next((v for k, v in _attrs(m.group(0)).items() if k.endswith(":id")), None)
        kind = rels.get(rid, {}).get("Type", "").rsplit("/", 1)[-1]
        return m.group(0) if kind in _CALAMINE_KINDS else ""

    mended = re.sub(r"<(?:\w+:)?sheet(?=[\s/>])[^>]*?(?:/>|>.*?</(?:\w+:)?sheet>)", keep, xml, flags=re.S)
    if mended != xml:
        out[wb_part] = mended.encode("utf-8")

    def whole(m: re.Match) -> bytes:
        a, b = m.group(2).split(b":")
        ref = b"A" + a + b":XFD" + b if a.isdigit() else a + b"1:" + b + b"1048576"
        return m.group(1) + ref + b'"'

    for part in sheet_parts:
        data = zf.read(part)
        fixed = _LINE_MERGE.sub(whole, data)
        if fixed != data:
            out[part] = fixed
    return out


def _calamine(path: Path, zf: zipfile.ZipFile, fixes: dict[str, bytes]):
    """calamine's workbook of ``path``; with ``fixes``, of a copy in memory with those parts mended."""
    import python_calamine

    if not fixes:
        return python_calamine.CalamineWorkbook.from_path(str(path))
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_STORED) as copy_:
        for info in zf.infolist():
            copy_.writestr(info.filename, fixes.get(info.filename) or zf.read(info.filename))
    buf.seek(0)
    return python_calamine.CalamineWorkbook.from_filelike(buf)


# an element's name ends at a space, '/' or '>' (not '\b', which would take '<c:x>' for a cell and
# then look for '</c>' to the end of the text: quadratic on a hostile row)
_CELL = re.compile(r"<(\w+:)?c(?=[\s/>])([^>]*?)(?:/>|>(.*?)</\1?c>)", re.S)


def _reraise_interrupt(exc: BaseException) -> None:
    if isinstance(exc, (KeyboardInterrupt, SystemExit, GeneratorExit)):
        raise exc


def _cell_position(attrs: dict, state: dict) -> None:
    """Move ``state`` ('row', 'col', 0-based) to the cell whose start tag has ``attrs`` (its ``r`` or the next column)."""
    ref = attrs.get("r")
    state["col"] = _col_index(ref) if ref else state["col"] + 1
    if ref:
        digits = ref.lstrip("$ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz").lstrip("$")
        if digits.isdigit():
            state["row"] = int(digits) - 1


def _row_position(attrs: dict, state: dict) -> None:
    """Move ``state`` to the row whose start tag has ``attrs`` (its ``r`` or the next row), before its first cell."""
    r = attrs.get("r")
    state["row"] = int(r) - 1 if r and r.isdigit() else state["row"] + 1
    state["col"] = -1


# a start tag whose local name is 'f' (what _uncached_formulas looks at): 'f' or 'x:f' then a space, '/' or '>'
_F_TAG = re.compile(rb"<(?:[^\s/>:]*:)?f[\s/>]")


def _has_formula(data: bytes) -> bool:
    """Whether the sheet XML may hold a formula element (never False when it does): not an
    'autoFilter' column's 'filterColumn', which alone used to cost a pass over every element."""
    return (b"<f" in data or b":f" in data) and _F_TAG.search(data) is not None


def _uncached(data: bytes) -> set[tuple[int, int]]:
    """0-based (row, col) of formula cells with no cached value: by numpy on a sheet in the plain
    form (io/sheetrows.py, the same cells), else element by element."""
    from .sheetrows import uncached_formulas

    found = uncached_formulas(data)
    return found if found is not None else _uncached_formulas(data)


def _uncached_formulas(data: bytes) -> set[tuple[int, int]]:
    """0-based (row, col) of formula cells with no cached value, by one expat pass (linear time)."""
    from xml.parsers import expat

    out: set[tuple[int, int]] = set()
    state = {"row": 0, "col": -1, "f": False, "v": False, "in_v": False}

    def start(tag, attrs):
        local = tag[tag.find(":") + 1:]
        if local == "c":
            _cell_position(attrs, state)
            state["f"] = state["v"] = False
        elif local == "f":
            state["f"] = True
        elif local == "v":
            state["in_v"] = True
        elif local == "row":
            _row_position(attrs, state)

    def text(data):
        if state["in_v"] and data:
            state["v"] = True

    def end(tag):
        local = tag[tag.find(":") + 1:]
        if local == "v":
            state["in_v"] = False
        elif local == "c" and state["f"] and not state["v"]:
            out.add((state["row"], state["col"]))

    p = expat.ParserCreate()
    p.buffer_text = True
    p.StartElementHandler, p.EndElementHandler, p.CharacterDataHandler = start, end, text
    p.Parse(data, True)
    return out


_PERCENT_BUILTIN = {9, 10}  # the built-in number formats '0%' and '0.00%' (ECMA-376 Part 1, 18.8.30)
_FORMAT_LITERALS = re.compile(r'"[^"]*"|\\.|\[[^\]]*\]|[_*].')  # quoted text, escapes, [colour]/[>0], padding


def is_percent_format(code: str) -> bool:
    """Whether a number format code shows the value times 100 with a '%' ('0%', '0.0%', '#,##0.00%;[Red]-0%').

    >>> [is_percent_format(c) for c in ('0%', '0.0" %"', '0.0\\%', '[Red]0.00%', 'General')]
    [True, False, False, True, False]
    """
    return "%" in _FORMAT_LITERALS.sub("", code)


def _percent_styles(data: bytes) -> frozenset[int]:
    """The indices of the styles part's cell formats (cellXfs) whose number format is a percentage."""
    from xml.parsers import expat

    codes: dict[int, str] = {}
    xfs: list[int] = []
    where: list[str] = []

    def start(tag, attrs):
        local = tag.rpartition(" ")[2]
        if local == "numFmt" and where[-1:] == ["numFmts"]:
            fid = attrs.get("numFmtId", "")
            if fid.isdigit():
                codes[int(fid)] = attrs.get("formatCode", "")
        elif local == "xf" and where[-1:] == ["cellXfs"]:
            fid = attrs.get("numFmtId", "0")
            xfs.append(int(fid) if fid.isdigit() else 0)
        where.append(local)

    def end(tag):
        where.pop()

    def no_dtd(*_args):
        raise ValueError("a document type declaration")

    p = expat.ParserCreate(encoding="utf-8", namespace_separator=" ")
    p.StartElementHandler, p.EndElementHandler = start, end
    p.StartDoctypeDeclHandler = no_dtd
    p.Parse(data, True)
    return frozenset(i for i, fid in enumerate(xfs)
                     if (is_percent_format(codes[fid]) if fid in codes else fid in _PERCENT_BUILTIN))


def _percent_cells(data: bytes, xfs: frozenset[int]) -> set[tuple[int, int]]:
    """0-based (row, col) of the sheet's cells whose format (``s``) is one of ``xfs``, by one expat pass."""
    from xml.parsers import expat

    out: set[tuple[int, int]] = set()
    state = {"row": 0, "col": -1}

    def start(tag, attrs):
        local = tag[tag.find(":") + 1:]
        if local == "c":
            _cell_position(attrs, state)
            s = attrs.get("s", "")
            if s.isdigit() and int(s) in xfs:
                out.add((state["row"], state["col"]))
        elif local == "row":
            _row_position(attrs, state)

    p = expat.ParserCreate()
    p.StartElementHandler = start
    p.Parse(data, True)
    return out


def _size_hint(head: str, inner: str, tail: str, e: SheetEdits) -> int:
    """A generous estimate of a patched sheet's size in bytes (for the zip64 decision)."""
    return 4 * (len(head) + len(inner) + len(tail)) + 200 * (len(e.values) + len(e.comments))


class _Package:
    """The parts a save changes, over the original package: reads see earlier changes."""

    def __init__(self, zf: zipfile.ZipFile):
        self.zf = zf
        self.names = set(zf.namelist())
        self.lower = {n.lower(): n for n in self.names}
        self.out: dict[str, bytes] = {}
        self.streams: dict[str, tuple[Callable[[], Iterable[str]], int]] = {}  # part -> (pieces, size hint)
        self.removed: set[str] = set()
        self.owned: set[str] = set()  # parts of lagsheet's own sheets from an earlier run, replaced now
        self.content_types = self.read("[Content_Types].xml")
        # the styles part is where the workbook's relationship says, not always xl/styles.xml
        wb_part = _workbook_part(zf)
        target = next((r.get("Target", "") for r in _read_rels(zf, wb_part) if r.get("Type") == REL_STYLES
                       and r.get("TargetMode") != "External"), None)
        self.styles_part = _rel_target(wb_part, target) if target else None
        self.styles = _Styles(self.read(self.styles_part) if self.styles_part else "")

    def actual(self, name: str) -> str:
        """The name a part already goes by, ignoring case (part names compare so), else ``name``."""
        if name in self.names or name in self.out or name in self.streams:
            return name
        low = name.lower()
        for pool in (self.out, self.streams):
            for n in pool:
                if n.lower() == low:
                    return n
        return self.lower.get(low, name)

    def read(self, name: str) -> str:
        name = self.actual(name)
        if name in self.streams:  # read back after it was patched: materialise it
            self.write(name, "".join(self.streams[name][0]()))
        if name in self.out:
            return self.out[name].decode("utf-8")
        return self.zf.read(name).decode("utf-8") if name in self.names and name not in self.removed else ""

    def write(self, name: str, text: str) -> None:
        name = self.actual(name)
        self.streams.pop(name, None)
        self.out[name] = text.encode("utf-8")
        self.removed.discard(name)

    def write_stream(self, name: str, pieces: Callable[[], Iterable[str]], size_hint: int) -> None:
        """A part written later from ``pieces()`` (strings), straight into the zip."""
        name = self.actual(name)
        self.out.pop(name, None)
        self.streams[name] = (pieces, size_hint)
        self.removed.discard(name)

    def exists(self, name: str) -> bool:
        """Whether a part of that name, ignoring case, is in the package being written."""
        name = self.actual(name)
        return (name in self.names and name not in self.removed) or name in self.out or name in self.streams

    def free(self, pattern: str) -> str:
        n = 1
        while self.exists(pattern.format(n)):
            n += 1
        return pattern.format(n)

    def add_rel(self, part: str, rtype: str, target: str) -> str:
        """The Id of ``part``'s relationship of type ``rtype`` to ``target``: the one it has, or a new one."""
        path = _rels_path(part)
        xml = self.read(path) or (f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
                                  f'<Relationships xmlns="{NS_PKG_REL}"></Relationships>')
        want = _rel_target(part, target).lower()
        for m in re.finditer(r"<(?:\w+:)?Relationship\b[^>]*>", xml):
            a = _attrs(m.group(0))
            if (a.get("Type") == rtype and a.get("TargetMode") != "External"
                    and _rel_target(part, a.get("Target", "")).lower() == want):
                return a.get("Id", "")
        ids = set(re.findall(r'\bId="([^"]*)"', xml))
        k = 1
        while f"rIdLs{k}" in ids:
            k += 1
        rid = f"rIdLs{k}"
        close = re.search(r"</(\w+:)?Relationships\s*>", xml)
        if close is None:  # an empty <Relationships/>, as some export libraries write for every sheet
            empty = re.search(r"<((?:\w+:)?)Relationships\b([^>]*?)\s*/>", xml)
            if empty is None:
                raise WorkbookError(f"the package part {path} is damaged (no relationships element); "
                                    "save the workbook again in a spreadsheet program")
            xml = (xml[:empty.start()] + f"<{empty.group(1)}Relationships{empty.group(2)}>"
                   f"</{empty.group(1)}Relationships>" + xml[empty.end():])
            close = re.search(r"</(\w+:)?Relationships\s*>", xml)
        p = close.group(1) or ""
        xml = xml[:close.start()] + f'<{p}Relationship Id="{rid}" Type="{rtype}" Target="{target}"/>' + xml[close.start():]
        self.write(path, xml)
        return rid

    def override(self, part: str, ctype: str) -> None:
        if f'partname="/{part.lower()}"' in self.content_types.lower():
            return
        close = self.content_types.rfind("</")
        self.content_types = (self.content_types[:close] + f'<Override PartName="/{part}" ContentType="{ctype}"/>'
                              + self.content_types[close:])

    def default(self, ext: str, ctype: str) -> None:
        if re.search(rf'<(\w+:)?Default\b[^>]*Extension="{ext}"', self.content_types, re.I):
            return
        m = re.search(r"<(\w+:)?Types\b[^>]*>", self.content_types)
        self.content_types = (self.content_types[:m.end()] + f'<Default Extension="{ext}" ContentType="{ctype}"/>'
                              + self.content_types[m.end():])

    def remove(self, part: str) -> None:
        part = self.actual(part)
        self.out.pop(part, None)
        self.streams.pop(part, None)
        self.removed.add(part)
        self.content_types = re.sub(rf'<(\w+:)?Override\b[^>]*PartName="/{re.escape(part)}"[^>]*/>', "",
                                    self.content_types, flags=re.I)

    def finish(self) -> dict[str, bytes]:
        if self.styles.changed:
            if self.styles_part is None:  # a workbook without one: ours, related and typed
                wb_part = _workbook_part(self.zf)
                self.styles_part = self.free("xl/styles{}.xml") if self.exists("xl/styles.xml") else "xl/styles.xml"
                self.add_rel(wb_part, REL_STYLES, posixpath.relpath(self.styles_part, posixpath.dirname(wb_part)))
            self.override(self.styles_part, CT_STYLES)
            self.write(self.styles_part, self.styles.xml)
        if self.content_types != self.zf.read("[Content_Types].xml").decode("utf-8"):
            self.write("[Content_Types].xml", self.content_types)
        return self.out


def _rows_in(inner: str, p: str):
    """(start, the start tag's attributes text, (start, end) of its cells or None for ``<row/>``,
    end) of every row of a sheet's ``sheetData`` text, as the pattern
    ``<row(?=[\\s/>])([^>]*?)(/>|>(.*?)</row>)`` finds them (its rows, found with a search for
    the start tag and one for the end tag instead of a lazy match over every character)."""
    tag = re.compile(rf"<{re.escape(p)}row(?=[\s/>])([^>]*?)(/>|>)")
    close = f"</{p}row>"
    i = 0
    while True:
        m = tag.search(inner, i)
        if m is None:
            return
        if m.group(2) == "/>":
            yield m.start(), m.group(1), None, m.end()
            i = m.end()
            continue
        j = inner.find(close, m.end())
        if j < 0:  # no end tag: the pattern finds no row here and goes on looking after its start
            whole = re.compile(rf"<{re.escape(p)}row(?=[\s/>])([^>]*?)(/>|>(.*?)</{re.escape(p)}row>)", re.S)
            for w in whole.finditer(inner, m.start() + 1):
                yield w.start(), w.group(1), (w.start(3), w.end(3)) if w.group(3) is not None else None, w.end()
            return
        yield m.start(), m.group(1), (m.end(), j), j + len(close)
        i = j + len(close)


_QUOTED = ("=", "+", "-", "@")  # a text starting so is written quoted (see _cell_xml)
_CHUNK = 256  # rows whose cells' XML is made at a time (see _Run)


class _Run:
    """The cells written on one set of rows (the result columns of the lines share theirs), made
    into XML a chunk of :data:`_CHUNK` rows at a time: column by column, one list comprehension
    each, then joined row by row. ``makers[k](r1s, at, end)`` gives the XML of column
    ``cols[k]``'s cells on ``rows[at:end]`` ('' where a cell is emptied), ``r1s`` being those
    rows' numbers as text; ``seqs[k]`` is the column's place in the edits."""

    __slots__ = ("rows", "index", "cols", "makers", "seqs", "lo", "hi", "_at", "_xml", "_joined")

    def __init__(self, rows, index: dict[int, int], cols: list[int], makers: list[Callable], seqs: list[int]):
        order = sorted(range(len(cols)), key=cols.__getitem__)
        self.rows, self.index = rows, index
        self.cols = [cols[k] for k in order]
        self.makers = [makers[k] for k in order]
        self.seqs = [seqs[k] for k in order]
        self.lo, self.hi = self.cols[0], self.cols[-1]
        self._at, self._xml, self._joined = -1, [], None

    def _chunk(self, r: int) -> int:
        """Row ``r``'s place in the chunk of cells made (the chunk that holds it is made first)."""
        i = self.index[r]
        at = i - i % _CHUNK
        if at != self._at:
            end = min(at + _CHUNK, len(self.rows))
            r1s = [str(x + 1) for x in self.rows[at:end]]
            self._xml = [make(r1s, at, end) for make in self.makers]
            self._at, self._joined = at, None
        return i - at

    def joined(self, r: int) -> str:
        """The XML of row ``r``'s cells here, in column order."""
        k = self._chunk(r)
        if self._joined is None:
            self._joined = list(map("".join, zip(*self._xml, strict=True)))
        return self._joined[k]

    def cells(self, r: int) -> list[tuple[int, str]]:
        """(column, cell XML) of row ``r``'s cells here, in column order ('' where emptied)."""
        k = self._chunk(r)
        return [(c, xml[k]) for c, xml in zip(self.cols, self._xml, strict=True)]


class _SheetPatch:
    """Splices one SheetEdits into one sheet part and the parts that hang off it.

    The sheet is held as three pieces: what comes before ``sheetData`` (dimension, cols),
    the original rows, and what follows (legacyDrawing goes there). The new sheet is
    streamed row by row into the zip (:meth:`_stream`): no second copy of the sheet and no
    cell XML for more than one row exist at a time.
    """

    def __init__(self, pkg: _Package, part: str, e: SheetEdits):
        self.pkg, self.zf, self.part, self.e = pkg, pkg.zf, part, e
        self.xml = pkg.read(part)
        m = re.search(r"<(\w+:)?worksheet\b", self.xml)
        self.p = m.group(1) or "" if m else ""
        self.styles = pkg.styles
        self._re_append = (re.compile(rf'<{re.escape(self.p)}c\b[^>]*?\br="([A-Z]+)\d+"'),
                           re.compile(rf"<{re.escape(self.p)}c\b"))
        self._col_of: dict[str, int] = {}  # column letters -> index
        self._num_close = f"</{self.p}v></{self.p}c>"

    def _read(self, name: str) -> str:
        return self.pkg.read(name)

    def run(self) -> None:
        by_row = self._by_row = self._rows_of_edits()
        self._split()
        self._merges_over(by_row)
        self._dimension(by_row)
        self._cols()
        self._tables()
        self._comments()
        self._page_setup()
        self.xml = ""  # the pieces hold it now
        self.pkg.write_stream(self.part, self._stream, _size_hint(self.head, self.inner, self.tail, self.e))

    # -- cells ---------------------------------------------------------------------------

    def _find_header_styles(self) -> dict[tuple[int, int], str | None]:
        """The style of the cell each new header copies its style from (None: none found)."""
        want = {}
        for pos, (sr, sc) in self.e.headers.items():
            want.setdefault(address(sr, sc), []).append(pos)
        found: dict[str, str | None] = {}
        if want:
            refs = "|".join(re.escape(ref) for ref in sorted(want))
            for m in re.finditer(rf'<{re.escape(self.p)}c\b[^>]*\br="({refs})"[^>]*>', self.xml):
                if m.group(1) not in found:  # the first such cell, as a search for each would find
                    found[m.group(1)] = _attrs(m.group(0)).get("s")
                    if len(found) == len(want):
                        break
        return {pos: found.get(ref) for ref, poss in want.items() for pos in poss}

    def _rows_of_edits(self) -> dict[int, tuple[_Run, ...]]:
        """Row -> the runs (:class:`_Run`) that hold the cells written in it.

        Every cell format our cells need is registered here, block by block in the order of
        the edits and cell by cell within a block, as the cells ask for them: that order
        numbers them in styles.xml. The cells' XML itself is made later, a chunk of rows at
        a time, while the sheet is streamed (:meth:`_stream`).
        """
        self._header_styles = self._find_header_styles()
        self._hrows = {r for r, _ in self._header_styles}
        self._starts, self._mids, self._texts = {}, {}, {}
        groups: dict[int, tuple] = {}  # id of the rows' index -> (rows, index, [col], [maker], [seq])
        for seq, b in enumerate(self._blocks()):
            if not len(b.rows):
                continue
            make = self._column_maker(b) or self._cell_maker(b)
            g = groups.get(id(b.index))
            if g is None:
                g = groups[id(b.index)] = (b.rows, b.index, [], [], [])
            g[2].append(b.col)
            g[3].append(make)
            g[4].append(seq)
        by_row: dict[int, tuple[_Run, ...]] = {}
        self._max_col = -1
        for rows, index, cols, makers, seqs in groups.values():
            run = _Run(rows, index, cols, makers, seqs)
            one = (run,)
            if not by_row:
                by_row = dict.fromkeys(rows, one)  # one shared tuple: no object per row
            else:
                for r in rows:
                    by_row[r] = by_row.get(r, ()) + one
            self._max_col = max(self._max_col, run.hi)
        return by_row

    def _row_values(self, r: int) -> list[tuple[int, Any]]:
        """(column, value) of the cells written in row ``r``, in the order of the edits."""
        values = self.e.values
        if isinstance(values, Cells):
            return [(b.col, b.values[b.index[r]]) for b in values.blocks() if r in b.index]
        return [(c, v) for (rr, c), v in values.items() if rr == r]

    def _blocks(self) -> list:
        """The edits as columns of cells (:meth:`Cells.blocks`); a plain mapping's cells one by one."""
        values = self.e.values
        if isinstance(values, Cells):
            return values.blocks()
        return [_Block(c, (r,), [v], None, {r: 0}) for (r, c), v in values.items()]

    def _fmt_of(self, b, r: int, v) -> str | None:
        """The number format of cell (r, b.col) holding ``v`` (as :func:`cells_with_formats` gives it)."""
        formats = self.e.number_formats
        if isinstance(self.e.values, Cells) and formats is self.e.values.formats:
            f = formats._own.get((r, b.col)) if formats._own else None
            return b.fmt if f is None and b.fmt and v is not None and not isinstance(v, str) else f
        return formats.get((r, b.col))

    def _column_maker(self, b) -> Callable | None:
        """A column's cells made by one list comprehension, when they are all numbers (floats),
        texts or empty, none of them in a header row, none with a number format of its own; else None."""
        formats = self.e.number_formats
        if not (isinstance(self.e.values, Cells) and formats is self.e.values.formats):
            return None
        if any(h in b.index for h in self._hrows) or any(c == b.col and r in b.index for r, c in formats._own):
            return None
        kinds = set(map(type, b.values))
        if not kinds <= {float, str, type(None)}:
            return None
        values, fmt = b.values, b.fmt
        # the formats these cells ask for, registered in the order the first of each asks
        asks = []
        if fmt and float in kinds:
            asks.append((next(i for i, v in enumerate(values) if type(v) is float), lambda: self._mid(fmt, None)))
        if str in kinds:
            q = next((i for i, v in enumerate(values) if type(v) is str and v[:1] in _QUOTED), None)
            if q is not None:
                asks.append((q, lambda: self._text_piece(values[q], None)))
        for _, ask in sorted(asks, key=lambda a: a[0]):
            ask()
        start, close, text = self._start(b.col), self._num_close, self._text_piece
        mid = self._mid(fmt, None) if float in kinds else ""
        if str in kinds:
            return lambda r1s, at, end: [
                f"{start}{r1}{mid}{v!r}{close}" if type(v) is float else
                f"{start}{r1}{text(v, None)}" if v is not None else "" for r1, v in zip(r1s, values[at:end], strict=True)]
        if type(None) in kinds:
            return lambda r1s, at, end: [f"{start}{r1}{mid}{v!r}{close}" if v is not None else ""
                                         for r1, v in zip(r1s, values[at:end], strict=True)]
        return lambda r1s, at, end: [f"{start}{r1}{mid}{v!r}{close}" for r1, v in zip(r1s, values[at:end], strict=True)]

    def _cell_maker(self, b) -> Callable:
        """A column's cells made one by one (:meth:`_cell`); made once now, for the formats they ask for."""
        rows, values, col = b.rows, b.values, b.col

        def make(r1s, at, end):
            return [self._cell(col, r, r1, v, self._fmt_of(b, r, v))
                    for r1, r, v in zip(r1s, rows[at:end], values[at:end], strict=True)]

        make([str(r + 1) for r in rows], 0, len(rows))
        return make

    def _cell(self, c: int, r: int, r1: str, v, fmt: str | None) -> str:
        """The XML of cell (r, c) holding ``v`` ('' for an emptied cell): the text of :func:`_cell_xml`."""
        if v is None:
            return ""
        hs = self._header_styles.get((r, c)) if r in self._hrows else None
        t = type(v)
        if t is float:
            return f"{self._start(c)}{r1}{self._mid(fmt, hs)}{v!r}{self._num_close}"
        if t is str:
            return f"{self._start(c)}{r1}{self._text_piece(v, hs)}"
        return _cell_xml(self.p, f"{column_letter(c)}{r1}", v, hs, fmt, self.styles)

    def _start(self, c: int) -> str:
        start = self._starts.get(c)
        if start is None:
            start = self._starts[c] = f'<{self.p}c r="{column_letter(c)}'
        return start

    def _mid(self, fmt: str | None, hs: str | None) -> str:
        """What follows a number cell's reference up to its value: '" s="5"><v>'."""
        piece = self._mids.get((fmt, hs))
        if piece is None:
            s = self.styles.xf_for(fmt) if fmt else hs
            piece = self._mids[(fmt, hs)] = f'" s="{s}"><{self.p}v>' if s is not None else f'"><{self.p}v>'
        return piece

    def _text_piece(self, v: str, hs: str | None) -> str:
        """What follows a text cell's reference: '" t="inlineStr"><is>...</c>'."""
        piece = self._texts.get((v, hs))
        if piece is None:
            if len(self._texts) > 50000:
                self._texts.clear()
            piece = self._texts[(v, hs)] = _cell_xml(self.p, "", v, hs, None, self.styles)[len(self.p) + 6:]
        return piece

    def _row_add(self, r: int) -> tuple[int, int, str]:
        """(first column, last column, the XML of the cells in column order) written in row ``r``."""
        runs = self._by_row[r]
        if len(runs) == 1:
            run = runs[0]
            return run.lo, run.hi, run.joined(r)
        cells = self._row_cells(r)
        return cells[0][0], cells[-1][0], "".join([x for _, x in cells])

    def _row_cells(self, r: int) -> list[tuple[int, str]]:
        """(column, cell XML) of the cells written in row ``r``, in column order ('' where emptied)."""
        runs = self._by_row[r]
        if len(runs) == 1:
            return runs[0].cells(r)
        return sorted((cell for run in runs for cell in run.cells(r)), key=lambda x: x[0])

    def _split(self) -> None:
        """self.head (before sheetData), self.sd_tag, self.inner (the rows), self.tail."""
        p = re.escape(self.p)
        xml = self.xml
        close = f"</{self.p}sheetData>"
        for m in re.finditer(rf"<{p}sheetData\b[^>]*>", xml):
            if re.fullmatch(rf"<{p}sheetData\s*/>", m.group(0)):
                self.head, self.sd_tag, self.inner = xml[:m.start()], f"<{self.p}sheetData>", ""
                self.tail = close + xml[m.end():]
                break
            end = xml.find(close, m.end())
            if end >= 0:
                self.head, self.sd_tag, self.inner = xml[:m.start()], m.group(0), xml[m.end():end]
                self.tail = xml[end:]
                break
        else:
            raise WorkbookError("the sheet has no cell data section; save it again in a spreadsheet program")

    def _stream(self):
        """The new sheet part, in pieces: the original text with our cells spliced into its rows
        (long runs of the original text pass through as slices of it)."""
        inner, by_row = self.inner, self._by_row
        yield self.head
        yield self.sd_tag
        pos = 0
        todo = sorted(by_row)  # rows to write, in order
        k = 0
        last_r = -1
        for start, head, span, end in _rows_in(inner, self.p):
            if k >= len(todo):
                break
            a = _attrs(head)
            r = int(a["r"]) - 1 if "r" in a else last_r + 1
            last_r = r
            while k < len(todo) and todo[k] < r:  # new rows that come before this one
                yield inner[pos:start]
                pos = start
                yield self._new_row(todo[k])
                k += 1
            if k < len(todo) and todo[k] == r:
                pos = yield from self._patch_row(r, a, head, start, span, end, pos)
                k += 1
        yield inner[pos:]
        for r in todo[k:]:
            yield self._new_row(r)
        yield self.tail

    def _new_row(self, r: int) -> str:
        body = self._row_add(r)[2]
        return f'<{self.p}row r="{r + 1}">{body}</{self.p}row>' if body else ""

    def _patch_row(self, r: int, attrs: dict[str, str], head: str, start: int, span: tuple[int, int] | None,
                   end: int, pos: int):
        """Yield the original text from ``pos`` with row ``r`` patched (the row starts at ``start``
        and ends at ``end``; ``span`` is where its cells are, None for an empty ``<row/>``);
        returns where the original text goes on unchanged."""
        inner, p = self.inner, self.p
        lo, hi, add = self._row_add(r)
        bs, be = span if span is not None else (end, end)
        fast = self._append_at(bs, be, lo)
        if fast is not None:  # the usual case: our cells all lie right of the row's last cell
            new_head = head
            if "spans" in attrs:
                first = attrs["spans"].split(":")[0]
                new_head = re.sub(r'spans="[^"]*"', f'spans="{first}:{hi + 1}"', head)
            if span is not None and new_head == head:  # the row as it is, our cells inserted
                yield inner[pos:fast]
                yield add
                return fast
            yield inner[pos:start]
            yield f"<{p}row{new_head}>" + inner[bs:fast] + add
            if span is None:
                yield f"</{p}row>"
                return end
            return fast
        yield inner[pos:start]
        yield self._merged_row(r, attrs, head, inner[bs:be])
        return end

    def _merged_row(self, r: int, attrs: dict[str, str], head: str, body: str) -> str:
        """Row ``r`` with our cells merged among its own, in column order (one of ours replaces
        a cell of the row in its column)."""
        cells = self._row_cells(r)
        ours = {c for c, _ in cells}
        existing = []
        pos = 0
        last_c = -1
        for cm in _CELL.finditer(body):
            a = _attrs(cm.group(2))
            c = _col_index(a["r"]) if "r" in a else last_c + 1
            last_c = c
            existing.append((c, body[pos:cm.end()]))
            pos = cm.end()
        tail = body[pos:]  # e.g. an extLst after the cells
        merged = [(c, x) for c, x in existing if c not in ours]
        merged += [(c, x) for c, x in cells if x]
        merged.sort(key=lambda t: t[0])
        if "spans" in attrs and merged:
            lo, hi = (int(v) for v in attrs["spans"].split(":")[:2]) if ":" in attrs["spans"] else (1, 1)
            lo, hi = min(lo, merged[0][0] + 1), max(hi, merged[-1][0] + 1)
            head = re.sub(r'spans="[^"]*"', f'spans="{lo}:{hi}"', head)
        return f"<{self.p}row{head}>" + "".join(x for _, x in merged) + tail + f"</{self.p}row>"

    def _append_at(self, bs: int, be: int, first_new: int) -> int | None:
        """:meth:`_append_only` of the row whose cells are ``inner[bs:be]``, as an offset in
        ``inner`` (found in place, without a copy of the row)."""
        inner, p = self.inner, self.p
        last_start = inner.rfind(f"<{p}c ", bs, be)
        if last_start < 0:
            fast = self._append_only(inner[bs:be], first_new)
            return None if fast is None else bs + fast
        m = self._re_append[0].match(inner, last_start, be)
        if not m:
            return None
        letters = m.group(1)
        col = self._col_of.get(letters)
        if col is None:
            col = self._col_of[letters] = _col_index(letters)
        if col >= first_new:
            return None
        close = inner.find(">", last_start, be)
        if close < 0:  # not as spreadsheet programs write it: the row's own text decides
            fast = self._append_only(inner[bs:be], first_new)
            return None if fast is None else bs + fast
        if inner[close - 1] == "/":
            at = close + 1
        else:
            at = inner.find(f"</{p}c>", close, be)
            if at < 0:
                fast = self._append_only(inner[bs:be], first_new)
                return None if fast is None else bs + fast
            at += len(f"</{p}c>")
        return at if not self._re_append[1].search(inner, at, be) else None

    def _append_only(self, body: str, first_new: int) -> int | None:
        """Where to insert when every new column is right of the row's last cell, else None."""
        p = self.p
        last_start = body.rfind(f"<{p}c ")
        if last_start < 0:
            return 0 if f"<{p}c" not in body else None
        res = self._re_append
        m = res[0].match(body, last_start)
        if not m or _col_index(m.group(1)) >= first_new:
            return None
        close = body.find(">", last_start)
        if body[close - 1] == "/":
            pos = close + 1
        else:
            pos = body.find(f"</{p}c>", close) + len(f"</{p}c>")
        return pos if not res[1].search(body, pos) else None

    def _merges_over(self, by_row: dict[int, tuple[_Run, ...]]) -> None:
        """Refuse when a merged range of the sheet would hide a cell lagsheet writes (any cell of
        a merge but its first is hidden by spreadsheet programs)."""
        refs = re.findall(rf'<{re.escape(self.p)}mergeCell\b[^>]*?\bref="([^"]*)"', self.tail)
        if not refs or not by_row:
            return
        rows = sorted(by_row)
        for ref in refs:
            box = _ref_box(ref)
            if box is None:
                continue
            r0, c0, r1, c1 = box
            lo = bisect.bisect_left(rows, r0)
            for r in rows[lo:bisect.bisect_right(rows, r1)]:
                hit = min(((seq, c) for run in by_row[r] for c, seq in zip(run.cols, run.seqs, strict=True)
                           if c0 <= c <= c1 and (r, c) != (r0, c0)), default=(0, None))[1]  # the first in the edits
                if hit is not None:
                    raise WorkbookError(
                        f"sheet {self.e.sheet!r} has the cells {ref} merged, and lagsheet writes in "
                        f"{address(r, hit)} among them, where its result would be hidden; unmerge those "
                        "cells (or clear that merge), then run lagsheet again")

    def _dimension(self, cells) -> None:
        pat = re.compile(rf'<{re.escape(self.p)}dimension\b[^>]*\bref="([^"]*)"')
        where = "head"
        m = pat.search(self.head)
        if m is None:
            where, m = "tail", pat.search(self.tail)
        if not m or not cells:
            return
        ref = m.group(1)
        first, _, last = ref.partition(":")
        last = last or first
        max_col = self._max_col
        max_row = max(cells)
        lr = int(re.sub(r"[A-Za-z]", "", last) or 1) - 1
        lc = _col_index(last)
        new_last = address(max(lr, max_row), max(lc, max_col))
        if new_last != last:
            text = getattr(self, where)
            setattr(self, where, text[:m.start(1)] + f"{first}:{new_last}" + text[m.end(1):])

    def _cols(self) -> None:
        if not self.e.widths:
            return
        p = re.escape(self.p)
        pat = re.compile(rf"<{p}cols>(.*?)</{p}cols>", re.S)
        where = "head"
        m = pat.search(self.head)
        if m is None:
            m = pat.search(self.tail)
            where = "tail" if m else "head"
        xml = getattr(self, where)
        covered = []  # (first, last) 0-based column ranges: no set of every column (max may be 16,384)
        if m:
            for cm in re.finditer(rf"<{p}col\b[^>]*>", m.group(1)):
                a = _attrs(cm.group(0))
                covered.append((int(a.get("min", 1)) - 1, int(a.get("max", 1)) - 1))
        new = "".join(f'<{self.p}col min="{c + 1}" max="{c + 1}" width="{w:g}" customWidth="1"/>'
                      for c, w in sorted(self.e.widths.items()) if not any(lo <= c <= hi for lo, hi in covered))
        if not new:
            return
        if m:
            xml = xml[:m.end(1)] + new + xml[m.end(1):]
            # keep <col> elements sorted by min, as the schema asks
            m2 = pat.search(xml)
            cols = re.findall(rf"<{p}col\b[^>]*>(?:</{p}col>)?", m2.group(1))
            cols.sort(key=lambda x: int(_attrs(x).get("min", 1)))
            setattr(self, where, xml[:m2.start(1)] + "".join(cols) + xml[m2.end(1):])
        else:  # right before sheetData, where the head ends
            self.head += f"<{self.p}cols>{new}</{self.p}cols>"

    # -- the Lines table -------------------------------------------------------------------

    def _page_setup(self) -> None:
        """A sheet with no page setup of its own prints landscape, so many pages wide that text keeps
        about two thirds of its size (all of it on one page when it is narrow enough). A page setup
        the user chose is kept as it is."""
        p = self.p
        if not self.e.values or re.search(rf"<{p}pageSetup\b", self.tail) or re.search(r"\bfitToPage=", self.head):
            return  # notes only (check --annotate), or the user's own setup
        widths: dict[int, float] = {}
        default = re.search(r'<(?:\w+:)?sheetFormatPr\b[^>]*\b(?:defaultColWidth|baseColWidth)="([\d.]+)"',
                            self.head)
        default_w = float(default.group(1)) if default and "defaultColWidth" in default.group(0) else 8.43
        for m in re.finditer(r"<(?:\w+:)?col\b[^>]*>", self.head):
            a = _attrs(m.group(0))
            try:
                lo, hi, w = int(a["min"]), int(a["max"]), float(a.get("width", default_w))
            except (KeyError, ValueError):
                continue
            for c in range(lo - 1, min(hi, self._max_col + 1)):
                widths[c] = 0.0 if a.get("hidden") in ("1", "true") else w
        total = sum(widths.get(c, default_w) for c in range(self._max_col + 1))
        wide = max(1, -(-int(total) // CHARS_PER_PAGE))
        follow = re.search(rf"<{p}(?:{'|'.join(_AFTER_PAGE_SETUP)})\b", self.tail)
        at = follow.start() if follow else self.tail.rindex("</")
        self.tail = self.tail[:at] + _PAGE_SETUP.format(p=p, wide=wide) + self.tail[at:]
        fit = f'<{p}pageSetUpPr fitToPage="1"/>'
        if re.search(rf"<{p}pageSetUpPr\b", self.head):  # there, without fitToPage
            self.head = re.sub(rf"<{p}pageSetUpPr\b", f'<{p}pageSetUpPr fitToPage="1"', self.head, count=1)
        elif m := re.search(rf"<{p}sheetPr\b[^>]*?/>", self.head):
            self.head = (self.head[:m.start()] + m.group(0)[:-2].rstrip() + f">{fit}</{p}sheetPr>"
                         + self.head[m.end():])
        elif m := re.search(rf"</{p}sheetPr>", self.head):  # pageSetUpPr is the last of its children
            self.head = self.head[:m.start()] + fit + self.head[m.start():]
        else:
            m = re.search(rf"<{p}worksheet\b[^>]*>", self.head)
            self.head = self.head[:m.end()] + f"<{p}sheetPr>{fit}</{p}sheetPr>" + self.head[m.end():]

    def _tables(self) -> None:
        hr = self.e.header_row
        all_headers = {(hr, c): v for c, v in self._row_values(hr) if v is not None}
        if hr is None or not all_headers:
            return
        for rel in _read_rels(self.zf, self.part):
            if not rel.get("Type", "").endswith("/table"):
                continue
            tpart = _rel_target(self.part, rel["Target"])
            txml = self._read(tpart)
            m = re.search(r'<(\w+:)?table\b[^>]*\bref="([A-Z]+)(\d+):([A-Z]+)(\d+)"', txml)
            if not m:
                continue
            p = m.group(1) or ""
            r0 = int(m.group(3)) - 1
            if r0 != hr:
                continue
            c0, c1, r1 = _col_index(m.group(2)), _col_index(m.group(4)), int(m.group(5)) - 1
            new_cols = sorted(c for (_r, c) in all_headers if c > c1)
            if not new_cols and not any(c0 <= c <= c1 for (_r, c) in all_headers):
                continue
            last = max([c1] + new_cols)
            ref = f"{m.group(2)}{r0 + 1}:{column_letter(last)}{r1 + 1}"
            totals = _attrs(re.search(r"<(?:\w+:)?table\b[^>]*>", txml).group(0)).get("totalsRowCount", "0")
            below = int(totals) if totals.isdigit() else 0  # the totals row: in the table, not in its filter
            filter_ref = f"{m.group(2)}{r0 + 1}:{column_letter(last)}{max(r1 - below, r0) + 1}"
            txml = re.sub(r'(<(?:\w+:)?table\b[^>]*\bref=")[^"]*"', rf'\g<1>{ref}"', txml, count=1)
            txml = re.sub(r'(<(?:\w+:)?autoFilter\b[^>]*\bref=")[^"]*"', rf'\g<1>{filter_ref}"', txml, count=1)
            ids = [int(x) for x in re.findall(r'<(?:\w+:)?tableColumn\b[^>]*\bid="(\d+)"', txml)]
            next_id = max(ids, default=0) + 1
            added = ""
            # rename columns we overwrite in place, add ours past the end (names = header text)
            for c in sorted(c for (_r, c) in all_headers if c0 <= c <= c1):
                name = _text(str(all_headers[(hr, c)]))
                k = c - c0
                cols = list(re.finditer(r'<(?:\w+:)?tableColumn\b[^>]*?\bname="([^"]*)"', txml))
                if k < len(cols):
                    cm = cols[k]
                    txml = txml[:cm.start(1)] + name + txml[cm.end(1):]
            for c in new_cols:
                added += f'<{p}tableColumn id="{next_id}" name="{_text(str(all_headers[(hr, c)]))}"/>'
                next_id += 1
            if added:
                tc = re.search(r"</(\w+:)?tableColumns>", txml)
                txml = txml[:tc.start()] + added + txml[tc.start():]
                count = len(re.findall(r"<(?:\w+:)?tableColumn\b", txml))
                txml = re.sub(r'(<(?:\w+:)?tableColumns\b[^>]*\bcount=")\d+"', rf'\g<1>{count}"', txml, count=1)
            self.pkg.write(tpart, txml)

    # -- comments ----------------------------------------------------------------------------

    def _comments(self) -> None:
        rels = _read_rels(self.zf, self.part)
        c_rel = next((r for r in rels if r.get("Type") == REL_COMMENTS), None)
        v_rel = next((r for r in rels if r.get("Type") == REL_VML), None)
        if c_rel is None and not self.e.comments:
            return
        if c_rel is not None:
            c_part = _rel_target(self.part, c_rel["Target"])
            cxml = self._read(c_part)
        else:
            c_part, cxml = None, ""
        theirs, ours_refs, cxml = _strip_our_comments(cxml)
        wanted = {address(r, c): text for (r, c), text in self.e.comments.items() if address(r, c) not in theirs}
        if c_part is None and not wanted:
            return
        if c_part is None:
            c_part = self.pkg.free("xl/comments{}.xml")
            cxml = (f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<comments xmlns="{NS_MAIN}">'
                    f"<authors></authors><commentList></commentList></comments>")
            self.pkg.add_rel(self.part, REL_COMMENTS, "../" + posixpath.relpath(c_part, "xl"))
            self.pkg.override(c_part, CT_COMMENTS)
        cxml = _add_comments(cxml, wanted)
        self.pkg.write(c_part, cxml)
        # the VML drawing that shows them
        if v_rel is not None:
            v_part = _rel_target(self.part, v_rel["Target"])
            vml = self._read(v_part)
        else:
            v_part = self.pkg.free("xl/drawings/vmlDrawing{}.vml")
            vml = _VML_HEAD + "</xml>"
            rid = self.pkg.add_rel(self.part, REL_VML, "../" + posixpath.relpath(v_part, "xl"))
            self.pkg.default("vml", CT_VML)
            self._legacy_drawing(rid)
        vml = _strip_vml(vml, ours_refs | set(wanted))
        vml = _add_vml(vml, wanted)
        self.pkg.write(v_part, vml)

    def _legacy_drawing(self, rid: str) -> None:
        # legacyDrawing comes after these elements and before the rest (ECMA-376 CT_Worksheet order)
        after = ("sheetPr", "dimension", "sheetViews", "sheetFormatPr", "cols", "sheetData", "sheetCalcPr",
                 "sheetProtection", "protectedRanges", "scenarios", "autoFilter", "sortState", "dataConsolidate",
                 "customSheetViews", "mergeCells", "phoneticPr", "conditionalFormatting", "dataValidations",
                 "hyperlinks", "printOptions", "pageMargins", "pageSetup", "headerFooter", "rowBreaks",
                 "colBreaks", "customProperties", "cellWatches", "ignoredErrors", "smartTags", "drawing")
        pos = None
        tail = self.tail  # it starts with </sheetData>; every element after sheetData follows it
        for name in after[after.index("sheetData") + 1:]:
            for m in re.finditer(rf"<{re.escape(self.p)}{name}(?=[\s/>])[^>]*?(?:/>|>.*?</{re.escape(self.p)}{name}>)",
                                 tail, re.S):
                pos = m.end()
        if pos is None:
            pos = len(f"</{self.p}sheetData>")
        rp = _rel_prefix(self.head)
        decl = "" if rp else f' xmlns:r="{NS_REL}"'
        tag = f'<{self.p}legacyDrawing{decl} {rp or "r"}:id="{rid}"/>'
        self.tail = tail[:pos] + tag + tail[pos:]


def _ref_box(ref: str) -> tuple[int, int, int, int] | None:
    """'B2:D5' -> 0-based (first row, first col, last row, last col); whole columns ('A:C') and
    rows ('3:4') cover the sheet's full height or width; None for what is not a range."""
    m = re.fullmatch(r"\$?([A-Za-z]{0,3})\$?(\d*)(?::\$?([A-Za-z]{0,3})\$?(\d*))?", ref.strip())
    if not m:
        return None
    a_col, a_row, b_col, b_row = m.group(1), m.group(2), m.group(3), m.group(4)
    if b_col is None and b_row is None:
        b_col, b_row = a_col, a_row
    if bool(a_col) != bool(b_col) or bool(a_row) != bool(b_row) or not (a_col or a_row):
        return None
    r0, r1 = (int(a_row) - 1, int(b_row) - 1) if a_row else (0, 1048575)
    c0, c1 = (_col_index(a_col), _col_index(b_col)) if a_col else (0, 16383)
    return min(r0, r1), min(c0, c1), max(r0, r1), max(c0, c1)


def _rel_prefix(xml: str) -> str | None:
    """The prefix the root element declares for the relationships namespace, if any."""
    root = re.search(r"<(?!\?)[^>]*>", xml)
    m = re.search(rf'xmlns:(\w+)="{re.escape(NS_REL)}"', root.group(0)) if root else None
    return m.group(1) if m else None


def _cell_xml(p: str, ref: str, v: Any, style: str | None, fmt: str | None, styles: _Styles) -> str | None:
    if v is None:
        return None
    if isinstance(v, bool):
        v = "yes" if v else "no"
    if isinstance(v, (int, float)):
        s = styles.xf_for(fmt) if fmt else style
        sattr = f' s="{s}"' if s is not None else ""
        return f'<{p}c r="{ref}"{sattr}><{p}v>{repr(float(v))}</{p}v></{p}c>'
    text = str(v)
    s = style
    if text[:1] in ("=", "+", "-", "@"):
        s = styles.quote_xf(style)  # shown as text even when retyped in a spreadsheet program
    sattr = f' s="{s}"' if s is not None else ""
    return (f'<{p}c r="{ref}"{sattr} t="inlineStr"><{p}is><{p}t xml:space="preserve">{_text(text)}</{p}t>'
            f"</{p}is></{p}c>")


# CT_Stylesheet's children in the order its schema fixes (ECMA-376 Part 1, sml.xsd)
_STYLE_ORDER = ("numFmts", "fonts", "fills", "borders", "cellStyleXfs", "cellXfs", "cellStyles", "dxfs",
                "tableStyles", "colors", "extLst")
# the entries each list holds, and the one a list created from nothing starts with (so that an
# index 0 that cells already use without a styles part keeps meaning "the default")
_STYLE_ENTRY = {"numFmts": "numFmt", "fonts": "font", "fills": "fill", "borders": "border",
                "cellStyleXfs": "xf", "cellXfs": "xf", "cellStyles": "cellStyle"}
_STYLE_BASE = {
    "fonts": ['<{p}font><{p}sz val="11"/><{p}name val="Calibri"/><{p}family val="2"/></{p}font>'],
    "fills": ['<{p}fill><{p}patternFill patternType="none"/></{p}fill>',
              '<{p}fill><{p}patternFill patternType="gray125"/></{p}fill>'],
    "borders": ["<{p}border><{p}left/><{p}right/><{p}top/><{p}bottom/><{p}diagonal/></{p}border>"],
    "cellStyleXfs": ['<{p}xf numFmtId="0" fontId="0" fillId="0" borderId="0"/>'],
    "cellXfs": ['<{p}xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/>'],
    "cellStyles": ['<{p}cellStyle name="Normal" xfId="0" builtinId="0"/>'],
}
NS_MC = "http://schemas.openxmlformats.org/markup-compatibility/2006"


@dataclass(slots=True)
class _El:
    """One element of the styles part: its expanded name, attributes and byte offsets."""

    ns: str
    name: str
    attrs: dict[str, str]
    start: int  # the '<' of its start tag
    open_end: int  # just after its start tag
    end: int = -1  # just after its end tag (== open_end when the tag is empty)
    kids: list[_El] = field(default_factory=list)

    @property
    def empty(self) -> bool:
        return self.end == self.open_end


_START_TAG = re.compile(rb"""<[^\s/>]+(?:\s+[^\s=/>]+\s*=\s*(?:"[^"]*"|'[^']*'))*\s*/?>""")


def _tag_end(data: bytes, i: int) -> int:
    """The offset just after the start tag that begins at ``i`` ('>' inside a quoted value skipped)."""
    m = _START_TAG.match(data, i)
    if m is None:
        raise ValueError("unterminated tag")
    return m.end()


def _parse_styles(data: bytes, depth: int = 4) -> tuple[_El, set[int]]:
    """The element tree of a styles part down to ``depth`` levels below the root (byte offsets for
    the root and its children, the only ones ever spliced at), and every numFmtId used anywhere.
    An XML parser does it, so markup inside comments, CDATA or attribute values is never taken
    for an element."""
    import xml.parsers.expat

    p = xml.parsers.expat.ParserCreate(encoding="utf-8", namespace_separator=" ")
    stack: list[_El] = []
    root: list[_El] = []
    ids: set[int] = set()
    skipped = [0]

    def start(name, attrs):
        fid = attrs.get("numFmtId")
        if fid is not None and fid.isdigit():
            ids.add(int(fid))
        if skipped[0] or len(stack) > depth or (len(stack) >= 3 and stack[-1].ns != NS_MC):
            skipped[0] += 1  # below an entry: nothing counted there (AlternateContent's branches are)
            return
        ns, _, local = name.rpartition(" ")
        if len(stack) <= 1:
            i = p.CurrentByteIndex
            el = _El(ns, local, attrs, i, _tag_end(data, i))
        else:
            el = _El(ns, local, attrs, -1, -1)
        (stack[-1].kids if stack else root).append(el)
        stack.append(el)

    def end(name):
        if skipped[0]:
            skipped[0] -= 1
            return
        el = stack.pop()
        if el.start >= 0:
            i = p.CurrentByteIndex
            el.end = el.open_end if data[el.open_end - 2] == 0x2F else data.index(b">", i) + 1  # '/>': empty

    def no_dtd(*_args):
        raise ValueError("a document type declaration")

    p.StartElementHandler, p.EndElementHandler = start, end
    p.StartDoctypeDeclHandler = no_dtd
    p.Parse(data, True)
    return root[0], ids


class _Styles:
    """Adds the few cell formats lagsheet needs to the styles part, keeping everything else.

    The part is parsed once (expat, with byte offsets), never searched for tags: an index
    is the position among the list's entries, where an ``mc:AlternateContent`` stands for
    the entries of the branch a current spreadsheet program takes (its first Choice). New
    entries are kept aside and spliced into the original text when :attr:`xml` is asked
    for; a list the part lacks is created in the schema's order, starting with the default
    entry (index 0 keeps meaning the default).
    """

    def __init__(self, xml: str):
        self._fmt: dict[str, str] = {}
        self._quote: dict[str | None, str] = {}
        self._bold: int | None = None
        self._new: dict[str, list[str]] = {}  # list name -> entries added, in order
        self._new_fmts: dict[str, int] = {}  # format code -> the numFmtId we gave it
        if not xml.strip():
            xml = (f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
                   f'<styleSheet xmlns="{NS_MAIN}"/>')
        self._data = xml.encode("utf-8")
        try:
            self._root, self._ids = _parse_styles(self._data)
        except Exception as exc:  # expat's or ours: either way the part cannot be parsed
            raise WorkbookError("the workbook's styles part cannot be read (not well-formed XML); "
                                "open the file in a spreadsheet program and save it again") from exc
        if self._root.name != "styleSheet" or self._root.ns != NS_MAIN:
            raise WorkbookError("the workbook's styles part is not a spreadsheet style sheet; "
                                "open the file in a spreadsheet program and save it again")
        m = re.match(rb"<([\w.-]+:)?styleSheet\b", self._data[self._root.start:self._root.open_end])
        self.p = (m.group(1) or b"").decode("utf-8")
        self._lists: dict[str, _El] = {}
        for k in self._root.kids:
            if k.ns == NS_MAIN and k.name in _STYLE_ORDER:
                self._lists.setdefault(k.name, k)
        self._counts = {name: len(self._entries(lst, _STYLE_ENTRY[name]))
                        for name, lst in self._lists.items() if name in _STYLE_ENTRY}
        self._based = False

    @property
    def changed(self) -> bool:
        return bool(self._new)

    @staticmethod
    def _entries(lst: _El, entry: str) -> list[_El]:
        """The list's entries in index order (an AlternateContent: its first Choice, else its Fallback)."""
        out = []
        for k in lst.kids:
            if k.ns == NS_MC and k.name == "AlternateContent":
                branches = ([b for b in k.kids if b.ns == NS_MC and b.name == "Choice"]
                            or [b for b in k.kids if b.ns == NS_MC and b.name == "Fallback"])
                if branches:
                    out += [e for e in branches[0].kids if e.ns == NS_MAIN and e.name == entry]
            elif k.ns == NS_MAIN and k.name == entry:
                out.append(k)
        return out

    def _count(self, name: str) -> int:
        return self._counts.get(name, 0) + len(self._new.get(name, ()))

    def _append(self, name: str, entries: list[str]) -> int:
        """Add entries (XML with '{p}' for the prefix) to list ``name``; the first one's index."""
        index = self._count(name)
        self._new.setdefault(name, []).extend(e.format(p=self.p) for e in entries)
        return index

    @property
    def xml(self) -> str:
        """The part with the added entries spliced in (counts updated, missing lists created)."""
        p, data, root = self.p, self._data, self._root
        edits: list[tuple[int, int, int, str]] = []  # (start, end, order, text)
        created = []
        for name, entries in self._new.items():
            lst = self._lists.get(name)
            body = "".join(entries)
            rank = _STYLE_ORDER.index(name)
            if lst is None:
                created.append((rank, f'<{p}{name} count="{len(entries)}">{body}</{p}{name}>'))
                continue
            head = data[lst.start:lst.open_end].decode("utf-8")
            if re.search(r'\scount\s*=', head):
                head = re.sub(r'(\scount\s*=\s*)("[^"]*"|\'[^\']*\')', rf'\g<1>"{self._count(name)}"', head, count=1)
            if lst.empty:
                edits.append((lst.start, lst.end, rank, head[:-2].rstrip() + f">{body}</{p}{name}>"))
            else:
                close = data.rindex(b"</", lst.start, lst.end)
                edits.append((lst.start, lst.open_end, rank, head))
                edits.append((close, close, rank, body))
        if created and root.empty:
            head = data[root.start:root.open_end].decode("utf-8")
            edits.append((root.start, root.end, 0, head[:-2].rstrip() + ">"
                          + "".join(t for _, t in sorted(created)) + f"</{p}styleSheet>"))
        else:
            for rank, text in created:
                follow = next((k for k in root.kids if k.ns == NS_MAIN and k.name in _STYLE_ORDER
                               and _STYLE_ORDER.index(k.name) > rank), None)
                at = follow.start if follow else data.rindex(b"</", root.start, root.end)
                edits.append((at, at, rank, text))
        out, prev = [], 0
        for start, end, _rank, text in sorted(edits):
            out += [data[prev:start], text.encode("utf-8")]
            prev = end
        out.append(data[prev:])
        return b"".join(out).decode("utf-8")

    def _base(self) -> None:
        """Give a part that lacks them the lists our cell formats refer to, each with its default."""
        if not self._based:
            self._based = True
            for name in ("fonts", "fills", "borders", "cellStyleXfs", "cellXfs", "cellStyles"):
                if not self._count(name):
                    self._append(name, _STYLE_BASE[name])

    BUILTIN = {"0": 1, "0.00": 2, "#,##0": 3, "#,##0.00": 4, "@": 49}

    def _num_fmt_id(self, code: str) -> int:
        if code in self.BUILTIN:
            return self.BUILTIN[code]
        lst = self._lists.get("numFmts")
        for f in self._entries(lst, "numFmt") if lst is not None else ():
            if f.attrs.get("formatCode") == code and f.attrs.get("numFmtId", "").isdigit():
                return int(f.attrs["numFmtId"])
        if code not in self._new_fmts:
            new = max([163, *self._ids, *self._new_fmts.values()]) + 1
            attr = _text(code).replace('"', "&quot;").replace("{", "{{").replace("}", "}}")
            self._append("numFmts", [f'<{{p}}numFmt numFmtId="{new}" formatCode="{attr}"/>'])
            self._new_fmts[code] = new
        return self._new_fmts[code]

    def _add_xf(self, xf: str) -> str:
        self._base()
        return str(self._append("cellXfs", [xf]))

    def xf_for(self, code: str | None, bold: bool = False) -> str:
        key = f"{code}|{bold}"
        if key not in self._fmt:
            self._base()
            fid = self._num_fmt_id(code) if code else 0
            font = self._bold_font() if bold else 0
            self._fmt[key] = self._add_xf(
                f'<{{p}}xf numFmtId="{fid}" fontId="{font}" fillId="0" borderId="0" xfId="0" '
                f'applyNumberFormat="1"{" applyFont=" + chr(34) + "1" + chr(34) if bold else ""}/>')
        return self._fmt[key]

    def _bold_font(self) -> int:
        if self._bold is None:
            self._base()
            self._bold = self._append("fonts", ['<{p}font><{p}b/><{p}sz val="11"/></{p}font>'])
        return self._bold

    def quote_xf(self, base: str | None) -> str:
        if base not in self._quote:
            self._quote[base] = self._add_xf(
                '<{p}xf numFmtId="49" fontId="0" fillId="0" borderId="0" xfId="0" applyNumberFormat="1" '
                'quotePrefix="1"/>')
        return self._quote[base]


# CT_Font's children in the order the Open XML SDK's schema (and Excel) expects; openpyxl
# writes name, family, color, sz, scheme, which a schema validator rejects
_FONT_ORDER = ("b", "i", "strike", "condense", "extend", "outline", "shadow", "u", "vertAlign", "sz",
               "color", "name", "family", "charset", "scheme")


def fonts_in_schema_order(styles_xml: bytes) -> bytes:
    """The styles part with each font's children reordered as CT_Font's sequence asks.

    For the workbooks lagsheet itself writes through openpyxl (the template, the demo):
    their fonts hold only empty child elements, which this moves; a font holding anything
    else is left as it is.
    """
    rank = {n: k for k, n in enumerate(_FONT_ORDER)}

    def order(m: re.Match) -> bytes:
        kids = re.findall(rb"<(\w+)\b[^<>]*/>", m.group(2))
        whole = re.findall(rb"<\w+\b[^<>]*/>", m.group(2))
        if b"".join(whole) != m.group(2) or any(k.decode() not in rank for k in kids):
            return m.group(0)
        pairs = sorted(zip(kids, whole, strict=True), key=lambda kw: rank[kw[0].decode()])
        return m.group(1) + b"".join(w for _, w in pairs) + m.group(3)

    return re.sub(rb"(<font>)(.*?)(</font>)", order, styles_xml, flags=re.S)


def _strip_our_comments(cxml: str) -> tuple[set[str], set[str], str]:
    """Remove lagsheet's comments; return the refs of people's comments, of ours, and the XML.

    Walked with the linear scanner (:mod:`.xmlscan`): only the ``comment`` children of
    ``commentList`` are looked at, each skipped whole, so elements of the same name
    elsewhere (an ``extLst``) or in a comment cost nothing and are never taken.
    """
    if not cxml:
        return set(), set(), cxml
    sc = Scanner(cxml)
    _, _, root_end = sc.root()

    def local(name: str) -> str:
        return name.rpartition(":")[2]

    authors: list[str] = []
    spans: list[tuple[int, int, int]] = []  # (start, start-tag end, element end) of each comment
    for kind, name, _start, head_end, _stop in sc.children(root_end):
        if local(name) == "authors" and kind == START:
            authors = [cxml[e:cxml.rfind("<", e, z)] if k == START else ""
                       for k, n, _, e, z in sc.children(head_end) if local(n) == "author"]
        elif local(name) == "commentList" and kind == START:
            spans = [(s0, e, z) for k, n, s0, e, z in sc.children(head_end) if local(n) == "comment"]
    our_ids = {str(i) for i, a in enumerate(authors) if _unescape(a) == AUTHOR}
    theirs, ours = set(), set()
    out, pos = [], 0
    for start, head_end, stop in spans:
        a = _attrs(cxml[start:head_end])
        text = _TAGS.sub("", cxml[head_end:stop])
        if a.get("authorId") in our_ids or _unescape(text).startswith(MARK):
            ours.add(a.get("ref"))
            out.append(cxml[pos:start])
            pos = stop
        else:
            theirs.add(a.get("ref"))
    out.append(cxml[pos:])
    return theirs, ours, "".join(out)


_TAGS = re.compile(r"<[^<>]*+>")


def _add_comments(cxml: str, wanted: dict[str, str]) -> str:
    if not wanted:
        return cxml
    m = re.search(r"<(\w+:)?comments\b", cxml)
    p = m.group(1) or ""
    authors = re.findall(r"<(?:\w+:)?author>(.*?)</(?:\w+:)?author>", cxml, re.S)
    if AUTHOR in [_unescape(a) for a in authors]:
        aid = [_unescape(a) for a in authors].index(AUTHOR)
    else:
        aid = len(authors)
        if re.search(r"<(\w+:)?authors\s*/>", cxml):
            cxml = re.sub(r"<(\w+:)?authors\s*/>", f"<{p}authors><{p}author>{AUTHOR}</{p}author></{p}authors>", cxml, count=1)
        else:
            end = re.search(r"</(\w+:)?authors>", cxml)
            cxml = cxml[:end.start()] + f"<{p}author>{AUTHOR}</{p}author>" + cxml[end.start():]
    body = "".join(
        f'<{p}comment ref="{ref}" authorId="{aid}"><{p}text><{p}r><{p}t xml:space="preserve">'
        f"{_text(MARK + text)}</{p}t></{p}r></{p}text></{p}comment>"
        for ref, text in sorted(wanted.items(), key=lambda kv: (int(re.sub(r'[A-Z]', '', kv[0])), _col_index(kv[0]))))
    if re.search(r"<(\w+:)?commentList\s*/>", cxml):
        return re.sub(r"<(\w+:)?commentList\s*/>", f"<{p}commentList>{body}</{p}commentList>", cxml, count=1)
    end = re.search(r"</(\w+:)?commentList>", cxml)
    return cxml[:end.start()] + body + cxml[end.start():]


_VML_HEAD = ('<xml xmlns:v="urn:schemas-microsoft-com:vml" xmlns:o="urn:schemas-microsoft-com:office:office" '
             'xmlns:x="urn:schemas-microsoft-com:office:excel"><o:shapelayout v:ext="edit">'
             '<o:idmap v:ext="edit" data="1"/></o:shapelayout><v:shapetype id="_x0000_t202" coordsize="21600,21600" '
             'o:spt="202" path="m,l,21600r21600,l21600,xe"><v:stroke joinstyle="miter"/>'
             '<v:path gradientshapeok="t" o:connecttype="rect"/></v:shapetype>')


def _strip_vml(vml: str, refs: set[str]) -> str:
    """Remove the note shapes anchored at ``refs`` that lagsheet wrote (marked by their id)."""
    # one pass, each character looked at a bounded number of times: a VML part need not be
    # well-formed XML, and a pattern over it could backtrack (comments full of '<shape')
    out, pos, i, n = [], 0, 0, len(vml)
    while True:
        i = vml.find("<", i)
        if i < 0:
            break
        for opener, closer in (("<!--", "-->"), ("<![CDATA[", "]]>")):
            if vml.startswith(opener, i):
                j = vml.find(closer, i + len(opener))
                i = n if j < 0 else j + len(closer)
                break
        else:
            j = vml.find(">", i)
            if j < 0:
                break
            m = _SHAPE_OPEN.match(vml, i, j + 1)
            if m and vml[j - 1] != "/":
                close = f"</{m.group(1) or ''}shape>"
                k = vml.find(close, j)
                if k < 0:
                    break
                end = k + len(close)
                if 'id="lagsheet_' in vml[i:end]:
                    out.append(vml[pos:i])
                    pos = end
                i = end
            else:
                i = j + 1
    out.append(vml[pos:])
    return "".join(out)


_SHAPE_OPEN = re.compile(r"<(\w+:)?shape\b")


def _add_vml(vml: str, wanted: dict[str, str]) -> str:
    if not wanted:
        return vml
    prefixes = dict((v, k) for k, v in re.findall(r'xmlns:(\w+)="([^"]+)"', vml))
    v = prefixes.get("urn:schemas-microsoft-com:vml")
    x = prefixes.get("urn:schemas-microsoft-com:office:excel")
    decl = ""
    if v is None:
        v, decl = "lsv", decl + ' xmlns:lsv="urn:schemas-microsoft-com:vml"'
    if x is None:
        x, decl = "lsx", decl + ' xmlns:lsx="urn:schemas-microsoft-com:office:excel"'
    if 'id="_x0000_t202"' not in vml:
        head = (f'<{v}:shapetype{decl} id="_x0000_t202" coordsize="21600,21600" path="m,l,21600r21600,l21600,xe">'
                f'<{v}:stroke joinstyle="miter"/><{v}:path gradientshapeok="t"/></{v}:shapetype>')
        decl = ""
    else:
        head = ""
    shapes = []
    for k, ref in enumerate(sorted(wanted)):
        row = int(re.sub(r"[A-Z]", "", ref)) - 1
        col = _col_index(ref)
        shapes.append(
            f'<{v}:shape{decl} id="lagsheet_{k + 1}" type="#_x0000_t202" style="position:absolute;margin-left:80pt;'
            f'margin-top:2pt;width:240pt;height:90pt;z-index:{k + 1};visibility:hidden" fillcolor="#ffffe1">'
            f'<{v}:fill color2="#ffffe1"/><{v}:textbox/><{x}:ClientData ObjectType="Note"><{x}:MoveWithCells/>'
            f"<{x}:SizeWithCells/><{x}:AutoFill>False</{x}:AutoFill><{x}:Row>{row}</{x}:Row>"
            f"<{x}:Column>{col}</{x}:Column></{x}:ClientData></{v}:shape>")
    close = vml.rfind("</")
    return vml[:close] + head + "".join(shapes) + vml[close:]


REL_WORKSHEET = NS_REL + "/worksheet"
REL_DRAWING = NS_REL + "/drawing"
REL_CHART = NS_REL + "/chart"
CT_WORKSHEET = "application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"
CT_DRAWING = "application/vnd.openxmlformats-officedocument.drawing+xml"
CT_CHART = "application/vnd.openxmlformats-officedocument.drawingml.chart+xml"
NS_DRAW = "http://schemas.openxmlformats.org/drawingml/2006/spreadsheetDrawing"
NS_A = "http://schemas.openxmlformats.org/drawingml/2006/main"
NS_C = "http://schemas.openxmlformats.org/drawingml/2006/chart"


def _put_sheet(pkg: _Package, book: XlsxBook, sheet) -> None:
    """Write a whole sheet of lagsheet's (Summary, Quantities), replacing our earlier one."""
    name, ours = sheet_name_for(book, sheet.name, book.all_sheet_names())
    part = _clear_our_sheet(pkg, book, name) if ours else _add_sheet(pkg, name)
    rows_xml = _sheet_rows(pkg.styles, sheet)
    cols = "".join(f'<col min="{c + 1}" max="{c + 1}" width="{w:g}" customWidth="1"/>'
                   for c, w in sorted(sheet.widths.items()))
    drawing = _put_chart(pkg, part, name, sheet) if sheet.chart else ""
    # printed landscape, as wide as the page; the chart (a row below the break) starts a page of its own
    breaks = (f'<rowBreaks count="1" manualBreakCount="1"><brk id="{len(sheet.rows) + 1}" max="16383" man="1"/>'
              "</rowBreaks>") if sheet.chart else ""
    xml = (f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<worksheet xmlns="{NS_MAIN}" '
           f'xmlns:r="{NS_REL}"><sheetPr><pageSetUpPr fitToPage="1"/></sheetPr>'
           f'<dimension ref="A1:{column_letter(max((len(r) for r in sheet.rows), default=1) - 1)}'
           f'{max(len(sheet.rows), 1)}"/><sheetViews><sheetView workbookViewId="0"/></sheetViews>'
           f'<sheetFormatPr defaultRowHeight="15"/>' + (f"<cols>{cols}</cols>" if cols else "")
           + f'<sheetData>{"".join(rows_xml)}</sheetData><pageMargins left="0.5" right="0.5" top="0.75" '
           f'bottom="0.75" header="0.3" footer="0.3"/>{_PAGE_SETUP.format(p="", wide=1)}{breaks}{drawing}</worksheet>')
    pkg.write(part, xml)


def _clear_our_sheet(pkg: _Package, book: XlsxBook, name: str) -> str:
    """The part of our earlier sheet ``name``, emptied: its relationships, drawing and chart removed."""
    part = book._part(name)
    pkg.owned.add(part)
    for rel in _read_rels(pkg.zf, part):  # our old drawing and chart go with the old sheet
        target = _rel_target(part, rel.get("Target", ""))
        if rel.get("Type") == REL_DRAWING:
            for r2 in _read_rels(pkg.zf, target):
                pkg.remove(_rel_target(target, r2.get("Target", "")))
                pkg.owned.add(pkg.actual(_rel_target(target, r2.get("Target", ""))))
            pkg.remove(_rels_path(target))
            pkg.remove(target)
            pkg.owned.add(pkg.actual(target))
    pkg.remove(_rels_path(part))
    return part


def _add_sheet(pkg: _Package, name: str) -> str:
    """A new worksheet part, listed last in the workbook as ``name``."""
    part = pkg.free("xl/worksheets/sheet{}.xml")
    wb_part = _workbook_part(pkg.zf)
    rid = pkg.add_rel(wb_part, REL_WORKSHEET, posixpath.relpath(part, posixpath.dirname(wb_part)))
    wb = pkg.read(wb_part)
    ids = [int(x) for x in re.findall(r'\bsheetId="(\d+)"', wb)]
    m = re.search(r"</(\w+:)?sheets>", wb)
    p = m.group(1) or ""
    rp = _rel_prefix(wb) or "r"
    decl = "" if _rel_prefix(wb) else f' xmlns:r="{NS_REL}"'
    wb = (wb[:m.start()] + f'<{p}sheet name="{_text(name)}" sheetId="{max(ids, default=0) + 1}"{decl} '
          f'{rp}:id="{rid}"/>' + wb[m.start():])
    pkg.write(wb_part, wb)
    pkg.override(part, CT_WORKSHEET)
    return part


def _sheet_rows(styles, sheet) -> list[str]:
    """The ``<row>`` elements of a sheet of ours: numbers as numbers (not NaN or infinite), the
    rest as inline text (text a spreadsheet would read as a formula is quoted)."""
    rows_xml = []
    for r, row in enumerate(sheet.rows):
        cells = []
        for c, v in enumerate(row):
            if v is None or v == "":
                continue
            fmt = sheet.formats.get((r, c))
            s = styles.xf_for(fmt, bold=r in sheet.bold) if (fmt or r in sheet.bold) else None
            ref = f"{column_letter(c)}{r + 1}"
            if isinstance(v, (int, float)) and not isinstance(v, bool):
                if v != v or v in (float("inf"), float("-inf")):
                    continue
                sattr = f' s="{s}"' if s else ""
                cells.append(f'<c r="{ref}"{sattr}><v>{repr(float(v))}</v></c>')
            else:
                text = str(v)
                if text[:1] in ("=", "+", "-", "@"):
                    s = styles.quote_xf(None)
                sattr = f' s="{s}"' if s else ""
                cells.append(f'<c r="{ref}"{sattr} t="inlineStr"><is><t xml:space="preserve">{_text(text)}</t></is></c>')
        if cells:
            rows_xml.append(f'<row r="{r + 1}">{"".join(cells)}</row>')
    return rows_xml


def _put_chart(pkg: _Package, part: str, name: str, sheet) -> str:
    """Write the sheet's chart (a drawing and a chart part, below the rows); gives its ``<drawing>``."""
    d_part = pkg.free("xl/drawings/drawing{}.xml")
    c_part = pkg.free("xl/charts/chart{}.xml")
    drid = pkg.add_rel(part, REL_DRAWING, "../drawings/" + posixpath.basename(d_part))
    crid = pkg.add_rel(d_part, REL_CHART, "../charts/" + posixpath.basename(c_part))
    pkg.override(d_part, CT_DRAWING)
    pkg.override(c_part, CT_CHART)
    ncols = max(max((len(r) for r in sheet.rows), default=8), 8)
    # a landscape page as wide as these columns is about 0.2 rows high per character of width
    width = sum(sheet.widths.get(c, 8.43) for c in range(ncols))
    pkg.write(d_part, _drawing_xml(crid, len(sheet.rows) + 2, ncols, max(15, min(40, int(width * 0.2)))))
    pkg.write(c_part, _chart_xml(name, sheet))
    return f'<drawing r:id="{drid}"/>'


_PAGE_SETUP = '<{p}pageSetup orientation="landscape" fitToWidth="{wide}" fitToHeight="0"/>'
# what may follow pageSetup in a worksheet (CT_Worksheet's sequence): it goes before the first
_AFTER_PAGE_SETUP = ("headerFooter", "rowBreaks", "colBreaks", "customProperties", "cellWatches", "ignoredErrors",
                     "smartTags", "drawing", "legacyDrawing", "legacyDrawingHF", "drawingHF", "picture",
                     "oleObjects", "controls", "webPublishItems", "tableParts", "extLst")
CHARS_PER_PAGE = 250  # column width (characters) printed across one landscape page: text at about 2/3 size


def _drawing_xml(chart_rid: str, row: int, cols: int = 8, rows: int = 20) -> str:
    """The chart below the table, as wide as the table (so a page as wide as the table holds it)."""
    return (f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<xdr:wsDr xmlns:xdr="{NS_DRAW}" '
            f'xmlns:a="{NS_A}"><xdr:twoCellAnchor><xdr:from><xdr:col>0</xdr:col><xdr:colOff>0</xdr:colOff>'
            f"<xdr:row>{row}</xdr:row><xdr:rowOff>0</xdr:rowOff></xdr:from><xdr:to><xdr:col>{cols}</xdr:col>"
            f"<xdr:colOff>0</xdr:colOff><xdr:row>{row + rows}</xdr:row><xdr:rowOff>0</xdr:rowOff></xdr:to>"
            '<xdr:graphicFrame macro=""><xdr:nvGraphicFramePr><xdr:cNvPr id="2" name="lagsheet chart"/>'
            '<xdr:cNvGraphicFramePr/></xdr:nvGraphicFramePr><xdr:xfrm><a:off x="0" y="0"/><a:ext cx="0" cy="0"/>'
            f'</xdr:xfrm><a:graphic><a:graphicData uri="{NS_C}"><c:chart xmlns:c="{NS_C}" '
            f'xmlns:r="{NS_REL}" r:id="{chart_rid}"/></a:graphicData></a:graphic></xdr:graphicFrame>'
            "<xdr:clientData/></xdr:twoCellAnchor></xdr:wsDr>")


def _chart_xml(sheet_name: str, sheet) -> str:
    ch = sheet.chart
    q = "'" + sheet_name.replace("'", "''") + "'"

    def rng(col, r0, r1):
        letter = column_letter(col)
        return f"{q}!${letter}${r0 + 1}:${letter}${r1 + 1}"

    cat_col, c0, c1 = ch["categories"]
    series = []
    for k, ((nr, nc), col, r0, r1) in enumerate(ch["series"]):
        series.append(
            f'<c:ser><c:idx val="{k}"/><c:order val="{k}"/><c:tx><c:strRef><c:f>{_text(q)}!${column_letter(nc)}'
            f"${nr + 1}</c:f></c:strRef></c:tx><c:cat><c:strRef><c:f>{_text(rng(cat_col, c0, c1))}</c:f></c:strRef>"
            f"</c:cat><c:val><c:numRef><c:f>{_text(rng(col, r0, r1))}</c:f></c:numRef></c:val></c:ser>")
    return (f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<c:chartSpace xmlns:c="{NS_C}" '
            f'xmlns:a="{NS_A}" xmlns:r="{NS_REL}"><c:chart><c:title><c:tx><c:rich><a:bodyPr/><a:p><a:r>'
            f"<a:t>{_text(ch['title'])}</a:t></a:r></a:p></c:rich></c:tx><c:overlay val=\"0\"/></c:title>"
            '<c:autoTitleDeleted val="0"/><c:plotArea><c:layout/><c:barChart><c:barDir val="col"/>'
            '<c:grouping val="clustered"/><c:varyColors val="0"/>' + "".join(series)
            + '<c:axId val="10"/><c:axId val="20"/></c:barChart><c:catAx><c:axId val="10"/><c:scaling>'
            '<c:orientation val="minMax"/></c:scaling><c:delete val="0"/><c:axPos val="b"/><c:crossAx val="20"/>'
            '</c:catAx><c:valAx><c:axId val="20"/><c:scaling><c:orientation val="minMax"/></c:scaling>'
            '<c:delete val="0"/><c:axPos val="l"/><c:majorGridlines/><c:numFmt formatCode="#,##0" sourceLinked="0"/>'
            '<c:crossAx val="10"/></c:valAx></c:plotArea><c:legend><c:legendPos val="b"/></c:legend>'
            '<c:plotVisOnly val="1"/></c:chart></c:chartSpace>')
