"""Process results, end to end: a workbook goes through ``fill`` and the JSON report's outlet
temperature, condensate, time to freeze and time to cool are held to an independent computation.

``test_process_lines.py`` and ``test_flowing_lines.py`` check the same quantities with the
engine's own surface balance inside the integration (U'(T) from ``physics.balance.solve``) and
read the results object of the sizing layer; here nothing of the engine is called: every
heat loss comes from the independent balance of ``test_balance.py`` (ht correlations by name,
CoolProp air at the film temperature, eps sigma (Ts^4 - Tsur^4) with scipy's sigma, the
closed-form conduction of a linear k(T) layer, scipy brentq), on the workbook's own linear
materials of ``test_reported_values.py``. Fluid properties are CoolProp ``PropsSI``;
integrations are scipy ``solve_ivp`` and ``quad``.

The models checked are the ones the tool documents (design/process.py): the reported outlet is
marched with U'(T) and c_p(T) along the line; condensate is heat loss / h_fg at the operating
pressure; the time to freeze is the cool-down to 0 °C of water and steel wall (rho c_p of water
at the mean cool-down temperature, steel 7850 kg/m³ and 490 J/(kg K), handbook values from
memory) plus freezing 25 % (the 'Freeze fraction' default, common practice) with h_if = 333.55
kJ/kg (handbook value, from memory) at U'(0 °C); the time to cool is the contents' rho V c_p
(at the mean of the operating and minimum temperatures) over the shell's and linked parts' UA(T).
Whether those lumped models are close to a c_p(T)-varying integration is checked in
test_process_lines.py.
"""

from __future__ import annotations

import json
import math

import pytest
from CoolProp.CoolProp import PropsSI
from scipy.integrate import quad, solve_ivp
from test_balance import C0, Line, reference_solve
from test_reported_values import MATERIALS, SETTINGS

from lagsheet.physics.layers import FLAT
from lagsheet.physics.surface import RISER, TOP

from conftest import write_book

P = 101325.0
HEAD = ["Tag", "Shape", "Outside diameter [mm]", "Inside diameter [mm]", "Length [m]", "Surface area [m²]",
        "Operating temperature [°C]", "Condition", "Insulation", "Finish", "Surface emissivity",
        "Fixed thickness [mm]", "Fluid", "Flow rate [kg/s]", "Operating pressure [bar]", "Freeze protection [h]",
        "Contents volume [m³]", "Hold time [h]", "Min temperature [°C]", "Part of"]
CONDITIONS = [["Name", "Ambient temperature [°C]", "Surroundings temperature [°C]", "Wind speed [m/s]",
               "Relative humidity [%]", "Operating hours [h]"],
              ["windy", 10, 10, 4, 60, 8000],
              ["cold sky", 20, -15, 0, 50, 8000],
              ["winter", -12, -15, 5, 85, 2000]]
STEEL_RHO, STEEL_CP = 7850.0, 490.0  # carbon steel (handbook values, from memory)
H_FUSION = 333.55e3  # J/kg, ice at 0 °C (handbook value, from memory)
EPS = 0.9


def run_fill(tmp_path, rows):
    """The report's lines by tag after ``fill`` of ``rows`` with our materials and conditions."""
    from lagsheet.commands.fill import fill

    src = write_book(tmp_path / "in.xlsx", rows, HEAD,
                     sheets={"Materials": MATERIALS, "Conditions": CONDITIONS, "Settings": SETTINGS})
    fill(src, tmp_path / "out.xlsx", report_path=tmp_path / "r.json")
    return {ln["tag"]: ln for ln in json.loads((tmp_path / "r.json").read_text())["lines"]}


def cond(name):
    row = next(r for r in CONDITIONS[1:] if r[0] == name)
    return {"t_air_c": row[1], "t_sur_c": row[2], "wind": row[3]}


