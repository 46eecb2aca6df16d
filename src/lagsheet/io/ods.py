"""OpenDocument spreadsheets (.ods), read by calamine and written by patching content.xml.

Only ``content.xml`` changes, and where a sheet of ours has a chart, the manifest gains
its embedded chart object (as LibreOffice stores one: a sub-document folder); every other
member of the package (``mimetype`` first and stored, styles, settings, thumbnails,
scripts, empty folders) is copied unchanged. Inside the Lines table the original elements are kept: a repeated empty
cell or row that our results fall in is split in place (LibreOffice pads every row to
column 16,384, so a cell appended after the padding would be discarded), and our
cells, notes (annotations by 'lagsheet'), column widths and number styles are
added. Text is written as string cells, never as a formula.
"""

from __future__ import annotations

import copy
import io
import re
import zipfile
from bisect import bisect_right
from collections.abc import Iterator
from functools import lru_cache
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape, quoteattr

from ..errors import WorkbookError
from .ods_chart import MANIFEST
from .ods_chart import Objects as _Objects
from .save import VERIFIERS, atomic_write
from .table import (
    RawSheet,
    SheetEdits,
    calamine_grid,
    cells_with_formats,
    post_write_check,
    sheet_name_for,
)
from .xmlscan import EMPTY, START, Scanner, XmlScanError, attr, tag_end

AUTHOR = "lagsheet"
MARK = "lagsheet: "
NS = {
    "table": "urn:oasis:names:tc:opendocument:xmlns:table:1.0",
    "office": "urn:oasis:names:tc:opendocument:xmlns:office:1.0",
    "text": "urn:oasis:names:tc:opendocument:xmlns:text:1.0",
    "style": "urn:oasis:names:tc:opendocument:xmlns:style:1.0",
    "number": "urn:oasis:names:tc:opendocument:xmlns:datastyle:1.0",
    "fo": "urn:oasis:names:tc:opendocument:xmlns:xsl-fo-compatible:1.0",
    "dc": "http://purl.org/dc/elements/1.1/",
    "draw": "urn:oasis:names:tc:opendocument:xmlns:drawing:1.0",
    "svg": "urn:oasis:names:tc:opendocument:xmlns:svg-compatible:1.0",
    "xlink": "http://www.w3.org/1999/xlink",
}
CHART_KEYS = ("draw", "svg", "xlink")  # declared only where a chart is added
_INVALID_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def _text(s: str) -> str:
    return escape(_INVALID_XML.sub("", s))


class _Names:
    """The prefixes this document uses for the OpenDocument namespaces."""

    def __init__(self, xml: str):
        sc = Scanner(xml)
        _, s, e = sc.root()
        head = xml[s:e]
        found = {(a or b): p for p, a, b in re.findall(r"""xmlns:([\w.-]+)\s*=\s*(?:"([^"]*)"|'([^']*)')""", head)}
        self.p = {k: found.get(uri) for k, uri in NS.items()}
        if self.p["table"] is None or self.p["office"] is None or self.p["text"] is None:
            raise WorkbookError("content.xml does not declare the OpenDocument table namespaces")

    def __getattr__(self, key):
        return self.p[key]


