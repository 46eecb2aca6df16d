"""Workbooks as real clients write them (.xlsx, .xlsm): each producer's quirk is one test class.

The quirks are put into the package by hand, as the producer writes them: an empty
``<Relationships/>`` part for every sheet (an export library), sheet names differing
from ours only in case (over worksheets, chart, dialog and macro sheets), an Excel table
with a totals row, a document block holding 'ID' above the real header row, part names
differing only in case, Excel 4 macro sheets, merges of whole columns or rows, and a
length typed into a cell formatted as a date. The LibreOffice-made variants are at the end.
"""

from __future__ import annotations

import json
import re
import zipfile
from pathlib import Path

import openpyxl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from roundtrip.corpus import (
    MAIN,
    REL_BASE,
    REL_DRAWING,
    Entry,
    R,
    add_override,
    add_rel,
    build_xlsx,
    read_parts,
    rels_name,
    sheet_part,
    workbook_part,
    write_parts,
)

from conftest import BASE_HEADERS, pipe, write_book

REL_COMMENTS = REL_BASE + "comments"
REL_VML = REL_BASE + "vmlDrawing"
REL_MACRO = "http://schemas.microsoft.com/office/2006/relationships/xlMacrosheet"
REL_INTL_MACRO = "http://schemas.microsoft.com/office/2006/relationships/xlIntlMacrosheet"
REL_DIALOG = REL_BASE + "dialogsheet"
PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
XM = "http://schemas.microsoft.com/office/excel/2006/main"

# what a message a person reads must never hold: a traceback, an exception's class name,
# a Python repr of a value, an object address
_NOT_PLAIN = re.compile(r"Traceback|\b[A-Z]\w*(Error|Exception)\b|\bdatetime\.|\b(date|time|timedelta)\("
                        r"|<[\w.]+ object|\bNone\b|0x[0-9a-fA-F]{6,}|\w+\(\w+=")


def plain(message: str) -> str:
    """``message`` unchanged, after checking that it is in plain words."""
    assert not _NOT_PLAIN.search(message), message
    assert "\n" not in message.strip(), message
    return message


def fill(cli, src: Path, out: Path, *args):
    """Run `lagsheet fill` on ``src``; the result and the JSON report (None when nothing was written)."""
    rep = out.with_suffix(".json")
    r = cli("fill", src, "-o", out, "--report", rep, *args)
    return r, (json.loads(rep.read_text()) if rep.exists() else None)


def refusal(r) -> str:
    """The one line a refused run prints (exit 2)."""
    assert r.exit_code == 2, r.output
    line = next(x for x in r.output.splitlines() if x.startswith("lagsheet:"))
    return plain(line)


def sheets_of(path: Path) -> list[tuple[str, str]]:
    """(name, relationship type's last word) of every sheet the workbook lists, in order."""
    parts = read_parts(path)
    wbp = workbook_part(parts)
    rels = {e.get("Id"): e.get("Type") for e in _xml(parts[rels_name(wbp)]).iter(f"{{{PKG_REL}}}Relationship")}
    return [(s.get("name"), rels[s.get(f"{{{R}}}id")].rsplit("/", 1)[-1])
            for s in _xml(parts[wbp]).iter(f"{{{MAIN}}}sheet")]


def _xml(data: bytes):
    from lxml import etree

    return etree.fromstring(data)


def rels_of(parts: dict[str, bytes], part: str) -> list[tuple[str, str, str]]:
    """(Id, Type, Target) of ``part``'s relationships, its rels part found ignoring case."""
    want = rels_name(part).lower()
    names = [n for n in parts if n.lower() == want]
    assert len(names) <= 1, names
    if not names:
        return []
    return sorted((e.get("Id"), e.get("Type"), e.get("Target"))
                  for e in _xml(parts[names[0]]).iter(f"{{{PKG_REL}}}Relationship"))


def unique_ignoring_case(names) -> bool:
    names = list(names)
    return len({n.casefold() for n in names}) == len(names)


def base(path: Path, **kw) -> Path:
    """A two-line schedule; line P-2 has no surface limit, so lagsheet writes a note on it."""
    rows = [pipe(), pipe("P-2", **{"Max surface temperature [°C]": None})]
    return write_book(path, rows, **kw)


