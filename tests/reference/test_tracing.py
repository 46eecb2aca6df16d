"""Heat tracing and fittings, end to end: a workbook goes through ``fill`` and its JSON report
is held to computations written here.

- Tracing duty (IEEE 515 / IEC/IEEE 60079-30-2 practice, REFERENCES.md "Heat tracing"): the
  heat loss per metre of the insulated pipe held at the maintain temperature at the line's
  coldest named condition, in its wind, times (1 + margin). The loss comes from the separate
  surface balance of ``test_balance.py`` (ht correlations by name, CoolProp air, scipy brentq,
  closed-form conduction through a layer of linear k(T)), not from the engine.
- Fittings (REFERENCES.md "Fittings and thermal bridges"): Q = q′ (L (1 + Z) + Σ nᵢ L_eq,i),
  each fitting's equivalent length of the same pipe in the fitting's state (insulated fittings
  on an insulated line; the bare line's fittings bare), q′ by the same separate balance; the
  bare pipe's q′ = π d (h (Ts − Ta) + ε σ (Ts⁴ − Tsur⁴)) at Ts = the operating temperature.

Tolerances as in ``test_reported_values.py``: 1e-4 relative on heat flows (the engine
interpolates air properties in a 2 K table where the separate solve calls CoolProp).
"""

from __future__ import annotations

import json
import math
import re

import numpy as np
import pytest
from test_balance import C0, Line, reference_solve, surface_out
from test_reported_values import CONDITIONS, MATERIALS

from conftest import write_book

REL = 1e-4
HEAD = ["Tag", "Shape", "Size", "Outside diameter [mm]", "Length [m]", "Operating temperature [°C]", "Condition",
        "Insulation", "Surface emissivity", "Fixed thickness [mm]", "Max surface temperature [°C]",
        "Maintain temperature [°C]", "Valves", "Flanges", "Supports", "Heat loss allowance [%]",
        "Freeze protection [h]", "Fluid"]
FITTINGS = [["Item", "Min size", "Max size", "Insulated", "Equivalent length [m]"],
            ["valve", "NPS 4", "NPS 8", "yes", 2.5],  # an NPS 6 line's insulated valves: 2.5 m, not the built-in
            ["flange", None, None, "no", 0.7]]  # every bare flange pair
SETTINGS = [["Setting", "Value", "Unit"], ["Bare emissivity", 0.8, ""]]


def fill(tmp_path, rows, settings=None, fittings=None, name="in.xlsx"):
    from lagsheet.commands.fill import fill as run

    sheets = {"Materials": MATERIALS, "Conditions": CONDITIONS, "Settings": settings or SETTINGS}
    if fittings:
        sheets["Fittings"] = fittings
    src = write_book(tmp_path / name, rows, HEAD, sheets=sheets)
    run(src, tmp_path / "out.xlsx", report_path=tmp_path / "r.json")
    rep = json.loads((tmp_path / "r.json").read_text())
    return {ln["tag"]: ln for ln in rep["lines"]}, rep


def row(tag, **kw):
    r = {"Tag": tag, "Shape": "pipe", "Size": "NPS 4", "Length [m]": 40, "Operating temperature [°C]": 150,
         "Condition": "calm, windy", "Insulation": "testwool", "Surface emissivity": 0.9, "Fixed thickness [mm]": 50}
    r.update(kw)
    return r


def q_insulated(od_mm, t_c, thickness, wind=4.0, t_air_c=10.0, eps=0.9):
    """W/m of the insulated pipe by the separate balance (testwool is test_balance's 'hot' curve)."""
    return reference_solve(Line(od_mm, t_c, thickness, wind, eps, t_air_c=t_air_c))[1]


def q_bare(od_mm, t_c, wind=0.0, t_air_c=20.0, eps=0.8):
    """W/m of the bare pipe, its surface at the operating temperature."""
    line = Line(od_mm, t_c, 0.0, wind, eps, t_air_c=t_air_c)
    return surface_out(t_c + C0, line, od_mm / 1000) * math.pi * od_mm / 1000


