"""Sold sizes only, and an honest Governing: what the estimator is handed is what can be bought."""

from __future__ import annotations

import json
import re

import pytest

from lagsheet.commands.fill import fill
from lagsheet.workbook.library import materials

from conftest import pipe, write_book

THINNEST_MW = materials()["mineral wool"].thicknesses[0]  # m


def run(tmp_path, rows, name="in.xlsx", **kw):
    src = write_book(tmp_path / name, rows, **kw)
    fill(src, tmp_path / ("out-" + name), report_path=tmp_path / (name + ".json"))
    return src, json.loads((tmp_path / (name + ".json")).read_text())["lines"]


@pytest.mark.parametrize(("row", "word"), [
    (pipe(**{"Operating temperature [°C]": 180, "Condition": "outdoor"}), "thinnest sold"),
    (pipe(**{"Operating temperature [°C]": 60, "Max surface temperature [°C]": None,
             "Min thickness [mm]": 20}), "thinnest sold"),
    (pipe(**{"Operating temperature [°C]": 60, "Max surface temperature [°C]": None,
             "Min thickness [mm]": 25}), "minimum"),
    (pipe(**{"Min thickness [mm]": 20}), "surface temperature"),
    (pipe(**{"Max surface temperature [°C]": None, "Fixed thickness [mm]": 20}), "fixed"),
])
def test_governing_says_thinnest_sold_when_no_target_binds(tmp_path, row, word):
    """Governing names a target only when it lifts the thickness above the thinnest sold one."""
    _, (line,) = run(tmp_path, [row])
    r = line["results"]
    assert r["governing"] == word
    if word == "thinnest sold":
        assert r["thickness_m"] == pytest.approx(THINNEST_MW)
    else:
        assert r["thickness_m"] > THINNEST_MW or word == "fixed"


def test_explain_shows_each_targets_own_thickness_and_margin(tmp_path, cli):
    """explain prints the surface target's own thinnest thickness and its margin: the limit minus
    the reported surface at the named wind with the still-air touch check off, and minus the
    still-air surface (the same line with its own 'Wind speed' 0) with it on, as by default."""
    row = pipe(**{"Operating temperature [°C]": 180, "Condition": "outdoor"})
    off = {"Settings": [["Setting", "Value", "Unit"], ["Touch check in still air", "no", ""]]}
    src, (line,) = run(tmp_path, [row], sheets=off)
    out = cli("explain", src, "P-1").output
    m = re.search(r"surface temperature: (\d+) mm; margin \+(\d+\.\d) K", out)
    assert m, out
    assert float(m.group(1)) == pytest.approx(THINNEST_MW * 1000)
    margin = 55.0 - (line["results"]["surface_temperature_K"] - 273.15)
    assert float(m.group(2)) == pytest.approx(margin, abs=0.051)
    assert margin > 20
    still = dict(row, **{"Wind speed [m/s]": 0})
    _, (calm,) = run(tmp_path, [still], name="calm.xlsx", headers=[*row, "Wind speed [m/s]"], sheets=off)
    src, _ = run(tmp_path, [row], name="on.xlsx")
    on = re.search(r"surface temperature: (\d+) mm; margin \+(\d+\.\d) K", cli("explain", src, "P-1").output)
    assert float(on.group(2)) == pytest.approx(55.0 - (calm["results"]["surface_temperature_K"] - 273.15), abs=0.051)
    assert float(on.group(2)) < margin - 10  # still air: a hotter surface, a smaller margin
    assert "governing: thinnest sold" in out


MATERIALS = list(materials().values())


def _layers_in_text(text: str) -> list[tuple[float, str]]:
    """Every layer thickness of a Layers text: '50 mm', '2 × 25 mm', '2 layers (65 and 50 mm)'."""
    groups = re.findall(r"((?:\d+(?:\.\d+)? and )*\d+(?:\.\d+)?) (mm|in)\b", text)
    return [(float(v), u) for vs, u in groups for v in vs.split(" and ")]


def _listed(m, us: bool) -> tuple[float, ...]:
    return tuple(t / 0.0254 for t in m.thicknesses_us) if us else tuple(t * 1000 for t in m.thicknesses)


@pytest.mark.parametrize("us", [False, True], ids=["metric", "inch"])
@pytest.mark.parametrize("m", MATERIALS, ids=lambda m: m.name)
def test_every_sold_total_is_built_of_listed_layers(m, us):
    """Each total the sizing may choose is one listed layer, or 2–3 listed layers no thicker than Max layer."""
    from lagsheet.design.lines import layer_series, sold
    from lagsheet.workbook.library import build

    listed, max_layer = layer_series(m, {}, us)
    totals = sold(m, {}, us)
    assert totals and set(totals) <= set(listed)
    for total in totals:
        layers = build(total, listed, max_layer)
        assert sum(layers) == pytest.approx(total, abs=1e-9)
        assert all(any(abs(x - t) < 1e-9 for t in listed) for x in layers)
        assert len(layers) == 1 or max(layers) <= max_layer + 1e-9