class OdsBook:
    def __init__(self, path: Path, zf: zipfile.ZipFile, content: str, values):
        self.path, self._zip, self._content, self._values = path, zf, content, values
        self.n = _Names(content)
        self._names = [name for name, _, _ in _tables(content, self.n)]
        self._raw: dict[str, RawSheet] = {}

    @classmethod
    def open(cls, path: Path) -> OdsBook:
        import python_calamine

        if not zipfile.is_zipfile(path):
            raise WorkbookError(f"{path.name}: not an OpenDocument spreadsheet (the file is not a zip package)")
        try:
            zf = zipfile.ZipFile(path)
            if _encrypted(zf):
                raise WorkbookError(
                    f"{path.name} is saved with a password (encrypted), and lagsheet cannot read it; open it "
                    "in LibreOffice, choose File > Save As, untick 'Save with password', and run lagsheet on "
                    "that copy")
            content = zf.read("content.xml").decode("utf-8")
        except WorkbookError:
            raise
        except KeyError as exc:
            raise WorkbookError(f"{path.name}: has no content.xml; not an OpenDocument spreadsheet") from exc
        except UnicodeDecodeError:
            raise WorkbookError(f"{path.name}: its content.xml is not UTF-8 text; open the file in LibreOffice "
                                "and save it again as .ods") from None
        except (zipfile.BadZipFile, OSError, EOFError):
            raise WorkbookError(f"{path.name}: the zip package is damaged; open the file "
                                "in LibreOffice and save it again as .ods") from None
        try:
            try:
                values = python_calamine.CalamineWorkbook.from_path(str(path))
            except Exception:
                # An indented (pretty-printed) content.xml: calamine reads text between a table's
                # elements as misplaced; without the indentation it reads the same cells.
                compact = _compact(content, _Names(content))
                if compact is None:
                    raise
                content = compact
                values = python_calamine.CalamineWorkbook.from_filelike(io.BytesIO(_repack(zf, content)))
            return cls(path, zf, content, values)
        except WorkbookError:
            raise
        except XmlScanError as exc:
            raise WorkbookError(f"{path.name}: its content.xml is not well-formed XML ({exc}); open the file in "
                                "LibreOffice and save it again as .ods") from None
        except BaseException as exc:  # any library failure (a native panic too) means it cannot be read
            if isinstance(exc, (KeyboardInterrupt, SystemExit, GeneratorExit)):
                raise
            raise WorkbookError(f"{path.name}: cannot be read as a spreadsheet (its parts are damaged or not "
                                "as spreadsheet programs write them); open it in a spreadsheet program and "
                                "save it again") from None

    def sheet_names(self) -> list[str]:
        return list(self._names)

    def _put_sheet(self, content: str, sheet, styles: _AutoStyles, objects: _Objects) -> str:
        """Add a whole sheet of lagsheet's, replacing our earlier one (and its chart); never a person's."""
        name, ours = sheet_name_for(self, sheet.name)
        if ours:
            a, b = _span(content, name, self.n)
            objects.drop(content[a:b])
            content = content[:a] + content[b:]
        if name != sheet.name:
            sheet = type(sheet)(**{**sheet.__dict__, "name": name})
        frame = objects.add(name, sheet.chart, self.n, len(sheet.rows) + 1) if sheet.chart else None
        at = _tables(content, self.n)[-1][2]  # after the last sheet
        return content[:at] + _new_table(sheet, self.n, styles, frame) + content[at:]

    def sheet(self, name: str) -> RawSheet:
        if name not in self._raw:
            grid = calamine_grid(self._values, name, self.path)
            a, b = _span(self._content, name, self.n)
            table = self._content[a:b]
            self._raw[name] = RawSheet(name, grid, _uncached(table, self.n), percent=_percent(table, self.n))
        return self._raw[name]

    def save(self, edits: list[SheetEdits], out: Path, new_sheets=(), allow_loss: bool = False) -> list[str]:
        try:
            return self._save(edits, out, new_sheets, allow_loss)
        except XmlScanError as exc:
            raise WorkbookError(f"{self.path.name}: its content.xml is not well-formed XML ({exc}); open the file "
                                "in LibreOffice and save it again as .ods; nothing was written") from None

    def _save(self, edits: list[SheetEdits], out: Path, new_sheets, allow_loss: bool) -> list[str]:
        objects = _Objects(self._zip)
        charts = objects.possible and any(sheet.chart for sheet in new_sheets)
        content = _declare(self._content, self.n, CHART_KEYS if charts else ())
        styles = _AutoStyles(content, self.n)
        for e in edits:
            if e.sheet not in self._names:
                raise WorkbookError(f"sheet {e.sheet!r} is not in the workbook; lagsheet adds no new "
                                    "sheets to .ods files in this version")
            a, b = _span(content, e.sheet, self.n)
            content = content[:a] + _TablePatch(content[a:b], e, self.n, styles).run() + content[b:]
            content = _grow_database_ranges(content, e, self.n)
        for sheet in new_sheets:
            content = self._put_sheet(content, sheet, styles, objects if charts else _Objects(None))
        content = styles.insert(content)
        data = content.encode("utf-8")

        def write(tmp: str) -> None:
            with zipfile.ZipFile(tmp, "w") as dst:
                for info in self._zip.infolist():
                    if objects.dropped(info.filename):
                        continue
                    body = data if info.filename == "content.xml" else self._zip.read(info.filename)
                    if info.filename == MANIFEST:
                        body = objects.manifest(body)
                    # a copy: writing fills in sizes, and the input's entries must stay as read
                    dst.writestr(copy.copy(info), body, compress_type=info.compress_type)
                for path, body in objects.parts.items():
                    dst.writestr(path, body, compress_type=zipfile.ZIP_DEFLATED)

        before = {e.sheet: self.sheet(e.sheet) for e in edits}
        written = {e.sheet: e.values.keys() for e in edits}  # a view: no copy of every position
        names = set(self._zip.namelist())

        losses: list[str] = []

        def verify(tmp: Path) -> None:
            reopened = VERIFIERS[".ods"](tmp)  # calamine reads a whole .ods when it opens it: once
            # every original cell kept, every cell written where it was meant to be, on its line's row
            losses.extend(post_write_check(tmp, before, written, names, objects.removed, reopened=reopened,
                                           allow_loss=allow_loss, results={e.sheet: e.values for e in edits}))

        atomic_write(out, write, like=self.path, verify=verify)
        return losses