def loss_rate(t_k, od_mm, th, condition, material="hot", **shape):
    """Heat rate [W/m for cylinders, W/m² for flats] at a fluid temperature, by the independent balance."""
    c = cond(condition)
    line = Line(od_mm, t_k - C0, th, c["wind"], EPS, t_air_c=c["t_air_c"], t_sur_c=c["t_sur_c"],
                material=material, **shape)
    return reference_solve(line)[1]


def line_row(tag, **kw):
    row = {"Tag": tag, "Shape": "pipe", "Condition": "windy", "Insulation": "testwool", "Finish": "painted",
           "Surface emissivity": EPS}
    row.update(kw)
    return row


# --- outlet temperature of a flowing line ---

def test_outlet_temperature_and_heat_given_up(tmp_path):
    """Water, 0.05 kg/s in 300 m of 60.3 mm pipe with 25 mm, 90 °C in, 10 °C wind: the reported outlet is
    solve_ivp of m c_p(T) dT/dx = -q'(T) with q'(T) from the independent balance at each fluid temperature
    and CoolProp c_p(T); the heat loss is m (h_in - h_out), CoolProp enthalpies."""
    row = line_row("W", **{"Outside diameter [mm]": 60.3, "Length [m]": 300, "Operating temperature [°C]": 90,
                           "Fixed thickness [mm]": 25, "Fluid": "water", "Flow rate [kg/s]": 0.05})
    got = run_fill(tmp_path, [row])["W"]
    assert got["status"] == "ok", got["notes"]
    m, t_in = 0.05, 90 + C0

    def rhs(_x, y):
        return [-loss_rate(y[0], 60.3, 0.025, "windy") / (m * PropsSI("C", "T", y[0], "P", P, "Water"))]

    t_out = solve_ivp(rhs, (0.0, 300.0), [t_in], rtol=1e-10, atol=1e-9).y[0, -1]
    assert t_in - t_out > 10  # a real drop, so the check has something to hold
    res = got["results"]
    # measured 1.7e-5 K on a 33.7 K drop: 1e-4 K
    assert res["outlet_temperature_K"] == pytest.approx(t_out, abs=1e-4)
    given_up = m * (PropsSI("H", "T", t_in, "P", P, "Water") - PropsSI("H", "T", t_out, "P", P, "Water"))
    assert res["heat_loss_W"] == pytest.approx(given_up, rel=2e-7)  # measured 3.3e-8


# --- condensate of a steam line ---

def test_condensate_is_the_heat_loss_over_the_latent_heat_at_the_pressure(tmp_path):
    """Steam at 10 bar(a), 179.9 °C, 100 m of 114.3 mm with 50 mm: condensate = q' L / h_fg, q' from the
    independent balance, h_fg = PropsSI H(Q=1) - H(Q=0) at 1 MPa."""
    row = line_row("S", **{"Outside diameter [mm]": 114.3, "Length [m]": 100, "Operating temperature [°C]": 179.9,
                           "Fixed thickness [mm]": 50, "Fluid": "steam", "Operating pressure [bar]": 10})
    got = run_fill(tmp_path, [row])["S"]
    assert got["status"] == "ok", got["notes"]
    q = loss_rate(179.9 + C0, 114.3, 0.050, "windy") * 100
    h_fg = PropsSI("H", "P", 1e6, "Q", 1, "Water") - PropsSI("H", "P", 1e6, "Q", 0, "Water")
    res = got["results"]
    assert res["heat_loss_W"] == pytest.approx(q, rel=5e-7)  # measured 1.4e-7
    assert res["condensate_kg_per_s"] == pytest.approx(q / h_fg, rel=5e-7)  # measured 1.4e-7
    assert res["outlet_temperature_K"] is None  # saturated steam keeps its temperature


# --- time to freeze of standing water ---

