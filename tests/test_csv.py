"""CSV schedules: read (BOM, comma or semicolon, decimal comma, a title line), filled to .csv and
.xlsx with the same values as a workbook, formula-like text kept as text, bad files refused in
one sentence."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import openpyxl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from lagsheet.commands import demo
from lagsheet.errors import WorkbookError
from lagsheet.io.csv import CsvBook, neutralise, number, sniff
from lagsheet.io.xlsx import XlsxBook

OUT_FIRST = "Thickness [mm]"


def field(v, decimal: str) -> str:
    if v is None:
        return ""
    if isinstance(v, (int, float)):
        return repr(v).replace(".", decimal)
    return v


def write_csv(path: Path, header: list[str], rows: list[list], *, delimiter=",", bom=False,
              title: str | None = None) -> Path:
    decimal = "," if delimiter == ";" else "."
    buf = io.StringIO()
    w = csv.writer(buf, delimiter=delimiter, lineterminator="\r\n")
    if title is not None:
        w.writerow([title])
    w.writerow(header)
    for r in rows:
        w.writerow([field(v, decimal) for v in r])
    path.write_bytes((b"\xef\xbb\xbf" if bom else b"") + buf.getvalue().encode("utf-8"))
    return path


def demo_rows() -> list[list]:
    return [list(row) + [None] * (len(demo.HEADERS) - len(row)) +
            [demo.PROCESS.get(row[0], {}).get(h) for h in demo.PROCESS_HEADERS] for row in demo.LINES]


def lines_by_tag(grid: list[list]) -> dict[str, dict]:
    """The output cells of every line of a filled grid, by Tag and header."""
    hr = next(i for i, row in enumerate(grid) if "Tag" in row)
    head = grid[hr]
    first = head.index(OUT_FIRST)
    return {row[0]: {h: row[c] for c, h in enumerate(head) if c >= first and h}
            for row in grid[hr + 1:] if row and row[0] not in ("", None)}


PIPE_HEADER = ["Tag", "Service", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
               "Max surface temperature [°C]"]


def pipe(tag="P-1", service="steam", temperature=200.5):
    return [tag, service, "pipe", "NPS 4", 10, temperature, "mineral wool", 55]


# --- reading ---------------------------------------------------------------------------------

@pytest.mark.parametrize(("text", "decimal", "value"), [
    ("12.5", ".", 12.5), (" -3 ", ".", -3.0), ("1e3", ".", 1000.0), (".5", ".", 0.5),
    ("12,5", ",", 12.5), ("-0,25", ",", -0.25), ("1.250,5", ",", 1250.5), ("7", ",", 7.0),
    ("12,5", ".", None), ("1.5", ",", None), ("2 in", ".", None), ("nan", ".", None), ("inf", ".", None),
    ("1_000", ".", None), ("", ".", None), ("NPS 4", ".", None), ("88%", ".", None),
])
def test_plain_numbers_are_numbers_in_the_files_decimal_sign(text, decimal, value):
    """A field is a number only when it is one plainly in the file's decimal sign; anything else is text."""
    assert number(text, decimal) == value


@pytest.mark.parametrize(("data", "delimiter"), [
    (b"Tag,Size,Length [m]\r\nP-1,NPS 4,10.5\r\nP-2,\"2\"\" pipe; old\",3\r\n", ","),
    (b"Tag;Size;Length [m]\r\nP-1;NPS 4;10,5\r\nP-2;DN 50;3,25\r\n", ";"),
    (b"A title line\r\nTag;Condition;Length [m]\r\nP-1;outdoor, summer;10,5\r\n", ";"),
    (b"sep=;\r\nTag;Length [m]\r\nP-1;1\r\n", ";"),
])
def test_the_delimiter_is_sniffed(data, delimiter):
    """Comma or semicolon: the one that splits the rows alike (Excel's 'sep=' line decides outright)."""
    assert sniff(data.decode()) == delimiter


def test_a_semicolon_file_with_a_bom_and_decimal_commas(tmp_path):
    """The BOM is not part of the first header; '10,5' is 10.5; text stays text."""
    p = tmp_path / "s.csv"
    p.write_bytes(b"\xef\xbb\xbfTag;Size;Length [m]\r\nP-1;NPS 4;10,5\r\nP-2;2 in;1.000,25\r\n")
    book = CsvBook.open(p)
    assert book.sheet_names() == ["Lines"]
    assert book.sheet("Lines").grid == [["Tag", "Size", "Length [m]"], ["P-1", "NPS 4", 10.5],
                                        ["P-2", "2 in", 1000.25]]
    assert (book.dialect.delimiter, book.dialect.decimal, book.dialect.bom) == (";", ",", True)


