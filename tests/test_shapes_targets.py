"""Every shape and target through fill: flats, vessels, spheres, layers, conditions, economics."""

from __future__ import annotations

import json

import pytest

from lagsheet.commands.fill import fill

from conftest import write_book

HEADERS = ["Tag", "Shape", "Size", "Outside diameter [mm]", "Length [m]", "Surface area [m²]", "Width [m]",
           "Operating temperature [°C]", "Condition", "Insulation", "Outer insulation", "Finish",
           "Max surface temperature [°C]", "Max heat loss [W/m]", "Prevent condensation", "Economic",
           "Min thickness [mm]", "Fixed thickness [mm]"]
CONDITIONS = [["Name", "Ambient temperature [°C]", "Wind speed [m/s]", "Relative humidity [%]", "Operating hours [h]"],
              ["summer", 35, 0, 50, 8000], ["humid", 30, 0, 85, 8000], ["winter", -5, 6, 80, 8000]]


def run(tmp_path, rows, name="in.xlsx", sheets=None):
    sheets = {"Conditions": CONDITIONS, **(sheets or {})}
    src = write_book(tmp_path / name, rows, HEADERS, sheets=sheets)
    out = fill(src, tmp_path / ("out-" + name), report_path=tmp_path / (name + ".json"))
    return out, json.loads((tmp_path / (name + ".json")).read_text())["lines"]


def line(tag, shape, **kw):
    row = {"Tag": tag, "Shape": shape, "Operating temperature [°C]": 200, "Insulation": "mineral wool",
           "Max surface temperature [°C]": 50}
    row.update(kw)
    return row


def test_flat_shapes_report_flux_and_whole_heat_loss_but_no_per_length(tmp_path):
    """A wall, a top and an underside: heat loss = flux × area; no per-length value, no critical radius."""
    _, lines = run(tmp_path, [
        line("W", "wall", **{"Surface area [m²]": 12, "Length [m]": 3}),
        line("T", "top", **{"Surface area [m²]": 4}),
        line("U", "underside", **{"Surface area [m²]": 4}),
    ])
    for x, area in zip(lines, (12, 4, 4), strict=True):
        r = x["results"]
        assert x["status"] == "ok"
        assert r["heat_loss_W"] == pytest.approx(r["heat_flux_W_m2"] * area, rel=1e-12)
        assert r["heat_loss_per_length_W_m"] is None and r["critical_radius_m"] is None
        assert r["surface_temperature_K"] <= 323.15 + 1e-9


def test_a_hot_underside_needs_more_insulation_than_a_hot_top(tmp_path):
    """Buoyancy opposes convection under a hot plate: at equal thickness its surface runs hotter."""
    _, (top, under) = run(tmp_path, [
        line("T", "top", **{"Surface area [m²]": 4, "Fixed thickness [mm]": 50}),
        line("U", "underside", **{"Surface area [m²]": 4, "Fixed thickness [mm]": 50}),
    ])
    assert under["results"]["surface_temperature_K"] > top["results"]["surface_temperature_K"] + 1.0


def test_vessels_and_spheres_are_sized(tmp_path):
    """A vessel reports per-length and whole losses; a sphere its whole loss and 2k/h critical radius."""
    _, (v, s) = run(tmp_path, [
        line("V", "vessel", **{"Outside diameter [mm]": 2400, "Length [m]": 8}),
        line("S", "sphere", **{"Outside diameter [mm]": 5000}),
    ])
    assert v["status"] == s["status"] == "ok"
    assert v["results"]["heat_loss_W"] == pytest.approx(v["results"]["heat_loss_per_length_W_m"] * 8, rel=1e-12)
    r = s["results"]
    outer = 2.5 + r["thickness_m"]
    assert r["heat_loss_W"] == pytest.approx(r["heat_flux_W_m2"] * 4 * 3.141592653589793 * outer**2, rel=1e-9)
    assert r["heat_loss_per_length_W_m"] is None and r["critical_radius_m"] > 0


@pytest.mark.parametrize(("row", "code"), [
    (line("W", "wall", **{"Length [m]": 3}), "no-area"),
    (line("W", "wall", **{"Surface area [m²]": 12}), "no-height"),
    (line("V", "vessel", **{"Outside diameter [mm]": 2000}), "no-length"),
    (line("W", "wall", **{"Surface area [m²]": 12, "Length [m]": 3, "Max surface temperature [°C]": None,
                          "Max heat loss [W/m]": 50}), "heat-loss-unit"),
    (line("X", "cone", **{"Outside diameter [mm]": 2000}), "unknown-shape"),
])
def test_missing_dimensions_and_wrong_limits_are_line_errors(tmp_path, row, code):
    """Each shape names what it needs; a per-length limit on a flat line is an error with the fix."""
    out, (x,) = run(tmp_path, [row])
    assert out.exit_code == 1 and x["status"] == "error"
    assert code in [n["code"] for n in x["notes"]]


