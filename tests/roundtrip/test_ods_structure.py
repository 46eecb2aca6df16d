"""ODS structure around the schedule: row and column groups, header rows, page breaks, comments.

Small packages are written by hand here, as other producers write them (the LibreOffice-made
files are in the round-trip corpus). Every case goes through the real ``fill`` command; each
result must read back on the row of its line's Tag (the JSON report says which line is on
which row), and no original cell may change.
"""

from __future__ import annotations

import json
import re
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest
import python_calamine
from lxml import etree

from lagsheet.io import ods as ods_io

from . import checks

LAGSHEET = Path(sys.executable).parent / "lagsheet"
HEAD = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
        "Max surface temperature [°C]"]
LINES = [[f"P-{201 + i}", "pipe", s, 10.0 + i, t, "mineral wool", 55.0]
         for i, (s, t) in enumerate(zip(["NPS 2", "NPS 3", "NPS 4", "NPS 6", "NPS 8"],
                                        [120, 160, 200, 240, 280], strict=True))]
NS = ('xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
      'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
      'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" '
      'xmlns:style="urn:oasis:names:tc:opendocument:xmlns:style:1.0" '
      'xmlns:fo="urn:oasis:names:tc:opendocument:xmlns:xsl-fo-compatible:1.0" '
      'xmlns:number="urn:oasis:names:tc:opendocument:xmlns:datastyle:1.0" '
      'xmlns:dc="http://purl.org/dc/elements/1.1/"')
MIME = "application/vnd.oasis.opendocument.spreadsheet"
MANIFEST = ('<?xml version="1.0" encoding="UTF-8"?>\n'
            '<manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" '
            'manifest:version="1.2">'
            f'<manifest:file-entry manifest:full-path="/" manifest:media-type="{MIME}"/>'
            '<manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"{extra}'
            '</manifest:manifest>')


def cell(v) -> str:
    if v is None:
        return "<table:table-cell/>"
    if isinstance(v, float | int):
        return (f'<table:table-cell office:value-type="float" office:value="{v}"><text:p>{v}</text:p>'
                "</table:table-cell>")
    return f'<table:table-cell office:value-type="string"><text:p>{v}</text:p></table:table-cell>'


def row(values, repeat: int = 1) -> str:
    rep = f' table:number-rows-repeated="{repeat}"' if repeat > 1 else ""
    return (f"<table:table-row{rep}>" + "".join(cell(v) for v in values)
            + '<table:table-cell table:number-columns-repeated="1017"/></table:table-row>')


EMPTY = '<table:table-row table:number-rows-repeated="{n}"><table:table-cell table:number-columns-repeated="1024"/></table:table-row>'
SCHEDULE = row(HEAD) + "".join(row(v) for v in LINES)
PAD = EMPTY.format(n=1000)
COLS = '<table:table-column table:number-columns-repeated="1024"/>'

# name -> (columns, rows above the header row, the schedule's rows): rows above always hold 6 rows
LAYOUTS = {
    "row group opening with repeated rows": (
        COLS, row(["Unit 7 schedule"]) + "<table:table-row-group>" + EMPTY.format(n=3) + row(["note"])
        + "</table:table-row-group>" + EMPTY.format(n=1), SCHEDULE),
    "nested row groups, each opening with repeated rows": (
        COLS, "<table:table-row-group><table:table-row-group>" + EMPTY.format(n=2) + row(["a"])
        + "</table:table-row-group>" + EMPTY.format(n=2) + "</table:table-row-group>" + row(["b"]), SCHEDULE),
    "header rows": (
        COLS, "<table:table-header-rows>" + row(["Unit 7 schedule"]) + EMPTY.format(n=4)
        + "</table:table-header-rows>" + row(["rev B"]), SCHEDULE),
    "table-rows after header rows": (
        COLS, "<table:table-header-rows>" + row(["Unit 7"]) + "</table:table-header-rows><table:table-rows>"
        + EMPTY.format(n=5), SCHEDULE + "</table:table-rows>"),
    "soft page breaks between rows": (
        COLS, row(["Unit 7"]) + "<text:soft-page-break/>" + EMPTY.format(n=4) + "<text:soft-page-break/>"
        + row(["rev B"]), "<text:soft-page-break/>".join([row(HEAD)] + [row(v) for v in LINES])),
    "rows inside an XML comment": (
        COLS, row(["Unit 7"]) + '<!-- <table:table-row table:number-rows-repeated="9"><table:table-cell/>'
        '</table:table-row> <table:table-row-group> -->' + EMPTY.format(n=5), SCHEDULE),
    "a group around the lines, opening with repeated rows": (
        COLS, row(["Unit 7"]) + EMPTY.format(n=5),
        row(HEAD) + "<table:table-row-group>" + EMPTY.format(n=2) + "".join(row(v) for v in LINES)
        + "</table:table-row-group>"),
    "column groups": (
        '<table:table-column-group><table:table-column table:number-columns-repeated="2"/>'
        '<table:table-column-group><table:table-column/></table:table-column-group></table:table-column-group>'
        '<table:table-column table:number-columns-repeated="1021"/>', row(["Unit 7"]) + EMPTY.format(n=5),
        SCHEDULE),
}