@pytest.mark.parametrize(("data", "values"), [
    (b"Tag;Length [m];T [K]\r\nP-1;1.5;123.456\r\n", [1.5, 123.456]),  # points that cannot group thousands
    (b"Tag;Length [m];T [K]\r\nP-1;1,5;123.456\r\n", [1.5, 123456.0]),  # a decimal comma: the point groups
    (b"Tag;Length [m];T [K]\r\nP-1;2;123.456\r\n", [2.0, 123456.0]),  # no evidence: the comma, as for ';'
])
def test_a_semicolon_files_decimal_sign_follows_its_numbers(tmp_path, data, values):
    """A semicolon file whose numbers plainly use a decimal point (as some programs write it) is read so."""
    p = tmp_path / "d.csv"
    p.write_bytes(data)
    assert CsvBook.open(p).sheet("Lines").grid[1][1:] == values


@pytest.mark.parametrize(("data", "message"), [
    (b"Tag,Size\x00\x01\x02", r"not a CSV file \(it holds binary data\)"),
    (b"PK\x03\x04rest of a zip", "not a CSV file"),
    (b"Tag,Service\r\nP-1,caf\xe9\r\n", "line 2 is not UTF-8 text; save the file again as 'CSV UTF-8'"),
    ("Tag,Size\r\n".encode("utf-16"), "UTF-16 text, not UTF-8"),
    (b"Tag,Service,Size\r\nP-1,a,b\r\nP-2,hot oil, supply,c\r\nP-3,d,e\r\n",
     r"row 3 has 4 fields where the rows around it have 3 \(a decimal comma or a comma in a text"),
    (b"Tag,Service\r\nP-1,\"never closed\r\nP-2,x\r\n", "row 3 cannot be read as CSV"),
])
def test_bad_files_are_refused_in_one_sentence(tmp_path, data, message):
    """Binary, not UTF-8, ragged or an unclosed quote: a WorkbookError (exit 2) saying what and how to fix."""
    p = tmp_path / "bad.csv"
    p.write_bytes(data)
    with pytest.raises(WorkbookError, match=message):
        CsvBook.open(p)


@pytest.mark.parametrize(("text", "written"), [
    ("=HYPERLINK(\"http://x\")", "'=HYPERLINK(\"http://x\")"), ("+1+2", "'+1+2"), ("-2+3+cmd|' /C calc'!A0",
                                                                                "'-2+3+cmd|' /C calc'!A0"),
    ("@SUM(A1)", "'@SUM(A1)"), ("\tx", "'\tx"), ("\rx", "'\rx"),
    ("-5", "-5"), ("+3.5", "+3.5"), ("steam", "steam"), ("", ""), ("a=b", "a=b"),
])
def test_formula_like_text_gets_an_apostrophe(text, written):
    """Text a spreadsheet program could run as a formula starts with an apostrophe; numbers and other text do not."""
    assert neutralise(text) == written


def test_an_apostrophe_before_formula_like_text_is_taken_off_on_reading(tmp_path):
    """What lagsheet writes reads back as it was: "'=x" is the text '=x'; "'abc" keeps its apostrophe."""
    p = tmp_path / "a.csv"
    p.write_bytes(b"Tag,Service\r\nP-1,'=x\r\nP-2,'abc\r\n")
    assert [r[1] for r in CsvBook.open(p).sheet("Lines").grid[1:]] == ["=x", "'abc"]


# --- through the CLI -------------------------------------------------------------------------

@pytest.fixture(scope="module")
def demo_filled(tmp_path_factory):
    """The demo filled from its workbook, and from a semicolon CSV (BOM, decimal commas, a title
    line) with the other sheets from the workbook (--with), to .csv and to .xlsx."""
    from typer.testing import CliRunner

    from lagsheet.cli import app

    d = tmp_path_factory.mktemp("demo")
    book = d / "demo-plant.xlsx"
    demo.write_demo(book)
    src = write_csv(d / "demo.csv", demo.HEADERS + demo.PROCESS_HEADERS, demo_rows(), delimiter=";",
                    bom=True, title="Demo plant; invented lines")
    runner = CliRunner()
    codes = [runner.invoke(app, [str(a) for a in args]).exit_code for args in (
        ("fill", book, "-o", d / "filled.xlsx", "-q"),
        ("fill", src, "--with", book, "-o", d / "filled.csv", "-q", "--report", d / "csv.json"),
        ("fill", src, "--with", book, "-o", d / "from-csv.xlsx", "-q"))]
    return d, codes


