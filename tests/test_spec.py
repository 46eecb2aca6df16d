"""Sizing and evaluation of lines: targets, governing, errors, energy and cost, unit systems."""

from __future__ import annotations

import json

import pytest

from lagsheet.commands.fill import fill
from lagsheet.workbook.library import materials

from conftest import pipe, write_book

SOLD = materials()["mineral wool"].thicknesses  # m


def run(tmp_path, rows, name="in.xlsx", **kw):
    src = write_book(tmp_path / name, rows, **kw)
    out = fill(src, tmp_path / ("out-" + name), report_path=tmp_path / (name + ".json"))
    return out, json.loads((tmp_path / (name + ".json")).read_text())["lines"]


@pytest.mark.parametrize("row", [
    pipe(),
    pipe(**{"Max surface temperature [°C]": 45, "Operating temperature [°C]": 350}),
    pipe(**{"Max surface temperature [°C]": None, "Max heat loss [W/m]": 60}),
    pipe(**{"Size": "NPS 1", "Max surface temperature [°C]": 40, "Operating temperature [°C]": 120}),
    pipe(**{"Size": "NPS 16", "Condition": "outdoor", "Max heat loss [W/m]": 150}),
])
def test_the_chosen_thickness_is_the_thinnest_sold_one_that_meets_the_targets(tmp_path, row):
    """Brute force: the chosen sold thickness meets every target and the next thinner one does not."""
    _, (line,) = run(tmp_path, [row])
    t = line["results"]["thickness_m"]
    k = SOLD.index(pytest.approx(t))
    checks = [SOLD[k]] + ([SOLD[k - 1]] if k > 0 else [])
    rows = [{**row, "Tag": f"F{j}", "Fixed thickness [mm]": th * 1000} for j, th in enumerate(checks)]
    _, fixed = run(tmp_path, rows, "fixed.xlsx")

    def meets(r):
        ok = True
        if row.get("Max surface temperature [°C]") is not None:
            ok &= r["surface_temperature_K"] <= row["Max surface temperature [°C]"] + 273.15 + 1e-9
        if row.get("Max heat loss [W/m]") is not None:
            ok &= r["heat_loss_per_length_W_m"] <= row["Max heat loss [W/m]"] * (1 + 1e-12)
        return ok

    assert meets(fixed[0]["results"])
    if k > 0:
        assert not meets(fixed[1]["results"])
    assert fixed[0]["results"]["heat_loss_W"] == pytest.approx(line["results"]["heat_loss_W"], rel=1e-9)


def test_governing_names_the_target_that_set_the_thickness(tmp_path):
    """A large minimum governs over an easy surface limit; a tight surface limit over a small minimum."""
    _, lines = run(tmp_path, [
        pipe("A", **{"Min thickness [mm]": 150, "Max surface temperature [°C]": 60}),
        pipe("B", **{"Min thickness [mm]": 20, "Max surface temperature [°C]": 40}),
        pipe("C", **{"Max surface temperature [°C]": None, "Fixed thickness [mm]": 50}),
        pipe("D", **{"Max surface temperature [°C]": None}),
    ])
    assert [x["results"]["governing"] for x in lines] == ["minimum", "surface temperature", "fixed", "none"]
    assert lines[0]["results"]["thickness_m"] == pytest.approx(0.16)  # first sold >= 150 mm
    assert lines[3]["notes"][0]["code"] == "no-target"


def test_a_target_no_sold_thickness_meets_is_an_error_naming_the_best_value(tmp_path):
    """A 30 °C surface limit on a 600 °C line is an error that names the value at 200 mm."""
    out, (line,) = run(tmp_path, [pipe(**{"Insulation": "calcium silicate", "Operating temperature [°C]": 600,
                                          "Max surface temperature [°C]": 26})])
    assert out.exit_code == 1 and line["status"] == "error"
    msg = line["notes"][0]["message"]
    assert "'Max surface temperature' 26.0 °C is not met" in msg and "at 200 mm, the thickest of calcium silicate" in msg