def test_tracing_duty_is_the_loss_at_the_maintain_temperature_at_the_coldest_condition_times_the_margin(tmp_path):
    """'windy' (10 °C, 4 m/s) is colder than 'calm' (20 °C): the duty is judged there, default margin 20 %;
    a 'Tracing margin' setting of 15 % gives 1.15 × the same loss."""
    rows = [row("T-1", **{"Maintain temperature [°C]": 60}),
            row("T-2", **{"Size": "NPS 2", "Fixed thickness [mm]": 30, "Maintain temperature [°C]": 170})]
    lines, rep = fill(tmp_path, rows)
    q1, q2 = q_insulated(114.3, 60.0, 0.050), q_insulated(60.3, 170.0, 0.030)  # T-2: traced above its 150 °C
    assert lines["T-1"]["results"]["tracing_duty_W_m"] == pytest.approx(1.20 * q1, rel=REL)
    assert lines["T-2"]["results"]["tracing_duty_W_m"] == pytest.approx(1.20 * q2, rel=REL)
    assert rep["summary"]["tracing_duty_W"] == pytest.approx(40 * 1.20 * (q1 + q2), rel=REL)
    assert any("condition 'windy' (the coldest named" in n["message"] for n in lines["T-1"]["notes"])
    lines, _ = fill(tmp_path, rows, settings=SETTINGS + [["Tracing margin", 15, "%"]])
    assert lines["T-1"]["results"]["tracing_duty_W_m"] == pytest.approx(1.15 * q1, rel=REL)


def test_a_short_time_to_freeze_gives_the_duty_at_5_c_in_the_note(tmp_path):
    """A water line asked to stand 500 h in 'windy' (10 °C air, above freezing here) does not freeze;
    in a -15 °C condition its time falls short and its note gives the 5 °C duty × 1.2."""
    cond = CONDITIONS + [["frost", -15, -15, 4, 80, 2000]]
    r = row("W-1", **{"Operating temperature [°C]": 10, "Condition": "calm, frost", "Fixed thickness [mm]": 30,
                      "Freeze protection [h]": 500, "Fluid": "water", "Size": "NPS 2"})
    from lagsheet.commands.fill import fill as run

    src = write_book(tmp_path / "in.xlsx", [r], HEAD, sheets={"Materials": MATERIALS, "Conditions": cond,
                                                              "Settings": SETTINGS})
    run(src, tmp_path / "out.xlsx", report_path=tmp_path / "r.json")
    line = json.loads((tmp_path / "r.json").read_text())["lines"][0]
    assert line["results"]["time_to_freeze_s"] < 500 * 3600
    note = next(n["message"] for n in line["notes"] if n["code"] == "tracing-for-freeze")
    shown = float(re.search(r"needs ([\d.]+) W/m", note).group(1))
    expected = 1.20 * q_insulated(60.3, 5.0, 0.030, wind=4.0, t_air_c=-15.0)
    assert shown == pytest.approx(expected, abs=0.05)  # the note writes one decimal


def test_fittings_add_their_equivalent_length_and_the_allowance_the_whole_line(tmp_path):
    """NPS 6, 40 m, 2 valves (2.5 m each from the Fittings sheet's NPS 4-8 row), 3 flange pairs
    (built-in insulated 0.6 m), 4 supports (built-in 0.3 m), Z = 10 %; the bare line's fittings
    are bare: valves 1.0 m (built-in), flanges 0.7 m (the sheet's row for every bare flange)."""
    r = row("V-1", **{"Size": "NPS 6", "Condition": "calm", "Valves": 2, "Flanges": 3, "Supports": 4,
                      "Heat loss allowance [%]": 10})
    plain = row("P-1", **{"Size": "NPS 6", "Condition": "calm"})
    lines, rep = fill(tmp_path, [r, plain], fittings=FITTINGS)
    q = q_insulated(168.3, 150.0, 0.050, wind=0.0, t_air_c=20.0)
    qb = q_bare(168.3, 150.0)
    l_eq = 2 * 2.5 + 3 * 0.6 + 4 * 0.3
    l_bare = 2 * 1.0 + 3 * 0.7 + 4 * 0.2
    got = lines["V-1"]["results"]
    assert got["fittings_heat_loss_W"] == pytest.approx(q * l_eq, rel=REL)
    assert got["heat_loss_W"] == pytest.approx(q * (40 * 1.10 + l_eq), rel=REL)
    assert got["bare_heat_loss_W"] == pytest.approx(qb * (40 * 1.10 + l_bare), rel=2e-4)
    assert got["heat_loss_per_length_W_m"] == pytest.approx(q, rel=REL)  # the pipe's own q′
    # energy follows the new loss: the same line without fittings, in the same proportion
    ratio = got["heat_loss_W"] / lines["P-1"]["results"]["heat_loss_W"]
    assert got["annual_energy_kWh"] == pytest.approx(ratio * lines["P-1"]["results"]["annual_energy_kWh"], rel=1e-9)
    assert lines["P-1"]["results"]["fittings_heat_loss_W"] is None
    assert rep["summary"]["fittings_heat_loss_W"] == pytest.approx(q * l_eq, rel=REL)
    note = next(n["message"] for n in lines["V-1"]["notes"] if n["code"] == "fittings")
    assert "insulated (boxes and covers, as the line is insulated)" in note