def test_a_demo_csv_fills_to_the_same_values_as_the_workbook(demo_filled):
    """Every output cell of every demo line, from a semicolon CSV with a BOM, decimal commas and a
    title line: within 1e-9 of the workbook's (text exactly), written back with decimal commas."""
    d, codes = demo_filled
    assert codes == [0, 0, 0]
    ref = lines_by_tag(XlsxBook.open(d / "filled.xlsx").sheet("Lines").grid)
    data = (d / "filled.csv").read_bytes()
    assert data.startswith(b"\xef\xbb\xbf") and b"\r\n" in data
    got = CsvBook.open(d / "filled.csv")
    assert got.dialect.delimiter == ";"
    assert got.fields[0][0] == "Demo plant; invented lines"
    assert got.fields[2][got.fields[1].index("Surface temperature [°C]")].count(",") == 1  # a decimal comma
    ours = lines_by_tag(got.sheet("Lines").grid)
    compared = 0
    for tag, cells in ref.items():
        assert set(ours[tag]) == set(cells)
        for header, want in cells.items():
            have = ours[tag][header]
            if isinstance(want, float):
                assert isinstance(have, float) and abs(have - want) <= 1e-9, (tag, header, have, want)
            else:
                assert (have if have is not None else "") == want, (tag, header, have, want)
            compared += 1
    assert compared == len(demo.LINES) * len(next(iter(ref.values())))
    report = json.loads((d / "csv.json").read_text())
    assert report["summary"]["lines"] == len(demo.LINES)


def test_the_input_fields_are_written_back_as_typed(demo_filled):
    """Every field of the input CSV is in the filled CSV unchanged (the rows only grow to the right)."""
    d, _ = demo_filled
    before, after = CsvBook.open(d / "demo.csv").fields, CsvBook.open(d / "filled.csv").fields
    assert len(after) == len(before)
    for a, b in zip(after, before, strict=True):
        assert a[:len(b)] == b


def test_a_csv_fills_to_a_new_workbook(demo_filled):
    """-o OUT.xlsx: Lines (the same values), Summary and Quantities."""
    d, _ = demo_filled
    wb = openpyxl.load_workbook(d / "from-csv.xlsx")
    assert wb.sheetnames == ["Lines", "Summary", "Quantities"]
    ref = lines_by_tag(XlsxBook.open(d / "filled.xlsx").sheet("Lines").grid)
    ours = lines_by_tag(XlsxBook.open(d / "from-csv.xlsx").sheet("Lines").grid)
    assert ours == ref


def test_formula_like_text_stays_text_in_both_outputs(tmp_path, cli):
    """A Service '=1+2' is written "'=1+2" to a CSV and as text (not a formula) to a workbook."""
    src = write_csv(tmp_path / "f.csv", PIPE_HEADER, [pipe(service="=1+2"), pipe("P-2", "@cmd")])
    assert cli("fill", src, "-o", tmp_path / "f-out.csv", "-q").exit_code == 0
    rows = list(csv.reader(io.StringIO((tmp_path / "f-out.csv").read_text(encoding="utf-8"))))
    assert [r[1] for r in rows[1:]] == ["'=1+2", "'@cmd"]
    assert cli("fill", src, "-o", tmp_path / "f-out.xlsx", "-q").exit_code == 0
    ws = openpyxl.load_workbook(tmp_path / "f-out.xlsx")["Lines"]
    assert (ws["B2"].value, ws["B2"].data_type, ws["B2"].quotePrefix) == ("=1+2", "s", True)


def test_without_with_the_built_in_sheets_are_used(tmp_path, cli):
    """A comma CSV alone fills with the built-in conditions, materials and settings (said in a note)."""
    src = write_csv(tmp_path / "p.csv", PIPE_HEADER, [pipe()])
    r = cli("fill", src, "-o", tmp_path / "p-out.csv")
    assert r.exit_code == 0, r.output
    assert "no Settings sheet: built-in defaults used" in r.output
    grid = CsvBook.open(tmp_path / "p-out.csv").sheet("Lines").grid
    out = dict(zip(grid[0], grid[1], strict=True))
    assert out["Governing"] == "surface temperature" and out["Surface temperature [°C]"] <= 55


def test_check_and_audit_take_a_csv(tmp_path, cli):
    """check lists a CSV's errors by cell (and annotates an .xlsx copy, never a CSV); audit of a CSV
    lagsheet filled finds nothing to report."""
    src = write_csv(tmp_path / "c.csv", PIPE_HEADER, [pipe(), pipe("P-2", temperature="hot")])
    r = cli("check", src)
    assert r.exit_code == 1 and "Lines!F3" in r.output
    good = write_csv(tmp_path / "g.csv", PIPE_HEADER, [pipe(), pipe("P-2", temperature=150)])
    assert cli("fill", good, "-o", tmp_path / "g-out.csv", "-q").exit_code == 0
    r = cli("audit", tmp_path / "g-out.csv")
    assert r.exit_code == 0 and "2 lines" in r.output, r.output
    r = cli("check", src, "--annotate", tmp_path / "c-notes.csv")
    assert r.exit_code == 2 and "give --annotate OUT.xlsx" in r.output
    assert cli("check", src, "--annotate", tmp_path / "c-notes.xlsx").exit_code == 1
    comment = openpyxl.load_workbook(tmp_path / "c-notes.xlsx")["Lines"]["F3"].comment
    assert comment is not None and "'hot'" in comment.text