def add_sheet_by_hand(path: Path, kind: str, name: str) -> None:
    """A dialog sheet or an Excel 4 macro sheet (plain or international) named ``name``, as Excel writes them."""
    parts = read_parts(path)
    wbp = workbook_part(parts)
    folder, rtype, ctype, root = {
        "dialogsheet": ("dialogsheets", REL_DIALOG,
                        "application/vnd.openxmlformats-officedocument.spreadsheetml.dialogsheet+xml", "dialogsheet"),
        "macrosheet": ("macrosheets", REL_MACRO, "application/vnd.ms-excel.macrosheet+xml", "xm:macrosheet"),
        "intlmacrosheet": ("macrosheets", REL_INTL_MACRO, "application/vnd.ms-excel.intlmacrosheet+xml",
                           "xm:macrosheet"),
    }[kind]
    part = f"xl/{folder}/sheet1.xml"
    body = ('<sheetData><row r="1"><c r="A1" t="str"><f>NOW()</f><v>46000</v></c></row>'
            '<row r="2"><c r="A2" t="b"><f>RETURN()</f><v>1</v></c></row></sheetData>'
            if "macro" in kind else "")
    parts[part] = (f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<{root} xmlns="{MAIN}" '
                   f'xmlns:r="{R}" xmlns:xm="{XM}"><sheetPr/><sheetViews><sheetView workbookViewId="0"/>'
                   f'</sheetViews>{body}<pageMargins left="0.7" right="0.7" top="0.75" bottom="0.75" '
                   f'header="0.3" footer="0.3"/></{root}>').encode()
    rid = add_rel(parts, wbp, rtype, f"{folder}/sheet1.xml")
    add_override(parts, part, ctype)
    wb = parts[wbp].decode()
    wb = wb.replace("</sheets>", f'<sheet xmlns:r="{R}" name="{name}" sheetId="9" r:id="{rid}"/></sheets>')
    parts[wbp] = wb.encode()
    if "macro" in kind:
        parts["[Content_Types].xml"] = parts["[Content_Types].xml"].replace(
            b"spreadsheetml.sheet.main+xml", b"vnd.ms-excel.sheet.macroEnabled.main+xml").replace(
            b"application/vnd.openxmlformats-officedocument.vnd.ms-excel", b"application/vnd.ms-excel")
    write_parts(path, parts)


def add_chartsheet(path: Path, name: str) -> None:
    """A chart sheet named ``name`` (openpyxl writes it as Excel does: a chartsheet part)."""
    from openpyxl.chart import BarChart, Reference

    wb = openpyxl.load_workbook(path)
    ws = wb["Lines"]
    cs = wb.create_chartsheet(name)
    chart = BarChart()
    chart.add_data(Reference(ws, min_col=6, min_row=1, max_row=ws.max_row), titles_from_data=True)
    cs.add_chart(chart)
    wb.save(path)


# --------------------------------------------------------------------------- (1) empty rels parts

