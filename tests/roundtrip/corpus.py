"""The round-trip corpus, built in the tests: realistic insulation schedules, one feature each.

Every workbook has a ``Lines`` sheet with the usual headers and 3 to 10 valid pipe lines
(NPS 2 to NPS 12, 100 to 300 °C, mineral wool, a 55 °C surface limit), plus one feature
(or, for ``everything``, all of them). ``comments_and_ours`` leaves one line without a
limit, so that lagsheet writes its own note beside the people's. openpyxl builds what it
can write; the rest is put into the zip package by hand, as Excel would have written it:
cached formula values and a shared formula, x14 validations, an external link, drawings
with a picture (a PNG made with zlib: no imaging library) or a text box, threaded
comments and their people, a VBA part, and for every entry but ``plain`` shared strings
(rich runs kept), the mc/x14ac namespaces, row spans and Excel's calcPr (no forced
recalculation). The ODS entries are saved by LibreOffice itself from an xlsx source
built here.

The package helpers below (parts, relationships, sheet lookup) are shared with the
checks in ``checks.py``.
"""

from __future__ import annotations

import datetime as dt
import os
import posixpath
import shutil
import struct
import subprocess
import zipfile
import zlib
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from lxml import etree

# --------------------------------------------------------------------------- names

MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
R = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
CT = "http://schemas.openxmlformats.org/package/2006/content-types"
XDR = "http://schemas.openxmlformats.org/drawingml/2006/spreadsheetDrawing"
A = "http://schemas.openxmlformats.org/drawingml/2006/main"
X14 = "http://schemas.microsoft.com/office/spreadsheetml/2009/9/main"
XM = "http://schemas.microsoft.com/office/excel/2006/main"
TC = "http://schemas.microsoft.com/office/spreadsheetml/2018/threadedcomments"
MC = "http://schemas.openxmlformats.org/markup-compatibility/2006"
X14AC = "http://schemas.microsoft.com/office/spreadsheetml/2009/9/ac"

REL_BASE = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/"
REL_SHEET = REL_BASE + "worksheet"
REL_SST = REL_BASE + "sharedStrings"
REL_STYLES = REL_BASE + "styles"
REL_TABLE = REL_BASE + "table"
REL_COMMENTS = REL_BASE + "comments"
REL_VML = REL_BASE + "vmlDrawing"
REL_DRAWING = REL_BASE + "drawing"
REL_IMAGE = REL_BASE + "image"
REL_EXTLINK = REL_BASE + "externalLink"
REL_EXTLINK_PATH = REL_BASE + "externalLinkPath"
REL_OFFICE_DOC = REL_BASE + "officeDocument"
REL_THREADED = "http://schemas.microsoft.com/office/2017/10/relationships/threadedComment"
REL_PERSON = "http://schemas.microsoft.com/office/2017/10/relationships/person"
REL_VBA = "http://schemas.microsoft.com/office/2006/relationships/vbaProject"

CT_SST = "application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"
CT_DRAWING = "application/vnd.openxmlformats-officedocument.drawing+xml"
CT_EXTLINK = "application/vnd.openxmlformats-officedocument.spreadsheetml.externalLink+xml"
CT_THREADED = "application/vnd.ms-excel.threadedcomments+xml"
CT_PERSON = "application/vnd.ms-excel.person+xml"
CT_VBA = "application/vnd.ms-office.vbaProject"
CT_XLSM_MAIN = "application/vnd.ms-excel.sheet.macroEnabled.main+xml"

INPUT_HEADERS = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]",
                 "Insulation", "Max surface temperature [°C]"]
SIZES = ["NPS 2", "NPS 3", "NPS 4", "NPS 6", "NPS 8", "NPS 10", "NPS 12"]
LENGTHS = [12.0, 8.5, 30.0, 6.0, 45.0, 20.0, 15.0, 10.0, 25.0, 40.0]
TEMPERATURES = [180, 250, 120, 300, 150, 210, 100, 275, 160, 230]

# The order of a worksheet's children (CT_Worksheet), for inserting elements by hand.
WORKSHEET_ORDER = [
    "sheetPr", "dimension", "sheetViews", "sheetFormatPr", "cols", "sheetData", "sheetCalcPr",
    "sheetProtection", "protectedRanges", "scenarios", "autoFilter", "sortState",
    "dataConsolidate", "customSheetViews", "mergeCells", "phoneticPr", "conditionalFormatting",
    "dataValidations", "hyperlinks", "printOptions", "pageMargins", "pageSetup", "headerFooter",
    "rowBreaks", "colBreaks", "customProperties", "cellWatches", "ignoredErrors", "smartTags",
    "drawing", "legacyDrawing", "legacyDrawingHF", "drawingHF", "picture", "oleObjects",
    "controls", "webPublishItems", "tableParts", "extLst"]
WORKBOOK_ORDER = [
    "fileVersion", "fileSharing", "workbookPr", "workbookProtection", "bookViews", "sheets",
    "functionGroups", "externalReferences", "definedNames", "calcPr", "oleSize",
    "customWorkbookViews", "pivotCaches", "smartTagPr", "smartTagTypes", "webPublishing",
    "fileRecoveryPr", "webPublishObjects", "extLst"]


def q(ns: str, name: str) -> str:
    return f"{{{ns}}}{name}"


def local(tag) -> str:
    return etree.QName(tag).localname if isinstance(tag, str) else ""


# --------------------------------------------------------------------------- package helpers

def read_parts(path: Path) -> dict[str, bytes]:
    """Every part of a zip package, by name, in the zip's order."""
    with zipfile.ZipFile(path) as z:
        return {n: z.read(n) for n in z.namelist()}


def write_parts(path: Path, parts: dict[str, bytes], *, stored: set[str] = frozenset()) -> None:
    """Write ``parts`` (in their dict order) as a zip package; ``stored`` parts uncompressed."""
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts.items():
            z.writestr(name, data, zipfile.ZIP_STORED if name in stored else zipfile.ZIP_DEFLATED)


def parse(data: bytes):
    return etree.fromstring(data, etree.XMLParser(remove_blank_text=False, resolve_entities=False))


def serialize(el) -> bytes:
    return etree.tostring(el, xml_declaration=True, encoding="UTF-8", standalone=True)


def rels_name(part: str) -> str:
    d, b = posixpath.split(part)
    return posixpath.join(d, "_rels", b + ".rels")


def resolve(source_part: str, target: str) -> str:
    """A relationship target, relative to its source part, as a zip part name."""
    if target.startswith("/"):
        return target[1:]
    return posixpath.normpath(posixpath.join(posixpath.dirname(source_part), target))


@dataclass(frozen=True)
class Rel:
    id: str
    type: str
    target: str
    mode: str | None


