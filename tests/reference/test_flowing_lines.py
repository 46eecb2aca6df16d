"""Lines with a flow, end to end through `fill`: the heat loss, energy and cost written are the heat the
fluid gives up along the line, a water line that would freeze is an error naming the distance, and a
fluid that reaches the air temperature is a warning.

The expected values are computed here from outside sources: the fluid temperature along the line by
``scipy.integrate.solve_ivp`` of ṁ c_p(T) dT/dx = −U′(T)(T − T_a), with c_p from CoolProp
``PropsSI('C', ...)`` at each T and U′(T) from the engine's surface balance at each T (itself checked
against brentq and published correlations in test_balance.py); the heat given up from CoolProp's
enthalpy difference ṁ (h(T_in) − h(T_out)), ``PropsSI('H', ...)``.
"""

from __future__ import annotations

import json
import re
from dataclasses import replace

import numpy as np
import openpyxl
import pytest
from CoolProp.CoolProp import PropsSI
from scipy.integrate import solve_ivp

from lagsheet.commands.fill import fill
from lagsheet.physics.balance import solve
from lagsheet.physics.candidates import heat_rate, per_line

from conftest import BASE_HEADERS, pipe, write_book

HEADERS = BASE_HEADERS + ["Fluid", "Flow rate [kg/s]"]
CONDITIONS = [["Name", "Ambient temperature [°C]", "Surroundings temperature [°C]", "Wind speed [m/s]",
               "Relative humidity [%]", "Operating hours [h]"],
              ["indoor", 20, 20, 0, 50, 8000],
              ["yard", 5, 5, 2, 80, 8000],
              ["winter", -12, -15, 5, 85, 2000]]
AIR = {row[0]: row[1] + 273.15 for row in CONDITIONS[1:]}
P = 101325.0


def water(tag, length, m_dot, t_c, condition, insulation="mineral wool", thickness=25):
    return pipe(tag, **{"Size": "NPS 2", "Length [m]": length, "Operating temperature [°C]": t_c,
                        "Condition": condition, "Fluid": "water", "Flow rate [kg/s]": m_dot,
                        "Insulation": insulation, "Fixed thickness [mm]": thickness,
                        "Max surface temperature [°C]": None})


def filled(tmp_path, rows):
    """fill a workbook of ``rows``; the written cells by tag and header, the report lines, the results."""
    src = write_book(tmp_path / "in.xlsx", rows, HEADERS, sheets={"Conditions": CONDITIONS})
    out = fill(src, tmp_path / "out.xlsx", report_path=tmp_path / "r.json")
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    head = [c.value for c in ws[1]]
    cells = {ws.cell(r, 1).value: dict(zip(head, [c.value for c in ws[r]], strict=True))
             for r in range(2, ws.max_row + 1)}
    report = {x["tag"]: x for x in json.loads((tmp_path / "r.json").read_text())["lines"]}
    return cells, report, out.results


def u_of_t(res, i, condition):
    """U′(T) [W/(m·K)] of line i's chosen system at a condition, by the engine's surface balance."""
    s = per_line(res.system, np.array([i]))
    cond = next(r for r in CONDITIONS[1:] if r[0] == condition)
    s = replace(s, t_air=np.array([cond[1] + 273.15]), t_surroundings=np.array([cond[2] + 273.15]),
                wind=np.array([float(cond[3])]))

    def u(t):
        sol = solve(replace(s, t_operating=np.array([t])), res.table)
        return float(heat_rate(s.geometry, sol.q, sol.r_outer)[0] / (t - s.t_air[0]))

    return u


def march(u, t_in, t_air, m_dot, length, event=None):
    """solve_ivp of ṁ c_p(T) dT/dx = −U′(T)(T − T_a), CoolProp c_p (held at its 0.01 °C value below)."""
    def rhs(_x, y):
        cp = PropsSI("C", "T", max(y[0], 273.16), "P", P, "Water")
        return [-u(y[0]) * (y[0] - t_air) / (m_dot * cp)]

    if event is not None:
        event.terminal = True
    return solve_ivp(rhs, (0.0, length), [t_in], rtol=1e-10, atol=1e-10, events=event)


CASES = [  # tag, length [m], ṁ [kg/s], inlet [°C], condition, insulation, thickness [mm]
    ("HW-LONG", 2000, 0.05, 60, "yard", "mineral wool", 25),
    ("HW-SLOW", 800, 0.02, 80, "yard", "mineral wool", 20),
    ("CHW", 400, 0.05, 6, "indoor", "elastomeric foam", 13),
]