def _new_table(sheet, n: _Names, styles: _AutoStyles, frame: str | None = None) -> str:
    """A sheet of lagsheet's as a table:table; ``frame`` (a chart) is anchored a row below its rows."""
    t, o, tx = n.table, n.office, n.text
    width = max((len(r) for r in sheet.rows), default=1)
    cols = []
    for c in range(width):
        w = sheet.widths.get(c)
        name = styles.column(w) if w else None
        cols.append(f'<{t}:table-column {t}:style-name="{name}"/>' if name else f"<{t}:table-column/>")
    rows = []
    for r, row in enumerate(sheet.rows):
        cells = []
        for c, v in enumerate(row):
            style = styles.cell(sheet.formats.get((r, c)), bold=r in sheet.bold)
            sattr = f' {t}:style-name="{style}"' if style else ""
            if v is None or v == "" or (isinstance(v, float) and v != v):
                cells.append(f"<{t}:table-cell{sattr}/>")
            elif isinstance(v, (int, float)) and not isinstance(v, bool):
                x = repr(float(v))
                cells.append(f'<{t}:table-cell{sattr} {o}:value-type="float" {o}:value="{x}"><{tx}:p>{x}</{tx}:p>'
                             f"</{t}:table-cell>")
            else:
                cells.append(f'<{t}:table-cell{sattr} {o}:value-type="string"><{tx}:p>{_text(str(v))}</{tx}:p>'
                             f"</{t}:table-cell>")
        rows.append(f"<{t}:table-row>{''.join(cells) or f'<{t}:table-cell/>'}</{t}:table-row>")
    if frame:  # the chart starts a printed page of its own, as in the .xlsx
        brk = styles.page_break_row()
        battr = f' {t}:style-name="{brk}"' if brk else ""
        rows.append(f"<{t}:table-row><{t}:table-cell/></{t}:table-row>"
                    f"<{t}:table-row{battr}><{t}:table-cell>{frame}</{t}:table-cell></{t}:table-row>")
    return (f'<{t}:table {t}:name={quoteattr(sheet.name)}>' + "".join(cols) + "".join(rows) + f"</{t}:table>")


_RANGE = re.compile(r"^(\$?'?)([^'.]+)('?\.\$?)([A-Z]+)(\$?)(\d+)(:\$?'?[^'.]*'?\.\$?)([A-Z]+)(\$?)(\d+)$")


def _grow_database_ranges(content: str, e: SheetEdits, n: _Names) -> str:
    """A database range over the Lines header row (the ODS kind of table) grows over our columns."""
    from .table import column_letter

    if e.header_row is None:
        return content
    cols = [c for (r, c) in e.values if r == e.header_row]
    if not cols:
        return content
    last = max(cols)
    t = n.table

    def grow(tag):
        addr = _attr(tag, f"{t}:target-range-address")
        rm = _RANGE.match(addr or "")
        if not rm or _unescape(rm.group(2)) != e.sheet or int(rm.group(6)) - 1 != e.header_row:
            return tag
        end_col = _col_index_letters(rm.group(8))
        if end_col >= last:
            return tag
        new = (rm.group(1) + rm.group(2) + rm.group(3) + rm.group(4) + rm.group(5) + rm.group(6) + rm.group(7)
               + column_letter(last) + rm.group(9) + rm.group(10))
        return _set_attr(tag, f"{t}:target-range-address", new)

    sc = Scanner(content)
    at = _spreadsheet(sc, n)
    ranges = sc.child(at, f"{t}:database-ranges") if at is not None else None
    if ranges is None or ranges[0] != START:
        return content
    out, pos = [], 0
    for _, name, start, end, _ in sc.children(ranges[2]):
        if name == f"{t}:database-range":
            out.append(content[pos:start])
            out.append(grow(content[start:end]))
            pos = end
    out.append(content[pos:])
    return "".join(out)


def _col_index_letters(letters: str) -> int:
    col = 0
    for ch in letters:
        col = col * 26 + (ord(ch) - 64)
    return col - 1


def _declare(content: str, n: _Names, extra: tuple[str, ...] = ()) -> str:
    """Declare on the root element the namespaces our additions use, where the file lacks them."""
    _, start, end = Scanner(content).root()
    tag = content[start:end]
    taken = set(re.findall(r"xmlns:([\w.-]+)\s*=", tag))
    add = ""
    for key in ("dc", "style", "number", "fo", *extra):
        if n.p[key] is None and key not in taken:
            add += f' xmlns:{key}="{NS[key]}"'
            n.p[key] = key
    if not add:
        return content
    new = tag[:-1] + add + ">"
    return content[:start] + new + content[end:]


def _spreadsheet(sc: Scanner, n: _Names) -> int | None:
    """Where the content of office:spreadsheet starts (the end of its start tag), or None."""
    _, _, head = sc.root()
    body = sc.child(head, f"{n.office}:body")
    if body is None or body[0] != START:
        return None
    sheet = sc.child(body[2], f"{n.office}:spreadsheet")
    if sheet is None or sheet[0] != START:
        return None
    return sheet[2]


