"""The calculation package (``lagsheet calcs``), read back the way a reviewer's tools read it:
poppler's ``pdftotext`` for the words and numbers, ``pdftoppm`` for the pages rendering."""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import openpyxl
import pytest
from typer.testing import CliRunner

from lagsheet.cli import app
from lagsheet.commands.calcs import default_lines
from lagsheet.commands.fill import load
from lagsheet.design.select import specify
from lagsheet.outputs.calcs import document
from lagsheet.outputs.calcs.basis import METHODS
from lagsheet.physics.surface import CORRELATION_NAMES
from test_us_demo import write_us_demo

from conftest import pipe, write_book

NUMBER = r"(-?[\d,]+\.?\d*)"
TERMS = ("Convection at the outer surface (out)", "Radiation to the surroundings (out)",
         "Sun absorbed (in, counted as negative out)")


def _require_poppler() -> None:
    if shutil.which("pdftotext") and shutil.which("pdftoppm") and shutil.which("pdfinfo"):
        return
    if os.environ.get("CI", "").strip().lower() in ("true", "1", "yes"):
        pytest.fail("poppler-utils (pdftotext, pdftoppm, pdfinfo) are required on CI")
    pytest.skip("poppler-utils are not installed here; CI runs this check")


def _run(*args):
    return CliRunner().invoke(app, [str(a) for a in args], catch_exceptions=False)


def pages(pdf: Path) -> list[str]:
    """The text of every page, laid out (pdftotext -layout)."""
    text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True,
                          check=True).stdout
    return text.split("\f")[:-1]


def sheets_by_tag(texts: list[str]) -> dict[str, str]:
    """The text of each line's calculation sheet, its pages found by their footer."""
    out: dict[str, str] = {}
    for t in texts:
        m = re.search(r"calculation sheet (\S+)\s+Page \d+ of \d+", t)
        if m:
            out[m.group(1)] = out.get(m.group(1), "") + t
    return out


def shown(v, fmt: str) -> str:
    """A cell as a spreadsheet shows it under the number formats fill writes."""
    if isinstance(v, str):
        return v
    return {"0.0": f"{v:.1f}", "0.00": f"{v:.2f}", "#,##0": f"{v:,.0f}"}.get(fmt, f"{v:g}")


def workbook_results(path: Path) -> dict[str, dict[str, str]]:
    """Per tag: the header (with unit) -> the cell as shown, of the results fill wrote."""
    ws = openpyxl.load_workbook(path)["Lines"]
    rows = list(ws.iter_rows())
    head_row = next(r for r in rows if any(c.value == "Tag" for c in r))
    heads = {c.column: c.value for c in head_row if c.value}
    out = {}
    for r in rows[head_row[0].row:]:
        cells = {heads.get(c.column): c for c in r if c.column in heads}
        tag = cells.get("Tag")
        if tag is None or not tag.value:
            continue
        out[tag.value] = {h: shown(c.value, c.number_format) for h, c in cells.items() if c.value is not None}
    return out


def balance(text: str) -> tuple[float, list[float]]:
    """(conduction in, [convection, radiation, sun]) for the whole line, as printed."""
    def last(name):
        m = re.search(re.escape(name) + r"\s+" + NUMBER + r"(?:\s+" + NUMBER + r")?", text)
        assert m, f"{name} not on the sheet"
        return float((m.group(2) or m.group(1)).replace(",", ""))

    return last("Conduction through the insulation (in)"), [last(t) for t in TERMS]


@pytest.fixture(scope="module")
def demo_package(tmp_path_factory):
    _require_poppler()
    folder = tmp_path_factory.mktemp("calcs")
    assert _run("demo", folder, "-q").exit_code == 0
    filled = folder / "demo-plant-filled.xlsx"
    out = folder / "plant-calcs.pdf"
    r = _run("calcs", filled, "-o", out, "--all")
    assert r.exit_code == 0, r.output
    return filled, out, pages(out)