def test_bare_lines_equal_their_bare_heat_loss(tmp_path):
    """Fixed thickness 0 evaluates the bare pipe: heat loss equals bare heat loss, surface at operating temperature."""
    _, (line,) = run(tmp_path, [pipe(**{"Fixed thickness [mm]": 0, "Insulation": None,
                                        "Max surface temperature [°C]": None})])
    r = line["results"]
    assert r["layers"] == "bare" and r["thickness_m"] == 0
    assert r["heat_loss_W"] == pytest.approx(r["bare_heat_loss_W"], rel=1e-12)
    assert r["surface_temperature_K"] == pytest.approx(473.15)
    assert any(n["code"] == "hot-surface" for n in line["notes"])


def test_energy_cost_and_co2_follow_the_documented_formulas(tmp_path):
    """Annual energy = W × h / 1000; cost = energy / efficiency × price; CO2 = bought × factor (README)."""
    settings = [["Setting", "Value", "Unit"], ["Energy price", 40, "EUR/MWh"], ["Heating efficiency", 80, "%"],
                ["Emission factor", 0.25, "kg/kWh"]]
    conditions = [["Name", "Ambient temperature [°C]", "Wind speed [m/s]", "Relative humidity [%]",
                   "Operating hours [h]"], ["shop", 15, 1, 50, 5000]]
    _, (line,) = run(tmp_path, [pipe(Condition="shop")], sheets={"Settings": settings, "Conditions": conditions})
    r = line["results"]
    energy = r["heat_loss_W"] * 5000 / 1000
    assert r["annual_energy_kWh"] == pytest.approx(energy, rel=1e-12)
    assert r["annual_cost"] == pytest.approx(energy / 0.8 * 0.04, rel=1e-12)
    assert r["co2_kg_per_year"] == pytest.approx(energy / 0.8 * 0.25, rel=1e-12)
    bare = r["bare_heat_loss_W"] * 5000 / 1000 / 0.8 * 0.04
    assert r["annual_saving"] == pytest.approx(bare - r["annual_cost"], rel=1e-12)


def test_cold_lines_gain_heat_use_the_cop_and_carry_the_vapour_retarder_caution(tmp_path):
    """A chilled line reports a negative heat loss, costs by the COP, and is sized for condensation."""
    settings = [["Setting", "Value", "Unit"], ["Cooling COP", 4, None], ["Energy price", 0.1, "EUR/kWh"]]
    row = pipe(**{"Operating temperature [°C]": 6, "Insulation": "elastomeric foam", "Size": "DN 100",
                  "Max surface temperature [°C]": None, "Prevent condensation": "yes"})
    _, (line,) = run(tmp_path, [row], sheets={"Settings": settings})
    r = line["results"]
    assert r["heat_loss_W"] < 0 and r["annual_energy_kWh"] < 0
    assert r["annual_cost"] == pytest.approx(-r["annual_energy_kWh"] / 4 * 0.1, rel=1e-12)
    assert r["governing"] == "condensation"
    assert r["surface_temperature_K"] >= r["dew_point_K"] + 1.0 - 1e-9
    assert any(n["code"] == "vapour-retarder" for n in line["notes"])


def test_the_same_schedule_in_us_units_gives_the_same_physics(tmp_path):
    """°F, inches and Btu/(h·ft) give the results of °C, mm and W/m within 0.1 %, written in US units."""
    si = pipe(**{"Size": None, "Outside diameter [mm]": 168.3, "Operating temperature [°C]": 180,
                 "Max surface temperature [°C]": None, "Fixed thickness [mm]": 76.2, "Length [m]": 30.48})
    us_headers = ["Tag", "Shape", "Outside diameter [in]", "Length [ft]", "Operating temperature [°F]",
                  "Insulation", "Fixed thickness [in]"]
    us = {"Tag": "P-1", "Shape": "pipe", "Outside diameter [in]": 168.3 / 25.4, "Length [ft]": 100,
          "Operating temperature [°F]": 356, "Insulation": "mineral wool", "Fixed thickness [in]": 3}
    _, (a,) = run(tmp_path, [si])
    out, (b,) = run(tmp_path, [us], "us.xlsx", headers=us_headers)
    for key in ("heat_loss_W", "surface_temperature_K", "bare_heat_loss_W", "heat_flux_W_m2"):
        assert b["results"][key] == pytest.approx(a["results"][key], rel=1e-3)
    import openpyxl

    ws = openpyxl.load_workbook(tmp_path / "out-us.xlsx")["Lines"]
    heads = [c.value for c in ws[1]]
    assert "Surface temperature [°F]" in heads and "Heat loss [Btu/h]" in heads and "Thickness [in]" in heads
    col = heads.index("Thickness [in]") + 1
    assert ws.cell(2, col).value == pytest.approx(3.0)