def content_xml(columns: str, above: str, schedule: str) -> str:
    return ('<?xml version="1.0" encoding="UTF-8"?>\n'
            f'<office:document-content {NS} office:version="1.2"><office:automatic-styles/>'
            '<office:body><office:spreadsheet><table:table table:name="Lines">'
            f"{columns}{above}{schedule}{PAD}</table:table></office:spreadsheet></office:body>"
            "</office:document-content>")


def write_ods(path: Path, content: str | bytes, manifest_extra: str = "/>") -> Path:
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr(zipfile.ZipInfo("mimetype"), MIME, compress_type=zipfile.ZIP_STORED)
        z.writestr("content.xml", content)
        z.writestr("META-INF/manifest.xml", MANIFEST.format(extra=manifest_extra))
    return path


def results_on_their_rows(out: Path, report: Path) -> list[str]:
    """Every reported line's Tag and thickness read back from the row the report names."""
    grid = python_calamine.CalamineWorkbook.from_path(str(out)).get_sheet_by_name("Lines").to_python(
        skip_empty_area=False)
    rep = json.loads(report.read_text())
    head = next(r for r in grid if "Tag" in r)
    tag_col, thick_col = head.index("Tag"), head.index("Thickness [mm]")
    problems = []
    for line in rep["lines"]:
        r = line["row"] - 1
        got = grid[r] if r < len(grid) else []
        want = line["results"]["thickness_m"] * 1000
        if got[tag_col:tag_col + 1] != [line["tag"]] or got[thick_col:thick_col + 1] != [pytest.approx(want)]:
            problems.append(f"row {r + 1}: {got[tag_col:tag_col + 1]} {got[thick_col:thick_col + 1]}, "
                            f"expected {line['tag']} with {want} mm")
    return problems


@pytest.mark.parametrize("layout", LAYOUTS, ids=list(LAYOUTS))
def test_results_land_on_their_lines_rows(tmp_path, cli, layout):
    """fill writes every result on its line's row whatever groups, header rows or comments stand around it."""
    src = write_ods(tmp_path / "in.ods", content_xml(*LAYOUTS[layout]))
    out, report = tmp_path / "out.ods", tmp_path / "r.json"
    r = cli("fill", src, "-o", out, "--report", report, "-q")
    assert r.exit_code == 0, r.output
    assert len(json.loads(report.read_text())["lines"]) == len(LINES)
    assert results_on_their_rows(out, report) == []
    with zipfile.ZipFile(src) as zi, zipfile.ZipFile(out) as zo:
        assert checks.check_ods_cells(zi.read("content.xml"), zo.read("content.xml")) == []
        assert checks.check_ods_additions(zi.read("content.xml"), zo.read("content.xml")) == []