def test_the_sheets_show_tracing_and_fittings_in_si_and_us_units(tmp_path):
    """The Tracing duty column in W/m and in Btu/(h·ft); the Summary and Quantities rows."""
    import openpyxl

    rows = [row("T-1", **{"Maintain temperature [°C]": 60, "Area": "A"}),
            row("V-1", **{"Size": "NPS 6", "Valves": 2, "Area": "B"})]
    lines, _ = fill(tmp_path, rows)
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    head = [c.value for c in ws[1]]
    duty = ws.cell(2, head.index("Tracing duty [W/m]") + 1).value
    assert duty == pytest.approx(lines["T-1"]["results"]["tracing_duty_W_m"], abs=0.05)
    fit = ws.cell(3, head.index("Fittings heat loss [W]") + 1).value
    assert fit == pytest.approx(lines["V-1"]["results"]["fittings_heat_loss_W"], abs=0.5)
    quantities = [list(r) for r in openpyxl.load_workbook(tmp_path / "out.xlsx")["Quantities"].iter_rows(values_only=True)]
    assert ["valve box", "NPS 6", 2] in [r[:3] for r in quantities]
    # the same line on a US sheet: °F in, Btu/(h·ft) out
    us = {"Tag": "T-US", "Shape": "pipe", "Size": "NPS 4", "Length [ft]": 40 / 0.3048,
          "Operating temperature [°F]": 150 * 1.8 + 32, "Condition": "windy", "Insulation": "testwool",
          "Surface emissivity": 0.9, "Fixed thickness [in]": 50 / 25.4, "Maintain temperature [°F]": 140}
    src = write_book(tmp_path / "us.xlsx", [us], list(us), sheets={"Materials": MATERIALS, "Conditions": CONDITIONS})
    from lagsheet.commands.fill import fill as run

    run(src, tmp_path / "us-out.xlsx", report_path=tmp_path / "us.json")
    ws = openpyxl.load_workbook(tmp_path / "us-out.xlsx")["Lines"]
    head = [c.value for c in ws[1]]
    got = ws.cell(2, head.index("Tracing duty [Btu/(h·ft)]") + 1).value
    expected = 1.20 * q_insulated(114.3, 60.0, 0.050) / 0.9615  # W/m -> Btu/(h·ft): 1 Btu/(h·ft) = 0.9615 W/m
    assert got == pytest.approx(expected, rel=2e-3)  # the sheet's one decimal and the 4-digit factor


def test_tracing_and_fittings_on_an_ods_workbook(tmp_path, cli):
    """The same columns through an OpenDocument workbook (built-in conditions, materials, fittings)."""
    import python_calamine

    from test_ods import make_ods

    head = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Condition", "Insulation",
            "Fixed thickness [mm]", "Maintain temperature [°C]", "Valves"]
    src = make_ods(tmp_path / "in.ods", [head, ["T-1", "pipe", "NPS 4", 20, 150, "outdoor", "mineral wool", 50, 60, None],
                                         ["V-1", "pipe", "NPS 6", 30, 200, "indoor", "mineral wool", 50, None, 3]])
    r = cli("fill", src, "-o", tmp_path / "out.ods", "--report", tmp_path / "r.json")
    assert r.exit_code == 0, r.output
    rep = {ln["tag"]: ln["results"] for ln in json.loads((tmp_path / "r.json").read_text())["lines"]}
    grid = python_calamine.CalamineWorkbook.from_path(str(tmp_path / "out.ods")).get_sheet_by_name("Lines").to_python()
    duty, fit = grid[0].index("Tracing duty [W/m]"), grid[0].index("Fittings heat loss [W]")
    assert grid[1][duty] == pytest.approx(rep["T-1"]["tracing_duty_W_m"], abs=0.05)
    assert grid[2][fit] == pytest.approx(rep["V-1"]["fittings_heat_loss_W"], abs=0.5)
    # built-in insulated valve: 1.5 m of the line each
    assert rep["V-1"]["fittings_heat_loss_W"] == pytest.approx(3 * 1.5 * rep["V-1"]["heat_loss_per_length_W_m"],
                                                               rel=1e-12)
    assert np.isfinite(rep["T-1"]["tracing_duty_W_m"]) and rep["V-1"]["tracing_duty_W_m"] is None


def test_the_built_in_bare_valve_is_the_published_valve_loss_over_the_bare_pipe():
    """A bare 6-inch gate valve at 400 °F loses about 5,800 Btu/h (US DOE steam tip sheet table,
    REFERENCES.md); the bare NPS 6 pipe at 400 °F in still air at 70 °F, emissivity 0.8, loses
    1.77 kW/m by the separate balance: 0.96 m of it, rounded to the built-in 1.0 m."""
    from lagsheet.workbook.fittings import BUILTIN, find

    loss = 5800 * 0.29307107  # Btu/h -> W (1 Btu/h = 0.29307107 W)
    metres = loss / q_bare(168.3, (400 - 32) / 1.8, t_air_c=(70 - 32) / 1.8, eps=0.8)
    assert find(BUILTIN, "valve", 0.1683, False).length == pytest.approx(metres, abs=0.05)


