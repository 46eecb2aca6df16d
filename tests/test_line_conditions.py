"""Per-line conditions end to end: the Lines columns 'Ambient temperature', 'Wind speed',
'Relative humidity', 'Surroundings temperature' and 'Solar irradiance' override that field of
the line's named conditions, through ``fill`` in xlsx and ods, SI and US units; ``check``
validates every new column and setting."""

from __future__ import annotations

import json

import pytest

from lagsheet.commands.fill import fill

from conftest import write_book, write_ods

SI = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Condition", "Insulation", "Finish",
      "Max surface temperature [°C]", "Prevent condensation", "Ambient temperature [°C]", "Wind speed [m/s]",
      "Relative humidity [%]", "Surroundings temperature [°C]", "Solar irradiance [W/m²]", "Solar absorptance"]
US = ["Tag", "Shape", "Size", "Length [ft]", "Operating temperature [°F]", "Condition", "Insulation", "Finish",
      "Max surface temperature [°F]", "Prevent condensation", "Ambient temperature [°F]", "Wind speed [mph]",
      "Relative humidity [%]", "Surroundings temperature [°F]", "Solar irradiance [W/m²]", "Solar absorptance"]
CONDITIONS = [["Name", "Ambient temperature [°C]", "Surroundings temperature [°C]", "Wind speed [m/s]",
               "Relative humidity [%]", "Operating hours [h]", "Solar irradiance [W/m²]"],
              ["site", -5, -10, 6, 40, 8760, 800],
              ["tropic", 30, 30, 0.5, 80, 8760, 600]]
# (tag, size, length m, T °C, condition, insulation, finish, Ts max °C, condensation, overrides or None)
LINES = [
    ("O-1", "NPS 4", 10, 180, "indoor", "mineral wool", "aluminium", 60, None, (-5, 6, 40, -10, 800, None)),
    ("N-1", "NPS 4", 10, 180, "site", "mineral wool", "aluminium", 60, None, None),
    ("P-1", "NPS 4", 10, 180, "indoor", "mineral wool", "aluminium", 60, None, None),
    ("O-2", "NPS 2", 10, 5, "indoor", "elastomeric foam", "none", None, "yes", (30, 0.5, 80, None, 600, 0.5)),
    ("N-2", "NPS 2", 10, 5, "tropic", "elastomeric foam", "none", None, "yes", (None, None, None, None, None, 0.5)),
]


def _f(c):
    return None if c is None else c * 9 / 5 + 32


def _rows(us: bool) -> list[list]:
    out = [US if us else SI]
    for tag, size, length, t, cond, ins, fin, tmax, prevent, ov in LINES:
        ov = ov or (None,) * 6
        amb, wind, rh, sur, solar, alpha = ov
        if us:
            out.append([tag, "pipe", size, length / 0.3048, _f(t), cond, ins, fin, _f(tmax), prevent, _f(amb),
                        None if wind is None else wind / 0.44704, rh, _f(sur), solar, alpha])
        else:
            out.append([tag, "pipe", size, length, t, cond, ins, fin, tmax, prevent, amb, wind, rh, sur, solar, alpha])
    return out


def _book(tmp_path, kind: str, us: bool):
    rows = _rows(us)
    if kind == "xlsx":
        return write_book(tmp_path / "in.xlsx", [dict(zip(rows[0], r, strict=True)) for r in rows[1:]], rows[0],
                          sheets={"Conditions": CONDITIONS})
    return write_ods(tmp_path / "in.ods", {"Lines": rows, "Conditions": CONDITIONS})


def _results(tmp_path, kind, us) -> dict[str, dict]:
    src = _book(tmp_path, kind, us)
    fill(src, tmp_path / f"out.{kind}", report_path=tmp_path / "r.json")
    return {ln["tag"]: ln for ln in json.loads((tmp_path / "r.json").read_text())["lines"]}


KEYS = ("thickness_m", "surface_temperature_K", "heat_loss_W", "dew_point_K")


