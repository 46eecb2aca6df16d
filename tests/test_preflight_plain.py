"""preflight's content scan reads a worksheet's rows by numpy (io/sheetrows.py) when they are in the
plain form; it must learn exactly what the element-by-element scan learns (value cells, the
rectangle they span, the value that lies farthest out) and refuse exactly what it refuses.

Each sheet here is scanned both ways (``preflight.PLAIN_SHEETS`` on and off) and the outcomes
compared: the statistics, or the refusal's words. Odd forms must fall back to the
element-by-element scan (the plain reader says it cannot read them, never guesses).
"""

from __future__ import annotations

import io
import zipfile

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from lagsheet.errors import WorkbookError
from lagsheet.io import preflight
from lagsheet.io.table import column_letter

from conftest import pipe, write_book

HEAD = ('<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<worksheet xmlns="http://schemas.'
        'openxmlformats.org/spreadsheetml/2006/main"><dimension ref="A1:C3"/><sheetData>')
TAIL = "</sheetData></worksheet>"


def _zip(sheet: str) -> zipfile.ZipFile:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("[Content_Types].xml", "<Types/>")
        z.writestr("xl/worksheets/sheet1.xml", sheet)
    buf.seek(0)
    return zipfile.ZipFile(buf)


def _outcome(sheet: str, plain: bool, monkeypatch) -> tuple:
    """What the content scan of ``sheet`` gives: ('stats', {...}) or ('refused', words)."""
    monkeypatch.setattr(preflight, "PLAIN_SHEETS", plain)
    zf = _zip(sheet)
    try:
        scan = preflight._scan_content(zf, zf.infolist(), "book.xlsx", ods=False)
    except WorkbookError as exc:
        return "refused", str(exc)
    return "stats", {k: (v.cells, v.rows, v.cols, v.far) for k, v in scan.sheets.items()}


def _plain(sheet: str) -> bool:
    """Whether the plain reader reads ``sheet`` (rather than leaving it to the element scan)."""
    zf = _zip(sheet)
    info = zf.getinfo("xl/worksheets/sheet1.xml")
    return preflight._plain_sheet(zf, info, info.file_size) is not None


def _same(sheet: str, monkeypatch) -> tuple:
    slow = _outcome(sheet, False, monkeypatch)
    fast = _outcome(sheet, True, monkeypatch)
    assert fast == slow
    return slow


def _cell(ref: str, kind: str) -> str:
    return {"n": f'<c r="{ref}"><v>1.5</v></c>', "s": f'<c r="{ref}" t="inlineStr"><is><t>x y</t></is></c>',
            "f": f'<c r="{ref}"><f>1+1</f><v>2</v></c>', "fo": f'<c r="{ref}"><f>1+1</f></c>',
            "e": f'<c r="{ref}" s="1"/>', "ev": f'<c r="{ref}" s="1"></c>',
            "p": f'<c r="{ref}" t="inlineStr"><is><t xml:space="preserve"> a: b </t></is></c>'}[kind]


def _rows(rows: list[tuple[int, list[tuple[int, str]]]]) -> str:
    out = []
    for r, cells in rows:
        body = "".join(_cell(f"{column_letter(c - 1)}{r}", k) for c, k in cells)
        out.append(f'<row r="{r}" spans="1:3">{body}</row>' if cells else f'<row r="{r}"/>')
    return "".join(out)


PLAIN = {
    "values of every kind": [(1, [(1, "s"), (2, "n"), (3, "f")]), (2, [(1, "fo"), (2, "e"), (3, "p")])],
    "an empty last cell": [(1, [(1, "n")]), (4, [(2, "n"), (3, "e")])],
    "columns out of order": [(2, [(5, "n"), (3, "n"), (9, "n"), (1, "e")]), (1, [(7, "n")])],
    "rows out of order and empty rows": [(9, [(2, "n")]), (3, [(4, "n")]), (12, []), (10, [(1, "ev")])],
    "far columns": [(1, [(1, "n"), (702, "n"), (703, "n"), (16384, "s")]), (5, [(16383, "n")])],
    "the last cell of a sheet": [(1, [(1, "n")]), (1048576, [(16384, "n")])],
    "no rows": [],
}


@pytest.mark.parametrize("case", PLAIN)
def test_plain_rows_are_read_by_numpy_as_the_element_scan_reads_them(case, monkeypatch):
    sheet = HEAD + _rows(PLAIN[case]) + TAIL
    assert _plain(sheet)
    _same(sheet, monkeypatch)


def test_the_scan_of_a_real_schedule_is_the_same_both_ways(tmp_path, monkeypatch):
    """openpyxl's sheets (shared strings, numbers), the rows read in many small blocks."""
    book = write_book(tmp_path / "b.xlsx", [pipe(f"P-{i}", **{"Length [m]": i}) for i in range(300)],
                      sheets={"Conditions": [["Name", "Ambient temperature [°C]"], ["hot", 40]]})
    zf = zipfile.ZipFile(book)
    for info in zf.infolist():
        if info.filename.startswith("xl/worksheets/"):
            assert preflight._plain_sheet(zf, info, info.file_size) is not None
    monkeypatch.setattr(preflight, "_PLAIN_BLOCK", 500)
    outcomes = [preflight.check_package(book).sheets]
    monkeypatch.setattr(preflight, "PLAIN_SHEETS", False)
    outcomes.append(preflight.check_package(book).sheets)
    assert outcomes[0] == outcomes[1]
    assert outcomes[0]["xl/worksheets/sheet1.xml"].rows == 301