def _tables(content: str, n: _Names) -> list[tuple[str, int, int]]:
    """(name, start, end) of every sheet (table:table in office:spreadsheet), in order."""
    sc = Scanner(content)
    at = _spreadsheet(sc, n)
    if at is None:
        return []
    t = f"{n.table}:table"
    return [(_unescape(_attr(content[s:e], f"{n.table}:name") or ""), s, stop)
            for _, name, s, e, stop in sc.children(at) if name == t]


def _span(content: str, name: str, n: _Names) -> tuple[int, int]:
    for found, s, e in _tables(content, n):
        if found == name:
            return s, e
    raise KeyError(name)


def _encrypted(zf: zipfile.ZipFile) -> bool:
    """The package's manifest lists encryption data (a file saved with a password)."""
    try:
        manifest = zf.read("META-INF/manifest.xml")
    except KeyError:
        return False
    return b"encryption-data" in manifest


def _compact(content: str, n: _Names) -> str | None:
    """content.xml without the indentation between elements, paragraphs' text untouched;
    None when there is none."""
    sc = Scanner(content)
    para = re.compile(rf"<{re.escape(n.text)}:[ph][\s/>]")
    starts, ends, i = [], [], 0
    while True:  # the paragraphs: whitespace in them is text
        m = para.search(content, i)
        if m is None:
            break
        inside = sc.opaque_end(m.start())
        if inside is not None:
            i = inside
            continue
        kind, name, s, e = sc.next_tag(m.start())
        stop = e if kind == EMPTY else sc.element_end(name, e)
        starts.append(s)
        ends.append(stop)
        i = stop

    def drop(m: re.Match) -> str:
        k = bisect_right(starts, m.start()) - 1
        return m.group(0) if k >= 0 and m.start() < ends[k] else ""

    new = re.sub(r"(?<=>)\s+(?=<)", drop, content)
    return None if new == content else new


def _repack(zf: zipfile.ZipFile, content: str) -> bytes:
    """The package in memory with ``content`` as its content.xml."""
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as dst:
        for info in zf.infolist():
            body = content.encode("utf-8") if info.filename == "content.xml" else zf.read(info.filename)
            dst.writestr(copy.copy(info), body, compress_type=info.compress_type)
    return buf.getvalue()


def _unescape(s: str) -> str:
    return (s.replace("&lt;", "<").replace("&gt;", ">").replace("&quot;", '"')
            .replace("&apos;", "'").replace("&amp;", "&"))


@lru_cache(maxsize=64)
def _set_attr_re(name: str) -> re.Pattern:
    return re.compile(rf'\s{re.escape(name)}="[^"]*"')


def _attr(tag: str, name: str) -> str | None:
    return attr(tag, name)


def _set_attr(tag: str, name: str, value: str | None) -> str:
    """Set, replace or (value None) remove an attribute in a start tag."""
    pat = _set_attr_re(name)
    if value is None:
        return pat.sub("", tag, count=1) if name in tag else tag
    if name in tag and pat.search(tag):
        return pat.sub(f' {name}="{value}"', tag, count=1)
    end = tag.rfind("/>") if tag.endswith("/>") else tag.rfind(">")
    return tag[:end] + f' {name}="{value}"' + tag[end:]


_ROW_GROUPS = ("table-row-group", "table-header-rows", "table-rows")
_COLUMN_GROUPS = ("table-column-group", "table-header-columns", "table-columns")


def _count(tag: str, name: str) -> int:
    """A repeat count (number-rows-repeated, number-columns-repeated); 1 when absent."""
    v = _attr(tag, name)
    return int(v) if v and v.strip().isdigit() else 1


def _rows(sc: Scanner, n: _Names) -> Iterator[tuple[int, int, int, int]]:
    """(start, start-tag end, end, repeat) of each row of the table ``sc`` holds (its text is
    one table:table element), in order: in row groups, header rows and table-rows too; rows
    of a sub-table in a cell are not the table's."""
    t = n.table
    row = f"{t}:table-row"
    _, _, head = sc.root()
    for _, name, s, e, stop in sc.children(head, descend=_groups(t, _ROW_GROUPS)):
        if name == row:
            yield s, e, stop, _count(sc.text[s:e], f"{t}:number-rows-repeated")


def _columns(sc: Scanner, n: _Names) -> Iterator[tuple[int, int, int]]:
    """(start, end, repeat) of each column of the table ``sc`` holds, in column groups too."""
    t = n.table
    col, rows = f"{t}:table-column", {f"{t}:table-row", *_groups(t, _ROW_GROUPS)}
    _, _, head = sc.root()
    for _, name, s, e, stop in sc.children(head, descend=_groups(t, _COLUMN_GROUPS)):
        if name == col:
            yield s, stop, _count(sc.text[s:e], f"{t}:number-columns-repeated")
        elif name in rows:
            return  # the columns come before the rows


