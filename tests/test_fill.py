"""`lagsheet fill` and `lagsheet demo` through the real CLI: outputs, notes, exit codes, safety."""

from __future__ import annotations

import json
import zipfile

import openpyxl
import pytest
from openpyxl.comments import Comment

from conftest import pipe, sha256, write_book

OUTPUT_HEADERS = ["Thickness [mm]", "Layers", "Governing", "Surface temperature [°C]",
                  "Heat flux [W/m²]", "Heat loss per length [W/m]", "Heat loss [W]",
                  "Bare heat loss [W]", "Annual energy [kWh]", "Annual cost [EUR]",
                  "Annual saving [EUR]", "CO2 [kg/yr]", "Critical radius [mm]", "Dew point [°C]", "Notes"]


def headers(ws, row):
    return [c.value for c in ws[row]]


def test_fill_adds_the_output_columns_right_of_the_last_used_column(tmp_path, cli):
    """The contract's output columns, with units, follow the user's last column in order."""
    src = write_book(tmp_path / "in.xlsx", [pipe()], title_rows=2)
    ws0 = openpyxl.load_workbook(src)["Lines"]
    ws0.cell(3, 16, "my remarks")
    ws0.parent.save(src)
    r = cli("fill", src, "-o", tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    h = headers(ws, 3)
    assert h[15] == "my remarks"
    assert h[16:16 + len(OUTPUT_HEADERS)] == OUTPUT_HEADERS
    assert ws.cell(1, 1).value == "title row 1"
    assert ws.cell(4, 17).value in (20, 25, 30, 40, 50, 60, 70, 80, 90, 100, 120, 140, 160, 180, 200)
    assert ws.cell(4, 19).value == "surface temperature"
    assert ws.cell(4, 20).value <= 55.0


def test_the_input_file_is_never_modified(tmp_path, cli):
    """fill leaves the input byte-identical."""
    src = write_book(tmp_path / "in.xlsx", [pipe(), pipe("P-2", **{"Insulation": "unobtainium"})])
    before = sha256(src)
    cli("fill", src, "-o", tmp_path / "out.xlsx")
    assert sha256(src) == before


def test_refilling_overwrites_our_columns_in_place_and_replaces_our_comments(tmp_path, cli):
    """Running fill on its own output keeps one set of columns and one lagsheet comment per cell."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Insulation": "minral wool"})])
    wb = openpyxl.load_workbook(src)
    wb["Lines"]["A2"].comment = Comment("checked by site team", "A. Person")
    wb.save(src)
    cli("fill", src, "-o", tmp_path / "once.xlsx")
    cli("fill", tmp_path / "once.xlsx", "-o", tmp_path / "twice.xlsx")
    ws = openpyxl.load_workbook(tmp_path / "twice.xlsx")["Lines"]
    h = headers(ws, 1)
    assert h.count("Thickness [mm]") == 1 and h.count("Notes") == 1
    assert ws["A2"].comment.text == "checked by site team"
    comment = ws["H2"].comment
    assert comment is not None and comment.author == "lagsheet"
    assert comment.text.count("lagsheet:") == 1 and "did you mean 'mineral wool'" in comment.text


def test_a_line_error_fills_the_others_and_exits_1(tmp_path, cli):
    """An unknown material is an error on its line only; exit 1; the good line is filled."""
    src = write_book(tmp_path / "in.xlsx", [pipe(), pipe("P-2", **{"Insulation": "unobtainium"})])
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code == 1
    rep = json.loads((tmp_path / "r.json").read_text())
    ok, bad = rep["lines"]
    assert ok["status"] == "ok" and ok["results"]["thickness_m"] > 0
    assert bad["status"] == "error" and bad["results"]["thickness_m"] is None
    assert bad["notes"][0]["code"] == "unknown-material" and bad["notes"][0]["cell"] == "H3"
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    assert ws.cell(3, 15 + 14).value.startswith("error: material 'unobtainium'")


def test_the_json_report_follows_the_contract(tmp_path, cli):
    """Report keys and SI units as WORKBOOK.md section 3 gives them."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    rep = json.loads((tmp_path / "r.json").read_text())
    assert set(rep) >= {"lagsheet", "input", "output", "columns", "lines", "summary"}
    line = rep["lines"][0]
    assert set(line) == {"sheet", "row", "tag", "status", "results", "notes"}
    contract = {
        "thickness_m", "layers", "governing", "surface_temperature_K", "heat_flux_W_m2",
        "heat_loss_per_length_W_m", "heat_loss_W", "bare_heat_loss_W", "annual_energy_kWh",
        "annual_cost", "annual_saving", "co2_kg_per_year", "critical_radius_m", "dew_point_K"}
    extensions = {"governing_condition", "installed_cost", "payback_years", "interface_temperature_K",
                  "outlet_temperature_K", "condensate_kg_per_s", "time_to_freeze_s", "time_to_cool_s",
                  "code_thickness_m",  # WORKBOOK.md section 4
                  "tracing_duty_W_m", "fittings_heat_loss_W"}
    assert set(line["results"]) == contract | extensions
    assert 273.15 < line["results"]["surface_temperature_K"] <= 328.15 + 1e-9
    assert set(rep["summary"]) >= {"lines", "errors", "warnings", "heat_loss_W", "annual_cost", "annual_saving"}
    col = rep["columns"][0]
    assert set(col) == {"sheet", "header", "field", "unit", "status", "message"}


@pytest.mark.parametrize(("make", "message"), [
    (lambda p: p.write_text("not a workbook"), "not an Excel workbook"),
    (lambda p: zipfile.ZipFile(p, "w").close(), "cannot be read"),
])
def test_unreadable_files_exit_2_with_one_line(tmp_path, cli, make, message):
    """A file that is no workbook gives exit 2 and a one-line message, never a traceback."""
    src = tmp_path / "bad.xlsx"
    make(src)
    r = cli("fill", src, "-o", tmp_path / "out.xlsx")
    assert r.exit_code == 2
    assert message in r.output and "Traceback" not in r.output
    assert not (tmp_path / "out.xlsx").exists()


def test_output_equal_to_input_is_refused_without_in_place(tmp_path, cli):
    """fill will not overwrite its input unless --in-place is given."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    before = sha256(src)
    r = cli("fill", src, "-o", src)
    assert r.exit_code == 2 and "would overwrite the input" in r.output
    assert sha256(src) == before


def test_in_place_keeps_a_backup_first(tmp_path, cli):
    """--in-place writes the input's old bytes to a backup before replacing it."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    before = sha256(src)
    r = cli("fill", src, "--in-place")
    assert r.exit_code == 0
    assert sha256(tmp_path / "in.backup.xlsx") == before
    assert "Thickness [mm]" in headers(openpyxl.load_workbook(src)["Lines"], 1)
    assert not list(tmp_path.glob("*.lagsheet-tmp"))


@pytest.mark.parametrize(("sheets", "message"), [
    ("nolines", "has no sheet 'Lines'"),
    ("noheader", "no cell says 'Tag'"),
])
def test_a_workbook_without_lines_exits_2(tmp_path, cli, sheets, message):
    """No Lines sheet, or no header row, is exit 2 naming what to add."""
    wb = openpyxl.Workbook()
    wb.active.title = "Pipes" if sheets == "nolines" else "Lines"
    wb.active.append(["Item", "Shape"])  # no Tag, nor an alias of it
    wb.save(tmp_path / "in.xlsx")
    r = cli("fill", tmp_path / "in.xlsx", "-o", tmp_path / "out.xlsx")
    assert r.exit_code == 2 and message in r.output


def test_formula_cells_are_read_by_their_cached_value_and_uncached_ones_are_errors(tmp_path, cli):
    """A cached formula is used; a formula with no cached value is an error on its cell."""
    src = tmp_path / "in.xlsx"
    write_book(src, [pipe("P-1"), pipe("P-2")])
    # write cached values into the sheet XML by hand: openpyxl cannot store them
    with zipfile.ZipFile(src) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    xml = parts["xl/worksheets/sheet1.xml"].decode()
    # column E (Length) of row 2 -> formula with cached 10; row 3 -> formula without cache
    xml = xml.replace('<c r="E2" t="n"><v>10</v></c>', '<c r="E2"><f>5*2</f><v>10</v></c>')
    xml = xml.replace('<c r="E3" t="n"><v>10</v></c>', '<c r="E3"><f>5*2</f></c>')
    assert xml.count("<f>5*2</f>") == 2
    parts["xl/worksheets/sheet1.xml"] = xml.encode()
    with zipfile.ZipFile(src, "w") as z:
        for n, b in parts.items():
            z.writestr(n, b)
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code == 1
    rep = json.loads((tmp_path / "r.json").read_text())
    assert rep["lines"][0]["status"] == "ok"
    assert rep["lines"][1]["notes"][0]["code"] == "formula-not-cached"
    assert rep["lines"][1]["notes"][0]["cell"] == "E3"


def test_text_from_the_input_is_never_written_as_a_formula(tmp_path, cli):
    """A material named '=HYPERLINK(...)' comes back in Notes as text, not as a formula."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Insulation": '=HYPERLINK("x")'})])
    ws = openpyxl.load_workbook(src)["Lines"]
    ws["H2"].data_type = "s"
    ws.parent.save(src)
    cli("fill", src, "-o", tmp_path / "out.xlsx")
    with zipfile.ZipFile(tmp_path / "out.xlsx") as z:
        xml = z.read("xl/worksheets/sheet1.xml").decode()
    assert "<f>" not in xml


def test_demo_writes_and_fills_the_bundled_schedule(tmp_path, cli):
    """`lagsheet demo DIR` writes the schedule, the filled workbook and the report, with no line errors."""
    r = cli("demo", tmp_path / "d")
    assert r.exit_code == 0, r.output
    rep = json.loads((tmp_path / "d" / "demo-plant-report.json").read_text())
    from lagsheet.commands.demo import LINES

    assert rep["summary"]["lines"] == len(LINES)
    assert rep["summary"]["errors"] == 0 and rep["summary"]["warnings"] >= 3
    ws = openpyxl.load_workbook(tmp_path / "d" / "demo-plant-filled.xlsx")["Lines"]
    assert "Thickness [mm]" in headers(ws, 4)


def test_help_of_fill_carries_the_cautions(cli):
    """`fill --help` names the contact-time basis of surface limits and the vapour retarder."""
    r = cli("fill", "--help")
    assert r.exit_code == 0
    assert "ASTM C1055" in r.output and "vapour retarder" in r.output