@pytest.mark.parametrize(("args", "message"), [
    (["-o", "OUT.ods"], "a CSV schedule is written as .csv or .xlsx"),
    (["-o", "OUT.csv", "--with", "OTHER.csv"], "--with takes a workbook"),
])
def test_outputs_and_companions_a_csv_cannot_have(tmp_path, cli, args, message):
    """An .ods output or a CSV companion: exit 2, one sentence, nothing written."""
    src = write_csv(tmp_path / "p.csv", PIPE_HEADER, [pipe()])
    write_csv(tmp_path / "OTHER.csv", PIPE_HEADER, [pipe()])
    r = cli("fill", src, *[str(tmp_path / a) if a.isupper() or "." in a else a for a in args])
    assert r.exit_code == 2 and message in r.output and "Traceback" not in r.output
    assert not (tmp_path / "OUT.ods").exists() and not (tmp_path / "OUT.csv").exists()


def test_a_bad_csv_exits_2_with_one_line(tmp_path, cli):
    """A binary file named .csv: one line, exit 2, no traceback."""
    p = tmp_path / "b.csv"
    p.write_bytes(b"\x00\x01binary")
    r = cli("fill", p, "-o", tmp_path / "b-out.csv")
    assert r.exit_code == 2 and "not a CSV file" in r.output
    assert len(r.output.strip().splitlines()) == 1


def test_the_companion_workbook_is_never_the_output(tmp_path, cli):
    """--with BOOK -o BOOK: refused (exit 2), the companion unchanged."""
    from conftest import sha256, write_book

    src = write_csv(tmp_path / "p.csv", PIPE_HEADER, [pipe()])
    book = write_book(tmp_path / "book.xlsx", [], sheets={"Settings": [["Setting", "Value", "Unit"]]})
    before = sha256(book)
    r = cli("fill", src, "--with", book, "-o", book)
    assert r.exit_code == 2 and "would overwrite the input book.xlsx" in r.output
    assert sha256(book) == before


@settings(max_examples=300, derandomize=True, deadline=None)
@given(st.binary(max_size=400) | st.text(alphabet=st.sampled_from(list("Tag,;\"'\r\n 12.,=xé\t")), max_size=200)
       .map(lambda s: s.encode("utf-8")))
def test_any_bytes_read_as_a_book_or_one_sentence(data):
    """Whatever the bytes, reading gives a book of one sheet or a WorkbookError; nothing else escapes."""
    try:
        book = CsvBook.from_bytes(data, Path("x.csv"))
    except WorkbookError as exc:
        assert str(exc).startswith("x.csv: ") and "\n" not in str(exc)
        return
    assert book.sheet_names() == ["Lines"]


def test_libreoffice_keeps_the_written_formula_like_text_as_text(tmp_path, cli):
    """LibreOffice opening the filled CSV makes no formula of '=1+2' or '@cmd' (it does of an
    unmarked '=1+2', checked alongside, so the check can fail); the lines' numbers stay numbers."""
    from roundtrip.checks import require_soffice
    from roundtrip.corpus import soffice

    require_soffice()
    src = write_csv(tmp_path / "f.csv", PIPE_HEADER, [pipe(service="=1+2"), pipe("P-2", "@cmd")])
    assert cli("fill", src, "-o", tmp_path / "filled.csv", "-q").exit_code == 0
    (tmp_path / "raw.csv").write_bytes(b"Tag,Service\r\nP-1,=1+2\r\n")
    r = soffice(["--convert-to", "xlsx", "--outdir", str(tmp_path / "lo"), str(tmp_path / "filled.csv"),
                 str(tmp_path / "raw.csv")], tmp_path / "profile")
    assert r.returncode == 0, r.stderr
    ws = openpyxl.load_workbook(tmp_path / "lo" / "filled.xlsx").active
    assert [(ws[f"B{k}"].value, ws[f"B{k}"].data_type) for k in (2, 3)] == [("'=1+2", "s"), ("'@cmd", "s")]
    assert ws["E2"].data_type == "n" and isinstance(ws["I2"].value, (int, float))  # Length; Thickness
    raw = openpyxl.load_workbook(tmp_path / "lo" / "raw.xlsx").active
    assert raw["B2"].data_type == "f"


def test_the_workbook_written_from_a_csv_is_valid(demo_filled):
    """The new .xlsx a CSV is filled to has no finding of the Open XML schema validator."""
    from roundtrip.validators import findings, require_validators

    require_validators()
    d, _ = demo_filled
    assert findings(d / "from-csv.xlsx") == set()