def _rows_end(sc: Scanner, n: _Names) -> int:
    """Where rows after the table's last one go: after its last row or row group."""
    t = n.table
    rows = {f"{t}:table-row", *_groups(t, _ROW_GROUPS)}
    _, _, at = sc.root()
    for _, name, _, _, stop in sc.children(at):
        if name in rows or at == 0:
            at = stop
    return at


@lru_cache(maxsize=8)
def _groups(t: str, names: tuple[str, ...]) -> frozenset[str]:
    return frozenset(f"{t}:{x}" for x in names)


def _cells(sc: Scanner, n: _Names, head_end: int, end: int) -> Iterator[tuple[int, int, int, int]]:
    """(start, start-tag end, end, repeat) of each cell (covered ones too) of the row whose
    start tag ends at ``head_end`` (``end``: the row's end)."""
    t = n.table
    names = (f"{t}:table-cell", f"{t}:covered-table-cell")
    repeated = f"{t}:number-columns-repeated"
    if head_end >= end:
        return
    for _, name, s, e, stop in sc.children(head_end, end):
        if name in names:
            tag = sc.text[s:e]
            yield s, e, stop, (_count(tag, repeated) if repeated in tag else 1)


_MAX_MARKED = 1 << 20  # percentage cells marked per table at most (repeats of a styled cell are bounded)


def _percent(table_xml: str, n: _Names) -> set[tuple[int, int]]:
    """0-based (row, col) of the table's percentage cells (office:value-type="percentage": a
    typed '80%' is stored as the value 0.8)."""
    out: set[tuple[int, int]] = set()
    kind = f"{n.office}:value-type"
    if "percentage" not in table_xml:
        return out
    r = 0
    sc = Scanner(table_xml)
    for rs, re_, rstop, rep in _rows(sc, n):
        if table_xml.find("percentage", rs, rstop) >= 0:
            c = 0
            for s, e, _, crep in _cells(sc, n, re_, rstop):
                if _attr(table_xml[s:e], kind) == "percentage" and len(out) < _MAX_MARKED:
                    for k in range(min(rep, _MAX_MARKED)):  # a repeated row or cell: each copy is one
                        out.update((r + k, c + j) for j in range(min(crep, _MAX_MARKED)))
                        if len(out) >= _MAX_MARKED:
                            break
                c += crep
        r += rep
    return out


def _uncached(table_xml: str, n: _Names) -> set[tuple[int, int]]:
    out: set[tuple[int, int]] = set()
    if f"{n.table}:formula" not in table_xml:
        return out
    r = 0
    sc = Scanner(table_xml)
    for rs, re_, rstop, rep in _rows(sc, n):
        if table_xml.find(f"{n.table}:formula", rs, rstop) >= 0:
            c = 0
            for s, e, _, crep in _cells(sc, n, re_, rstop):
                tag = table_xml[s:e]
                if _attr(tag, f"{n.table}:formula") is not None and _attr(tag, f"{n.office}:value-type") is None:
                    for k in range(crep):
                        out.add((r, c + k))
                c += crep
        r += rep
    return out