def test_time_to_freeze(tmp_path):
    """Water at 10 °C standing in 114.3 x 102.3 mm pipe with 40 mm foam, -12 °C air, -15 °C sky, 5 m/s:
    quad of C / (q'(T)) dT from 0 °C to 10 °C (C = water + steel wall per metre) plus 25 % of the water's
    mass x h_if / q'(0 °C), q' from the independent balance."""
    row = line_row("F", **{"Outside diameter [mm]": 114.3, "Inside diameter [mm]": 102.3, "Length [m]": 10,
                           "Operating temperature [°C]": 10, "Condition": "winter", "Insulation": "testfoam",
                           "Fixed thickness [mm]": 40, "Fluid": "water", "Freeze protection [h]": 1})
    got = run_fill(tmp_path, [row])["F"]
    assert got["status"] != "error", got["notes"]
    ice = C0
    t_mean = 0.5 * (10 + C0 + ice)
    rho, cp = PropsSI("D", "T", t_mean, "P", P, "Water"), PropsSI("C", "T", t_mean, "P", P, "Water")
    bore = math.pi / 4 * 0.1023**2
    capacity = rho * bore * cp + math.pi / 4 * (0.1143**2 - 0.1023**2) * STEEL_RHO * STEEL_CP

    def q(t):
        return loss_rate(t, 114.3, 0.040, "winter", material="cold")

    cooling = quad(lambda t: capacity / q(t), ice, 10 + C0, epsabs=0, epsrel=1e-10)[0]
    freezing = 0.25 * rho * bore * H_FUSION / q(ice)
    expected = cooling + freezing
    # measured 3.8e-8 on 56.2 h: 2e-7
    assert got["results"]["time_to_freeze_s"] == pytest.approx(expected, rel=2e-7)


# --- time to cool (hold time) of a vessel and its roof ---

def test_time_to_cool_of_a_vessel_with_its_roof(tmp_path):
    """8 m³ of water at 80 °C in a 2 m x 3 m vessel (50 mm) with a linked 3.1 m² roof (30 mm), winter:
    quad of C / (UA_shell(T) + UA_roof(T)) / (T - Ta) from 60 to 80 °C, each UA from the independent balance
    (the shell as a vertical cylinder on its height, the roof as a plate facing up on A/P, wind along its
    side), C = rho V c_p of water at 70 °C (CoolProp)."""
    rows = [line_row("T-1", **{"Shape": "vessel", "Outside diameter [mm]": 2000, "Length [m]": 3,
                               "Operating temperature [°C]": 80, "Condition": "winter", "Fixed thickness [mm]": 50,
                               "Fluid": "water", "Contents volume [m³]": 8, "Hold time [h]": 1,
                               "Min temperature [°C]": 60}),
            line_row("T-1R", **{"Shape": "top", "Surface area [m²]": 3.1, "Operating temperature [°C]": 80,
                                "Condition": "winter", "Fixed thickness [mm]": 30, "Part of": "T-1"})]
    got = run_fill(tmp_path, rows)
    assert got["T-1"]["status"] != "error", got["T-1"]["notes"]
    side = math.sqrt(3.1)

    def loss(t):  # W at contents temperature t
        shell = loss_rate(t, 2000.0, 0.050, "winter", shape=RISER, height=3.0) * 3.0
        roof = loss_rate(t, 0.0, 0.030, "winter", geometry=FLAT, shape=TOP, height=3.1 / (4 * side), flow=side)
        return shell + roof * 3.1

    t_mean = 70 + C0
    capacity = 8 * PropsSI("D", "T", t_mean, "P", P, "Water") * PropsSI("C", "T", t_mean, "P", P, "Water")
    expected = quad(lambda t: capacity / loss(t), 60 + C0, 80 + C0, epsabs=0, epsrel=1e-10)[0]
    # measured 2.1e-4 on 129 h: the shell alone (2 m vertical cylinder, 5 m/s) loses 1.9e-4 more at 80 °C
    # than the independent balance (the engine's 2 K air table), which the time carries: 5e-4
    assert got["T-1"]["results"]["time_to_cool_s"] == pytest.approx(expected, rel=5e-4)
