"""OpenDocument spreadsheets (.ods), read by calamine and written by patching content.xml.

Only ``content.xml`` changes; every other member of the package (``mimetype`` first
and stored, styles, settings, manifest, thumbnails, scripts, empty folders) is copied
unchanged. Inside the Lines table the original elements are kept: a repeated empty
cell or row that our results fall in is split in place (LibreOffice pads every row to
column 16,384, so a cell appended after the padding would be discarded), and our
cells, notes (annotations by 'lagsheet'), column widths and number styles are
added. Text is written as string cells, never as a formula.
"""

from __future__ import annotations

import copy
import re
import zipfile
from functools import lru_cache
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape, quoteattr

from ..errors import WorkbookError
from .save import VERIFIERS, atomic_write
from .table import RawSheet, SheetEdits, calamine_grid, post_write_check, sheet_name_for

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
}
_INVALID_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def _text(s: str) -> str:
    return escape(_INVALID_XML.sub("", s))


class _Names:
    """The prefixes this document uses for the OpenDocument namespaces."""

    def __init__(self, xml: str):
        head = xml[: xml.find(">", xml.find("<office:document-content") if "<office:document-content" in xml else 0) + 1]
        found = {uri: p for p, uri in re.findall(r'xmlns:([\w.-]+)="([^"]+)"', head)}
        self.p = {k: found.get(uri) for k, uri in NS.items()}
        if self.p["table"] is None or self.p["office"] is None or self.p["text"] is None:
            raise WorkbookError("content.xml does not declare the OpenDocument table namespaces")

    def __getattr__(self, key):
        return self.p[key]


class OdsBook:
    def __init__(self, path: Path, zf: zipfile.ZipFile, content: str, values):
        self.path, self._zip, self._content, self._values = path, zf, content, values
        self.n = _Names(content)
        t = re.escape(self.n.table)
        self._names = [_unescape(m.group(1)) for m in
                       re.finditer(rf'<{t}:table\b[^>]*\b{t}:name="([^"]*)"', content)]
        self._raw: dict[str, RawSheet] = {}

    @classmethod
    def open(cls, path: Path) -> OdsBook:
        import python_calamine

        if not zipfile.is_zipfile(path):
            raise WorkbookError(f"{path.name}: not an OpenDocument spreadsheet (the file is not a zip package)")
        try:
            zf = zipfile.ZipFile(path)
            content = zf.read("content.xml").decode("utf-8")
            values = python_calamine.CalamineWorkbook.from_path(str(path))
        except KeyError as exc:
            raise WorkbookError(f"{path.name}: has no content.xml; not an OpenDocument spreadsheet") from exc
        except WorkbookError:
            raise
        except Exception as exc:
            raise WorkbookError(f"{path.name}: cannot be read as a spreadsheet ({exc})") from exc
        return cls(path, zf, content, values)

    def sheet_names(self) -> list[str]:
        return list(self._names)

    def _put_sheet(self, content: str, sheet, styles: _AutoStyles) -> str:
        """Add a whole sheet of lagsheet's, replacing our earlier one; never a person's."""
        name, ours = sheet_name_for(self, sheet.name)
        if ours:
            a, b = _span(content, name, self.n)
            content = content[:a] + content[b:]
        if name != sheet.name:
            sheet = type(sheet)(**{**sheet.__dict__, "name": name})
        last = content.rfind(f"</{self.n.table}:table>")
        at = last + len(f"</{self.n.table}:table>")
        return content[:at] + _new_table(sheet, self.n, styles) + content[at:]

    def sheet(self, name: str) -> RawSheet:
        if name not in self._raw:
            grid = calamine_grid(self._values, name, self.path)
            a, b = _span(self._content, name, self.n)
            self._raw[name] = RawSheet(name, grid, _uncached(self._content[a:b], self.n))
        return self._raw[name]

    def save(self, edits: list[SheetEdits], out: Path, new_sheets=(), allow_loss: bool = False) -> list[str]:
        content = _declare(self._content, self.n)
        styles = _AutoStyles(content, self.n)
        for e in edits:
            if e.sheet not in self._names:
                raise WorkbookError(f"sheet {e.sheet!r} is not in the workbook; lagsheet adds no new "
                                    "sheets to .ods files in this version")
            a, b = _span(content, e.sheet, self.n)
            content = content[:a] + _TablePatch(content[a:b], e, self.n, styles).run() + content[b:]
            content = _grow_database_ranges(content, e, self.n)
        for sheet in new_sheets:
            content = self._put_sheet(content, sheet, styles)
        content = styles.insert(content)
        data = content.encode("utf-8")

        def write(tmp: str) -> None:
            with zipfile.ZipFile(tmp, "w") as dst:
                for info in self._zip.infolist():
                    body = data if info.filename == "content.xml" else self._zip.read(info.filename)
                    # a copy: writing fills in sizes, and the input's entries must stay as read
                    dst.writestr(copy.copy(info), body, compress_type=info.compress_type)

        before = {e.sheet: self.sheet(e.sheet) for e in edits}
        written = {e.sheet: e.values.keys() for e in edits}  # a view: no copy of every position
        names = set(self._zip.namelist())

        losses: list[str] = []

        def verify(tmp: Path) -> None:
            reopened = VERIFIERS[".ods"](tmp)  # calamine reads a whole .ods when it opens it: once
            losses.extend(post_write_check(tmp, before, written, names, reopened=reopened,
                                           allow_loss=allow_loss))

        atomic_write(out, write, like=self.path, verify=verify)
        return losses