def rels(parts: dict[str, bytes], source_part: str) -> list[Rel]:
    """The relationships of ``source_part`` ('' for the package), or [] when it has none."""
    name = "_rels/.rels" if source_part == "" else rels_name(source_part)
    if name not in parts:
        return []
    root = parse(parts[name])
    return [Rel(e.get("Id"), e.get("Type"), e.get("Target"), e.get("TargetMode"))
            for e in root.iter(q(PKG_REL, "Relationship"))]


def rel_targets(parts: dict[str, bytes], source_part: str, rel_type: str) -> list[str]:
    """Part names that ``source_part`` points to with relationships of ``rel_type``."""
    return [resolve(source_part, r.target) for r in rels(parts, source_part)
            if r.type == rel_type and r.mode != "External"]


def workbook_part(parts: dict[str, bytes]) -> str:
    for r in rels(parts, ""):
        if r.type == REL_OFFICE_DOC:
            return resolve("", r.target)
    raise KeyError("no officeDocument relationship in _rels/.rels")


def sheet_names(parts: dict[str, bytes]) -> list[str]:
    wb = parse(parts[workbook_part(parts)])
    return [s.get("name") for s in wb.iter(q(MAIN, "sheet"))]


def sheet_part(parts: dict[str, bytes], name: str) -> str:
    """The zip part of the worksheet called ``name``."""
    wbp = workbook_part(parts)
    wb = parse(parts[wbp])
    for s in wb.iter(q(MAIN, "sheet")):
        if s.get("name") == name:
            rid = s.get(q(R, "id"))
            for r in rels(parts, wbp):
                if r.id == rid:
                    return resolve(wbp, r.target)
    raise KeyError(f"no sheet {name!r}")


def shared_strings(parts: dict[str, bytes]) -> list[str]:
    """The workbook's shared strings as plain text ([] without a sharedStrings part)."""
    targets = rel_targets(parts, workbook_part(parts), REL_SST)
    if not targets or targets[0] not in parts:
        return []
    root = parse(parts[targets[0]])
    out = []
    for si in root.iter(q(MAIN, "si")):
        out.append("".join(t.text or "" for t in si.iter(q(MAIN, "t"))
                           if local(t.getparent().tag) != "rPh"))
    return out


def _free_name(parts: dict[str, bytes], pattern: str) -> str:
    i = 1
    while pattern.format(i) in parts:
        i += 1
    return pattern.format(i)


def add_rel(parts: dict[str, bytes], source_part: str, rel_type: str, target: str,
            mode: str | None = None) -> str:
    """Add a relationship to ``source_part``'s rels (creating them); return its new Id."""
    name = rels_name(source_part)
    root = parse(parts[name]) if name in parts else etree.Element(q(PKG_REL, "Relationships"),
                                                                   nsmap={None: PKG_REL})
    ids = {e.get("Id") for e in root}
    i = 1
    while f"rId{100 + i}" in ids:
        i += 1
    rid = f"rId{100 + i}"
    e = etree.SubElement(root, q(PKG_REL, "Relationship"), Id=rid, Type=rel_type, Target=target)
    if mode:
        e.set("TargetMode", mode)
    parts[name] = serialize(root)
    return rid


def add_override(parts: dict[str, bytes], part: str, content_type: str) -> None:
    root = parse(parts["[Content_Types].xml"])
    etree.SubElement(root, q(CT, "Override"), PartName="/" + part, ContentType=content_type)
    parts["[Content_Types].xml"] = serialize(root)


def add_default(parts: dict[str, bytes], ext: str, content_type: str) -> None:
    root = parse(parts["[Content_Types].xml"])
    if any(e.get("Extension", "").lower() == ext for e in root.iter(q(CT, "Default"))):
        return
    root.insert(0, etree.Element(q(CT, "Default"), Extension=ext, ContentType=content_type))
    parts["[Content_Types].xml"] = serialize(root)


def insert_child(parent, child, order: list[str]) -> None:
    """Insert ``child`` where the schema's ``order`` puts it among ``parent``'s children."""
    rank = order.index(local(child.tag))
    for i, existing in enumerate(parent):
        name = local(existing.tag)
        if name in order and order.index(name) > rank:
            parent.insert(i, child)
            return
    parent.append(child)


def frag(xml: str):
    """An element from a fragment of XML text."""
    return etree.fromstring(xml)


# --------------------------------------------------------------------------- the corpus

@dataclass
class Layout:
    """Where things are on the Lines sheet of one corpus workbook (1-based rows and columns)."""

    n: int = 5
    title_rows: int = 0
    gap_after: int | None = None  # a blank row after this many lines
    headers: list[str] = field(default_factory=lambda: list(INPUT_HEADERS))
    sheet_index: int = 0  # position of Lines among the sheets
    no_limit: int | None = None  # this line has no surface limit: lagsheet warns on its Tag cell
    anchors: list[str] = field(default_factory=list)  # drawing anchors for the Lines sheet
    images: dict[str, bytes] = field(default_factory=dict)  # rId placeholder -> png bytes
    formulas: dict[str, tuple[object, bool]] = field(default_factory=dict)  # ref -> (cached, is text)
    shared: list[tuple[str, list[str]]] = field(default_factory=list)  # (ref range, cells) of shared formulas
    other_formulas: dict[str, dict[str, tuple[object, bool]]] = field(default_factory=dict)  # sheet -> ref -> cache
    threaded: list[tuple[str, str, str]] = field(default_factory=list)  # (ref, guid, text)
    x14: bool = False
    vba: bool = False
    external: bool = False

    @property
    def header_row(self) -> int:
        return self.title_rows + 1

    @property
    def data_rows(self) -> list[int]:
        rows, r = [], self.header_row + 1
        for i in range(self.n):
            rows.append(r)
            r += 1
            if self.gap_after is not None and i + 1 == self.gap_after:
                r += 1
        return rows

    def col(self, header: str) -> str:
        from openpyxl.utils import get_column_letter

        return get_column_letter(self.headers.index(header) + 1)

    @property
    def last_letter(self) -> str:
        from openpyxl.utils import get_column_letter

        return get_column_letter(len(self.headers))


def line_values(i: int) -> list:
    """The i-th valid line: a horizontal mineral-wool pipe, NPS 2..12, 100..300 °C, 55 °C limit."""
    return [f"P-{101 + i}", "pipe", SIZES[i % len(SIZES)], LENGTHS[i], TEMPERATURES[i],
            "mineral wool", 55]


# ---- book-stage features: (workbook, Lines sheet, layout) -> None

def _lists_sheet(wb):
    if "Lists" in wb.sheetnames:
        return wb["Lists"]
    s = wb.create_sheet("Lists")
    for i, (m, sh) in enumerate(zip(["mineral wool", "calcium silicate", "cellular glass", "perlite"],
                                     ["pipe", "riser", "vessel", "wall"], strict=True), start=1):
        s.cell(i, 1, m)
        s.cell(i, 2, sh)
    s.sheet_state = "hidden"
    return s