class _AutoStyles:
    """Automatic styles lagsheet adds to content.xml: number formats and column widths."""

    def __init__(self, content: str, n: _Names):
        self.n = n
        self.ok = n.style is not None and n.number is not None and n.fo is not None
        self.new: list[str] = []
        self._cell: dict[str, str] = {}
        self._col: dict[float, str] = {}
        self.taken = set(re.findall(r'style:name="([^"]+)"', content))

    def _name(self, stem: str) -> str:
        k = 1
        while f"{stem}{k}" in self.taken:
            k += 1
        self.taken.add(f"{stem}{k}")
        return f"{stem}{k}"

    def cell(self, fmt: str | None, bold: bool = False) -> str | None:
        if not self.ok or ((not fmt or fmt == "@") and not bold):
            return None
        key = f"{fmt}|{bold}"
        if key not in self._cell:
            s, num, fo = self.n.style, self.n.number, self.n.fo
            data_attr = ""
            if fmt and fmt != "@":
                decimals = len(fmt.split(".")[1]) if "." in fmt else 0
                grouping = f' {num}:grouping="true"' if "," in fmt else ""
                data = self._name("lsN")
                self.new.append(f'<{num}:number-style {s}:name="{data}"><{num}:number {num}:decimal-places="{decimals}" '
                                f'{num}:min-decimal-places="{decimals}" {num}:min-integer-digits="1"{grouping}/>'
                                f"</{num}:number-style>")
                data_attr = f' {s}:data-style-name="{data}"'
            cell = self._name("lsce")
            text = f'<{s}:text-properties {fo}:font-weight="bold"/>' if bold else ""
            self.new.append(f'<{s}:style {s}:name="{cell}" {s}:family="table-cell" '
                            f'{s}:parent-style-name="Default"{data_attr}>{text}</{s}:style>')
            self._cell[key] = cell
        return self._cell[key]

    def column(self, width_chars: float) -> str | None:
        if not self.ok:
            return None
        if width_chars not in self._col:
            s, fo = self.n.style, self.n.fo
            name = self._name("lsco")
            self.new.append(f'<{s}:style {s}:name="{name}" {s}:family="table-column"><{s}:table-column-properties '
                            f'{fo}:break-before="auto" {s}:column-width="{width_chars * 0.075:.3f}in"/></{s}:style>')
            self._col[width_chars] = name
        return self._col[width_chars]

    def page_break_row(self) -> str | None:
        """A row style that starts a new printed page."""
        if not self.ok:
            return None
        s, fo = self.n.style, self.n.fo
        name = self._name("lsro")
        self.new.append(f'<{s}:style {s}:name="{name}" {s}:family="table-row"><{s}:table-row-properties '
                        f'{s}:row-height="0.178in" {fo}:break-before="page" {s}:use-optimal-row-height="true"/>'
                        f"</{s}:style>")
        return name

    def insert(self, content: str) -> str:
        if not self.new:
            return content
        o = self.n.office
        sc = Scanner(content)
        _, _, head = sc.root()
        block = f"<{o}:automatic-styles>{''.join(self.new)}</{o}:automatic-styles>"
        for kind, name, s, _, stop in sc.children(head):
            if name == f"{o}:automatic-styles":
                if kind == EMPTY:
                    return content[:s] + block + content[stop:]
                end = content.rfind("</", s, stop)
                return content[:end] + "".join(self.new) + content[end:]
            if name == f"{o}:body":
                return content[:s] + block + content[s:]
        return content