def test_a_limit_typed_with_its_unit_serves_a_flat_line_in_a_per_length_column(tmp_path):
    """'60 W/m²' in a W/m column limits the flux of a wall; the pipe beside it keeps W/m."""
    _, (w, p) = run(tmp_path, [
        line("W", "wall", **{"Surface area [m²]": 12, "Length [m]": 3, "Max surface temperature [°C]": None,
                             "Max heat loss [W/m]": "60 W/m²"}),
        line("P", "pipe", **{"Size": "NPS 4", "Length [m]": 10, "Max surface temperature [°C]": None,
                             "Max heat loss [W/m]": 60}),
    ])
    assert w["results"]["governing"] == p["results"]["governing"] == "heat loss"
    assert w["results"]["heat_flux_W_m2"] <= 60 + 1e-9
    assert p["results"]["heat_loss_per_length_W_m"] <= 60 + 1e-9


def test_each_target_is_judged_at_its_worst_condition(tmp_path):
    """With 'summer; winter' the surface limit is set by hot still summer air, the loss limit by windy winter."""
    base = {"Size": "NPS 6", "Length [m]": 50, "Condition": "winter; summer"}
    _, (a, b) = run(tmp_path, [
        line("A", "pipe", **base),
        line("B", "pipe", **{**base, "Max surface temperature [°C]": None, "Max heat loss [W/m]": 80}),
    ])
    assert a["results"]["governing_condition"] == "summer"
    assert b["results"]["governing_condition"] == "winter"
    _, (alone,) = run(tmp_path, [line("A", "pipe", **{**base, "Condition": "summer"})], "alone.xlsx")
    assert a["results"]["thickness_m"] == alone["results"]["thickness_m"]
    # results are reported at the first named condition (winter): a cold, windy surface
    assert a["results"]["surface_temperature_K"] < alone["results"]["surface_temperature_K"]
    assert any(n["code"] == "governing-condition" for n in a["notes"])


def test_condensation_is_judged_at_the_most_humid_condition_and_named_when_unmet(tmp_path):
    """A −30 °C sphere that no sold thickness keeps dry at 30 °C/85 % is an error naming that condition."""
    _, (x,) = run(tmp_path, [line("S", "sphere", **{"Outside diameter [mm]": 6000, "Operating temperature [°C]": -30,
                                                     "Insulation": "cellular glass", "Max surface temperature [°C]": None,
                                                     "Prevent condensation": "yes", "Condition": "winter; humid"})])
    assert x["status"] == "error" and x["results"]["governing_condition"] == "humid"
    msg = x["notes"][0]["message"]
    assert "at condition 'humid'" in msg and "dew point of 27.2 °C" in msg  # CoolProp HAPropsSI at 30 °C/85 %


def test_two_materials_keep_the_interface_within_the_outer_limit(tmp_path):
    """Mineral wool under cellular glass on a 480 °C line: interface at most 430 °C, reported in Layers."""
    _, (x,) = run(tmp_path, [line("D", "pipe", **{"Size": "NPS 8", "Length [m]": 20, "Operating temperature [°C]": 480,
                                                   "Outer insulation": "cellular glass", "Max surface temperature [°C]": 55})])
    r = x["results"]
    assert x["status"] == "ok"
    assert r["interface_temperature_K"] <= 430 + 273.15 + 1e-9
    assert "mineral wool + " in r["layers"] and "cellular glass (interface" in r["layers"]


def test_thickness_above_the_max_layer_is_built_in_layers(tmp_path):
    """160 mm of mineral wool (max layer 100 mm) is written as 2 × 80 mm."""
    _, (x,) = run(tmp_path, [line("P", "pipe", **{"Size": "NPS 4", "Length [m]": 10, "Max surface temperature [°C]": None,
                                                   "Min thickness [mm]": 160})])
    assert x["results"]["layers"] == "2 × 80 mm mineral wool"


def test_economic_without_costs_is_an_error_naming_what_is_missing(tmp_path):
    """'Economic' with no material cost and no jacket or labour price names each missing item."""
    _, (x,) = run(tmp_path, [line("E", "pipe", **{"Size": "NPS 4", "Length [m]": 10, "Economic": "yes",
                                                   "Max surface temperature [°C]": None})])
    assert x["status"] == "error"
    msg = next(n["message"] for n in x["notes"] if n["code"] == "economic-costs")
    assert "'Cost per volume' of mineral wool" in msg and "'Jacket cost per area'" in msg and "'Labour per layer'" in msg