def f_title(wb, ws, lay: Layout) -> None:
    from openpyxl.cell.rich_text import CellRichText, TextBlock
    from openpyxl.cell.text import InlineFont
    from openpyxl.styles import Alignment, Font

    last = lay.last_letter
    ws["A1"] = CellRichText(["Insulation schedule - ", TextBlock(InlineFont(b=True, sz=14),
                                                                   "Unit 3 steam and condensate")])
    ws["A1"].font = Font(size=14)
    ws.merge_cells(f"A1:{last}1")
    if lay.title_rows >= 2:
        ws["A2"] = "Rev B - issued for review"
        ws.merge_cells("A2:D2")
        ws["E2"] = "Checked: site team"
        ws["E2"].alignment = Alignment(horizontal="right")
        ws.merge_cells(f"E2:{last}2")


def f_styles(wb, ws, lay: Layout) -> None:
    from openpyxl.styles import Alignment, Border, Font, PatternFill, Side

    thin = Side(style="thin", color="7F7F7F")
    box = Border(left=thin, right=thin, top=thin, bottom=thin)
    for c in range(1, len(lay.headers) + 1):
        h = ws.cell(lay.header_row, c)
        h.font = Font(name="Calibri", bold=True, color="FFFFFF")
        h.fill = PatternFill("solid", fgColor="1F4E78")
        h.border = Border(left=thin, right=thin, top=thin, bottom=Side(style="medium"))
        h.alignment = Alignment(wrap_text=True, vertical="center", horizontal="center")
        for k, r in enumerate(lay.data_rows):
            cell = ws.cell(r, c)
            cell.border = box
            if k % 2:
                cell.fill = PatternFill("solid", fgColor="F2F2F2")
    ws.row_dimensions[lay.header_row].height = 32
    for r in lay.data_rows:
        ws[f"A{r}"].font = Font(bold=True)
        ws[f"{lay.col('Length [m]')}{r}"].number_format = "0.0"
        ws[f"{lay.col('Operating temperature [°C]')}{r}"].number_format = '0" °C"'
    ws[f"{lay.col('Operating temperature [°C]')}{lay.data_rows[1]}"].font = Font(color="C00000", italic=True)


def f_layout(wb, ws, lay: Layout) -> None:
    """Freeze panes, column widths, a hidden user column and number formats."""
    lay.headers.append("Internal ref")
    c = len(lay.headers)
    ws.cell(lay.header_row, c, "Internal ref")
    for k, r in enumerate(lay.data_rows):
        ws.cell(r, c, f"WO-{7000 + k}")
    ws.freeze_panes = f"B{lay.header_row + 1}"
    for letter, width in zip("ABCDEFG", [11, 9, 9, 12, 28, 16, 30], strict=True):
        ws.column_dimensions[letter].width = width
    ws.column_dimensions[lay.last_letter].hidden = True
    from openpyxl.utils import get_column_letter
    from openpyxl.worksheet.dimensions import ColumnDimension

    nxt = get_column_letter(c + 1)  # every column after the last one is 10.5 wide, up to XFD
    ws.column_dimensions[nxt] = ColumnDimension(ws, index=nxt, min=c + 1, max=16384, width=10.5,
                                                customWidth=True)
    for r in lay.data_rows:
        ws[f"{lay.col('Length [m]')}{r}"].number_format = "#,##0.00"
        ws[f"{lay.col('Max surface temperature [°C]')}{r}"].number_format = "0"


def f_validation(wb, ws, lay: Layout) -> None:
    from openpyxl.worksheet.datavalidation import DataValidation

    _lists_sheet(wb)
    first, last = lay.data_rows[0], lay.data_rows[-1] + 20
    dv = DataValidation(type="list", formula1='"pipe,riser,vessel,wall,top,underside,sphere"',
                        allow_blank=True, showErrorMessage=True, errorTitle="Shape",
                        error="Pick a shape from the list")
    dv.add(f"{lay.col('Shape')}{first}:{lay.col('Shape')}{last}")
    ws.add_data_validation(dv)
    dv2 = DataValidation(type="decimal", operator="between", formula1="0", formula2="1000",
                         showInputMessage=True, promptTitle="Length", prompt="Run length in metres")
    dv2.add(f"{lay.col('Length [m]')}{first}:{lay.col('Length [m]')}{last}")
    ws.add_data_validation(dv2)
    lay.x14 = True  # the Insulation dropdown refers to the Lists sheet, as x14 (below)


def f_conditional(wb, ws, lay: Layout) -> None:
    from openpyxl.formatting.rule import CellIsRule, ColorScaleRule, FormulaRule
    from openpyxl.styles import Font, PatternFill

    first, last = lay.data_rows[0], lay.data_rows[-1]
    t = lay.col("Operating temperature [°C]")
    ws.conditional_formatting.add(f"{t}{first}:{t}{last}", CellIsRule(
        operator="greaterThan", formula=["250"], fill=PatternFill("solid", bgColor="FFC7CE"),
        font=Font(color="9C0006")))
    ws.conditional_formatting.add(f"{lay.col('Length [m]')}{first}:{lay.col('Length [m]')}{last}",
                                  ColorScaleRule(start_type="min", start_color="F8F8F8",
                                                 end_type="max", end_color="5B9BD5"))
    g = lay.col("Max surface temperature [°C]")
    ws.conditional_formatting.add(f"A{first}:A{last}", FormulaRule(
        formula=[f"${g}{first}>60"], fill=PatternFill("solid", bgColor="FFEB9C")))


def f_names_sheets(wb, ws, lay: Layout) -> None:
    """Defined names, a protected cover sheet in front, a hidden sheet, workbook protection."""
    from openpyxl.workbook.defined_name import DefinedName
    from openpyxl.workbook.protection import WorkbookProtection

    cover = wb.create_sheet("Cover", 0)
    cover["A1"] = "Unit 3 insulation schedule"
    cover["A3"] = "Prepared by"
    cover["B3"] = "Piping and insulation"
    cover.protection.sheet = True
    cover.protection.password = "site"
    lay.sheet_index = 1
    _lists_sheet(wb)
    first, last = lay.data_rows[0], lay.data_rows[-1]
    t = lay.col("Operating temperature [°C]")
    wb.defined_names["OperatingTemperatures"] = DefinedName(
        "OperatingTemperatures", attr_text=f"Lines!${t}${first}:${t}${last}")
    wb.defined_names["ProjectCode"] = DefinedName("ProjectCode", attr_text='"U3-STEAM"')
    wb.defined_names["Materials"] = DefinedName("Materials", attr_text="Lists!$A$1:$A$4")
    ws.defined_names["SurfaceLimit"] = DefinedName(
        "SurfaceLimit", attr_text=f"Lines!${lay.col('Max surface temperature [°C]')}${first}")
    ws.print_area = f"A1:{lay.last_letter}{last}"
    ws.print_title_rows = f"{lay.header_row}:{lay.header_row}"
    wb.security = WorkbookProtection(lockStructure=True)