def test_heat_loss_of_a_flowing_line_is_the_heat_the_water_gives_up(tmp_path):
    """Outlet temperature and heat loss written by fill equal solve_ivp with CoolProp c_p(T) and
    ṁ (h_in − h_out) from CoolProp enthalpy; the inlet rate × length was 3.5× and 4.1× that (two hot lines)."""
    cells, report, res = filled(tmp_path, [water(*c) for c in CASES])
    for k, (tag, length, m_dot, t_c, condition, _ins, _th) in enumerate(CASES):
        row, line = cells[tag], report[tag]
        assert line["status"] == "ok", line["notes"]
        t_in, ta = t_c + 273.15, AIR[condition]
        u = u_of_t(res, k, condition)
        sol = march(u, t_in, ta, m_dot, length)
        t_out = sol.y[0, -1]
        given_up = m_dot * (PropsSI("H", "T", t_in, "P", P, "Water") - PropsSI("H", "T", t_out, "P", P, "Water"))
        # measured: outlet within 1.6e-5 K, heat within 9e-7 relative (RK4 in 20 steps, c_p on 65 knots)
        assert row["Outlet temperature [°C]"] == pytest.approx(t_out - 273.15, abs=1e-4)
        assert row["Heat loss [W]"] == pytest.approx(given_up, rel=1e-5)
        assert line["results"]["heat_loss_W"] == pytest.approx(given_up, rel=1e-5)
        # energy and cost follow: 8000 h at the first condition, the default efficiency and price
        assert line["results"]["annual_energy_kWh"] == pytest.approx(given_up * 8000 / 1000, rel=1e-5)
        # never more than the water has to give to the air
        most = m_dot * (PropsSI("H", "T", t_in, "P", P, "Water") - PropsSI("H", "T", ta, "P", P, "Water"))
        assert abs(given_up) < abs(most)
        inlet_times_length = u(t_in) * (t_in - ta) * length
        ratio = inlet_times_length / given_up
        assert ratio == pytest.approx({"HW-LONG": 3.48, "HW-SLOW": 4.11, "CHW": 1.48}[tag], abs=0.01)
        assert any(n["code"] == "flow-heat" for n in line["notes"])


def test_bare_heat_loss_of_a_flowing_line_is_marched_too(tmp_path):
    """The bare line's heat loss, for the saving, is what the water would give up bare: ṁ (h_in − h_out)
    with the bare outlet from solve_ivp (U′ of the bare pipe by the surface balance, emissivity 0.8)."""
    cells, report, res = filled(tmp_path, [water(*CASES[1])])
    tag, length, m_dot, t_c, condition, _ins, _th = CASES[1]
    t_in, ta = t_c + 273.15, AIR[condition]
    s = per_line(res.system, np.array([0]))
    s = replace(s, thickness=np.zeros_like(s.thickness), emissivity=np.array([0.8]))

    def u(t):
        sol = solve(replace(s, t_operating=np.array([t])), res.table)
        return float(heat_rate(s.geometry, sol.q, sol.r_outer)[0] / (t - ta))

    t_out = march(u, t_in, ta, m_dot, length).y[0, -1]
    given_up = m_dot * (PropsSI("H", "T", t_in, "P", P, "Water") - PropsSI("H", "T", t_out, "P", P, "Water"))
    assert cells[tag]["Bare heat loss [W]"] == pytest.approx(given_up, rel=1e-5)


def test_water_that_would_freeze_before_the_outlet_is_an_error_naming_the_distance(tmp_path):
    """Water at 15 °C, 0.05 kg/s in 600 m of insulated NPS 2 at −12 °C reaches 0 °C 416 m from the inlet
    (solve_ivp event): the line is an error naming that distance and the remedies, and no heat loss or
    outlet temperature is written for it."""
    rows = [water("FW", 600, 0.05, 15, "winter", "cellular glass", 25)]
    cells, report, res = filled(tmp_path, rows)
    line = report["FW"]
    assert line["status"] == "error"
    note = next(n for n in line["notes"] if n["code"] == "fluid-freezes")

    def at_zero(_x, y):
        return y[0] - 273.15

    sol = march(u_of_t(res, 0, "winter"), 288.15, AIR["winter"], 0.05, 600.0, at_zero)
    x = sol.t_events[0][0]
    assert x == pytest.approx(416, abs=1)  # the figure of the docstring, rounded
    shown = float(re.search(r"0 °C (\d+) m from the inlet", note["message"]).group(1))
    assert shown == pytest.approx(x, abs=0.6)  # written to the metre
    assert "more flow" in note["message"] and "insulation" in note["message"] and "heat tracing" in note["message"]
    assert note["cell"].startswith("P")  # the Flow rate cell
    assert cells["FW"]["Heat loss [W]"] is None and cells["FW"].get("Outlet temperature [°C]") is None
    assert line["results"]["annual_cost"] is None


def test_water_that_freezes_only_at_another_condition_is_an_error_too(tmp_path):
    """Named 'yard; winter', the line is judged at both: it freezes at winter (an error naming 'winter'),
    while its results at the first condition, yard, are written."""
    cells, report, _ = filled(tmp_path, [water("FW", 600, 0.05, 15, "yard; winter", "cellular glass", 25)])
    note = next(n for n in report["FW"]["notes"] if n["code"] == "fluid-freezes")
    assert "'winter'" in note["message"] and report["FW"]["status"] == "error"
    assert cells["FW"]["Outlet temperature [°C]"] > 5