def _new_table(sheet, n: _Names, styles: _AutoStyles) -> str:
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

    def grow(m):
        tag = m.group(0)
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

    return re.sub(rf"<{t}:database-range\b[^>]*>", grow, content)


def _col_index_letters(letters: str) -> int:
    col = 0
    for ch in letters:
        col = col * 26 + (ord(ch) - 64)
    return col - 1


def _declare(content: str, n: _Names) -> str:
    """Declare on the root element the namespaces our additions use, where the file lacks them."""
    root = re.search(r"<[\w.-]+:document-content\b[^>]*>", content)
    if root is None:
        return content
    tag = root.group(0)
    taken = set(re.findall(r"xmlns:([\w.-]+)=", tag))
    add = ""
    for key in ("dc", "style", "number", "fo"):
        if n.p[key] is None and key not in taken:
            add += f' xmlns:{key}="{NS[key]}"'
            n.p[key] = key
    if not add:
        return content
    new = tag[:-1] + add + ">"
    return content[:root.start()] + new + content[root.end():]


def _span(content: str, name: str, n: _Names) -> tuple[int, int]:
    t = re.escape(n.table)
    for m in re.finditer(rf'<{t}:table\b[^>]*\b{t}:name="([^"]*)"[^>]*>', content):
        if _unescape(m.group(1)) == name:
            end = content.find(f"</{n.table}:table>", m.end())
            return m.start(), end + len(f"</{n.table}:table>")
    raise KeyError(name)


def _unescape(s: str) -> str:
    return (s.replace("&lt;", "<").replace("&gt;", ">").replace("&quot;", '"')
            .replace("&apos;", "'").replace("&amp;", "&"))


@lru_cache(maxsize=64)
def _attr_re(name: str) -> re.Pattern:
    return re.compile(rf'\b{re.escape(name)}="([^"]*)"')


@lru_cache(maxsize=64)
def _set_attr_re(name: str) -> re.Pattern:
    return re.compile(rf'\s{re.escape(name)}="[^"]*"')


def _attr(tag: str, name: str) -> str | None:
    if name not in tag:
        return None
    m = _attr_re(name).search(tag)
    return m.group(1) if m else None


def _set_attr(tag: str, name: str, value: str | None) -> str:
    """Set, replace or (value None) remove an attribute in a start tag."""
    pat = _set_attr_re(name)
    if value is None:
        return pat.sub("", tag, count=1) if name in tag else tag
    if name in tag and pat.search(tag):
        return pat.sub(f' {name}="{value}"', tag, count=1)
    end = tag.rfind("/>") if tag.endswith("/>") else tag.rfind(">")
    return tag[:end] + f' {name}="{value}"' + tag[end:]


def _rows(xml: str, n: _Names) -> re.Pattern:
    return re.compile(rf"<{n.table}:table-row\b[^>]*?(?:/>|>.*?</{n.table}:table-row>)", re.S)