def f_table(wb, ws, lay: Layout) -> None:
    from openpyxl.worksheet.table import Table, TableStyleInfo

    assert lay.gap_after is None, "a table's data rows are contiguous"
    ref = f"A{lay.header_row}:{lay.last_letter}{lay.data_rows[-1]}"
    t = Table(displayName="Lines", name="Lines", ref=ref)
    t.tableStyleInfo = TableStyleInfo(name="TableStyleMedium2", showRowStripes=True)
    ws.add_table(t)


def f_formulas(wb, ws, lay: Layout) -> None:
    """Length = straight run + fittings (a shared formula), text and number formulas, a summary."""
    for h in ("Straight run [m]", "Fittings allowance [m]", "Check"):
        lay.headers.append(h)
        ws.cell(lay.header_row, len(lay.headers), h)
    run, fit, chk = (lay.col(h) for h in ("Straight run [m]", "Fittings allowance [m]", "Check"))
    length, temp = lay.col("Length [m]"), lay.col("Operating temperature [°C]")
    ins, lim = lay.col("Insulation"), lay.col("Max surface temperature [°C]")
    cells = []
    for k, r in enumerate(lay.data_rows):
        total = LENGTHS[k]
        ws[f"{run}{r}"] = total - 2.0
        ws[f"{fit}{r}"] = 2.0
        ws[f"{length}{r}"] = f"={run}{r}+{fit}{r}"
        lay.formulas[f"{length}{r}"] = (total, False)
        cells.append(f"{length}{r}")
        ws[f"{temp}{r}"] = f"={TEMPERATURES[k] - 20}+20"
        lay.formulas[f"{temp}{r}"] = (TEMPERATURES[k], False)
        ws[f"{chk}{r}"] = f'=IF({lim}{r}<60,"ok","check limit")'
        lay.formulas[f"{chk}{r}"] = ("ok", True)
    r = lay.data_rows[0]
    ws[f"{ins}{r}"] = '="mineral"&" wool"'
    lay.formulas[f"{ins}{r}"] = ("mineral wool", True)
    lay.shared.append((f"{cells[0]}:{cells[-1]}", cells))
    summary = wb["Summary"] if "Summary" in wb.sheetnames else wb.create_sheet("Summary")
    summary["A1"] = "Total length [m]"
    summary["B1"] = f"=SUM(Lines!{length}{lay.data_rows[0]}:{length}{lay.data_rows[-1]})"
    lay.other_formulas.setdefault("Summary", {})["B1"] = (sum(LENGTHS[:lay.n]), False)


def f_external(wb, ws, lay: Layout) -> None:
    """The surface limit comes from the project's standards workbook: [1]Limits!$B$2 = 55."""
    lim = lay.col("Max surface temperature [°C]")
    for r in lay.data_rows:
        ws[f"{lim}{r}"] = "=[1]Limits!$B$2"
        lay.formulas[f"{lim}{r}"] = (55, False)
    lay.external = True


def f_chart(wb, ws, lay: Layout) -> None:
    from openpyxl.chart import BarChart, Reference

    summary = wb["Summary"] if "Summary" in wb.sheetnames else wb.create_sheet("Summary")
    c = BarChart()
    c.title = "Operating temperature by line"
    c.y_axis.title = "°C"
    t = lay.headers.index("Operating temperature [°C]") + 1
    data = Reference(ws, min_col=t, min_row=lay.header_row, max_row=lay.data_rows[-1])
    cats = Reference(ws, min_col=1, min_row=lay.data_rows[0], max_row=lay.data_rows[-1])
    c.add_data(data, titles_from_data=True)
    c.set_categories(cats)
    summary.add_chart(c, "D2")


def f_comments(wb, ws, lay: Layout) -> None:
    """Notes by people (legacy comments), and the placeholder of a threaded comment."""
    from openpyxl.comments import Comment

    ws[f"{lay.col('Operating temperature [°C]')}{lay.header_row}"].comment = Comment(
        "Design temperature from the line list rev C", "M. Ruiz")
    ws[f"C{lay.data_rows[1]}"].comment = Comment("Size confirmed on the site walk", "J. Okafor")
    ref = f"{lay.col('Length [m]')}{lay.data_rows[2]}"
    guid = "{3F2A9C1E-6B7D-4E21-9C55-0A1B2C3D4E5F}"
    text = "Length includes the bypass?"
    ws[ref].comment = Comment(
        "[Threaded comment]\n\nYour version of Excel allows you to read this threaded comment; "
        "however, any edits to it will get removed if the file is opened in a newer version "
        f"of Excel.\n\nComment:\n    {text}\nReply:\n    Yes, 2 m of it", f"tc={guid}")
    lay.threaded.append((ref, guid, text))
    summary = wb["Summary"] if "Summary" in wb.sheetnames else wb.create_sheet("Summary")
    summary["A3"] = "Reviewed"
    summary["A3"].comment = Comment("Totals checked against the take-off", "M. Ruiz")


def f_image(wb, ws, lay: Layout) -> None:
    assert lay.title_rows >= 2, "the logo sits in the title rows"
    lay.anchors.append(_PIC_ANCHOR)
    lay.images["rIdPic"] = tiny_png()


def f_shape(wb, ws, lay: Layout) -> None:
    lay.anchors.append(_SHAPE_ANCHOR)


def f_vba(wb, ws, lay: Layout) -> None:
    lay.vba = True


# ---- package-stage edits

_PIC_ANCHOR = (
    '<xdr:twoCellAnchor editAs="oneCell"><xdr:from><xdr:col>5</xdr:col><xdr:colOff>0</xdr:colOff>'
    '<xdr:row>0</xdr:row><xdr:rowOff>0</xdr:rowOff></xdr:from><xdr:to><xdr:col>6</xdr:col>'
    '<xdr:colOff>400000</xdr:colOff><xdr:row>1</xdr:row><xdr:rowOff>150000</xdr:rowOff></xdr:to>'
    '<xdr:pic><xdr:nvPicPr><xdr:cNvPr id="2" name="Picture 1" descr="company logo"/><xdr:cNvPicPr>'
    '<a:picLocks noChangeAspect="1"/></xdr:cNvPicPr></xdr:nvPicPr><xdr:blipFill>'
    '<a:blip r:embed="rIdPic"/><a:stretch><a:fillRect/></a:stretch></xdr:blipFill><xdr:spPr>'
    '<a:xfrm><a:off x="3000000" y="0"/><a:ext cx="1000000" cy="500000"/></a:xfrm>'
    '<a:prstGeom prst="rect"><a:avLst/></a:prstGeom></xdr:spPr></xdr:pic><xdr:clientData/>'
    '</xdr:twoCellAnchor>')