def test_check_names_sheet_cell_and_fix_for_every_new_input(tmp_path, cli):
    """`check`: each bad tracing, fittings or Fittings-sheet input is one error on its own cell."""
    head = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Condition", "Insulation",
            "Maintain temperature [°C]", "Valves", "Flanges", "Supports", "Heat loss allowance [%]"]
    base = {"Shape": "pipe", "Size": "NPS 4", "Length [m]": 10, "Operating temperature [°C]": 80,
            "Insulation": "testfoam"}
    rows = [{**base, "Tag": "A", "Condition": "windy", "Maintain temperature [°C]": 5},  # air at 10 °C
            {**base, "Tag": "B", "Maintain temperature [°C]": 160},  # testfoam: 150 °C at most
            {**base, "Tag": "C", "Valves": -1, "Flanges": "two", "Supports": 1.5, "Heat loss allowance [%]": 200},
            {**base, "Tag": "D", "Shape": "vessel", "Size": "NPS 24", "Valves": 2, "Maintain temperature [°C]": 50}]
    fittings = [["Item", "Min size", "Max size", "Insulated", "Equivalent length [m]"],
                ["gasket", None, None, None, 1], ["valve", "NPS 9x", None, "yes", 1],
                ["valve", "NPS 8", "NPS 4", None, 1], ["flange", None, None, "maybe", 1],
                ["support", "60 mm", "100 mm", "yes", None]]
    src = write_book(tmp_path / "in.xlsx", rows, head,
                     sheets={"Materials": MATERIALS, "Conditions": CONDITIONS, "Fittings": fittings})
    cli("check", src, "--report", tmp_path / "c.json")
    notes = json.loads((tmp_path / "c.json").read_text())["notes"]
    found = {(n["sheet"], n["cell"]): (n["level"], n["code"], n["message"]) for n in notes if n["cell"]}
    expected = {("Lines", "H2"): "tracing-below-air", ("Lines", "H3"): "tracing-over-material",
                ("Lines", "I4"): "out-of-range", ("Lines", "J4"): "not-a-number", ("Lines", "K4"): "bad-count",
                ("Lines", "L4"): "out-of-range", ("Fittings", "A2"): "bad-fitting", ("Fittings", "B3"): "bad-fitting",
                ("Fittings", "C4"): "bad-fitting", ("Fittings", "D5"): "not-yes-no", ("Fittings", "E6"): "bad-fitting"}
    for where, code in expected.items():
        assert found[where][:2] == ("error", code), (where, found.get(where))
    assert found[("Lines", "H5")][:2] == ("warning", "tracing-shape")
    assert found[("Lines", "I5")][:2] == ("warning", "fittings-shape")
    assert "raise it or leave it blank" in found[("Lines", "H2")][2]
    assert "lower it or choose another material" in found[("Lines", "H3")][2]
    assert "fix the size or leave it blank" in found[("Fittings", "B3")][2]


def test_the_economic_thickness_prices_the_allowance_and_fittings_as_reported(tmp_path):
    """Z = 100 % doubles every candidate's loss, so it must choose what twice the energy price
    chooses without it (an exact equivalence); insulated valves worth 30 m on a 30 m line likewise."""
    from test_reported_values import SETTINGS as COSTS

    def economic(extra, price):
        r = row("E-1", **{"Fixed thickness [mm]": None, "Condition": "calm", "Size": "NPS 8", "Length [m]": 30,
                          "Operating temperature [°C]": 250, **extra})
        r["Economic"] = "yes"
        head = HEAD + ["Economic"]
        from lagsheet.commands.fill import fill as run

        src = write_book(tmp_path / "e.xlsx", [r], head, sheets={
            "Materials": MATERIALS, "Conditions": CONDITIONS, "Settings": COSTS + [["Energy price", price, "EUR/kWh"]]})
        run(src, tmp_path / "e-out.xlsx", report_path=tmp_path / "e.json")
        return json.loads((tmp_path / "e.json").read_text())["lines"][0]["results"]["thickness_m"]

    plain = {p: economic({}, p) for p in (0.02, 0.04, 0.08)}
    assert len(set(plain.values())) > 1  # the price moves the choice here, so the check can fail
    for p in (0.02, 0.04):
        assert economic({"Heat loss allowance [%]": 100}, p) == plain[2 * p]
        # 20 valves × 1.5 m (the built-in insulated valve) = 30 m: the line's own length again
        assert economic({"Valves": 20}, p) == plain[2 * p]