def _cells_re(n: _Names) -> re.Pattern:
    t = n.table
    return re.compile(rf"<{t}:(table-cell|covered-table-cell)\b[^>]*?(?:/>|>.*?</{t}:\1>)", re.S)


def _uncached(table_xml: str, n: _Names) -> set[tuple[int, int]]:
    out: set[tuple[int, int]] = set()
    if f"{n.table}:formula" not in table_xml:
        return out
    r = 0
    cell_re = _cells_re(n)
    for rm in _rows(table_xml, n).finditer(table_xml):
        row = rm.group(0)
        rep = int(_attr(row[:row.find(">") + 1], f"{n.table}:number-rows-repeated") or 1)
        if f"{n.table}:formula" in row:
            c = 0
            for cm in cell_re.finditer(row):
                tag = cm.group(0)[:cm.group(0).find(">") + 1]
                crep = int(_attr(tag, f"{n.table}:number-columns-repeated") or 1)
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

    def insert(self, content: str) -> str:
        if not self.new:
            return content
        o = self.n.office
        end = content.find(f"</{o}:automatic-styles>")
        if end >= 0:
            return content[:end] + "".join(self.new) + content[end:]
        empty = re.search(rf"<{o}:automatic-styles\s*/>", content)
        block = f"<{o}:automatic-styles>{''.join(self.new)}</{o}:automatic-styles>"
        if empty:
            return content[:empty.start()] + block + content[empty.end():]
        body = content.find(f"<{o}:body")
        return content[:body] + block + content[body:]