_SHAPE_ANCHOR = (
    '<xdr:twoCellAnchor><xdr:from><xdr:col>9</xdr:col><xdr:colOff>100000</xdr:colOff>'
    '<xdr:row>1</xdr:row><xdr:rowOff>0</xdr:rowOff></xdr:from><xdr:to><xdr:col>12</xdr:col>'
    '<xdr:colOff>0</xdr:colOff><xdr:row>4</xdr:row><xdr:rowOff>0</xdr:rowOff></xdr:to>'
    '<xdr:sp macro="" textlink=""><xdr:nvSpPr><xdr:cNvPr id="3" name="TextBox 2"/>'
    '<xdr:cNvSpPr txBox="1"/></xdr:nvSpPr><xdr:spPr><a:xfrm><a:off x="6000000" y="200000"/>'
    '<a:ext cx="1800000" cy="600000"/></a:xfrm><a:prstGeom prst="rect"><a:avLst/></a:prstGeom>'
    '<a:solidFill><a:srgbClr val="FFFFCC"/></a:solidFill><a:ln w="9525"><a:solidFill>'
    '<a:srgbClr val="7F7F7F"/></a:solidFill></a:ln></xdr:spPr><xdr:txBody>'
    '<a:bodyPr vertOverflow="clip" wrap="square" rtlCol="0" anchor="t"/><a:lstStyle/><a:p><a:r>'
    '<a:rPr lang="en-GB" sz="1100"/><a:t>ISSUED FOR REVIEW - do not build</a:t></a:r></a:p>'
    '</xdr:txBody></xdr:sp><xdr:clientData/></xdr:twoCellAnchor>')


def tiny_png(w: int = 8, h: int = 4) -> bytes:
    """A small valid PNG made with zlib alone (no imaging library needed)."""
    raw = b"".join(b"\x00" + bytes([31, 78, 120]) * w for _ in range(h))

    def chunk(kind: bytes, data: bytes) -> bytes:
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF))

    return (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", w, h, 8, 2, 0, 0, 0))
            + chunk(b"IDAT", zlib.compress(raw)) + chunk(b"IEND", b""))


def vba_blob() -> bytes:
    """A stand-in vbaProject.bin: a compound-file signature and some bytes (checked byte for byte)."""
    return b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(range(256)) * 8


def _p_excel_like(parts: dict[str, bytes], lay: Layout, sheet: str) -> None:
    """As Excel writes a workbook: shared strings (rich runs kept), mc/x14ac namespaces, row spans, calcPr."""
    wbp = workbook_part(parts)
    sst: list[list] = []
    index: dict[bytes, int] = {}
    for name in sheet_names(parts):
        sp = sheet_part(parts, name)
        root = parse(parts[sp])
        for c in root.iter(q(MAIN, "c")):
            if c.get("t") != "inlineStr":
                continue
            is_ = c.find(q(MAIN, "is"))
            key = b"".join(etree.tostring(x) for x in is_)
            if key not in index:
                index[key] = len(sst)
                sst.append(list(is_))
            c.remove(is_)
            c.set("t", "s")
            etree.SubElement(c, q(MAIN, "v")).text = str(index[key])
        root = _excel_root(root)
        parts[sp] = serialize(root)
    if sst:
        root = etree.Element(q(MAIN, "sst"), nsmap={None: MAIN}, count=str(len(sst)),
                             uniqueCount=str(len(sst)))
        for kids in sst:
            etree.SubElement(root, q(MAIN, "si")).extend(kids)
        parts["xl/sharedStrings.xml"] = serialize(root)
        add_rel(parts, wbp, REL_SST, "sharedStrings.xml")
        add_override(parts, "xl/sharedStrings.xml", CT_SST)
    wb = parse(parts[wbp])
    for calc in wb.iter(q(MAIN, "calcPr")):
        calc.attrib.clear()
        calc.set("calcId", "191029")
    parts[wbp] = serialize(wb)


def _excel_root(root):
    """The worksheet with Excel's extra namespaces, mc:Ignorable, row spans and dyDescent."""
    nsmap = dict(root.nsmap)
    nsmap.update({"r": R, "mc": MC, "x14ac": X14AC})
    new = etree.Element(root.tag, nsmap=nsmap)
    new.attrib.update(root.attrib)
    new.set(q(MC, "Ignorable"), "x14ac")
    new.text = root.text
    new.extend(list(root))
    fmt = new.find(q(MAIN, "sheetFormatPr"))
    if fmt is not None:
        fmt.set(q(X14AC, "dyDescent"), "0.25")
    for row in new.iter(q(MAIN, "row")):
        cols = [_col_number(c.get("r")) for c in row.iter(q(MAIN, "c"))]
        if cols:
            row.set("spans", f"{min(cols)}:{max(cols)}")
        row.set(q(X14AC, "dyDescent"), "0.25")
    return new


def _col_number(ref: str) -> int:
    n = 0
    for ch in ref:
        if not ch.isalpha():
            break
        n = n * 26 + ord(ch.upper()) - 64
    return n


def _p_formulas(parts: dict[str, bytes], lay: Layout, sheet: str) -> None:
    """Cached values for every formula cell, and the Length column as one shared formula."""
    _cache(parts, sheet_part(parts, sheet), lay.formulas, lay.shared)
    for name, cache in lay.other_formulas.items():
        _cache(parts, sheet_part(parts, name), cache, [])


def _cache(parts, sp: str, cache: dict, shared: list) -> None:
    if not cache:
        return
    root = parse(parts[sp])
    cells = {c.get("r"): c for c in root.iter(q(MAIN, "c"))}
    for ref, (value, is_text) in cache.items():
        c = cells[ref]
        f = c.find(q(MAIN, "f"))
        assert f is not None, ref
        v = c.find(q(MAIN, "v"))
        if v is None:
            v = etree.SubElement(c, q(MAIN, "v"))
        v.text = str(int(value)) if isinstance(value, float) and value.is_integer() else str(value)
        if is_text:
            c.set("t", "str")
        elif "t" in c.attrib:
            del c.attrib["t"]
    for si, (rng, refs) in enumerate(shared):
        for k, ref in enumerate(refs):
            f = cells[ref].find(q(MAIN, "f"))
            f.set("t", "shared")
            if k == 0:
                f.set("ref", rng)
            else:
                f.text = None
            f.set("si", str(si))
    parts[sp] = serialize(root)


