"""Odd single values and small reading slips: each an error (or warning) on its cell, found by check and fill alike."""

from __future__ import annotations

import json

import openpyxl
import pytest

from lagsheet.commands import demo
from lagsheet.workbook import fields as schema

from conftest import pipe, write_book

HEADERS = ["Tag", "Shape", "Size", "Outside diameter [mm]", "Length [m]", "Surface area [m²]",
           "Operating temperature [°C]", "Insulation", "Max surface temperature [°C]", "Prevent condensation",
           "Condition"]


def run_both(tmp_path, cli, src):
    """(check's exit code and notes, fill's exit code and report) for ``src``."""
    rc = cli("check", src, "--report", tmp_path / "check.json")
    rf = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "fill.json")
    assert "Traceback" not in rc.output + rf.output and "internal error" not in rc.output + rf.output
    check = json.loads((tmp_path / "check.json").read_text(encoding="utf-8"))
    fill = json.loads((tmp_path / "fill.json").read_text(encoding="utf-8")) if rf.exit_code != 2 else None
    return rc.exit_code, check["notes"], rf.exit_code, fill


def fill_notes(report) -> list[dict]:
    return report["notes"] + [n for line in report["lines"] for n in line["notes"]]


SETTINGS = ["Setting", "Value", "Unit"]
MATERIALS = ["Name", "Thicknesses [mm]"]


@pytest.mark.parametrize(("row", "sheets", "code", "cell"), [
    ({"Size": None, "Outside diameter [mm]": 1e-320}, {}, "out-of-range", "D2"),
    ({"Size": None, "Outside diameter [mm]": -60}, {}, "out-of-range", "D2"),
    ({"Shape": "top", "Size": None, "Surface area [m²]": 5e-324}, {}, "out-of-range", "F2"),
    ({}, {"Materials": [MATERIALS, ["mineral wool", "1e308"]]}, "bad-material", "H2"),
    ({}, {"Materials": [MATERIALS, ["mineral wool", "-20, 0"]]}, "bad-material", "H2"),
    ({"Size": "NPS -4"}, {}, "unknown-size", "C2"),
    ({"Size": '-4"'}, {}, "unknown-size", "C2"),
    ({}, {"Settings": [SETTINGS, ["Heating efficiency", 0.85, "%"]]}, "bad-setting", "B2"),
    ({}, {"Settings": [SETTINGS, ["Heating efficiency", 120, "%"]]}, "bad-setting", "B2"),
    ({}, {"Settings": [SETTINGS, ["Bare emissivity", 5, ""]]}, "bad-setting", "B2"),
    ({}, {"Settings": [SETTINGS, ["Energy price", 1e308, "EUR/kWh"]]}, "bad-setting", "B2"),
    ({}, {"Settings": [SETTINGS, ["Thickness step", 1e-320, "mm"]]}, "bad-setting", "B2"),
])
def test_an_odd_value_is_an_error_on_its_cell_in_check_and_fill(tmp_path, cli, row, sheets, code, cell):
    """Subnormal sizes, a thickness list of 1e308 or of no positive number, negative NPS, a % efficiency under 1,
    an emissivity of 5, a price of 1e308: exit 1 with the same error in check and fill, never a crash."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**row)], HEADERS, sheets=sheets)
    c_exit, c_notes, f_exit, f_rep = run_both(tmp_path, cli, src)
    assert c_exit == 1 and f_exit == 1
    assert (code, cell) in {(n["code"], n["cell"]) for n in c_notes if n["level"] == "error"}
    assert (code, cell) in {(n["code"], n["cell"]) for n in fill_notes(f_rep) if n["level"] == "error"}


def test_a_percent_efficiency_under_one_says_it_looks_like_a_fraction(tmp_path, cli):
    """'Heating efficiency 0.85 %' is refused in one sentence telling the user to write 85 % (costs would be 100 × off)."""
    src = write_book(tmp_path / "in.xlsx", [pipe()], HEADERS,
                     sheets={"Settings": [SETTINGS, ["Heating efficiency", 0.85, "%"]]})
    _, notes, _, _ = run_both(tmp_path, cli, src)
    msg = next(n["message"] for n in notes if n["code"] == "bad-setting")
    assert "write 85 %" in msg and "fraction" in msg
    assert msg.count("setting") == 1 and msg.startswith("setting 'Heating efficiency': '0.85 %' cannot be used: ")


def test_a_percent_setting_under_one_without_a_unit_is_a_fraction(tmp_path, cli):
    """'Heating efficiency 0.85' with no unit is 85 % (a note says so), not 0.85 %: fuel bought = heat / 0.85."""
    src = write_book(tmp_path / "in.xlsx", [pipe()], HEADERS,
                     sheets={"Settings": [SETTINGS, ["Heating efficiency", 0.85, None], ["Energy price", 0.05, "EUR/kWh"]]})
    c_exit, notes, _, rep = run_both(tmp_path, cli, src)
    assert c_exit == 0 and any(n["code"] == "percent-fraction" for n in notes)
    r = rep["lines"][0]["results"]
    assert r["annual_cost"] == pytest.approx(r["annual_energy_kWh"] / 0.85 * 0.05, rel=1e-9)


def test_a_material_with_bad_thicknesses_is_not_silently_replaced_by_the_built_in(tmp_path, cli):
    """A Materials row for mineral wool with an unusable thickness list: the lines using it are errors, not ok."""
    src = write_book(tmp_path / "in.xlsx", [pipe()], HEADERS,
                     sheets={"Materials": [MATERIALS, ["mineral wool", "thick, thin"]]})
    _, _, _, rep = run_both(tmp_path, cli, src)
    assert rep["lines"][0]["status"] == "error"
    assert rep["lines"][0]["results"]["thickness_m"] is None


def test_dry_air_with_condensation_control_is_no_error(tmp_path, cli):
    """RH 0 % holds no water: 'Prevent condensation' is met, not a false 'target-not-met'."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Operating temperature [°C]": 5, "Insulation": "elastomeric foam",
                                                     "Max surface temperature [°C]": None, "Prevent condensation": "yes",
                                                     "Condition": "dry"})], HEADERS,
                     sheets={"Conditions": [["Name", "Ambient temperature [°C]", "Relative humidity [%]"], ["dry", 25, 0]]})
    c_exit, _, f_exit, rep = run_both(tmp_path, cli, src)
    assert c_exit == 0 and f_exit == 0
    assert rep["lines"][0]["status"] != "error" and rep["lines"][0]["results"]["dew_point_K"] is None