class _TablePatch:
    def __init__(self, xml: str, e: SheetEdits, n: _Names, styles: _AutoStyles):
        self.xml, self.e, self.n, self.styles = xml, e, n, styles
        self.t, self.o = n.table, n.office
        t = n.table
        # _cells_re with the start tag's attributes as group 2 (the same matches)
        self._cell_start_re = re.compile(rf"<{t}:(table-cell|covered-table-cell)\b([^>]*?)(?:/>|>.*?</{t}:\1>)",
                                         re.S)
        self._floats: dict[tuple, str] = {}  # (number format, header style) -> the cell's start
        self._strings: dict[tuple, str] = {}  # (text, header style) -> the whole cell

    def run(self) -> str:
        xml = _strip_our_annotations(self.xml, self.n)
        targets: dict[int, dict[int, tuple[str, Any]]] = {}
        for (r, c), v in self.e.values.items():
            targets.setdefault(r, {})[c] = ("value", v)
        notes: dict[tuple[int, int], str] = dict(self.e.comments)
        for (r, c) in notes:
            targets.setdefault(r, {}).setdefault(c, ("note", None))
        header_src = {pos: src for pos, src in self.e.headers.items()}
        self._header_styles = self._styles_of(xml, {src for src in header_src.values()})
        xml = self._columns(xml)
        return self._rows(xml, targets, notes, header_src)

    # -- columns ---------------------------------------------------------------------------

    def _columns(self, xml: str) -> str:
        if not self.e.widths:
            return xml
        t = self.t
        col_re = re.compile(rf"<{t}:table-column\b[^>]*?(?:/>|>.*?</{t}:table-column>)", re.S)
        want = dict(self.e.widths)
        out, pos, c = [], 0, 0
        for m in col_re.finditer(xml):
            tag = m.group(0)
            rep = int(_attr(tag, f"{t}:number-columns-repeated") or 1)
            hit = sorted(k for k in want if c <= k < c + rep)
            out.append(xml[pos:m.start()])

            def styled(one, k):
                name = self.styles.column(want.pop(k))
                return _set_attr(one, f"{t}:style-name", name) if name else one

            out.append(_split(tag, f"{t}:number-columns-repeated", c, rep, hit, styled) if hit else tag)
            pos = m.end()
            c += rep
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
        cell_re = _cells_re(self.n)
        for rm in _rows(xml, self.n).finditer(xml):
            if r > last:
                break
            row = rm.group(0)
            rep = int(_attr(row[:row.find(">") + 1], f"{self.t}:number-rows-repeated") or 1)
            if any(r <= x < r + rep for x in rows):
                c = 0
                for cm in cell_re.finditer(row):
                    tag = cm.group(0)[:cm.group(0).find(">") + 1]
                    crep = int(_attr(tag, f"{self.t}:number-columns-repeated") or 1)
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
        for rm in _rows(xml, self.n).finditer(xml):
            if k >= len(todo):
                break
            row = rm.group(0)
            head = row[:row.find(">") + 1]
            rep = int(_attr(head, f"{t}:number-rows-repeated") or 1)
            hits = []
            while k < len(todo) and todo[k] < r + rep:
                hits.append(todo[k])
                k += 1
            if hits:
                out.append(xml[pos:rm.start()])
                out.append(_split(row, f"{t}:number-rows-repeated", r, rep, hits,
                                  lambda one, h: self._patch_row(one, h, targets[h], notes, header_src)))
                pos = rm.end()
            r += rep
        out.append(xml[pos:])
        xml = "".join(out)
        if k < len(todo):  # rows past the table's last row
            end = xml.rfind(f"</{t}:table>")
            extra = []
            for h in todo[k:]:
                if h > r:
                    extra.append(f'<{t}:table-row {t}:number-rows-repeated="{h - r}"><{t}:table-cell/></{t}:table-row>')
                extra.append(self._patch_row(f"<{t}:table-row></{t}:table-row>", h, targets[h], notes, header_src))
                r = h + 1
            xml = xml[:end] + "".join(extra) + xml[end:]
        return xml

    def _patch_row(self, row: str, r: int, cells: dict[int, tuple[str, Any]], notes, header_src) -> str:
        t = self.t
        close = f"</{t}:table-row>"
        if row.endswith("/>"):
            head, body = row[:-2] + ">", ""
        else:
            head = row[:row.find(">") + 1]
            body = row[len(head):-len(close)]
        out, pos, c = [], 0, 0
        todo = sorted(cells)
        k, n_todo = 0, len(todo)
        repeated = f"{t}:number-columns-repeated"
        last_end = 0
        for cm in self._cell_start_re.finditer(body):  # the cells; those we write in are split
            if k >= n_todo:
                break  # the rest of the row is copied as it is
            attrs = cm.group(2)
            rep = int(_attr(attrs, repeated) or 1) if repeated in attrs else 1
            last_end = cm.end()
            if todo[k] >= c + rep:  # nothing of ours in this one: it stays in the text as it is
                c += rep
                continue
            hits = []
            while k < n_todo and todo[k] < c + rep:
                hits.append(todo[k])
                k += 1
            out.append(body[pos:cm.start()])
            out.append(_split(cm.group(0), repeated, c, rep, hits,
                              lambda one, h: self._cell(one, r, h, cells[h], notes.get((r, h)), header_src)))
            pos = cm.end()
            c += rep
        else:  # every cell was seen (c is the row's width): ours past the last one go after it
            out.append(body[pos:last_end])
            pos = last_end
        tail = body[pos:]
        for h in todo[k:]:  # past the row's last cell
            if h > c:
                out.append(f'<{t}:table-cell {t}:number-columns-repeated="{h - c}"/>' if h - c > 1
                           else f"<{t}:table-cell/>")
            out.append(self._cell(f"<{t}:table-cell/>", r, h, cells[h], notes.get((r, h)), header_src))
            c = h + 1
        return head + "".join(out) + tail + close

    def _cell(self, original: str, r: int, c: int, what: tuple[str, Any], note: str | None, header_src) -> str:
        t, o = self.t, self.o
        kind, v = what
        if kind == "note":
            return _annotate(original, note, self.n) if note else original
        style = None
        if (r, c) in header_src:
            style = self._header_styles.get(header_src[(r, c)])
        fmt = self.e.number_formats.get((r, c))
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
    end = tok.find(">") + 1
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
    end = cell.find(">") + 1
    return cell[:end] + ann + cell[end:]


def _strip_our_annotations(xml: str, n: _Names) -> str:
    o = n.office

    def keep(m):
        body = m.group(0)
        text = re.sub(r"<[^>]+>", "", body)
        ours = (n.dc and f"<{n.dc}:creator>{AUTHOR}</{n.dc}:creator>" in body) or MARK in text
        return "" if ours else body

    return re.sub(rf"<{o}:annotation\b[^>]*>.*?</{o}:annotation>", keep, xml, flags=re.S)