def _p_x14(parts: dict[str, bytes], lay: Layout, sheet: str) -> None:
    if not lay.x14:
        return
    sp = sheet_part(parts, sheet)
    root = parse(parts[sp])
    col = lay.col("Insulation")
    sqref = f"{col}{lay.data_rows[0]}:{col}{lay.data_rows[-1] + 20}"
    ext = frag(
        f'<extLst xmlns="{MAIN}"><ext uri="{{CCE6A557-97BC-4b89-ADB6-D9C93CAAB3DF}}" '
        f'xmlns:x14="{X14}"><x14:dataValidations count="1" xmlns:xm="{XM}">'
        '<x14:dataValidation type="list" allowBlank="1" showInputMessage="1" showErrorMessage="1" '
        'errorTitle="Insulation" error="Pick a material from the Lists sheet">'
        f'<x14:formula1><xm:f>Lists!$A$1:$A$4</xm:f></x14:formula1><xm:sqref>{sqref}</xm:sqref>'
        '</x14:dataValidation></x14:dataValidations></ext></extLst>')
    old = root.find(q(MAIN, "extLst"))
    if old is None:
        insert_child(root, ext, WORKSHEET_ORDER)
    else:
        old.extend(list(ext))
    parts[sp] = serialize(root)


def _p_external(parts: dict[str, bytes], lay: Layout, sheet: str) -> None:
    if not lay.external:
        return
    wbp = workbook_part(parts)
    name = "xl/externalLinks/externalLink1.xml"
    parts[name] = (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        f'<externalLink xmlns="{MAIN}" xmlns:r="{R}"><externalBook r:id="rId1"><sheetNames>'
        '<sheetName val="Limits"/></sheetNames><sheetDataSet><sheetData sheetId="0">'
        '<row r="2"><cell r="B2"><v>55</v></cell></row></sheetData></sheetDataSet>'
        '</externalBook></externalLink>').encode()
    parts[rels_name(name)] = (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        f'<Relationships xmlns="{PKG_REL}"><Relationship Id="rId1" Type="{REL_EXTLINK_PATH}" '
        'Target="project-standards.xlsx" TargetMode="External"/></Relationships>').encode()
    add_override(parts, name, CT_EXTLINK)
    rid = add_rel(parts, wbp, REL_EXTLINK, "externalLinks/externalLink1.xml")
    wb = parse(parts[wbp])
    ext = frag(f'<externalReferences xmlns="{MAIN}" xmlns:r="{R}"><externalReference r:id="{rid}"/>'
               '</externalReferences>')
    insert_child(wb, ext, WORKBOOK_ORDER)
    parts[wbp] = serialize(wb)


def _p_drawing(parts: dict[str, bytes], lay: Layout, sheet: str) -> None:
    if not lay.anchors:
        return
    sp = sheet_part(parts, sheet)
    name = _free_name(parts, "xl/drawings/drawing{}.xml")
    xml = (f'<xdr:wsDr xmlns:xdr="{XDR}" xmlns:a="{A}" xmlns:r="{R}">' + "".join(lay.anchors)
           + "</xdr:wsDr>")
    parts[name] = b'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n' + xml.encode()
    for placeholder, png in lay.images.items():
        media = _free_name(parts, "xl/media/image{}.png")
        parts[media] = png
        rid = add_rel(parts, name, REL_IMAGE, "../media/" + posixpath.basename(media))
        parts[name] = parts[name].replace(f'r:embed="{placeholder}"'.encode(), f'r:embed="{rid}"'.encode())
        add_default(parts, "png", "image/png")
    add_override(parts, name, CT_DRAWING)
    rid = add_rel(parts, sp, REL_DRAWING, "../drawings/" + posixpath.basename(name))
    root = parse(parts[sp])
    insert_child(root, frag(f'<drawing xmlns="{MAIN}" xmlns:r="{R}" r:id="{rid}"/>'), WORKSHEET_ORDER)
    parts[sp] = serialize(root)


def _p_threaded(parts: dict[str, bytes], lay: Layout, sheet: str) -> None:
    if not lay.threaded:
        return
    sp = sheet_part(parts, sheet)
    person = "{7D1E1F0A-2B3C-4D5E-8F90-A1B2C3D4E5F6}"
    person2 = "{1A2B3C4D-5E6F-4A1B-9C2D-3E4F5A6B7C8D}"
    body = []
    for ref, guid, text in lay.threaded:
        body.append(f'<threadedComment ref="{ref}" dT="2024-03-12T09:41:07.21" personId="{person}" '
                    f'id="{guid}"><text>{text}</text></threadedComment>')
        body.append(f'<threadedComment ref="{ref}" dT="2024-03-12T11:02:55.48" personId="{person2}" '
                    f'id="{{9E8D7C6B-5A4F-4E3D-8C2B-1A0F9E8D7C6B}}" parentId="{guid}">'
                    '<text>Yes, 2 m of it</text></threadedComment>')
    tc = _free_name(parts, "xl/threadedComments/threadedComment{}.xml")
    parts[tc] = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
                 f'<ThreadedComments xmlns="{TC}" xmlns:x="{MAIN}">' + "".join(body)
                 + "</ThreadedComments>").encode()
    add_override(parts, tc, CT_THREADED)
    add_rel(parts, sp, REL_THREADED, "../threadedComments/" + posixpath.basename(tc))
    pp = "xl/persons/person.xml"
    parts[pp] = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
                 f'<personList xmlns="{TC}" xmlns:x="{MAIN}">'
                 f'<person displayName="Ana Lindqvist" id="{person}" userId="ana.lindqvist@example.com" '
                 'providerId="None"/>'
                 f'<person displayName="Tom Becker" id="{person2}" userId="tom.becker@example.com" '
                 'providerId="None"/></personList>').encode()
    add_override(parts, pp, CT_PERSON)
    add_rel(parts, workbook_part(parts), REL_PERSON, "persons/person.xml")


def _p_vba(parts: dict[str, bytes], lay: Layout, sheet: str) -> None:
    if not lay.vba:
        return
    wbp = workbook_part(parts)
    parts["xl/vbaProject.bin"] = vba_blob()
    add_default(parts, "bin", CT_VBA)
    add_rel(parts, wbp, REL_VBA, "vbaProject.bin")
    ct = parse(parts["[Content_Types].xml"])
    for o in ct.iter(q(CT, "Override")):
        if o.get("PartName") == "/" + wbp:
            o.set("ContentType", CT_XLSM_MAIN)
    parts["[Content_Types].xml"] = serialize(ct)
    wb = parse(parts[wbp])
    wb.find(q(MAIN, "workbookPr")).set("codeName", "ThisWorkbook")
    parts[wbp] = serialize(wb)
    for i, name in enumerate(sheet_names(parts), start=1):
        sp = sheet_part(parts, name)
        root = parse(parts[sp])
        pr = root.find(q(MAIN, "sheetPr"))
        if pr is None:
            pr = etree.Element(q(MAIN, "sheetPr"))
            root.insert(0, pr)
        pr.set("codeName", f"Sheet{i}")
        parts[sp] = serialize(root)


PACKAGE_STAGE = {"formulas": _p_formulas, "x14": _p_x14, "external": _p_external,
                 "drawing": _p_drawing, "threaded": _p_threaded, "vba": _p_vba}


# ---- entries