def test_a_units_row_reads_bracketed_units_and_blames_only_its_bad_cell(tmp_path, cli):
    """A units row '[m]', '(F)', 'zorks' is still a units row: Length in m, temperature in °F, an error on D2 only."""
    head = ["Tag", "Length", "Operating temperature", "Max surface temperature", "Shape", "Size", "Insulation"]
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    ws.append(head)
    ws.append([None, "[m]", "(F)", "zorks", None, None, None])
    ws.append(["P-1", 10, 392, 130, "pipe", "NPS 4", "mineral wool"])
    wb.save(tmp_path / "in.xlsx")
    c_exit, notes, _, rep = run_both(tmp_path, cli, tmp_path / "in.xlsx")
    assert c_exit == 1
    errors = {(n["code"], n["cell"]) for n in notes if n["level"] == "error"}
    assert ("bad-unit", "D2") in errors and not any(c in ("B2", "C2") for _, c in errors)
    assert len(rep["lines"]) == 1 and rep["lines"][0]["row"] == 3
    units = {c["header"]: c["unit"] for c in rep["columns"]}
    assert units["Length"] == "meter" and units["Operating temperature"] == "degree_Fahrenheit"


def test_an_inch_size_in_a_millimetre_diameter_column_is_read_as_nps(tmp_path, cli):
    """'2"' in 'Outside diameter [mm]' is NPS 2, 60.3 mm (ASME B36.10M), with a warning saying so, not 50.8 mm."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Size": None, "Outside diameter [mm]": '2"'})], HEADERS)
    _, notes, _, rep = run_both(tmp_path, cli, src)
    msg = next(n["message"] for n in notes if n["code"] == "od-as-nominal-size")
    assert "NPS 2" in msg and "60.3 mm" in msg and "50.8 mm" in msg
    assert rep["lines"][0]["results"]["critical_radius_m"] is not None
    assert any(n["code"] == "od-as-nominal-size" for n in rep["lines"][0]["notes"])


@pytest.mark.parametrize("header", ["Line No.", "Line no", "Line number", "LINE NO."])
def test_line_number_headers_are_the_tag(tmp_path, cli, header):
    """'Line No.' and its spellings mark the header row and are read as the Tag."""
    head = [header, *HEADERS[1:]]
    row = pipe()
    row[header] = row.pop("Tag")
    src = write_book(tmp_path / "in.xlsx", [row], head)
    c_exit, _, _, rep = run_both(tmp_path, cli, src)
    assert c_exit == 0 and rep["lines"][0]["tag"] == "P-1"


def test_cooling_costs_use_a_chilled_water_plant_cop(tmp_path, cli):
    """With no Settings, a cold line's annual cost is its heat gain / 3.5 (plant COP, common practice) × price."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Operating temperature [°C]": 5, "Insulation": "elastomeric foam",
                                                     "Max surface temperature [°C]": None})], HEADERS)
    _, _, _, rep = run_both(tmp_path, cli, src)
    r = rep["lines"][0]["results"]
    assert schema.SETTINGS["cooling_cop"][3] == 3.5
    assert r["annual_cost"] == pytest.approx(abs(r["annual_energy_kWh"]) / 3.5 * 0.05, rel=1e-9)
    assert cli("new", tmp_path / "blank.xlsx").exit_code == 0
    row = next(r for r in openpyxl.load_workbook(tmp_path / "blank.xlsx")["Settings"].iter_rows(values_only=True)
               if r[0] == "Cooling COP")
    assert row[1] == 3.5 and "common practice" in row[3]


def test_the_demo_warns_only_about_its_deliberate_problems(tmp_path, cli):
    """check on the demo schedule: no error, and warnings only of the kinds its docstring names."""
    demo.write_demo(tmp_path / "demo.xlsx")
    r = cli("check", tmp_path / "demo.xlsx", "--report", tmp_path / "r.json")
    notes = json.loads((tmp_path / "r.json").read_text(encoding="utf-8"))["notes"]
    assert r.exit_code == 0
    assert {n["code"] for n in notes if n["level"] == "warning"} <= {
        "od-as-nominal-size", "size-od-differ", "schedule-assumed"}
    assert not any(n["code"] == "no-unit" for n in notes)