def test_a_fluid_that_reaches_the_air_temperature_is_a_warning(tmp_path):
    """Chilled water at 0.01 kg/s in 400 m indoors comes within 1 K of the 20 °C air before its outlet:
    a warning naming the distance (solve_ivp event at 19 °C, to the metre)."""
    cells, report, res = filled(tmp_path, [water("CHW", 400, 0.01, 6, "indoor", "elastomeric foam", 13)])
    line = report["CHW"]
    assert line["status"] == "warning", line["notes"]
    note = next(n for n in line["notes"] if n["code"] == "fluid-at-air")

    def near_air(_x, y):
        return y[0] - (AIR["indoor"] - 1.0)

    x = march(u_of_t(res, 0, "indoor"), 279.15, AIR["indoor"], 0.01, 400.0, near_air).t_events[0][0]
    shown = float(re.search(r"(\d+) m from the inlet", note["message"]).group(1))
    assert x < 400 and shown == pytest.approx(x, abs=0.6)


def test_the_freezing_distance_is_given_in_the_sheets_units(tmp_path):
    """The same water line typed in feet and °F: the error names 32 °F and the distance in ft, 415.6 m (the
    solve_ivp figure of the SI test) / 0.3048 (NIST SP 811: 1 ft = 0.3048 m exactly) = 1364 ft, of 1969 ft."""
    head = ["Tag", "Shape", "Size", "Length [ft]", "Operating temperature [°F]", "Condition", "Insulation",
            "Fixed thickness [in]", "Fluid", "Flow rate [kg/s]"]
    conditions = [["Name", "Ambient temperature [°F]", "Surroundings temperature [°F]", "Wind speed [m/s]",
                   "Relative humidity [%]", "Operating hours [h]"],
                  ["winter", 10.4, 5, 5, 85, 2000]]  # −12 °C and −15 °C
    row = {"Tag": "FW", "Shape": "pipe", "Size": "NPS 2", "Length [ft]": 600 / 0.3048,
           "Operating temperature [°F]": 59, "Condition": "winter", "Insulation": "cellular glass",
           "Fixed thickness [in]": 25 / 25.4, "Fluid": "water", "Flow rate [kg/s]": 0.05}
    src = write_book(tmp_path / "us.xlsx", [row], head, sheets={"Conditions": conditions})
    out = fill(src, tmp_path / "us-out.xlsx")
    note = next(n for n in out.results.notes[0] if n.code == "fluid-freezes")
    assert re.search(r"32 °F (\d+) ft from the inlet of this (\d+) ft line", note.message).groups() == ("1364", "1969")


def test_the_economic_thickness_of_a_flowing_line_prices_the_heat_the_fluid_gives_up(tmp_path):
    """An 'Economic' water line picks the sold thickness of least capital × a + annual cost, where each
    candidate's annual cost is that of the same line at that fixed thickness, which fill writes from the
    marched heat (held to solve_ivp above); a = i(1+i)ⁿ/((1+i)ⁿ − 1) at 5 %, 20 years (REFERENCES.md)."""
    from lagsheet.workbook import library

    sheets = {"Conditions": CONDITIONS,
              "Materials": [["Name", "Cost per volume [EUR/m³]"], ["mineral wool", 300]],
              "Settings": [["Setting", "Value", "Unit"], ["Jacket cost per area", 15, "EUR/m²"],
                           ["Labour per layer", 10, "EUR/m²"], ["Energy price", 0.08, "EUR/kWh"]]}
    base = water("ECO", 1500, 0.05, 80, "yard", "mineral wool", None)
    sold = library.materials()["mineral wool"].thicknesses
    rows = [base | {"Economic": "yes"}] + [base | {"Tag": f"F{k}", "Fixed thickness [mm]": th * 1000}
                                            for k, th in enumerate(sold)]
    src = write_book(tmp_path / "eco.xlsx", rows, HEADERS + ["Economic"], sheets=sheets)
    res = fill(src, tmp_path / "eco-out.xlsx").results
    assert res.status[0] != "error", res.notes[0]
    a = 0.05 * 1.05**20 / (1.05**20 - 1)
    annualised = [a * res.values["installed_cost"][1 + k] + res.values["annual_cost"][1 + k] for k in range(len(sold))]
    assert res.values["thickness"][0] == pytest.approx(sold[int(np.argmin(annualised))])
    # priced at the inlet rate × length (3-4× the heat on such a line) the choice would be thicker
    inlet = [a * res.values["installed_cost"][1 + k]
             + res.values["heat_loss_per_length"][1 + k] * 1500 * 8000 / 1000 / 0.85 * 0.08 for k in range(len(sold))]
    assert sold[int(np.argmin(inlet))] > res.values["thickness"][0]