@dataclass(frozen=True)
class Entry:
    name: str
    suffix: str  # .xlsx, .xlsm or .ods
    features: tuple[str, ...]
    layout: dict = field(default_factory=dict)  # Layout(**layout)
    excel_like: bool = True  # shared strings and Excel's calcPr (False: as a script writes it)

    @property
    def is_ods(self) -> bool:
        return self.suffix == ".ods"

    @property
    def filename(self) -> str:
        return self.name + self.suffix

    def has(self, *features: str) -> bool:
        return any(f in self.features for f in features)


BOOK_STAGE: dict[str, Callable] = {
    "title": f_title, "styles": f_styles, "layout": f_layout, "validation": f_validation,
    "conditional": f_conditional, "names": f_names_sheets, "formulas": f_formulas,
    "external": f_external, "chart": f_chart, "comments": f_comments, "image": f_image,
    "shape": f_shape, "vba": f_vba, "table": f_table,
}
# book-stage order: columns first, then things that refer to them, the table last
_ORDER = ["layout", "formulas", "external", "title", "styles", "validation", "conditional", "names",
          "chart", "comments", "image", "shape", "vba", "ods_extras", "table"]

ALL_XLSX_FEATURES = ("title", "styles", "layout", "validation", "conditional", "names", "table",
                     "formulas", "external", "chart", "image", "shape", "comments", "vba")

CORPUS: list[Entry] = [
    Entry("plain", ".xlsx", (), {"n": 3}, excel_like=False),
    Entry("styles", ".xlsx", ("styles",), {"n": 6}),
    Entry("title_rows", ".xlsx", ("title", "layout"), {"n": 7, "title_rows": 2, "gap_after": 4}),
    Entry("dropdowns", ".xlsx", ("validation",), {"n": 5}),
    Entry("conditional", ".xlsx", ("conditional",), {"n": 5}),
    Entry("names_sheets", ".xlsx", ("names",), {"n": 4}),
    Entry("table", ".xlsx", ("table",), {"n": 6}),
    Entry("formulas", ".xlsx", ("formulas",), {"n": 5}),
    Entry("external_link", ".xlsx", ("external",), {"n": 4}),
    Entry("chart", ".xlsx", ("chart",), {"n": 5}),
    Entry("image", ".xlsx", ("title", "image"), {"n": 4, "title_rows": 2}),
    Entry("shape", ".xlsx", ("shape",), {"n": 5}),
    Entry("comments", ".xlsx", ("comments",), {"n": 5}),
    Entry("comments_and_ours", ".xlsx", ("comments",), {"n": 4, "no_limit": 3}),
    Entry("vba", ".xlsm", ("vba",), {"n": 3}),
    Entry("everything", ".xlsm", ALL_XLSX_FEATURES, {"n": 10, "title_rows": 2}),
    Entry("ods_schedule", ".ods", ("title", "styles", "validation", "comments", "ods_extras"),
          {"n": 6, "title_rows": 2, "gap_after": 3}),
    Entry("ods_table", ".ods", ("table", "formulas", "names"), {"n": 5}),
]
BY_NAME = {e.name: e for e in CORPUS}


def f_ods_extras(wb, ws, lay: Layout) -> None:
    """Two empty columns, then dates and percentages (LibreOffice writes repeated cells for the gap)."""
    lay.headers.extend(["", "", "Inspected", "Insulation progress"])
    c_date, c_pct = len(lay.headers) - 1, len(lay.headers)
    ws.cell(lay.header_row, c_date, "Inspected")
    ws.cell(lay.header_row, c_pct, "Insulation progress")
    for k, r in enumerate(lay.data_rows):
        d = ws.cell(r, c_date, dt.date(2024, 3, 4 + k))
        d.number_format = "yyyy-mm-dd"
        p = ws.cell(r, c_pct, [1.0, 0.75, 0.5, 0.25, 0.0, 0.9, 0.6, 0.3, 0.1, 0.05][k])
        p.number_format = "0%"


BOOK_STAGE["ods_extras"] = f_ods_extras


def build_xlsx(entry: Entry, path: Path) -> Layout:
    """Write one corpus workbook (or an ODS entry's xlsx source) at ``path``; return its layout."""
    import openpyxl

    lay = Layout(**entry.layout)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    for c, h in enumerate(lay.headers, start=1):
        ws.cell(lay.header_row, c, h)
    for k, r in enumerate(lay.data_rows):
        for c, v in enumerate(line_values(k), start=1):
            if not (k == lay.no_limit and lay.headers[c - 1] == "Max surface temperature [°C]"):
                ws.cell(r, c, v)
    for feat in sorted(entry.features, key=_ORDER.index):
        BOOK_STAGE[feat](wb, ws, lay)
    wb.active = lay.sheet_index
    tmp = path.with_name(path.name + ".part.xlsx")
    wb.save(tmp)
    parts = read_parts(tmp)
    tmp.unlink()
    if entry.excel_like:
        _p_excel_like(parts, lay, "Lines")
    for name in ("formulas", "x14", "external", "drawing", "threaded", "vba"):
        PACKAGE_STAGE[name](parts, lay, "Lines")
    ordered = {"[Content_Types].xml": parts.pop("[Content_Types].xml"), **parts}  # Excel's order
    write_parts(path, ordered)
    return lay


def find_soffice() -> str | None:
    return shutil.which("soffice") or (
        "/usr/bin/soffice" if os.access("/usr/bin/soffice", os.X_OK) else None)


def soffice(args: list[str], profile: Path, timeout: float = 300) -> subprocess.CompletedProcess:
    """Run LibreOffice headless with its own profile folder (so it never meets another instance)."""
    exe = find_soffice()
    if exe is None:
        raise FileNotFoundError("soffice (LibreOffice) is not installed")
    return subprocess.run([exe, f"-env:UserInstallation={profile.resolve().as_uri()}", "--headless",
                           "--norestore", *args], capture_output=True, text=True, timeout=timeout,
                          stdin=subprocess.DEVNULL)


def build_corpus(folder: Path, names: list[str] | None = None, *, profile: Path | None = None
                 ) -> dict[str, Path]:
    """Build the named corpus entries (all by default) in ``folder``; ODS ones with one soffice call."""
    folder.mkdir(parents=True, exist_ok=True)
    entries = [BY_NAME[n] for n in (names or [e.name for e in CORPUS])]
    out: dict[str, Path] = {}
    sources = []
    src_dir = folder / "ods-sources"
    for e in entries:
        if e.is_ods:
            src_dir.mkdir(exist_ok=True)
            src = src_dir / f"{e.name}.xlsx"
            build_xlsx(e, src)
            sources.append((e, src))
        else:
            out[e.name] = folder / e.filename
            build_xlsx(e, out[e.name])
    if sources:
        r = soffice(["--convert-to", "ods", "--outdir", str(folder), *[str(s) for _, s in sources]],
                    profile or folder / "lo-profile")
        for e, _ in sources:
            p = folder / e.filename
            if not p.is_file():
                raise RuntimeError(f"LibreOffice did not write {p.name}: {r.stdout}\n{r.stderr}")
            out[e.name] = p
    return out


