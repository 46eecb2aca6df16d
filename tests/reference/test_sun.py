"""Sun on outdoor surfaces and the touch check in still air, end to end: a workbook goes
through ``fill`` and its JSON report is held to the independent surface balance of
``test_balance.py`` (ht correlations by name, CoolProp air, eps sigma (Ts^4 - Tsur^4), linear
k(T) layers in closed form, scipy brentq), written with the sun as one more gain at the
surface: flux in + alpha G F = convection + radiation out.

The factors F are closed forms (README, "Sun on outdoor surfaces"): 1 on the sun-facing side,
1/pi averaged round a horizontal cylinder (projected width D over perimeter pi D). The
absorptances are the finish table's (galvanised steel 0.64, a published table of solar
absorptivities; REFERENCES.md) or the line's own 'Solar absorptance'.

Tolerances as in test_reported_values.py (the engine's 2 K air table against CoolProp):
0.01 K on temperatures, 1e-4 relative on heat flows; measured values beside each check.
"""

from __future__ import annotations

import json
import math

import pytest
from test_balance import C0, Line, reference_solve
from test_reported_values import MATERIALS

from conftest import write_book

HEAD = ["Tag", "Shape", "Outside diameter [mm]", "Length [m]", "Operating temperature [°C]", "Condition",
        "Insulation", "Finish", "Surface emissivity", "Solar absorptance", "Max surface temperature [°C]",
        "Max heat loss [W/m]", "Prevent condensation", "Fixed thickness [mm]", "Solar irradiance [W/m²]"]
CONDITIONS = [["Name", "Ambient temperature [°C]", "Surroundings temperature [°C]", "Wind speed [m/s]",
               "Relative humidity [%]", "Operating hours [h]", "Solar irradiance [W/m²]"],
              ["sunny", 10, 10, 3, 60, 8000, 1000],
              ["shade", 10, 10, 3, 60, 8000, 0],
              ["humid sun", 30, 30, 1, 80, 8000, 900],
              ["humid shade", 30, 30, 1, 80, 8000, 0],
              ["calm sun", 10, 10, 0, 60, 8000, 1000],
              ["calm", 10, 10, 0, 60, 8000, 0]]
WOOL_MM = (20, 25, 30, 40, 50, 60, 70, 80, 90, 100, 120, 150)  # testwool's sold thicknesses
GALVANISED = (0.28, 0.64)  # the finish table's emissivity and solar absorptance


def run(tmp_path, rows, settings=None) -> dict[str, dict]:
    from lagsheet.commands.fill import fill

    sheets = {"Materials": MATERIALS, "Conditions": CONDITIONS}
    if settings:
        sheets["Settings"] = [["Setting", "Value", "Unit"], *settings]
    src = write_book(tmp_path / "in.xlsx", rows, HEAD, sheets=sheets)
    fill(src, tmp_path / "out.xlsx", report_path=tmp_path / "r.json")
    return {ln["tag"]: ln for ln in json.loads((tmp_path / "r.json").read_text())["lines"]}


def hot(tag, **kw):
    row = {"Tag": tag, "Shape": "pipe", "Outside diameter [mm]": 168.3, "Length [m]": 20,
           "Operating temperature [°C]": 250, "Condition": "sunny", "Insulation": "testwool",
           "Finish": "galvanised steel"}
    row.update(kw)
    return row


def test_a_hot_line_reports_its_sun_facing_surface_and_its_shade_loss(tmp_path):
    """Galvanised jacket in 1000 W/m²: the reported surface is the balance with alpha G = 640 W/m²
    on the sun-facing side; the loss is the shade's (the sun never reduces a hot line's loss)."""
    got = run(tmp_path, [hot("H-1", **{"Fixed thickness [mm]": 50})])["H-1"]["results"]
    eps, alpha = GALVANISED
    line = Line(168.3, 250.0, 0.050, 3.0, eps, t_air_c=10.0)
    ts_sun, _ = reference_solve(line, absorbed=alpha * 1000)
    ts_shade, q_shade = reference_solve(line)
    assert got["surface_temperature_K"] == pytest.approx(ts_sun, abs=0.01)  # measured 1.9e-3 K
    assert got["heat_loss_per_length_W_m"] == pytest.approx(q_shade, rel=1e-4)  # measured 6.6e-7
    assert ts_sun - ts_shade > 30  # the sun matters here: 39.0 K in 3 m/s wind


