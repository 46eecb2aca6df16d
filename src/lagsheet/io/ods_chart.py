"""A chart embedded in an .ods sheet, stored as LibreOffice stores one.

The chart is an OpenDocument chart sub-document (a folder of the package holding its
``content.xml`` and ``styles.xml``, listed in ``META-INF/manifest.xml`` with the chart
media type), drawn by a ``draw:frame`` holding a ``draw:object`` that links to the folder,
anchored to a cell of the sheet. Its data are ranges of the sheet (``Summary.E5:Summary.E9``),
so the chart follows the cells. No replacement image is stored: LibreOffice draws the chart
from the object (a replacement image is an optional preview, ODF 1.3 part 3, 10.4.7).
"""

from __future__ import annotations

import re
import zipfile
from xml.sax.saxutils import escape, quoteattr

MANIFEST = "META-INF/manifest.xml"
CHART_TYPE = "application/vnd.oasis.opendocument.chart"
_HREF = re.compile(r"""xlink:href\s*=\s*["']\./([^"']+)["']""")
_COLOURS = ("#1f5f8b", "#b0b7bd")  # insulated, bare: our own pair (dark blue, light grey)

_DOC_NS = ('xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
           'xmlns:style="urn:oasis:names:tc:opendocument:xmlns:style:1.0" '
           'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" '
           'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
           'xmlns:draw="urn:oasis:names:tc:opendocument:xmlns:drawing:1.0" '
           'xmlns:fo="urn:oasis:names:tc:opendocument:xmlns:xsl-fo-compatible:1.0" '
           'xmlns:xlink="http://www.w3.org/1999/xlink" '
           'xmlns:svg="urn:oasis:names:tc:opendocument:xmlns:svg-compatible:1.0" '
           'xmlns:chart="urn:oasis:names:tc:opendocument:xmlns:chart:1.0" '
           'xmlns:number="urn:oasis:names:tc:opendocument:xmlns:datastyle:1.0"')


def column_letters(col: int) -> str:
    out = ""
    col += 1
    while col:
        col, rem = divmod(col - 1, 26)
        out = chr(65 + rem) + out
    return out


def cell_range(sheet: str, col: int, r0: int, r1: int | None = None) -> str:
    """'Summary.E5:Summary.E9' (0-based column and rows); a name other than letters, digits and
    '_' is quoted, its quotes doubled, as ODF cell addresses write it."""
    name = sheet if re.fullmatch(r"\w+", sheet) else "'" + sheet.replace("'", "''") + "'"
    a = f"{name}.{column_letters(col)}{r0 + 1}"
    return a if r1 is None else f"{a}:{name}.{column_letters(col)}{r1 + 1}"


class Objects:
    """The chart objects one save adds (and our earlier ones it removes) in a package."""

    def __init__(self, zf: zipfile.ZipFile | None):
        self.names = set(zf.namelist()) if zf is not None else set()
        # without a manifest we can extend, a reader cannot tell the folder is a chart: then no chart
        self.possible = MANIFEST in self.names and _closing(zf.read(MANIFEST)) is not None
        self.parts: dict[str, bytes] = {}
        self.added: list[str] = []  # folder names
        self.gone: list[str] = []  # folder names of our earlier charts, dropped with their sheet
        self.removed: set[str] = set()  # package members dropped

    def drop(self, table_xml: str) -> None:
        """The objects a sheet of ours (about to be replaced) links to are dropped with it."""
        for name in _HREF.findall(table_xml):
            folder = name.rstrip("/")
            if folder.startswith("ObjectReplacements/"):
                members = {folder}
            else:
                members = {m for m in self.names if m.startswith(folder + "/")}
                self.gone.append(folder)
            self.removed |= members

    def dropped(self, member: str) -> bool:
        return member in self.removed

    def add(self, sheet: str, chart: dict, n, row: int = 0) -> str | None:
        """The draw:frame showing ``chart`` (as :class:`~lagsheet.io.table.NewSheet` holds it); its
        parts go into :attr:`parts`. None when the package cannot hold one. ``row``: the 0-based
        row of its anchor cell, at whose top it is drawn (LibreOffice's default row height,
        0.178 in, from memory, places it; LibreOffice moves it with the cell)."""
        if not self.possible:
            return None
        k = 1
        while any(m.startswith(f"lagsheet chart {k}/") for m in self.names - self.removed) \
                or f"lagsheet chart {k}" in self.added:
            k += 1
        folder = f"lagsheet chart {k}"
        self.added.append(folder)
        self.parts[f"{folder}/content.xml"] = chart_content(sheet, chart).encode("utf-8")
        self.parts[f"{folder}/styles.xml"] = (f'<?xml version="1.0" encoding="UTF-8"?>\n<office:document-styles '
                                               f'{_DOC_NS} office:version="1.3"><office:styles/>'
                                               "</office:document-styles>").encode()
        ranges = " ".join(_ranges(sheet, chart))
        d, s, x = n.draw, n.svg, n.xlink
        return (f'<{d}:frame {d}:z-index="0" {d}:name={quoteattr(folder)} {s}:width="17cm" {s}:height="10cm" '
                f'{s}:x="0cm" {s}:y="0cm">'
                f'<{d}:object {d}:notify-on-update-of-ranges={quoteattr(ranges)} {x}:href={quoteattr("./" + folder)} '
                f'{x}:type="simple" {x}:show="embed" {x}:actuate="onLoad"/></{d}:frame>')

    def manifest(self, body: bytes) -> bytes:
        """The manifest without the dropped members and with the added ones."""
        m = _closing(body)
        if m is None or not (self.added or self.removed):
            return body
        text = body.decode("utf-8")
        p = m.group(1) or ""
        for member in sorted(self.removed) + [g + "/" for g in self.gone]:
            text = re.sub(rf'\s*<{p}file-entry\b[^>]*\b{p}full-path="{re.escape(escape(member))}"[^>]*/>', "", text)
        entries = "".join(
            f' <{p}file-entry {p}full-path={quoteattr(path)} {p}media-type="text/xml"/>\n'
            for path in self.parts) + "".join(
            f' <{p}file-entry {p}full-path={quoteattr(folder + "/")} {p}version="1.3" '
            f'{p}media-type="{CHART_TYPE}"/>\n' for folder in self.added)
        m = re.search(r"</([\w.-]+:)?manifest\s*>", text)
        return (text[:m.start()] + entries + text[m.start():]).encode("utf-8")