def test_every_page_renders_and_carries_its_number_the_workbook_and_the_date(demo_package):
    """pdftoppm renders the pages; each page's footer gives the workbook's name, a date and 'Page k of N'."""
    filled, out, texts = demo_package
    n = len(texts)
    for k, t in enumerate(texts, start=1):
        assert re.search(rf"{re.escape(filled.name)} — calculation package — \d{{4}}-\d{{2}}-\d{{2}}", t), k
        assert f"Page {k} of {n}" in t
    for k in (1, n // 2, n):
        png = out.parent / f"page-{k}"
        subprocess.run(["pdftoppm", "-r", "40", "-png", "-singlefile", "-f", str(k), "-l", str(k), str(out),
                        str(png)], check=True, capture_output=True)
        assert png.with_suffix(".png").stat().st_size > 2000


def test_the_front_holds_the_design_basis_summary_quantities_and_cautions(demo_package):
    """Contents, approval block, conditions, settings, every material with its k(T) points and source,
    finishes, codes, every correlation with its reference, the Summary's total and the cautions."""
    _, _, texts = demo_package
    front = "\n".join(t for t in texts if not re.search(r"calculation sheet \S+\s+Page", t))
    for words in ("Contents", "Approved by", "1.1 Conditions", "1.2 Settings", "1.3 Materials",
                  "1.4 Finishes", "1.5 Codes and standards", "1.6 Methods and correlations", "2 Summary",
                  "3 Quantities", "4 Results by area", "6 Index of calculation sheets", "ASTM C680",
                  "Churchill-Usagi", "doi:10.1115/1.3450685", "Total", "mineral wool total",
                  "vapour retarder", "Energy price", "winter"):
        assert words in front, words


def test_each_sheet_holds_its_tag_inputs_and_the_values_of_the_filled_workbook(demo_package):
    """Every line has a sheet; it names its tag and each input cell it read, and shows every result
    fill wrote for it (Notes apart), as the filled workbook shows it."""
    filled, _, texts = demo_package
    sheets = sheets_by_tag(texts)
    book = workbook_results(filled)
    assert set(sheets) == set(book)
    ws = openpyxl.load_workbook(filled)["Lines"]
    for tag, cells in book.items():
        text = re.sub(r"[ \t]+", " ", sheets[tag])
        assert f"Calculation sheet: {tag}" in text
        for header in ("Thickness [mm]", "Surface temperature [°C]", "Heat loss [W]", "Layers", "Governing"):
            if header in cells:
                assert f"{header} {cells[header]}" in text, (tag, header, cells[header])
        row = next(r for r in ws.iter_rows() if r[0].value == tag)
        for c in row[:24]:
            if c.value not in (None, "") and c.column_letter + str(c.row) not in text:
                pytest.fail(f"{tag}: input cell {c.coordinate} is not on its sheet")


def test_the_balance_terms_add_up_to_the_reported_heat_loss(demo_package):
    """Conduction in, and convection + radiation + sun out, each in W for the whole line, agree with the
    heat loss in the filled workbook within 0.1 % (lines with a flow report the fluid's heat instead, and
    say so)."""
    filled, _, texts = demo_package
    sheets = sheets_by_tag(texts)
    book = workbook_results(filled)
    checked = 0
    for tag, cells in book.items():
        if "Heat loss [W]" not in cells:
            continue
        loss = float(cells["Heat loss [W]"].replace(",", ""))
        conduction, out = balance(sheets[tag])
        if "Outlet temperature [°C]" in cells:
            assert "carries a flow" in sheets[tag]
            continue
        tol = max(1e-3 * abs(loss), 0.5)  # the workbook shows whole watts
        assert sum(out) == pytest.approx(loss, abs=tol), tag
        assert conduction == pytest.approx(loss, abs=tol), tag
        checked += 1
    assert checked >= 40


def test_a_us_sheet_is_in_us_units_and_its_balance_adds_up_in_btu_per_hour(tmp_path):
    """On a sheet in °F and inches the package is too: terms in Btu/h agree with the workbook's Heat loss
    [Btu/h] within 0.1 %."""
    _require_poppler()
    src = write_us_demo(tmp_path / "us.xlsx")
    filled = tmp_path / "us-filled.xlsx"
    assert _run("fill", src, "-o", filled, "-q").exit_code in (0, 1)
    out = tmp_path / "us.pdf"
    assert _run("calcs", filled, "-o", out, "--tags", "ST-1001,DU-8101,SP-8301").exit_code in (0, 1)
    sheets = sheets_by_tag(pages(out))
    book = workbook_results(filled)
    assert set(sheets) == {"ST-1001", "DU-8101", "SP-8301"}
    for tag, text in sheets.items():
        loss = float(book[tag]["Heat loss [Btu/h]"].replace(",", ""))
        conduction, out_terms = balance(text)
        assert sum(out_terms) == pytest.approx(loss, abs=max(1e-3 * abs(loss), 0.5)), tag
        assert "°F" in text and "Btu/h" in text and "°C" not in text.split("Values written")[1]


def test_a_cold_line_in_the_sun_shows_the_sun_in_its_balance_and_the_balance_closes(tmp_path):
    """A chilled pipe in 900 W/m² takes the sun in, averaged over its surface, as part of its gain: the
    sheet's sun term is negative and conduction = convection + radiation + sun within 0.1 % of the
    workbook's Heat loss; a hot line in the same sun shows 0 there (its loss is in the shade) and says
    its surface limit is judged on the sun-facing side."""
    _require_poppler()
    cold = pipe("CS-1", **{"Operating temperature [°C]": 5, "Condition": "outdoor",
                           "Max surface temperature [°C]": None, "Solar irradiance [W/m²]": 900})
    hot = pipe("HS-1", **{"Operating temperature [°C]": 180, "Condition": "outdoor",
                          "Solar irradiance [W/m²]": 900})
    src = write_book(tmp_path / "sun.xlsx", [cold, hot], headers=[*cold])
    filled = tmp_path / "sun-filled.xlsx"
    assert _run("fill", src, "-o", filled, "-q").exit_code in (0, 1)
    out = tmp_path / "sun.pdf"
    assert _run("calcs", filled, "-o", out, "--tags", "CS-1,HS-1").exit_code in (0, 1)
    sheets, book = sheets_by_tag(pages(out)), workbook_results(filled)
    for tag in ("CS-1", "HS-1"):
        loss = float(book[tag]["Heat loss [W]"].replace(",", ""))
        conduction, terms = balance(sheets[tag])
        tol = max(1e-3 * abs(loss), 0.5)
        assert sum(terms) == pytest.approx(loss, abs=tol) and conduction == pytest.approx(loss, abs=tol), tag
    assert balance(sheets["CS-1"])[1][2] < -1.0 and "adds to the gain" in sheets["CS-1"]
    assert balance(sheets["HS-1"])[1][2] == 0.0 and "sun-facing side" in sheets["HS-1"]


def test_by_default_the_lines_with_warnings_or_errors_and_one_per_governing_target(tmp_path):
    """Default selection: every line with a warning or error, and a line for each Governing word."""
    src = write_book(tmp_path / "in.xlsx", [
        pipe("A-1"), pipe("A-2"), pipe("B-1", **{"Max surface temperature [°C]": None}),
        pipe("C-1", **{"Max surface temperature [°C]": None, "Fixed thickness [mm]": 50}),
        pipe("E-1", **{"Insulation": "no such material"})])
    _, inputs = load(src)
    res = specify(inputs)
    chosen = default_lines(res)
    tags = [res.tags[i] for i in chosen]
    assert tags == ["A-1", "B-1", "C-1", "E-1"]  # A-2 is governed as A-1 is
    assert {res.status[i] for i in chosen if res.tags[i] in ("B-1", "E-1")} == {"warning", "error"}


def test_tags_area_and_all_choose_the_sheets(tmp_path):
    """--tags (commas, any case), --area and --all choose which lines get a sheet."""
    _require_poppler()
    head = ["Tag", "Area", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
            "Max surface temperature [°C]"]
    rows = [{**pipe(t), "Area": a} for t, a in (("P-1", "North"), ("P-2", "North"), ("P-3", "South"))]
    src = write_book(tmp_path / "in.xlsx", rows, head)
    for args, want in ((["--tags", "p-1,P-3"], {"P-1", "P-3"}), (["--area", "north"], {"P-1", "P-2"}),
                       (["--all"], {"P-1", "P-2", "P-3"})):
        out = tmp_path / "c.pdf"
        r = _run("calcs", src, "-o", out, *args)
        assert r.exit_code == 0, r.output
        assert set(sheets_by_tag(pages(out))) == want


@pytest.mark.parametrize(("args", "words"), [
    (["--tags", "NOPE"], "--tags: no line with Tag 'NOPE' in Lines"),
    (["--area", "West"], "--area: no line of Lines has Area 'West' (its areas: 'North')"),
    (["-o", "OUT.txt"], "the calculation package is a PDF; give a name ending in .pdf"),
    ([], "give the package's file with -o OUT.pdf"),
])
def test_bad_options_are_one_sentence_and_exit_2(tmp_path, args, words):
    src = write_book(tmp_path / "in.xlsx", [{**pipe("P-1"), "Area": "North"}],
                     ["Tag", "Area", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
                      "Max surface temperature [°C]"])
    args = [a if a != "OUT.txt" else tmp_path / "out.txt" for a in args]
    if "-o" not in args and args:
        args = ["-o", tmp_path / "out.pdf", *args]
    r = _run("calcs", src, *args)
    assert r.exit_code == 2
    assert words in r.output
    assert "Traceback" not in r.output and len(r.output.strip().splitlines()) == 1
    assert not (tmp_path / "out.pdf").exists()


def test_the_package_is_never_written_onto_the_input_or_a_file_open_in_a_spreadsheet(tmp_path):
    """The one safe save: the input itself, and a name a spreadsheet program holds locked, are refused."""
    src = write_book(tmp_path / "in.xlsx", [pipe("P-1")])
    before = src.read_bytes()
    r = _run("calcs", src, "-o", src)
    assert r.exit_code == 2 and src.read_bytes() == before
    out = tmp_path / "c.pdf"
    out.write_bytes(b"old")
    (tmp_path / ".~lock.c.pdf#").write_text("someone,host,2026")
    r = _run("calcs", src, "-o", out)
    assert r.exit_code == 2 and "open" in r.output and out.read_bytes() == b"old"


def test_a_line_in_error_gets_a_sheet_that_says_it_was_not_computed_and_exit_1(tmp_path):
    _require_poppler()
    src = write_book(tmp_path / "in.xlsx", [pipe("P-1"), pipe("E-1", **{"Insulation": "no such material"})])
    out = tmp_path / "c.pdf"
    r = _run("calcs", src, "-o", out)
    assert r.exit_code == 1
    text = sheets_by_tag(pages(out))["E-1"]
    assert "Not computed" in text and "no such material" in text


def test_every_correlation_the_engine_uses_has_a_reference_in_the_design_basis():
    names = {m[0] for m in METHODS}
    for pair in CORRELATION_NAMES.values():
        for name in pair:
            assert any(name.startswith(m) for m in names), name


def test_without_dejavu_the_core_font_writes_the_package(tmp_path, monkeypatch):
    """Where matplotlib's DejaVu Sans cannot be found, Helvetica sets the text (° and ² are Latin-1;
    the few other characters are spelled out) and the package is still written."""
    _require_poppler()
    monkeypatch.setattr(document, "font_files", lambda: None)
    src = write_book(tmp_path / "in.xlsx", [pipe("P-1")])
    out = tmp_path / "c.pdf"
    assert _run("calcs", src, "-o", out).exit_code == 0
    text = sheets_by_tag(pages(out))["P-1"]
    assert "°C" in text and "Ts^4 - Tsur^4" in text


def test_results_the_workbook_holds_that_differ_from_the_calculation_are_named(tmp_path):
    """A filled workbook whose input changed after filling: the package shows the calculation, and the
    title page and a warning name the results that differ (an unchanged one names none)."""
    _require_poppler()
    src = write_book(tmp_path / "in.xlsx", [pipe("P-1"), pipe("P-2")])
    filled = tmp_path / "filled.xlsx"
    assert _run("fill", src, "-o", filled, "-q").exit_code == 0
    r = _run("calcs", filled, "-o", tmp_path / "same.pdf", "--all")
    assert r.exit_code == 0 and "differ" not in r.output
    wb = openpyxl.load_workbook(filled)
    ws = wb["Lines"]
    col = next(c.column for c in ws[1] if c.value == "Operating temperature [°C]")
    ws.cell(3, col).value = 350  # P-2, after it was filled
    wb.save(filled)
    out = tmp_path / "changed.pdf"
    r = _run("calcs", filled, "-o", out, "--all")
    assert r.exit_code == 0
    assert "warning: P-2 Thickness [mm]:" in r.output and "P-1" not in r.output.split("written:")[0]
    title = pages(out)[0]
    assert "differ from this calculation" in title and "P-2 Thickness [mm]" in title