def test_a_cold_line_gains_the_averaged_sun_and_is_judged_in_the_shade(tmp_path):
    """A chilled pipe in 900 W/m² with its own 'Solar absorptance' 0.6: the gain is the balance with
    alpha G / pi averaged round the pipe; the reported surface (and its dew point) the shade's."""
    row = {"Tag": "C-1", "Shape": "pipe", "Outside diameter [mm]": 114.3, "Length [m]": 30,
           "Operating temperature [°C]": 5, "Condition": "humid sun", "Insulation": "testfoam",
           "Finish": "none", "Surface emissivity": 0.9, "Solar absorptance": 0.6, "Fixed thickness [mm]": 30}
    got = run(tmp_path, [row])["C-1"]["results"]
    line = Line(114.3, 5.0, 0.030, 1.0, 0.9, t_air_c=30.0, material="cold")
    _, q_sun = reference_solve(line, absorbed=0.6 * 900 / math.pi)
    ts_shade, q_shade = reference_solve(line)
    assert got["heat_loss_per_length_W_m"] == pytest.approx(q_sun, rel=1e-4)  # measured 6.5e-6
    assert got["surface_temperature_K"] == pytest.approx(ts_shade, abs=0.01)  # measured 1.1e-5 K
    assert abs(q_sun) > 1.3 * abs(q_shade)  # the sun adds 48 % to the gain here (18.3 against 12.4 W/m)


def _thinnest(limit_c, cases) -> float:
    """The thinnest testwool thickness [m] whose surface stays at or below the limit in every case
    (wind, absorbed sunlight), by the independent balance."""
    eps, _ = GALVANISED
    for mm in WOOL_MM:
        line = [Line(168.3, 250.0, mm / 1000, w, eps, t_air_c=10.0) for w, _ in cases]
        if all(reference_solve(ln, absorbed=a)[0] <= limit_c + C0 for ln, (_, a) in zip(line, cases, strict=True)):
            return mm / 1000
    raise AssertionError("no thickness meets the limit")


@pytest.mark.parametrize(("condition", "still", "limit", "cases"), [
    ("shade", "no", 35, [(3.0, 0.0)]),  # today's rule: the named wind alone (25 mm)
    ("shade", "yes", 40, [(3.0, 0.0), (0.0, 0.0)]),  # and in still air (50 mm; 20 mm at the wind alone)
    ("sunny", "no", 40, [(3.0, 200.0)]),  # full sun on the sun-facing side (40 mm; 20 mm in the shade)
    ("sunny", "yes", 60, [(3.0, 200.0), (0.0, 200.0)]),  # full sun, still air (50 mm; 20 mm otherwise)
])
def test_the_surface_limit_is_sized_in_still_air_and_full_sun(tmp_path, condition, still, limit, cases):
    """'Max surface temperature' on a 250 °C NPS 6 line with its own 'Solar absorptance' 0.2 (alpha G
    = 200 W/m² in 1000 W/m²): the chosen thickness is the thinnest the independent balance finds at
    or below the limit in each case judged; the note says when the sun or still air governed."""
    rows = [hot("T-1", Condition=condition, **{"Max surface temperature [°C]": limit, "Solar absorptance": 0.2})]
    got = run(tmp_path, rows, [["Touch check in still air", still, None]])["T-1"]
    assert got["results"]["thickness_m"] == pytest.approx(_thinnest(limit, cases))
    assert got["results"]["governing"] == "surface temperature"
    codes = {n["code"] for n in got["notes"]}
    assert ("surface-governs" in codes) == (cases != [(3.0, 0.0)])