# --------------------------------------------------------------------------- made by LibreOffice (UNO)

UNO_PYTHON = "/usr/bin/python3"  # Debian's python3-uno: `import uno` works there, not in a venv
LO_BUILD = Path(__file__).with_name("lo_build.py")


@dataclass(frozen=True)
class LoEntry:
    """A workbook made in LibreOffice Calc through Python-UNO and saved by Calc as .ods and .xlsx.

    Rows and columns are 0-based here (as the UNO API counts); ``lines`` are placed from
    ``header + 1`` on, skipping the rows in ``gaps``.
    """

    name: str
    header: int  # 0-based row of the header
    n: int = 6
    gaps: tuple[int, ...] = ()  # blank rows among the lines (0-based sheet rows)
    above: tuple[tuple[int, str], ...] = ()  # (row, text) in column A above the header
    remarks: bool = False  # a Remarks column after the schedule, merged down over lines
    merges: tuple[tuple[int, int, int, int], ...] = ()  # (c1, r1, c2, r2)
    row_groups: tuple[tuple[int, int, bool], ...] = ()  # (first, last, collapsed)
    col_groups: tuple[tuple[int, int, bool], ...] = ()
    hidden: tuple[int, ...] = ()
    filter_min_temperature: float | None = None  # a standard filter: Operating temperature >= this
    formats: tuple[str, ...] = ("ods", "xlsx")
    password: str | None = None

    @property
    def line_rows(self) -> list[int]:
        rows, r = [], self.header + 1
        while len(rows) < self.n:
            if r not in self.gaps:
                rows.append(r)
            r += 1
        return rows

    def tags(self) -> dict[str, int]:
        """Each line's Tag -> its 1-based sheet row."""
        return {line_values(i)[0]: r + 1 for i, r in enumerate(self.line_rows)}

    def spec(self) -> dict:
        cells = [[r, 0, text] for r, text in self.above]
        headers = INPUT_HEADERS + (["Remarks"] if self.remarks else [])
        cells += [[self.header, c, h] for c, h in enumerate(headers)]
        for i, r in enumerate(self.line_rows):
            cells += [[r, c, v] for c, v in enumerate(line_values(i))]
        merges = [list(m) for m in self.merges]
        if self.remarks:
            rows, col = self.line_rows, len(INPUT_HEADERS)
            cells += [[rows[0], col, "one rack with P-102, P-103"], [rows[3], col, "shared support"]]
            merges += [[col, rows[0], col, rows[2]], [col, rows[3], col, rows[4]]]
        f = None
        if self.filter_min_temperature is not None:
            f = {"range": [0, self.header, len(INPUT_HEADERS) - 1, self.line_rows[-1]],
                 "field": INPUT_HEADERS.index("Operating temperature [°C]"), "operator": "GREATER_EQUAL",
                 "value": self.filter_min_temperature}
        return {"name": self.name, "formats": list(self.formats), "sheet": "Lines", "cells": cells,
                "merges": merges, "row_groups": [list(g) for g in self.row_groups],
                "col_groups": [list(g) for g in self.col_groups], "hidden_rows": list(self.hidden),
                "filter": f, "password": self.password}


LO_CORPUS: list[LoEntry] = [
    # a collapsed group nested in a group that opens with three empty rows, above the schedule;
    # a group over three lines; the Shape and Size columns grouped and collapsed
    LoEntry("lo_grouped", header=8, above=((0, "Unit 5 insulation schedule"), (4, "Scope: steam"),
                                           (5, "Rev C"), (6, "Issued for construction")),
            row_groups=((1, 6, False), (2, 4, True), (10, 12, False)), col_groups=((1, 2, True),)),
    LoEntry("lo_hidden", header=5, above=((0, "Unit 5"), (1, "internal note"), (2, "internal note 2")),
            hidden=(1, 2, 7)),
    LoEntry("lo_filtered", header=3, n=8, above=((0, "Unit 5 lines at 200 °C and above shown"),),
            filter_min_temperature=200),
    LoEntry("lo_repeated", header=46, gaps=(49, 50, 53, 54),
            above=((0, "Unit 5"), (41, "-"), (42, "-"), (43, "-"))),
    LoEntry("lo_merged", header=3, remarks=True, above=((0, "Unit 5 insulation schedule"), (1, "Rev C"),),
            merges=((0, 0, 7, 0), (0, 1, 3, 1), (4, 1, 7, 1))),
    LoEntry("lo_far_down", header=1499, n=5, above=((0, "Schedule below, from row 1500"),)),
    LoEntry("lo_everything", header=300, n=10, gaps=(305, 306), remarks=True,
            above=((0, "Unit 5 insulation schedule"), (2, "Rev C"), (3, "Rev C"), (4, "Rev C"),
                   (150, "Scope: steam and condensate")),
            merges=((0, 0, 7, 0),), row_groups=((1, 160, False), (2, 4, True), (303, 308, False)),
            col_groups=((1, 2, False),), hidden=(150, 302), filter_min_temperature=150),
]
LO_LOCKED = LoEntry("lo_locked", header=2, n=3, above=((0, "Unit 5"),), formats=("ods",), password="site")
LO_BY_NAME = {e.name: e for e in [*LO_CORPUS, LO_LOCKED]}


def uno_python() -> str | None:
    """The system Python with LibreOffice's UNO bridge, or None when it has none."""
    if not os.access(UNO_PYTHON, os.X_OK):
        return None
    r = subprocess.run([UNO_PYTHON, "-c", "import uno"], capture_output=True, timeout=60,
                       stdin=subprocess.DEVNULL)
    return UNO_PYTHON if r.returncode == 0 else None


def build_lo_corpus(folder: Path, entries: list[LoEntry]) -> dict[str, Path]:
    """Make ``entries`` in LibreOffice (one headless soffice for all); '<name>.<format>' -> path."""
    import json

    exe = uno_python()
    if exe is None:
        raise FileNotFoundError(f"{UNO_PYTHON} cannot import uno: install python3-uno")
    folder.mkdir(parents=True, exist_ok=True)
    spec = folder / "lo-spec.json"
    spec.write_text(json.dumps([e.spec() for e in entries]), encoding="utf-8")
    r = subprocess.run([exe, str(LO_BUILD), str(spec), str(folder)], capture_output=True, text=True,
                       timeout=600, stdin=subprocess.DEVNULL)
    out = {}
    for e in entries:
        for fmt in e.formats:
            p = folder / f"{e.name}.{fmt}"
            if not p.is_file():
                raise RuntimeError(f"LibreOffice did not make {p.name} (exit {r.returncode}): {r.stdout}\n{r.stderr}")
            out[p.name] = p
    return out