def test_duplicate_and_blank_tags_are_errors(tmp_path):
    """Tags must be unique and present; the first of a duplicate pair is still computed."""
    _, lines = run(tmp_path, [pipe("P-1"), pipe("p-1"), pipe(None)])
    assert [x["status"] for x in lines] == ["ok", "error", "error"]
    assert lines[1]["notes"][-1]["code"] == "duplicate-tag"
    assert lines[2]["notes"][-1]["code"] == "blank-tag"


def test_an_operating_temperature_outside_the_service_range_is_an_error(tmp_path):
    """Elastomeric foam at 150 °C is outside its service range: an error on the line."""
    _, (line,) = run(tmp_path, [pipe(**{"Insulation": "elastomeric foam", "Operating temperature [°C]": 150})])
    assert line["status"] == "error" and line["notes"][0]["code"] == "service-range"


def test_a_system_below_the_critical_radius_is_warned_that_it_loses_more_than_bare(tmp_path):
    """A thin layer of a high-k material on a small tube loses more than the bare tube: a warning names r_c."""
    materials_sheet = [["Name", "Mean temperature [°C]", "Conductivity [W/(m·K)]", "Max temperature [°C]"],
                       ["plaster", 0, 0.5, 600], ["plaster", 500, 0.5, None]]
    row = pipe(**{"Size": None, "Outside diameter [mm]": 10, "Insulation": "plaster",
                  "Max surface temperature [°C]": None, "Fixed thickness [mm]": 10,
                  "Finish": "painted"})
    _, (line,) = run(tmp_path, [row], sheets={"Materials": materials_sheet})
    r = line["results"]
    assert abs(r["heat_loss_W"]) > abs(r["bare_heat_loss_W"])
    assert r["critical_radius_m"] > 0.015  # k/h with k = 0.5 and h of order 10-20 W/(m²·K)
    note = next(n for n in line["notes"] if n["code"] == "more-than-bare")
    assert "below the critical radius" in note["message"] and note["level"] == "warning"


def test_a_materials_sheet_overrides_the_built_in_curve(tmp_path):
    """A Materials row named like a built-in replaces its conductivity; losses scale accordingly."""
    low = [["Name", "Mean temperature [°C]", "Conductivity [W/(m·K)]"],
           ["mineral wool", 0, 0.02], ["mineral wool", 400, 0.02]]
    high = [["Name", "Mean temperature [°C]", "Conductivity [W/(m·K)]"],
            ["mineral wool", 0, 0.08], ["mineral wool", 400, 0.08]]
    row = pipe(**{"Max surface temperature [°C]": None, "Fixed thickness [mm]": 50})
    _, (a,) = run(tmp_path, [row], "a.xlsx", sheets={"Materials": low})
    _, (b,) = run(tmp_path, [row], "b.xlsx", sheets={"Materials": high})
    assert b["results"]["heat_loss_W"] > 3 * a["results"]["heat_loss_W"]


def test_tags_are_compared_as_fold_compares_names(tmp_path):
    """A repeated tag is found whatever its case and whitespace (any Unicode space), as headers
    and names are matched (io.table.fold): resolve's uncached fold of tags agrees with it."""
    import re
    import sys

    from lagsheet.design.lines import _fold_tag
    from lagsheet.io.table import fold

    spaces = [chr(c) for c in range(sys.maxunicode + 1) if chr(c).isspace() or re.fullmatch(r"\s", chr(c))]
    assert len(spaces) > 20
    for c in spaces:
        text = f"{c}Ab{c}{c}C{c} d"
        assert _fold_tag(text) == fold(text), repr(c)
    _, lines = run(tmp_path, [pipe("Line  A-1"), pipe("line\u00a0a-1"), pipe("line a-2")])
    assert [x["status"] for x in lines] == ["ok", "error", "ok"]
    assert lines[1]["notes"][-1]["code"] == "duplicate-tag"