def test_the_still_air_and_sun_note_gives_the_surface_temperature(tmp_path):
    """The note names the still-air surface (the independent balance's, to the shown 0.1 K)."""
    got = run(tmp_path, [hot("T-2", Condition="shade", **{"Max surface temperature [°C]": 40})])["T-2"]
    th = got["results"]["thickness_m"]
    ts_still, _ = reference_solve(Line(168.3, 250.0, th, 0.0, GALVANISED[0], t_air_c=10.0))
    note = next(n["message"] for n in got["notes"] if n["code"] == "surface-governs")
    assert f"in still air the surface reaches {ts_still - C0:.1f} °C" in note, note


def test_condensation_is_judged_without_the_sun(tmp_path):
    """A chilled line with 'Prevent condensation' gets the same thickness in the sun as in the shade
    (the sun would warm its surface, letting a thinner one pass)."""
    base = {"Shape": "pipe", "Outside diameter [mm]": 60.3, "Length [m]": 10, "Operating temperature [°C]": 2,
            "Insulation": "testfoam", "Finish": "none", "Prevent condensation": "yes"}
    got = run(tmp_path, [{**base, "Tag": "S", "Condition": "humid sun"}, {**base, "Tag": "D", "Condition": "humid shade"}])
    assert got["S"]["results"]["thickness_m"] == got["D"]["results"]["thickness_m"]
    assert got["S"]["results"]["surface_temperature_K"] == pytest.approx(got["D"]["results"]["surface_temperature_K"])
    assert abs(got["S"]["results"]["heat_loss_W"]) > abs(got["D"]["results"]["heat_loss_W"])


def test_a_galvanised_jacket_in_full_sun_on_a_calm_day_is_about_60_k_hotter(tmp_path):
    """The issue's figure: 1000 W/m² on a galvanised jacket (alpha 0.64, eps 0.28), 50 mm on a 250 °C
    NPS 6 line, 10 °C still air: 63.6 K hotter than in the shade by the independent balance
    (39.0 K in 3 m/s wind), and the reported surfaces say the same."""
    rows = [hot(c, Condition=c, **{"Fixed thickness [mm]": 50}) for c in ("calm sun", "calm")]
    got = run(tmp_path, rows)
    rise = got["calm sun"]["results"]["surface_temperature_K"] - got["calm"]["results"]["surface_temperature_K"]
    line = Line(168.3, 250.0, 0.050, 0.0, GALVANISED[0], t_air_c=10.0)
    expected = reference_solve(line, absorbed=GALVANISED[1] * 1000)[0] - reference_solve(line)[0]
    assert rise == pytest.approx(expected, abs=0.02)  # 0.01 K on each surface
    assert 55 < rise < 70


def test_explain_prints_the_sun_in_a_cold_lines_balance(tmp_path):
    """explain's balance line of a chilled pipe in the sun: the printed convection + radiation − sun
    absorbed equal the printed heat flux (to the printed 3 decimals), and the sun term is there."""
    import re

    from typer.testing import CliRunner

    from lagsheet.cli import app

    from conftest import pipe

    row = pipe("CS-1", **{"Operating temperature [°C]": 5, "Condition": "outdoor",
                          "Max surface temperature [°C]": None, "Solar irradiance [W/m²]": 900})
    src = write_book(tmp_path / "sun.xlsx", [row], headers=[*row])
    out = CliRunner().invoke(app, ["explain", str(src), "CS-1"]).output
    m = re.search(r"heat flux (-?[\d.]+) W/m² = convection (-?[\d.]+) \+ radiation (-?[\d.]+) − sun absorbed "
                  r"([\d.]+);", out)
    assert m, out
    q, conv, rad, sun = map(float, m.groups())
    assert sun > 1.0
    assert conv + rad - sun == pytest.approx(q, abs=2e-3)