class _TablePatch:
    def __init__(self, xml: str, e: SheetEdits, n: _Names, styles: _AutoStyles):
        self.xml, self.e, self.n, self.styles = xml, e, n, styles
        self.t, self.o = n.table, n.office
        self._floats: dict[tuple, str] = {}  # (number format, header style) -> the cell's start
        self._strings: dict[tuple, str] = {}  # (text, header style) -> the whole cell

    def run(self) -> str:
        xml = _strip_our_annotations(self.xml, self.n)
        targets: dict[int, dict[int, tuple[str, Any, str | None]]] = {}  # row -> col -> (kind, value, format)
        for (r, c), v, fmt in cells_with_formats(self.e.values, self.e.number_formats):
            targets.setdefault(r, {})[c] = ("value", v, fmt)
        notes: dict[tuple[int, int], str] = dict(self.e.comments)
        for (r, c) in notes:
            targets.setdefault(r, {}).setdefault(c, ("note", None, None))
        header_src = {pos: src for pos, src in self.e.headers.items()}
        self._header_styles = self._styles_of(xml, {src for src in header_src.values()})
        xml = self._columns(xml)
        return self._rows(xml, targets, notes, header_src)

    # -- columns ---------------------------------------------------------------------------

    def _columns(self, xml: str) -> str:
        if not self.e.widths:
            return xml
        t = self.t
        want = dict(self.e.widths)
        out, pos, c = [], 0, 0
        for start, end, rep in _columns(Scanner(xml), self.n):
            tag = xml[start:end]
            hit = sorted(k for k in want if c <= k < c + rep)
            out.append(xml[pos:start])

            def styled(one, k):
                name = self.styles.column(want.pop(k))
                return _set_attr(one, f"{t}:style-name", name) if name else one

            out.append(_split(tag, f"{t}:number-columns-repeated", c, rep, hit, styled) if hit else tag)
            pos = end
            c += rep
        if want and pos:  # new columns right of the declared ones: declare them (and any gap) after the last
            for k in sorted(want):
                if k > c:
                    gap = f' {t}:number-columns-repeated="{k - c}"' if k - c > 1 else ""
                    out.append(f"<{t}:table-column{gap}/>")
                name = self.styles.column(want.pop(k))
                out.append(f'<{t}:table-column {t}:style-name="{name}"/>' if name else f"<{t}:table-column/>")
                c = k + 1
        out.append(xml[pos:])
        return "".join(out)

    # -- rows and cells -----------------------------------------------------------------------

    def _styles_of(self, xml: str, positions: set[tuple[int, int]]) -> dict[tuple[int, int], str | None]:
        found: dict[tuple[int, int], str | None] = {}
        if not positions:
            return found
        rows = {r for r, _ in positions}
        last = max(rows)
        r = 0
        sc = Scanner(xml)
        for _, head_end, stop, rep in _rows(sc, self.n):
            if r > last:
                break
            if any(r <= x < r + rep for x in rows):
                c = 0
                for s, e, _, crep in _cells(sc, self.n, head_end, stop):
                    tag = xml[s:e]
                    for (pr, pc) in positions:
                        if r <= pr < r + rep and c <= pc < c + crep:
                            found[(pr, pc)] = _attr(tag, f"{self.t}:style-name")
                    c += crep
            r += rep
        return found

    def _rows(self, xml, targets, notes, header_src) -> str:
        t = self.t
        todo = sorted(targets)
        out, pos, r, k = [], 0, 0, 0
        sc = Scanner(xml)
        repeated = f"{t}:number-rows-repeated"
        for start, head_end, stop, rep in _rows(sc, self.n):
            if k >= len(todo):
                break
            hits = []
            while k < len(todo) and todo[k] < r + rep:
                hits.append(todo[k])
                k += 1
            if hits:
                out.append(xml[pos:start])
                if rep == 1 and head_end < stop and repeated not in xml[start:head_end]:  # a row of its own:
                    body_end = xml.rfind("</", start, stop)  # patched where it is, no copy of it made
                    out.append(xml[start:head_end])
                    out.append(self._patch_cells(sc, head_end, body_end, r, targets[r], notes, header_src))
                    out.append(xml[body_end:stop])
                else:
                    out.append(_split(xml[start:stop], repeated, r, rep, hits,
                                      lambda one, h: self._patch_row(one, h, targets[h], notes, header_src)))
                pos = stop
            r += rep
        if k < len(todo):  # rows past the table's last row
            end = _rows_end(sc, self.n)
            out.append(xml[pos:end])
            pos = end
            for h in todo[k:]:
                if h > r:
                    out.append(f'<{t}:table-row {t}:number-rows-repeated="{h - r}"><{t}:table-cell/></{t}:table-row>')
                out.append(self._patch_row(f"<{t}:table-row></{t}:table-row>", h, targets[h], notes, header_src))
                r = h + 1
        out.append(xml[pos:])
        return "".join(out)

    def _patch_row(self, row: str, r: int, cells: dict[int, tuple[str, Any, str | None]], notes, header_src) -> str:
        """A copy of a row (one of a repeated run, or a new one) with our cells written in."""
        t = self.t
        close = f"</{t}:table-row>"
        head_end = tag_end(row)
        if row[head_end - 2] == "/":
            head, body = row[:head_end - 2] + ">", ""
        else:
            head = row[:head_end]
            body = row[head_end:row.rfind("</")]
        return head + self._patch_cells(Scanner(body), 0, len(body), r, cells, notes, header_src) + close

    def _patch_cells(self, sc: Scanner, begin: int, end: int, r: int, cells: dict[int, tuple[str, Any, str | None]],
                     notes, header_src) -> str:
        """The cells of row ``r`` (``sc.text[begin:end]``) with ours written in: the cells we write in
        are split out of their repeated runs; ours past the row's last cell go after it."""
        t, body = self.t, sc.text
        out, pos, c = [], begin, 0
        todo = sorted(cells)
        k, n_todo = 0, len(todo)
        repeated = f"{t}:number-columns-repeated"
        last_end = begin
        for cs, ce, cstop, rep in _cells(sc, self.n, begin, end):  # the cells; those we write in are split
            if k >= n_todo:
                break  # the rest of the row is copied as it is
            last_end = cstop
            if todo[k] >= c + rep:  # nothing of ours in this one: it stays in the text as it is
                c += rep
                continue
            if rep == 1 and repeated not in body[cs:ce]:  # a cell of its own: nothing to split
                h = todo[k]
                k += 1
                out.append(body[pos:cs])
                out.append(self._cell(body[cs:cstop], r, h, cells[h], notes.get((r, h)), header_src))
                pos = cstop
                c += 1
                continue
            hits = []
            while k < n_todo and todo[k] < c + rep:
                hits.append(todo[k])
                k += 1
            out.append(body[pos:cs])
            out.append(_split(body[cs:cstop], repeated, c, rep, hits,
                              lambda one, h: self._cell(one, r, h, cells[h], notes.get((r, h)), header_src)))
            pos = cstop
            c += rep
        else:  # every cell was seen (c is the row's width): ours past the last one go after it
            out.append(body[pos:last_end])
            pos = last_end
        tail = body[pos:end]
        for h in todo[k:]:  # past the row's last cell
            if h > c:
                out.append(f'<{t}:table-cell {t}:number-columns-repeated="{h - c}"/>' if h - c > 1
                           else f"<{t}:table-cell/>")
            out.append(self._cell(f"<{t}:table-cell/>", r, h, cells[h], notes.get((r, h)), header_src))
            c = h + 1
        return "".join(out) + tail

    def _cell(self, original: str, r: int, c: int, what: tuple[str, Any, str | None], note: str | None,
              header_src) -> str:
        t, o = self.t, self.o
        kind, v, fmt = what
        if kind == "note":
            return _annotate(original, note, self.n) if note else original
        style = None
        if (r, c) in header_src:
            style = self._header_styles.get(header_src[(r, c)])
        if v is None:
            return f"<{t}:table-cell/>"
        if type(v) is float:  # the same text as below, its start made once per format
            key = (fmt, style)
            head = self._floats.get(key)
            if head is None:
                s = self.styles.cell(fmt) or style
                sattr = f' {t}:style-name="{s}"' if s else ""
                head = self._floats[key] = f'<{t}:table-cell{sattr} {o}:value-type="float" {o}:value="'
            x = repr(v)
            return f'{head}{x}"><{self.n.text}:p>{x}</{self.n.text}:p></{t}:table-cell>'
        if type(v) is str and not note:
            key = (v, style)
            cell = self._strings.get(key)
            if cell is None:
                if len(self._strings) > 50000:
                    self._strings.clear()
                sattr = f' {t}:style-name="{style}"' if style else ""
                cell = self._strings[key] = (f'<{t}:table-cell{sattr} {o}:value-type="string"><{self.n.text}:p>'
                                             f"{_text(v)}</{self.n.text}:p></{t}:table-cell>")
            return cell
        if isinstance(v, bool):
            v = "yes" if v else "no"
        if isinstance(v, (int, float)):
            style = self.styles.cell(fmt) or style
            sattr = f' {t}:style-name="{style}"' if style else ""
            x = repr(float(v))
            return (f'<{t}:table-cell{sattr} {o}:value-type="float" {o}:value="{x}">'
                    f"<{self.n.text}:p>{x}</{self.n.text}:p></{t}:table-cell>")
        sattr = f' {t}:style-name="{style}"' if style else ""
        cell = (f'<{t}:table-cell{sattr} {o}:value-type="string"><{self.n.text}:p>{_text(str(v))}'
                f"</{self.n.text}:p></{t}:table-cell>")
        return _annotate(cell, note, self.n) if note else cell