def test_a_result_written_on_the_wrong_row_stops_the_save(tmp_path, cli, monkeypatch):
    """The post-write check reads the results back: a writer that slips one row writes nothing and exits 2."""
    real = ods_io._TablePatch._rows

    def slipped(self, xml, targets, notes, header_src):
        moved = {(r + 1 if r > min(targets) else r): v for r, v in targets.items()}
        return real(self, xml, moved, notes, header_src)

    monkeypatch.setattr(ods_io._TablePatch, "_rows", slipped)
    src = write_ods(tmp_path / "in.ods", content_xml(COLS, row(["Unit 7"]), SCHEDULE))
    out = tmp_path / "out.ods"
    r = cli("fill", src, "-o", out, "-q")
    assert r.exit_code == 2, r.output
    assert not out.exists()
    assert "where they belong (Lines!" in r.output and "nothing was written" in r.output


def test_an_indented_content_xml_is_read_and_filled(tmp_path, cli):
    """A pretty-printed content.xml (indentation between elements) is filled like the same file unindented."""
    flat = content_xml(*LAYOUTS["row group opening with repeated rows"])
    pretty = etree.tostring(etree.fromstring(flat.encode()), pretty_print=True, xml_declaration=True,
                            encoding="UTF-8")
    assert b"\n        <table:table-row" in pretty
    src = write_ods(tmp_path / "in.ods", pretty)
    out, report = tmp_path / "out.ods", tmp_path / "r.json"
    r = cli("fill", src, "-o", out, "--report", report, "-q")
    assert r.exit_code == 0, r.output
    assert results_on_their_rows(out, report) == []
    with zipfile.ZipFile(src) as zi, zipfile.ZipFile(out) as zo:
        assert checks.check_ods_cells(zi.read("content.xml"), zo.read("content.xml")) == []


ENCRYPTION = ('><manifest:encryption-data manifest:checksum-type="SHA1/1K" manifest:checksum="AAAA">'
              '<manifest:algorithm manifest:algorithm-name="Blowfish CFB" manifest:initialisation-vector="AAAA"/>'
              '<manifest:key-derivation manifest:key-derivation-name="PBKDF2" manifest:iteration-count="1024" '
              'manifest:salt="AAAA"/></manifest:encryption-data></manifest:file-entry>')


def plain(message: str) -> list[str]:
    """What makes a message unfit for a user: exception names, reprs, tracebacks, codec talk."""
    found = re.findall(r"\b\w+(?:Error|Exception)\b|Traceback|\bb'|\\x[0-9a-f]{2}|codec|BytesText", message)
    return found


@pytest.mark.parametrize("command", ["fill", "check"])
def test_an_encrypted_ods_gets_one_plain_sentence(tmp_path, cli, command):
    """An .ods saved with a password is named as such, with what to do, in plain words; exit 2."""
    src = write_ods(tmp_path / "locked.ods", bytes(range(256)) * 8, manifest_extra=ENCRYPTION)
    args = [command, src] + (["-o", tmp_path / "out.ods"] if command == "fill" else [])
    r = cli(*args)
    assert r.exit_code == 2, r.output
    assert "saved with a password" in r.output and "Save As" in r.output
    assert plain(r.output) == []
    assert not (tmp_path / "out.ods").exists()


def test_thousands_of_row_openings_in_a_comment_take_linear_time(tmp_path):
    """100,000 row, annotation and range openings inside a comment in content.xml are filled in seconds."""
    junk = ("<table:table-row <office:annotation <table:database-range <table:table-cell " * 25_000)
    above = row(["Unit 7"]) + f"<!-- {junk} -->" + EMPTY.format(n=5)
    src = write_ods(tmp_path / "in.ods", content_xml(COLS, above, SCHEDULE))
    out, report = tmp_path / "out.ods", tmp_path / "r.json"
    try:
        r = subprocess.run([str(LAGSHEET), "fill", str(src), "-o", str(out), "--report", str(report), "-q"],
                           capture_output=True, text=True, timeout=60, stdin=subprocess.DEVNULL)
    except subprocess.TimeoutExpired:
        pytest.fail("fill took over 60 s on a 2 MB content.xml: a scan is not linear")
    assert r.returncode == 0, r.stdout + r.stderr
    assert results_on_their_rows(out, report) == []