ODD = {
    "a prefixed sheet": HEAD.replace("<worksheet xmlns=", "<x:worksheet xmlns:x=").replace(
        "<dimension", "<x:dimension").replace("<sheetData>", "<x:sheetData>")
    + '<x:row r="1"><x:c r="A1"><x:v>1</x:v></x:c></x:row></x:sheetData></x:worksheet>',
    "prefixed values": HEAD + '<row r="1"><c r="A1" s="1"/><c r="B1"><x:v xmlns:x="u">1</x:v></c></row>' + TAIL,
    "a row without its number": HEAD + '<row><c r="A1"><v>1</v></c></row>' + TAIL,
    "a cell without its reference": HEAD + '<row r="2"><c><v>1</v></c><c t="n"><v>1</v></c></row>' + TAIL,
    "a reference after another attribute": HEAD + '<row r="2"><c s="1" r="B2"><v>1</v></c></row>' + TAIL,
    "a lower-case reference": HEAD + '<row r="2"><c r="b2"><v>1</v></c></row>' + TAIL,
    "a reference to another row": HEAD + '<row r="2"><c r="B3"><v>1</v></c></row>' + TAIL,
    "a row number with a leading zero": HEAD + '<row r="02"><c r="B2"><v>1</v></c></row>' + TAIL,
    "a row past the sheet": HEAD + '<row r="1048577"><c r="B1048577"><v>1</v></c></row>' + TAIL,
    "a column past the sheet": HEAD + '<row r="1"><c r="XFE1"><v>1</v></c></row>' + TAIL,
    "a comment among the rows": HEAD + '<row r="1"><c r="A1"><v>1</v></c></row><!-- x -->' + TAIL,
    "a value outside a cell": HEAD + '<row r="1"><v>1</v><c r="A1"/></row><row r="2"><f>1</f></row>' + TAIL,
    "a col element among the rows": HEAD + '<row r="1"><c r="A1"><col min="1" max="99999999"/></c></row>' + TAIL,
    "a dimension among the rows": HEAD + '<row r="1"><c r="A1"><dimension ref="A1:XFD99999999"/></c></row>' + TAIL,
    "damaged XML among the rows": HEAD + '<row r="1"><c r="A1"><v>1</c></row>' + TAIL,
    "an entity in a reference": HEAD + '<row r="1"><c r="A&#49;"><v>1</v></c></row>' + TAIL,
}


@pytest.mark.parametrize("case", ODD)
def test_odd_rows_are_left_to_the_element_scan(case, monkeypatch):
    sheet = ODD[case]
    assert not _plain(sheet)
    _same(sheet, monkeypatch)


def test_what_follows_the_rows_is_counted_as_the_element_scan_counts_it(monkeypatch):
    """A value element after the rows (an extension's formula) counts for the last cell, if that
    cell had none (the element scan's way); the numpy reader hands that state on."""
    ext = ('<extLst><ext uri="x" xmlns:x14="u"><x14:dataValidations><x14:dataValidation><x14:formula1>'
           '<xm:f xmlns:xm="m">Lists!$A$1:$A$5</xm:f></x14:formula1></x14:dataValidation>'
           '</x14:dataValidations></ext></extLst>')
    for rows in ([(3, [(2, "n"), (5, "e")])], [(3, [(2, "n"), (5, "n")])], [(3, [(2, "e")]), (7, [])]):
        sheet = HEAD + _rows(rows) + "</sheetData>" + ext + "</worksheet>"
        assert _plain(sheet)
        _same(sheet, monkeypatch)


KINDS = ["n", "s", "f", "fo", "e", "ev", "p"]
ROWS = st.lists(st.tuples(st.integers(1, 1_048_576),
                          st.lists(st.tuples(st.integers(1, 16_384), st.sampled_from(KINDS)), max_size=6)),
                max_size=8)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=ROWS, block=st.integers(40, 400))
def test_random_plain_sheets_give_the_same_statistics(rows, block, monkeypatch):
    """Random rows (any order, any columns, values or none), read in blocks of random size: the
    same statistics."""
    monkeypatch.setattr(preflight, "_PLAIN_BLOCK", block)
    sheet = HEAD + _rows(rows) + TAIL
    assert _plain(sheet)
    _same(sheet, monkeypatch)


def test_long_heads_and_long_rows_are_read_in_pieces_the_same(monkeypatch):
    """<sheetData> after several chunks (many column widths); a row longer than a block; a sheet
    whose rows start only in its last chunk."""
    def cols(n):
        return "<cols>" + "".join(f'<col min="{i}" max="{i}" width="9"/>' for i in range(1, n)) + "</cols>"

    wide = [(1, [(c, "s" if c % 3 else "n") for c in range(1, 16000, 2)]), (2, [(3, "n")])]
    for head, rows in ((HEAD.replace("<sheetData>", cols(4000) + "<sheetData>"), PLAIN["values of every kind"]),
                       (HEAD, wide), (HEAD.replace("<sheetData>", cols(2200) + "<sheetData>"), [])):
        sheet = head + _rows(rows) + TAIL
        assert len(sheet) > 65536 and _plain(sheet)
        _same(sheet, monkeypatch)
    monkeypatch.setattr(preflight, "_PLAIN_BLOCK", 30_000)
    monkeypatch.setattr(preflight, "_PLAIN_ROW", 100_000)  # a row longer than that: the element scan
    sheet = HEAD + _rows(wide) + TAIL
    assert not _plain(sheet)
    _same(sheet, monkeypatch)