@pytest.mark.parametrize(("us", "row"), [
    (False, {"Tag": "E-1", "Shape": "pipe", "Size": "NPS 2", "Length": 10, "Operating temperature": 5,
             "Insulation": "elastomeric foam", "Min thickness": 35}),
    (True, {"Tag": "E-1", "Shape": "pipe", "Size": "NPS 2", "Length": 30, "Operating temperature": 41,
            "Insulation": "elastomeric foam", "Min thickness": 1.2}),
    (False, {"Tag": "C-1", "Shape": "pipe", "Size": "NPS 8", "Length": 10, "Operating temperature": 450,
             "Insulation": "calcium silicate", "Max surface temperature": 60}),
    (True, {"Tag": "C-1", "Shape": "pipe", "Size": "NPS 8", "Length": 30, "Operating temperature": 842,
            "Insulation": "calcium silicate", "Max surface temperature": 140}),
    (True, {"Tag": "M-1", "Shape": "pipe", "Size": "NPS 4", "Length": 30, "Operating temperature": 392,
            "Insulation": "mineral wool", "Max surface temperature": 131}),
], ids=["elastomeric-mm", "elastomeric-in", "calsil-mm", "calsil-in", "mineral-wool-in"])
def test_fill_chooses_sold_sizes_in_the_sheets_unit_system(tmp_path, us, row):
    """Thickness and every layer of Layers are listed thicknesses of the material, in inches on an inch sheet."""
    units = {"Length": "ft" if us else "m", "Operating temperature": "°F" if us else "°C",
             "Min thickness": "in" if us else "mm", "Max surface temperature": "°F" if us else "°C"}
    row = {(f"{k} [{units[k]}]" if k in units else k): v for k, v in row.items()}
    _, (line,) = run(tmp_path, [row], headers=list(row))
    assert line["status"] == "ok", line["notes"]
    m = materials()[row["Insulation"]]
    listed = _listed(m, us)
    total = line["results"]["thickness_m"] / (0.0254 if us else 0.001)
    assert any(abs(total - t) < 1e-6 for t in listed), (total, listed)
    parts = _layers_in_text(line["results"]["layers"])
    assert len(parts) >= (2 if row.get("Insulation") == "calcium silicate" else 1)
    assert parts and all(u == ("in" if us else "mm") for _, u in parts)
    for v, _ in parts:  # as displayed: whole mm, or inches to 2 decimals
        assert any(abs(v - t) <= (0.0051 if us else 0.5) for t in listed), (line["results"]["layers"], listed)


def test_a_thicknesses_cell_in_inches_is_taken_in_inches(tmp_path):
    """'1, 1½, 2, 3 in' on the Materials sheet of a metric workbook: the chosen thickness is one of them."""
    sheets = {"Materials": [["Name", "Thicknesses"], ["mineral wool", "1, 1½, 2, 3 in"]]}
    _, (line,) = run(tmp_path, [pipe(**{"Max surface temperature [°C]": 45})], sheets=sheets)
    assert line["status"] == "ok"
    assert line["results"]["thickness_m"] * 1000 in [pytest.approx(25.4 * x) for x in (1, 1.5, 2, 3)]


def test_explain_shows_a_process_targets_margin(tmp_path, cli):
    """A freeze-protection line: explain's margin is the reported time to freeze minus the required hours."""
    row = pipe("FW-1", **{"Operating temperature [°C]": 8, "Condition": "winter", "Insulation": "cellular glass",
                          "Max surface temperature [°C]": None, "Fluid": "water", "Freeze protection [h]": 6,
                          "Schedule": "40"})
    winter = [["Name", "Ambient temperature [°C]", "Wind speed [m/s]", "Relative humidity [%]"],
              ["winter", -15, 5, 80], ["room", 25, 0, 50]]
    cool = {**row, "Tag": "CH-1", "Operating temperature [°C]": 18, "Condition": "room", "Fluid": None,
            "Freeze protection [h]": None, "Insulation": "elastomeric foam", "Min thickness [mm]": 9}
    src, (line, other) = run(tmp_path, [row, cool], headers=[*row, "Min thickness [mm]"],
                             sheets={"Conditions": winter})
    # a cool line well above its dew point (25 °C, 50 % RH: about 13.9 °C) has no condensation warning
    assert "condensation" not in [n["code"] for n in other["notes"]], other["notes"]
    out = cli("explain", src, "FW-1").output
    m = re.search(r"freeze protection: (\d+) mm; margin \+(\d+\.\d) h", out)
    assert m, out
    assert float(m.group(2)) == pytest.approx(line["results"]["time_to_freeze_s"] / 3600 - 6, abs=0.051)
