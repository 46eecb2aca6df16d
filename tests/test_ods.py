"""OpenDocument workbooks: fill patches content.xml only and keeps every original cell."""

from __future__ import annotations

import json
import re
import zipfile

import python_calamine
from odf.opendocument import OpenDocumentSpreadsheet
from odf.table import Table, TableCell, TableRow
from odf.text import P


def make_ods(path, rows):
    doc = OpenDocumentSpreadsheet()
    table = Table(name="Lines")
    for r in rows:
        tr = TableRow()
        for v in r:
            if v is None:
                tr.addElement(TableCell())
            elif isinstance(v, (int, float)):
                c = TableCell(valuetype="float", value=v)
                c.addElement(P(text=str(v)))
                tr.addElement(c)
            else:
                c = TableCell(valuetype="string")
                c.addElement(P(text=v))
                tr.addElement(c)
        table.addElement(tr)
    # padding as LibreOffice writes it: a repeated empty cell to the last column, repeated empty rows
    for tr in table.getElementsByType(TableRow):
        tr.addElement(TableCell(numbercolumnsrepeated=16384 - len(rows[0])))
    pad = TableRow(numberrowsrepeated=1048576 - len(rows))
    pad.addElement(TableCell(numbercolumnsrepeated=16384))
    table.addElement(pad)
    doc.spreadsheet.addElement(table)
    other = Table(name="Notes")
    tr = TableRow()
    c = TableCell(valuetype="string")
    c.addElement(P(text="kept as it is"))
    tr.addElement(c)
    other.addElement(tr)
    doc.spreadsheet.addElement(other)
    doc.save(str(path))
    return path


HEAD = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
        "Max surface temperature [°C]"]


def test_fill_on_ods_adds_results_and_keeps_everything_else(tmp_path, cli):
    """Results land right of the last column; other members are byte-identical (the manifest gains the
    Summary's chart object, added after them); mimetype stays first and stored."""
    src = make_ods(tmp_path / "in.ods", [HEAD, ["P-1", "pipe", "NPS 4", 10, 200, "mineral wool", 55],
                                         ["P-2", "pipe", "NPS 2", 5, 120, "unobtainium", 55]])
    r = cli("fill", src, "-o", tmp_path / "out.ods", "--report", tmp_path / "r.json")
    assert r.exit_code == 1, r.output
    with zipfile.ZipFile(src) as a, zipfile.ZipFile(tmp_path / "out.ods") as b:
        names = [i.filename for i in b.infolist()]
        assert names[:len(a.namelist())] == a.namelist()
        assert names[len(a.namelist()):] == ["lagsheet chart 1/content.xml", "lagsheet chart 1/styles.xml"]
        assert b.infolist()[0].filename == "mimetype" and b.infolist()[0].compress_type == zipfile.ZIP_STORED
        for name in a.namelist():
            if name not in ("content.xml", "META-INF/manifest.xml"):
                assert a.read(name) == b.read(name), name
        manifest_in, manifest_out = a.read("META-INF/manifest.xml").decode(), b.read("META-INF/manifest.xml").decode()
        assert manifest_out.replace(
            ' <manifest:file-entry manifest:full-path="lagsheet chart 1/content.xml" manifest:media-type="text/xml"/>\n'
            ' <manifest:file-entry manifest:full-path="lagsheet chart 1/styles.xml" manifest:media-type="text/xml"/>\n'
            ' <manifest:file-entry manifest:full-path="lagsheet chart 1/" manifest:version="1.3" '
            'manifest:media-type="application/vnd.oasis.opendocument.chart"/>\n', "") == manifest_in
        content = b.read("content.xml").decode()
    grid = python_calamine.CalamineWorkbook.from_path(str(tmp_path / "out.ods")).get_sheet_by_name("Lines").to_python()
    assert grid[0][:7] == HEAD and grid[0][7] == "Thickness [mm]" and grid[0][21] == "Notes"
    assert grid[1][:7] == ["P-1", "pipe", "NPS 4", 10.0, 200.0, "mineral wool", 55.0]
    rep = json.loads((tmp_path / "r.json").read_text())
    assert grid[1][7] == rep["lines"][0]["results"]["thickness_m"] * 1000
    assert grid[2][21].startswith("error: material 'unobtainium'")
    # our note on the offending cell, and the padding still ends at column 16,384
    assert re.search(r"<office:annotation><dc:creator>lagsheet</dc:creator><text:p>lagsheet: material", content)
    for row in re.findall(r"<table:table-row\b.*?</table:table-row>", content, re.S)[:3]:
        tags = re.findall(r"<table:table-cell\b[^>]*>", row)
        cols = sum(int((re.findall(r'number-columns-repeated="(\d+)"', t) or ["1"])[0]) for t in tags)
        assert cols == 16384
    other = python_calamine.CalamineWorkbook.from_path(str(tmp_path / "out.ods")).get_sheet_by_name("Notes").to_python()
    assert other == [["kept as it is"]]


def test_refilling_an_ods_replaces_our_annotations_only(tmp_path, cli):
    """A second fill on the output leaves one lagsheet annotation per cell and the same columns."""
    src = make_ods(tmp_path / "in.ods", [HEAD, ["P-1", "pipe", "NPS 4", 10, 200, "minral wool", 55]])
    cli("fill", src, "-o", tmp_path / "once.ods")
    cli("fill", tmp_path / "once.ods", "-o", tmp_path / "twice.ods")
    with zipfile.ZipFile(tmp_path / "twice.ods") as z:
        content = z.read("content.xml").decode()
    assert content.count("<dc:creator>lagsheet</dc:creator>") == 1
    grid = python_calamine.CalamineWorkbook.from_path(str(tmp_path / "twice.ods")).get_sheet_by_name("Lines").to_python()
    assert grid[0].count("Thickness [mm]") == 1