def test_an_empty_relationships_part_takes_our_notes(tmp_path, cli):
    """Every sheet with an empty <Relationships/> part (as an export library writes them): the notes are added."""
    src = base(tmp_path / "in.xlsx", sheets={"Lists": [["mineral wool"]]})
    parts = read_parts(src)
    empty = (f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<Relationships xmlns="{PKG_REL}"/>').encode()
    for n in [n for n in parts if n.startswith("xl/worksheets/sheet")]:
        parts[rels_name(n)] = empty
    write_parts(src, parts)
    r, rep = fill(cli, src, tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    out = read_parts(tmp_path / "out.xlsx")
    lines = sheet_part(out, "Lines")
    assert sorted(t for _, t, _ in rels_of(out, lines)) == [REL_COMMENTS, REL_VML]
    assert out[rels_name(sheet_part(out, "Lists"))] == empty  # a sheet lagsheet does not write in
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    assert ws["A3"].comment is not None and ws["A3"].comment.author == "lagsheet"
    assert isinstance(ws.cell(3, 15).value, float)  # P-2's thickness, under 'Thickness [mm]'


def test_a_relationships_part_without_its_element_is_refused_in_plain_words(tmp_path, cli):
    """A rels part with no Relationships element at all: one plain sentence, exit 2, nothing written."""
    src = base(tmp_path / "in.xlsx")
    parts = read_parts(src)
    parts[rels_name("xl/worksheets/sheet1.xml")] = b'<?xml version="1.0" encoding="UTF-8"?>\n<Other/>'
    write_parts(src, parts)
    r, _ = fill(cli, src, tmp_path / "out.xlsx")
    assert "is damaged" in refusal(r) and "save the workbook again" in r.output
    assert not (tmp_path / "out.xlsx").exists()


# --------------------------------------------------------------------------- (2) sheet names and case

@pytest.mark.parametrize(("kind", "name", "ours"), [
    ("worksheet", "SUMMARY", "Summary (lagsheet)"),
    ("worksheet", "summary", "Summary (lagsheet)"),
    ("worksheet", "QUANTITIES", "Quantities (lagsheet)"),
    ("chartsheet", "Summary", "Summary (lagsheet)"),
    ("chartsheet", "quantities", "Quantities (lagsheet)"),
    ("dialogsheet", "summary", "Summary (lagsheet)"),
    ("macrosheet", "SUMMARY", "Summary (lagsheet)"),
])
def test_our_sheets_never_share_a_name_ignoring_case(tmp_path, cli, kind, name, ours):
    """A person's sheet of any kind named like ours but for case keeps its name; ours is '<name> (lagsheet)'."""
    suffix = ".xlsm" if "macro" in kind else ".xlsx"
    src = tmp_path / f"in{suffix}"
    if kind == "worksheet":
        base(src, sheets={name: [["my own totals"]]})
    else:
        base(src)
        add_chartsheet(src, name) if kind == "chartsheet" else add_sheet_by_hand(src, kind, name)
    before = read_parts(src)
    r, _ = fill(cli, src, tmp_path / f"out{suffix}")
    assert r.exit_code == 0, r.output
    names = sheets_of(tmp_path / f"out{suffix}")
    assert unique_ignoring_case(n for n, _ in names), names
    word = {"macrosheet": "xlMacrosheet"}.get(kind, kind)  # the relationship type's last word
    assert (name, word) in names and (ours, "worksheet") in names
    theirs = [p for p in before if p.startswith(("xl/worksheets/sheet2", "xl/chartsheets/", "xl/dialogsheets/",
                                                 "xl/macrosheets/"))]
    out = read_parts(tmp_path / f"out{suffix}")
    assert theirs and all(out[p] == before[p] for p in theirs)
    # a second run replaces ours, and adds no third
    r2, _ = fill(cli, tmp_path / f"out{suffix}", tmp_path / f"again{suffix}")
    assert r2.exit_code == 0, r2.output
    assert sheets_of(tmp_path / f"again{suffix}") == names


# --------------------------------------------------------------------------- (3) a table's totals row

def _table_with_totals(path: Path) -> Path:
    """The schedule as an Excel table A1:N4 whose last row is its totals row (SUBTOTAL of the lengths)."""
    base(path)
    parts = read_parts(path)
    sp = sheet_part(parts, "Lines")
    x = parts[sp].decode()
    x = x.replace("</sheetData>", '<row r="4"><c r="A4" t="inlineStr"><is><t>Total</t></is></c>'
                  '<c r="E4"><f>SUBTOTAL(109,Lines[Length '"'"'[m'"'"']])</f><v>20</v></c></row></sheetData>')
    x = x.replace('<dimension ref="A1:N3"/>', '<dimension ref="A1:N4"/>')
    cols = "".join(f'<tableColumn id="{k + 1}" name="{h}"' + (' totalsRowLabel="Total"' if k == 0 else "")
                   + (' totalsRowFunction="sum"' if h == "Length [m]" else "") + "/>"
                   for k, h in enumerate(BASE_HEADERS))
    table = (f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<table xmlns="{MAIN}" id="1" '
             f'name="Lines" displayName="Lines" ref="A1:N4" totalsRowCount="1"><autoFilter ref="A1:N3"/>'
             f'<tableColumns count="{len(BASE_HEADERS)}">{cols}</tableColumns><tableStyleInfo '
             'name="TableStyleMedium2" showFirstColumn="0" showLastColumn="0" showRowStripes="1" '
             'showColumnStripes="0"/></table>')
    parts["xl/tables/table1.xml"] = table.encode()
    add_override(parts, "xl/tables/table1.xml",
                 "application/vnd.openxmlformats-officedocument.spreadsheetml.table+xml")
    rid = add_rel(parts, sp, REL_BASE + "table", "../tables/table1.xml")
    x = x.replace("</worksheet>", f'<tableParts count="1"><tablePart xmlns:r="{R}" r:id="{rid}"/></tableParts>'
                  "</worksheet>")
    parts[sp] = x.encode()
    write_parts(path, parts)
    return path


def _table_refs(path: Path) -> tuple[str, str, int]:
    t = _xml(read_parts(path)["xl/tables/table1.xml"])
    return (t.get("ref"), t.find(f"{{{MAIN}}}autoFilter").get("ref"),
            len(t.find(f"{{{MAIN}}}tableColumns")))


def test_a_tables_totals_row_is_not_a_line_and_stays_out_of_its_filter(tmp_path, cli):
    """Totals row skipped; the table grows over our columns with it; its autoFilter stops above it."""
    src = _table_with_totals(tmp_path / "in.xlsx")
    r, rep = fill(cli, src, tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    assert [ln["tag"] for ln in rep["lines"]] == ["P-1", "P-2"]
    ref, filter_ref, ncols = _table_refs(tmp_path / "out.xlsx")
    last = re.match(r"A1:([A-Z]+)4$", ref)
    assert last, ref
    assert filter_ref == f"A1:{last.group(1)}3"
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    assert ncols == ws.max_column and ws["A4"].value == "Total" and ws["E4"].value.startswith("=SUBTOTAL")
    assert all(ws.cell(4, c).value is None for c in range(15, ws.max_column + 1))  # nothing under the totals


# --------------------------------------------------------------------------- (4) the header row

def _document_block(path: Path, headers: list[str]) -> Path:
    """A title block that holds 'ID' and 'Line' cells above the schedule's real header row (row 4)."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    ws.append(["ID", "DOC-0042", None, "Rev", "C"])
    ws.append(["Line", "Unit 3 steam and condensate"])
    ws.append([])
    ws.append(headers)
    for row in (pipe(), pipe("P-2", **{"Size": "NPS 6"})):
        ws.append([row.get(h) for h in headers])
    wb.save(path)
    return path


def test_the_header_row_is_the_one_naming_most_fields(tmp_path, cli):
    """'ID' and 'Line' in a title block do not make it the header: row 4 names more fields, and is said to."""
    src = _document_block(tmp_path / "in.xlsx", BASE_HEADERS)
    r, rep = fill(cli, src, tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    assert [(ln["row"], ln["tag"]) for ln in rep["lines"]] == [(5, "P-1"), (6, "P-2")]
    note = next(n for n in rep["notes"] if n["code"] == "header-row")
    assert note["cell"] == "A4" and "row 4" in plain(note["message"])
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    assert ws.cell(4, 15).value == "Thickness [mm]" and ws["B1"].value == "DOC-0042"


def test_a_refusal_names_the_header_row_it_took(tmp_path, cli):
    """A header row without 'Shape' is refused, naming that row (not the title block's)."""
    src = _document_block(tmp_path / "in.xlsx", [h for h in BASE_HEADERS if h != "Shape"])
    r, _ = fill(cli, src, tmp_path / "out.xlsx")
    line = refusal(r)
    assert "'Shape'" in line and "row 4" in line


# --------------------------------------------------------------------------- (5) part names and case

def _part_case(path: Path) -> Path:
    """Lines stored as xl/worksheets/Sheet1.xml, its rels as .../_rels/sheet1.xml.rels (names compare
    ignoring case), with a person's picture (a drawing) and a person's note on it."""
    entry = Entry("case", ".xlsx", ("title", "image", "comments"), {"n": 4, "title_rows": 2, "no_limit": 1})
    build_xlsx(entry, path)
    parts = read_parts(path)
    sp = sheet_part(parts, "Lines")
    assert sp == "xl/worksheets/sheet1.xml"
    renamed = {}
    for n, data in parts.items():
        if n == sp:
            n = "xl/worksheets/Sheet1.xml"
        data = data.replace(b"worksheets/sheet1.xml", b"worksheets/Sheet1.xml")  # workbook rels, content types
        renamed[n] = data
    write_parts(path, renamed)
    return path


def test_new_parts_never_share_a_name_ignoring_case_and_a_persons_sheet_keeps_its_relationships(tmp_path, cli):
    """With Sheet1.xml taken, ours gets another name; the person's sheet keeps one drawing and gains only notes."""
    src = _part_case(tmp_path / "in.xlsx")
    before = read_parts(src)
    r, rep = fill(cli, src, tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    out = read_parts(tmp_path / "out.xlsx")
    assert unique_ignoring_case(out), sorted(out)
    old, new = rels_of(before, "xl/worksheets/Sheet1.xml"), rels_of(out, "xl/worksheets/Sheet1.xml")
    assert [t for _, t, _ in new].count(REL_DRAWING) == 1
    assert set(old) <= set(new) and {t for _, t, _ in set(new) - set(old)} <= {REL_COMMENTS, REL_VML}
    assert [ln["status"] for ln in rep["lines"]].count("error") == 0
    import python_calamine

    grid = python_calamine.CalamineWorkbook.from_path(str(tmp_path / "out.xlsx")).get_sheet_by_name(
        "Lines").to_python()
    head = grid[2]
    assert isinstance(grid[3][head.index("Thickness [mm]")], float)


def test_adding_a_relationship_a_part_has_reuses_it():
    """The package adds no second relationship of the same type to the same target."""
    import io

    from lagsheet.io.xlsx import REL_VML as T
    from lagsheet.io.xlsx import _Package

    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        z.writestr("[Content_Types].xml", "<Types/>")
        z.writestr("xl/styles.xml", f'<styleSheet xmlns="{MAIN}"/>')
        z.writestr("xl/worksheets/_rels/sheet1.xml.rels",
                   f'<Relationships xmlns="{PKG_REL}"><Relationship Id="rId7" Type="{T}" '
                   'Target="../drawings/vmlDrawing1.vml"/></Relationships>')
    pkg = _Package(zipfile.ZipFile(buf))
    assert pkg.add_rel("xl/worksheets/Sheet1.xml", T, "../drawings/VMLDrawing1.vml") == "rId7"
    assert pkg.add_rel("xl/worksheets/sheet1.xml", T, "../drawings/vmlDrawing2.vml") != "rId7"
    assert pkg.read("xl/worksheets/_rels/sheet1.xml.rels").count("<Relationship ") == 2


# --------------------------------------------------------------------------- post-write check

def _fault(monkeypatch, what: str) -> None:
    """Break the writer on purpose, so that the post-write check meets what it must stop."""
    from lagsheet.io import xlsx

    if what == "part-case":  # names compared as they are spelled
        monkeypatch.setattr(xlsx._Package, "actual", lambda self, name: name)
        monkeypatch.setattr(xlsx._Package, "exists", lambda self, name: (
            (name in self.names and name not in self.removed) or name in self.out or name in self.streams))
    elif what == "sheet-case":
        monkeypatch.setattr(xlsx, "sheet_name_for", lambda book, wanted, taken=None: (wanted.lower(), False))
    elif what == "added-rel":
        real = xlsx._SheetPatch._comments

        def comments(self):
            real(self)
            self.pkg.add_rel(self.part, xlsx.REL_DRAWING, "../drawings/drawing99.xml")
        monkeypatch.setattr(xlsx._SheetPatch, "_comments", comments)
    elif what == "dropped-rel":
        real = xlsx._SheetPatch._comments

        def comments(self):
            real(self)
            path = xlsx._rels_path(self.part)
            self.pkg.write(path, re.sub(r'<Relationship [^>]*Type="[^"]*/drawing"[^>]*/>', "",
                                        self.pkg.read(path)))
        monkeypatch.setattr(xlsx._SheetPatch, "_comments", comments)


@pytest.mark.parametrize(("fault", "words"), [
    ("part-case", "two parts named"),
    ("sheet-case", "two sheets named"),
    ("added-rel", "a relationship it did not have"),
    ("dropped-rel", "would lose the relationship"),
])
def test_the_post_write_check_stops_names_equal_ignoring_case_and_changed_relationships(
        tmp_path, cli, monkeypatch, fault, words):
    """A writer fault of each kind is caught before the rename: exit 2, one plain sentence, no output."""
    src = _part_case(tmp_path / "in.xlsx")
    if fault == "sheet-case":
        base(src, sheets={"Summary": [["my own totals"]]})
    out = tmp_path / "out.xlsx"
    out.write_bytes(b"the previous output")
    _fault(monkeypatch, fault)
    r, _ = fill(cli, src, out)
    assert words in refusal(r)
    assert out.read_bytes() == b"the previous output"


# --------------------------------------------------------------------------- (8) macro sheets, whole-line merges

@pytest.mark.parametrize("kind", ["macrosheet", "intlmacrosheet"])
def test_a_workbook_with_an_excel_4_macro_sheet_is_filled_and_keeps_it(tmp_path, cli, kind):
    """Excel 4 macro sheets are not read, and are kept byte for byte; the schedule is filled."""
    src = base(tmp_path / "in.xlsm")
    add_sheet_by_hand(src, kind, "Macro1")
    r, rep = fill(cli, src, tmp_path / "out.xlsm")
    assert r.exit_code == 0, r.output
    assert all(ln["results"]["thickness_m"] > 0 for ln in rep["lines"])
    before, out = read_parts(src), read_parts(tmp_path / "out.xlsm")
    assert out["xl/macrosheets/sheet1.xml"] == before["xl/macrosheets/sheet1.xml"]
    assert ("Macro1", {"macrosheet": "xlMacrosheet", "intlmacrosheet": "xlIntlMacrosheet"}[kind]) in \
        sheets_of(tmp_path / "out.xlsm")


def _merge(path: Path, ref: str) -> Path:
    base(path)
    parts = read_parts(path)
    sp = sheet_part(parts, "Lines")
    parts[sp] = parts[sp].replace(b"</sheetData>", f'</sheetData><mergeCells count="1"><mergeCell ref="{ref}"/>'
                                  "</mergeCells>".encode())
    write_parts(path, parts)
    return path


@pytest.mark.parametrize("ref", ["A:A", "AZ:BA", "5:6"])
def test_a_merge_of_whole_columns_or_rows_where_nothing_is_written_works(tmp_path, cli, ref):
    """calamine cannot read such a merge; lagsheet reads the sheet anyway and keeps the merge."""
    src = _merge(tmp_path / "in.xlsx", ref)
    r, rep = fill(cli, src, tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    assert len(rep["lines"]) == 2
    out = read_parts(tmp_path / "out.xlsx")
    assert f'<mergeCell ref="{ref}"/>'.encode() in out[sheet_part(out, "Lines")]


@pytest.mark.parametrize(("ref", "cell"), [("P:P", "P2"), ("3:3", "O3"), ("O2:Q3", "P2")])
def test_a_merge_that_would_hide_a_result_is_refused_in_plain_words(tmp_path, cli, ref, cell):
    """A merge over cells lagsheet writes (its results would be hidden): one sentence naming both, exit 2."""
    src = _merge(tmp_path / "in.xlsx", ref)
    r, _ = fill(cli, src, tmp_path / "out.xlsx")
    line = refusal(r)
    assert f"{ref} merged" in line and cell in line and "unmerge" in line
    assert not (tmp_path / "out.xlsx").exists()


# --------------------------------------------------------------------------- (9) a date where a length belongs

@pytest.mark.parametrize(("value", "fmt", "shown", "kind"), [
    (19, "yyyy-mm-dd", "1900-01-19", "date"),
    (45000.25, "yyyy-mm-dd hh:mm", "2023-03-15 06:00", "date"),
    (0.5, "h:mm", "12:00:00", "time"),
    (30.5, "[h]:mm", "732:00:00", "time"),
])
def test_a_number_stored_as_a_date_is_named_in_the_users_terms(tmp_path, cli, value, fmt, shown, kind):
    """A length cell formatted as a date: the line's error says a date stands where a length belongs."""
    src = base(tmp_path / "in.xlsx")
    wb = openpyxl.load_workbook(src)
    wb["Lines"]["E2"].value = value
    wb["Lines"]["E2"].number_format = fmt
    wb.save(src)
    r, rep = fill(cli, src, tmp_path / "out.xlsx")
    assert r.exit_code == 1, r.output
    note = next(n for n in rep["lines"][0]["notes"] if n["cell"] == "E2")
    assert note["sheet"] == "Lines"
    assert plain(note["message"]) == (
        f"'Length' holds a {kind} ({shown}) where a length belongs: the cell is formatted as a {kind}. "
        "Format it as a number (Format Cells, Number) and check the value")


# --------------------------------------------------------------------------- LibreOffice as the client

def _lo_sources(folder: Path) -> dict[str, Path]:
    """openpyxl sources of the classes LibreOffice can write itself (it saves each again as .xlsx)."""
    from openpyxl.worksheet.table import Table

    folder.mkdir()
    names = base(folder / "names.xlsx", sheets={"SUMMARY": [["my own totals"]], "quantities": [["mine"]]})
    totals = base(folder / "totals.xlsx")
    wb = openpyxl.load_workbook(totals)
    ws = wb["Lines"]
    ws.append(["Total", None, None, None, "=SUBTOTAL(109,E2:E3)"])
    ws.add_table(Table(displayName="Schedule", ref="A1:N4", totalsRowCount=1))
    wb.save(totals)
    header = _document_block(folder / "header.xlsx", BASE_HEADERS)
    date = base(folder / "date.xlsx")
    wb = openpyxl.load_workbook(date)
    wb["Lines"]["E2"].value = 19
    wb["Lines"]["E2"].number_format = "yyyy-mm-dd"
    wb.save(date)
    return {"names": names, "totals": totals, "header": header, "date": date}


@pytest.fixture(scope="module")
def lo_made(tmp_path_factory) -> dict[str, Path]:
    """The sources, opened and saved as .xlsx by LibreOffice (one soffice run)."""
    from roundtrip.checks import require_soffice
    from roundtrip.corpus import soffice

    require_soffice()
    work = tmp_path_factory.mktemp("lo-made")
    src = _lo_sources(work / "src")
    (work / "lo").mkdir()
    r = soffice(["--convert-to", "xlsx", "--outdir", str(work / "lo"), *map(str, src.values())], work / "profile")
    made = {k: work / "lo" / p.name for k, p in src.items()}
    assert all(p.is_file() for p in made.values()), r.stdout + r.stderr
    return made


def _lo_sheet_names(path: Path, work: Path) -> list[str]:
    """The sheet names LibreOffice shows for ``path`` (it renames a name that clashes ignoring case)."""
    from roundtrip.corpus import soffice

    (work / "ods").mkdir(exist_ok=True)
    soffice(["--convert-to", "ods", "--outdir", str(work / "ods"), str(path)], work / "profile")
    with zipfile.ZipFile(work / "ods" / (path.stem + ".ods")) as z:
        content = _xml(z.read("content.xml"))
    t = "urn:oasis:names:tc:opendocument:xmlns:table:1.0"
    return [e.get(f"{{{t}}}name") for e in content.iter(f"{{{t}}}table")]


def test_libreoffice_made_sheet_names_clash_only_ignoring_case_and_libreoffice_keeps_ours(lo_made, tmp_path, cli):
    """A LibreOffice-saved book with 'SUMMARY' and 'quantities': ours are '(lagsheet)', LibreOffice renames nothing."""
    r, _ = fill(cli, lo_made["names"], tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    want = ["Lines", "SUMMARY", "quantities", "Summary (lagsheet)", "Quantities (lagsheet)"]
    assert [n for n, _ in sheets_of(tmp_path / "out.xlsx")] == want
    assert _lo_sheet_names(tmp_path / "out.xlsx", tmp_path) == want


def test_an_ods_sheet_named_like_ours_but_for_case_keeps_its_name(tmp_path, cli):
    """The same rule in .ods (LibreOffice-made): a person's 'SUMMARY' stays, ours is 'Summary (lagsheet)'."""
    from roundtrip.checks import require_soffice
    from roundtrip.corpus import soffice

    require_soffice()
    src = base(tmp_path / "names.xlsx", sheets={"SUMMARY": [["my own totals"]]})
    soffice(["--convert-to", "ods", "--outdir", str(tmp_path), str(src)], tmp_path / "profile")
    r, _ = fill(cli, tmp_path / "names.ods", tmp_path / "out.ods")
    assert r.exit_code == 0, r.output
    with zipfile.ZipFile(tmp_path / "out.ods") as z:
        content = _xml(z.read("content.xml"))
    t = "urn:oasis:names:tc:opendocument:xmlns:table:1.0"
    assert [e.get(f"{{{t}}}name") for e in content.iter(f"{{{t}}}table")] == [
        "Lines", "SUMMARY", "Summary (lagsheet)", "Quantities"]


def test_libreoffice_made_table_with_a_totals_row(lo_made, tmp_path, cli):
    """LibreOffice keeps the table's totals row: it is no line, and the filter stops above it."""
    r, rep = fill(cli, lo_made["totals"], tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    assert [ln["tag"] for ln in rep["lines"]] == ["P-1", "P-2"]
    ref, filter_ref, _ = _table_refs(tmp_path / "out.xlsx")
    assert re.fullmatch(r"A1:[A-Z]+4", ref) and filter_ref == ref[:-1] + "3"


def test_libreoffice_made_title_block_above_the_header(lo_made, tmp_path, cli):
    """LibreOffice-saved: 'ID' and 'Line' above the header row do not make the header."""
    r, rep = fill(cli, lo_made["header"], tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    assert [ln["row"] for ln in rep["lines"]] == [5, 6]


def test_libreoffice_made_date_in_a_length_cell(lo_made, tmp_path, cli):
    """LibreOffice-saved: a length formatted as a date is named as a date where a length belongs."""
    r, rep = fill(cli, lo_made["date"], tmp_path / "out.xlsx")
    assert r.exit_code == 1, r.output
    note = next(n for n in rep["lines"][0]["notes"] if n["cell"] == "E2")
    assert plain(note["message"]).startswith("'Length' holds a date (1900-01-19) where a length belongs")


# --------------------------------------------------------------------------- the round-trip checks on each class

def _empty_rels_book(path: Path) -> Path:
    base(path, sheets={"Lists": [["mineral wool"]]})
    parts = read_parts(path)
    for n in [n for n in parts if n.startswith("xl/worksheets/sheet")]:
        parts[rels_name(n)] = f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<Relationships xmlns="{PKG_REL}"/>'.encode()
    write_parts(path, parts)
    return path


def _macro_book(path: Path) -> Path:
    base(path)
    add_sheet_by_hand(path, "macrosheet", "Macro1")
    return path


CLASSES = {
    "empty_rels": (".xlsx", _empty_rels_book),
    "header_below_title_block": (".xlsx", lambda p: _document_block(p, BASE_HEADERS)),
    "macro_sheet": (".xlsm", _macro_book),
    "whole_column_merge": (".xlsx", lambda p: _merge(p, "A:A")),
    "user_summary_sheet": (".xlsx", lambda p: base(p, sheets={"SUMMARY": [["my own totals"]]})),
}  # the totals table and the part names in other case have their own checks above: these read
# a totals row as a line and look part names up as they are spelled


@pytest.mark.parametrize("name", sorted(CLASSES))
def test_each_class_passes_the_round_trip_checks(tmp_path, cli, name):
    """Parts untouched, original cells and sheet elements kept, styles only grown, only our cells added."""
    from roundtrip import checks

    suffix, make = CLASSES[name]
    src = make(tmp_path / f"in{suffix}")
    r, _ = fill(cli, src, tmp_path / f"out{suffix}")
    assert r.exit_code in (0, 1), r.output
    inp, out = read_parts(src), read_parts(tmp_path / f"out{suffix}")
    problems = (checks.check_untouched_parts(inp, out) + checks.check_original_cells(inp, out)
                + checks.check_sheet_elements(inp, out) + checks.check_styles_grow_only(inp, out)
                + checks.check_only_output_cells_added(inp, out))
    assert problems == []


def test_libreoffice_opens_the_output_of_each_class_and_shows_the_results(tmp_path, cli):
    """One soffice run shows every class's output: original cells as in the input, the results in place."""
    from roundtrip import checks
    from roundtrip.corpus import soffice

    checks.require_soffice()
    classes = {**CLASSES, "table_with_totals_row": (".xlsx", _table_with_totals),
               "part_names_in_other_case": (".xlsx", _part_case)}
    files = []
    for name, (suffix, make) in classes.items():
        src = make(tmp_path / f"{name}{suffix}")
        r, _ = fill(cli, src, tmp_path / f"{name}-out{suffix}")
        assert r.exit_code in (0, 1), r.output
        files += [src, tmp_path / f"{name}-out{suffix}"]
    soffice(["--convert-to", checks.CSV_FILTER, "--outdir", str(tmp_path / "csv"), *map(str, files)],
            tmp_path / "profile")

    def shown(stem: str) -> list[list[str]] | None:
        p = tmp_path / "csv" / f"{stem}-Lines.csv"
        return checks.read_csv(p) if p.is_file() else None

    for name in classes:
        inp, out = shown(name), shown(f"{name}-out")
        formulas = checks.xlsx_formula_cells(read_parts(tmp_path / f"{name}{classes[name][0]}"))
        if name == "table_with_totals_row":  # the totals row is no line: results on rows 2 and 3 only
            assert out is not None and out[0][14] == "Thickness [mm]"
            assert [bool(re.fullmatch(r"[\d.]+", row[14])) for row in out[1:4]] == [True, True, False]
        else:
            assert checks.check_csv(inp, out, formulas) == [], name


# --------------------------------------------------------------------------- properties

class _Book:
    """A workbook as sheet_name_for sees it: worksheets (with their first cell) and other sheets' names."""

    def __init__(self, worksheets: dict[str, str], others: list[str]):
        self.worksheets, self.others = worksheets, others

    def sheet_names(self) -> list[str]:
        return list(self.worksheets)

    def sheet(self, name: str):
        from lagsheet.io.table import RawSheet

        return RawSheet(name, [[self.worksheets[name]]])


_CASES = st.sampled_from(["Summary", "SUMMARY", "summary", "sUMMARY", "Summary (lagsheet)", "SUMMARY (LAGSHEET)",
                          "summary (lagsheet 2)", "Lines", "Quantities"])


@settings(max_examples=200, derandomize=True, database=None)
@given(worksheets=st.dictionaries(_CASES, st.sampled_from(["my totals", "lagsheet summary"]), max_size=4),
       others=st.lists(_CASES, max_size=3))
def test_our_sheet_name_never_equals_another_ignoring_case(worksheets, others):
    """Whatever sheets a book has, ours either replaces our own worksheet or takes a name no sheet has, ignoring case."""
    from lagsheet.io.table import sheet_name_for

    others = [n for n in others if n.casefold() not in {w.casefold() for w in worksheets}]
    book = _Book(worksheets, others)
    taken = list(worksheets) + others
    name, replace = sheet_name_for(book, "Summary", taken)
    if replace:
        assert worksheets[name].startswith("lagsheet ")
    else:
        assert name.casefold() not in {n.casefold() for n in taken}
        if "summary" not in {n.casefold() for n in taken}:
            assert name == "Summary"