def _same(a: dict, b: dict, rel: float):
    for k in KEYS:
        x, y = a["results"].get(k), b["results"].get(k)
        assert (x is None) == (y is None), k
        if x is not None:
            assert x == pytest.approx(y, rel=rel), k


@pytest.mark.parametrize("kind", ["xlsx", "ods"])
@pytest.mark.parametrize("us", [False, True])
def test_line_columns_override_the_named_condition(tmp_path, kind, us):
    """A line naming 'indoor' with the columns set computes as the same line naming a Conditions row
    of those values (a hot line in the sun; a cold line whose ambient, wind and humidity are its own
    and whose sun is the row's), and differs from the plain 'indoor' line. In US units the line's
    °F and mph are held to the Conditions sheet's °C and m/s: the twins agree only if they are read right."""
    got = _results(tmp_path, kind, us)
    for tag, twin in (("O-1", "N-1"), ("O-2", "N-2")):
        assert got[tag]["status"] != "error", got[tag]["notes"]
        _same(got[tag], got[twin], rel=1e-9)
    assert got["O-1"]["results"]["surface_temperature_K"] != pytest.approx(got["P-1"]["results"]["surface_temperature_K"])
    assert any(n["code"] == "sun-gain" for n in got["O-2"]["notes"])


CHECK_HEAD = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
              "Ambient temperature [°C]", "Wind speed [m/s]", "Relative humidity [%]",
              "Surroundings temperature [°C]", "Solar irradiance [W/m²]", "Solar absorptance"]


@pytest.mark.parametrize(("header", "value", "cell"), [
    ("Ambient temperature [°C]", -300, "G2"), ("Wind speed [m/s]", -1, "H2"), ("Relative humidity [%]", 150, "I2"),
    ("Surroundings temperature [°C]", -300, "J2"), ("Solar irradiance [W/m²]", 5000, "K2"),
    ("Solar absorptance", 1.5, "L2"), ("Wind speed [m/s]", "breezy", "H2"),
])
def test_check_names_the_cell_of_every_new_line_column(tmp_path, cli, header, value, cell):
    row = {"Tag": "P-1", "Shape": "pipe", "Size": "NPS 4", "Length [m]": 10, "Operating temperature [°C]": 150,
           "Insulation": "mineral wool", header: value}
    src = write_book(tmp_path / "in.xlsx", [row], CHECK_HEAD)
    r = cli("check", src, "--report", tmp_path / "c.json")
    assert r.exit_code == 1, r.output
    notes = [n for n in json.loads((tmp_path / "c.json").read_text())["notes"] if n["level"] == "error"]
    assert [(n["sheet"], n["cell"]) for n in notes] == [("Lines", cell)], notes
    assert header.split(" [")[0] in notes[0]["message"]


def test_check_validates_the_conditions_solar_column_and_the_touch_setting(tmp_path, cli):
    conditions = [["Name", "Ambient temperature [°C]", "Solar irradiance [W/m²]"], ["site", 20, -5]]
    settings = [["Setting", "Value", "Unit"], ["Touch check in still air", "maybe", None]]
    row = {"Tag": "P-1", "Shape": "pipe", "Size": "NPS 4", "Length [m]": 10, "Operating temperature [°C]": 150,
           "Insulation": "mineral wool"}
    src = write_book(tmp_path / "in.xlsx", [row], CHECK_HEAD, sheets={"Conditions": conditions, "Settings": settings})
    cli("check", src, "--report", tmp_path / "c.json")
    notes = {(n["sheet"], n["cell"]): n for n in json.loads((tmp_path / "c.json").read_text())["notes"]
             if n["level"] == "error"}
    assert ("Conditions", "C2") in notes and "Solar irradiance" in notes[("Conditions", "C2")]["message"]
    assert notes[("Settings", "B2")]["code"] == "bad-setting"
    assert "write yes or no" in notes[("Settings", "B2")]["message"]