def _repeat(tok: str, attr: str, count: int) -> str:
    """A copy of a (cell or column) element standing for ``count`` positions."""
    end = tag_end(tok)
    tag, rest = tok[:end], tok[end:]
    tag = _set_attr(tag, attr, str(count) if count > 1 else None)
    return tag + rest


def _split(tok: str, attr: str, first: int, count: int, hits: list[int], make) -> str:
    """A repeated element standing for positions ``first`` … ``first + count - 1``, split in
    place around ``hits``: the runs between keep the element (with their repeat counts), each
    hit becomes ``make(single_copy, position)``."""
    parts, start = [], first
    one = _repeat(tok, attr, 1) if hits else ""
    for h in hits:
        if h > start:
            parts.append(_repeat(tok, attr, h - start))
        parts.append(make(one, h))
        start = h + 1
    if first + count > start:
        parts.append(_repeat(tok, attr, first + count - start))
    return "".join(parts)


def _annotate(cell: str, note: str, n: _Names) -> str:
    """Attach our note to a cell, unless a person's note is already there."""
    o, t = n.office, n.table
    if f"<{o}:annotation" in cell:
        return cell
    dc = n.dc
    creator = f"<{dc}:creator>{AUTHOR}</{dc}:creator>" if dc else ""
    ann = (f"<{o}:annotation>{creator}<{n.text}:p>{_text(MARK + note)}</{n.text}:p></{o}:annotation>")
    if cell.endswith("/>"):
        tag = cell[:-2]
        kind = re.match(rf"<{t}:([\w-]+)", cell).group(1)
        return f"{tag}>{ann}</{t}:{kind}>"
    end = tag_end(cell)
    return cell[:end] + ann + cell[end:]


def _strip_our_annotations(xml: str, n: _Names) -> str:
    """The table without the notes (annotations) of lagsheet's earlier runs; people's stay."""
    name = f"{n.office}:annotation"
    if f"<{name}" not in xml:
        return xml
    sc = Scanner(xml)
    opening = re.compile(rf"<{re.escape(name)}[\s/>]")
    out, pos, i = [], 0, 0
    while True:
        m = opening.search(xml, i)
        if m is None:
            break
        inside = sc.opaque_end(m.start())
        if inside is not None:  # in a comment or CDATA section: not an element
            i = inside
            continue
        kind, _, s, e = sc.next_tag(m.start())
        stop = e if kind == EMPTY else sc.element_end(name, e)
        body = xml[s:stop]
        text = re.sub(r"<[^>]*>", "", body)
        if (n.dc and f"<{n.dc}:creator>{AUTHOR}</{n.dc}:creator>" in body) or MARK in text:
            out.append(xml[pos:s])
            pos = stop
        i = stop
    out.append(xml[pos:])
    return "".join(out)