def _closing(body: bytes) -> re.Match | None:
    """The manifest's closing tag, if the manifest is UTF-8 text that has one."""
    try:
        return re.search(r"</([\w.-]+:)?manifest\s*>", body.decode("utf-8"))
    except UnicodeDecodeError:
        return None


def _ranges(sheet: str, chart: dict) -> list[str]:
    cat_col, c0, c1 = chart["categories"]
    out = [cell_range(sheet, cat_col, c0, c1)]
    for (nr, nc), col, r0, r1 in chart["series"]:
        out += [cell_range(sheet, nc, nr), cell_range(sheet, col, r0, r1)]
    return out


def chart_content(sheet: str, chart: dict) -> str:
    """The chart sub-document's content.xml: a clustered column chart of the series over the categories."""
    cat_col, c0, c1 = chart["categories"]
    whole = " ".join([cell_range(sheet, cat_col, c0, c1)]
                     + [cell_range(sheet, col, r0, r1) for _, col, r0, r1 in chart["series"]])
    styles = ['<style:style style:name="ch1" style:family="chart"><style:chart-properties '
              'chart:auto-position="true" chart:auto-size="true"/></style:style>',
              '<style:style style:name="ca1" style:family="chart"><style:chart-properties chart:display-label="true"/>'
              '<style:text-properties fo:font-size="9pt"/></style:style>']
    series = []
    for k, ((nr, nc), col, r0, r1) in enumerate(chart["series"]):
        styles.append(f'<style:style style:name="cs{k}" style:family="chart"><style:graphic-properties '
                      f'draw:stroke="none" draw:fill-color="{_COLOURS[k % len(_COLOURS)]}"/></style:style>')
        series.append(f'<chart:series chart:style-name="cs{k}" chart:class="chart:bar" '
                      f'chart:values-cell-range-address={quoteattr(cell_range(sheet, col, r0, r1))} '
                      f'chart:label-cell-address={quoteattr(cell_range(sheet, nc, nr))}/>')
    return (f'<?xml version="1.0" encoding="UTF-8"?>\n<office:document-content {_DOC_NS} office:version="1.3">'
            f'<office:automatic-styles>{"".join(styles)}</office:automatic-styles><office:body><office:chart>'
            '<chart:chart svg:width="17cm" svg:height="10cm" chart:class="chart:bar">'
            f'<chart:title><text:p>{escape(chart["title"])}</text:p></chart:title>'
            '<chart:legend chart:legend-position="bottom"/>'
            f'<chart:plot-area chart:style-name="ch1" table:cell-range-address={quoteattr(whole)} '
            'chart:data-source-has-labels="none">'
            '<chart:axis chart:dimension="x" chart:name="primary-x" chart:style-name="ca1">'
            f'<chart:categories table:cell-range-address={quoteattr(cell_range(sheet, cat_col, c0, c1))}/>'
            '</chart:axis><chart:axis chart:dimension="y" chart:name="primary-y" chart:style-name="ca1"><chart:grid chart:class="major"/>'
            f'</chart:axis>{"".join(series)}</chart:plot-area></chart:chart></office:chart></office:body>'
            "</office:document-content>")
