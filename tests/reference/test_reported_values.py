"""Reported values, end to end: a workbook goes through ``fill`` and its JSON report is held
to an independent computation written here.

The other reference tests call the physics directly, so what the sizing layer passes in
(which emissivity, which surroundings, which radius, which limit) is never checked
there. Here every value is read from the report of a real ``fill`` run.

Independent pieces, each from outside the project:

- the surface balance of ``test_balance.py`` (ht correlations by name, CoolProp air at
  the film temperature, eps sigma (Ts^4 - Tsur^4) with scipy's sigma, Churchill-Usagi
  n = 3, scipy brentq);
- conduction through a layer of linear k(T) = a + b T in closed form (ASTM C680
  approach, REFERENCES.md): a material given on two mean-temperature points in the
  workbook's Materials sheet is exactly such a layer, since the integral mean of a linear
  k over a layer is k at the layer's mean temperature;
- critical radius k/h for cylinders and 2k/h for spheres (REFERENCES.md), with k the
  outer layer's integral mean and h the surface's total coefficient, (convection +
  radiation out) / (Ts - Tair) when the surroundings are at the air temperature;
- installed cost: volume x cost per volume + outer area x jacket cost + the area of
  each layer at its mid-radius x labour per layer (README, "Economics"), in closed form.

Tolerances: the engine interpolates air properties in a 2 K table where the independent
solve calls CoolProp, so the agreement is measured, not assumed: 1e-4 relative on heat
flows (2.9e-5 measured at most) and 0.01 K on temperatures unless said otherwise beside a check.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.optimize import brentq
from test_balance import C0, Line, reference_solve, surface_out

from lagsheet.physics.layers import CYLINDER, FLAT, SPHERE
from lagsheet.physics.surface import PIPE, SPHERE_SHAPE, WALL

from conftest import write_book

# Own linear curves k = a + b T [W/(m K)], T in K (the same as test_balance's "hot" and "cold")
WOOL = (0.0035, 1.1e-4)
FOAM = (0.021, 5.0e-5)


def _points(ab, t1_c, t2_c):
    a, b = ab
    return [(t, a + b * (t + C0)) for t in (t1_c, t2_c)]


MATERIALS = [["Name", "Mean temperature [°C]", "Conductivity [W/(m·K)]", "Max temperature [°C]",
              "Min temperature [°C]", "Cost per volume [EUR/m³]", "Thicknesses [mm]", "Max layer [mm]"]]
for _t, _k in _points(WOOL, 0.0, 500.0):
    MATERIALS.append(["testwool", _t, _k, 650, -50, 400, "20, 25, 30, 40, 50, 60, 70, 80, 90, 100, 120, 150", 80])
for _t, _k in _points(FOAM, -50.0, 150.0):
    MATERIALS.append(["testfoam", _t, _k, 150, -100, 900, "20, 25, 30, 40, 50, 60, 70, 80, 100", 50])
# the same curves with only two thin inner thicknesses, and a foam whose points reach past its 150 °C limit
# (so a too-hot interface is judged by the limit, not lost to a conductivity out of range)
for _t, _k in _points(WOOL, 0.0, 500.0):
    MATERIALS.append(["thinwool", _t, _k, 650, -50, 400, "20, 25", 80])
for _t, _k in _points(FOAM, -50.0, 400.0):
    MATERIALS.append(["widefoam", _t, _k, 150, -100, 900, "20, 25, 30, 40, 50, 60, 70, 80, 100", 50])

CONDITIONS = [["Name", "Ambient temperature [°C]", "Surroundings temperature [°C]", "Wind speed [m/s]",
               "Relative humidity [%]", "Operating hours [h]"],
              ["calm", 20, 20, 0, 50, 8000],
              ["windy", 10, 10, 4, 60, 8000],
              ["cold sky", 20, -15, 0, 50, 8000]]
SETTINGS = [["Setting", "Value", "Unit"],
            ["Bare emissivity", 0.8, ""],
            ["Jacket cost per area", 30, "EUR/m²"],
            ["Labour per layer", 40, "EUR/m²"]]

HEAD = ["Tag", "Shape", "Outside diameter [mm]", "Length [m]", "Surface area [m²]", "Width [m]",
        "Operating temperature [°C]", "Condition", "Insulation", "Outer insulation", "Finish",
        "Surface emissivity", "Max surface temperature [°C]", "Max heat loss", "Fixed thickness [mm]"]

REL = 1e-4  # heat flows: measured 2.9e-5 at most where this is used (the two-layer aluminium line)
DK = 0.01


def run_fill(tmp_path, rows: list[dict], settings: list[list] | None = None) -> dict[str, dict]:
    """Fill a workbook of ``rows`` with our Materials, Conditions and Settings; the report's lines by tag."""
    from lagsheet.commands.fill import fill

    src = write_book(tmp_path / "in.xlsx", rows, HEAD,
                     sheets={"Materials": MATERIALS, "Conditions": CONDITIONS, "Settings": settings or SETTINGS})
    fill(src, tmp_path / "out.xlsx", report_path=tmp_path / "r.json")
    lines = json.loads((tmp_path / "r.json").read_text())["lines"]
    return {ln["tag"]: ln for ln in lines}


def cond(name):
    row = next(r for r in CONDITIONS[1:] if r[0] == name)
    return {"t_air_c": row[1], "t_sur_c": row[2], "wind": row[3]}


def built_layers(text: str) -> list[tuple[float, str]]:
    """Each layer as built, inner first: '2 × 50 mm testwool + 2 layers (50 and 30 mm) testfoam
    (interface 140.0 °C)' -> [(0.05, 'testwool'), (0.05, 'testwool'), (0.05, 'testfoam'), (0.03, 'testfoam')]."""
    out = []
    for part in text.split(" (interface ")[0].split(" + "):
        if " layers (" in part:
            rest = part.split(" layers (", 1)[1]
            values, name = rest.split(") ", 1)
            numbers, unit = values.rsplit(" ", 1)
            assert unit == "mm"
            out += [(float(x) / 1000, name) for x in numbers.split(" and ")]
            continue
        count = 1
        if "×" in part:
            n, part = part.split("×")
            count = int(n)
        value, unit, name = part.strip().split(" ", 2)
        assert unit == "mm"
        out += [(float(value) / 1000, name)] * count
    return out


def layers_of(text: str) -> list[tuple[float, str]]:
    """'2 × 50 mm testwool + 40 mm testfoam (interface 140.0 °C)' -> [(0.1, 'testwool'), (0.04, 'testfoam')]."""
    out: list[tuple[float, str]] = []
    for th, name in built_layers(text):
        if out and out[-1][1] == name:
            out[-1] = (out[-1][0] + th, name)
        else:
            out.append((th, name))
    return out


# --- bare heat loss: the bare line radiates with the bare emissivity, not the jacket's ---

def test_bare_heat_loss_uses_the_bare_emissivity(tmp_path):
    """An aluminium-jacketed pipe's bare loss is the bare steel's (emissivity 0.8), from the independent balance."""
    rows = [{"Tag": "B-1", "Shape": "pipe", "Outside diameter [mm]": 114.3, "Length [m]": 25,
             "Operating temperature [°C]": 180, "Condition": "windy", "Insulation": "testwool",
             "Finish": "aluminium", "Max surface temperature [°C]": 55},
            {"Tag": "B-2", "Shape": "pipe", "Outside diameter [mm]": 60.3, "Length [m]": 10,
             "Operating temperature [°C]": 120, "Condition": "calm", "Insulation": "testwool",
             "Finish": "aluminium", "Max surface temperature [°C]": 50}]
    got = run_fill(tmp_path, rows)
    for row in rows:
        c = cond(row["Condition"])
        bare = Line(row["Outside diameter [mm]"], row["Operating temperature [°C]"], 0.0, c["wind"], 0.8,
                    t_air_c=c["t_air_c"], t_sur_c=c["t_sur_c"])
        d = row["Outside diameter [mm]"] / 1000
        expected = surface_out(bare.t_op_c + C0, bare, d) * math.pi * d * row["Length [m]"]
        # measured 1.2e-5 (windy) and 2.4e-4 (still air, where the free-convection h from the 2 K air
        # table carries the balance): 5e-4
        assert got[row["Tag"]]["results"]["bare_heat_loss_W"] == pytest.approx(expected, rel=5e-4)


# --- surroundings: a condition's surroundings temperature reaches the balance ---

def test_the_condition_surroundings_temperature_is_used(tmp_path):
    """Under a cold sky (surroundings 35 K below the air) surface temperature and loss match the balance with it."""
    row = {"Tag": "S-1", "Shape": "pipe", "Outside diameter [mm]": 168.3, "Length [m]": 30,
           "Operating temperature [°C]": 250, "Condition": "cold sky", "Insulation": "testwool",
           "Finish": "painted", "Surface emissivity": 0.9, "Fixed thickness [mm]": 50}
    got = run_fill(tmp_path, [row])["S-1"]["results"]
    c = cond("cold sky")
    line = Line(168.3, 250.0, 0.050, c["wind"], 0.9, t_air_c=c["t_air_c"], t_sur_c=c["t_sur_c"])
    ts, q_per_m = reference_solve(line)
    assert got["surface_temperature_K"] == pytest.approx(ts, abs=3e-3)  # measured 7.5e-4 K
    assert got["heat_loss_per_length_W_m"] == pytest.approx(q_per_m, rel=1e-5)  # measured 2.4e-6
    assert got["heat_loss_W"] == pytest.approx(q_per_m * 30, rel=1e-5)


# --- installed cost: volume, jacket at the outer radius, labour at each layer's mid-radius ---

def test_installed_cost_of_a_two_layer_pipe(tmp_path):
    """150 mm as 80 + 70 mm layers (listed thicknesses, Max layer 80 mm; 75 mm is not sold): cost from volume,
    outer jacket and mid-radius labour."""
    row = {"Tag": "C-1", "Shape": "pipe", "Outside diameter [mm]": 219.1, "Length [m]": 40,
           "Operating temperature [°C]": 400, "Condition": "calm", "Insulation": "testwool",
           "Finish": "aluminium", "Fixed thickness [mm]": 150}
    got = run_fill(tmp_path, [row])["C-1"]["results"]
    r0, th, L = 0.2191 / 2, 0.150, 40.0
    r2 = r0 + th
    volume = math.pi * (r2**2 - r0**2) * L
    labour_area = 2 * math.pi * (r0 + 0.080 / 2) * L + 2 * math.pi * (r0 + 0.080 + 0.070 / 2) * L
    expected = 400 * volume + 30 * 2 * math.pi * r2 * L + 40 * labour_area
    assert got["installed_cost"] == pytest.approx(expected, rel=1e-9)


def test_installed_cost_of_a_sphere(tmp_path):
    """A sphere's cost: its shell volume, jacket on the outer sphere, labour at the mid-radius sphere."""
    row = {"Tag": "C-2", "Shape": "sphere", "Outside diameter [mm]": 3000, "Operating temperature [°C]": 150,
           "Condition": "calm", "Insulation": "testwool", "Finish": "aluminium", "Fixed thickness [mm]": 60}
    got = run_fill(tmp_path, [row])["C-2"]["results"]
    r0, th = 1.5, 0.060
    r2 = r0 + th
    expected = (400 * 4 / 3 * math.pi * (r2**3 - r0**3) + 30 * 4 * math.pi * r2**2
                + 40 * 4 * math.pi * (r0 + th / 2) ** 2)
    assert got["installed_cost"] == pytest.approx(expected, rel=1e-9)


def _settings(jacket: float, labour: float) -> list[list]:
    return [["Setting", "Value", "Unit"], ["Bare emissivity", 0.8, ""],
            ["Jacket cost per area", jacket, "EUR/m²"], ["Labour per layer", labour, "EUR/m²"]]


def test_labour_and_jacket_costs_each_at_their_radius(tmp_path):
    """The labour part of the installed cost (cost with labour 40 minus cost with labour 0) is 40 x the sum over
    the built layers of each layer's area at its mid-radius; the jacket part (30 minus 0) is 30 x the outer area:
    a two-material pipe (wool inside foam, sized), a 150 mm sphere (80 + 70 mm) and a 150 mm wall."""
    rows = [{"Tag": "L-1", "Shape": "pipe", "Outside diameter [mm]": 168.3, "Length [m]": 20,
             "Operating temperature [°C]": 450, "Condition": "calm", "Insulation": "testwool",
             "Outer insulation": "testfoam", "Finish": "aluminium", "Max surface temperature [°C]": 45},
            {"Tag": "L-2", "Shape": "sphere", "Outside diameter [mm]": 3000, "Operating temperature [°C]": 300,
             "Condition": "calm", "Insulation": "testwool", "Finish": "aluminium", "Fixed thickness [mm]": 150},
            {"Tag": "L-3", "Shape": "wall", "Surface area [m²]": 12.0, "Length [m]": 3.0,
             "Operating temperature [°C]": 300, "Condition": "calm", "Insulation": "testwool",
             "Finish": "aluminium", "Fixed thickness [mm]": 150}]
    full = run_fill(tmp_path, rows, _settings(30, 40))
    no_labour = run_fill(tmp_path, rows, _settings(30, 0))
    no_jacket = run_fill(tmp_path, rows, _settings(0, 40))
    price = {"testwool": 400, "testfoam": 900}
    for row in rows:
        tag = row["Tag"]
        res = full[tag]["results"]
        assert full[tag]["status"] != "error", full[tag]["notes"]
        layers = built_layers(res["layers"])
        assert sum(th for th, _ in layers) == pytest.approx(res["thickness_m"], abs=1e-9)
        if tag == "L-3":
            assert len(layers) == 2  # 150 mm: 80 + 70 (Max layer 80 mm)
        area, volume = _area_volume(row)
        r = (row.get("Outside diameter [mm]") or 0.0) / 2000
        labour_area, cost = 0.0, 0.0
        for th, name in layers:
            labour_area += area(r + th / 2)
            cost += price[name] * volume(r, r + th)
            r += th
        labour = full[tag]["results"]["installed_cost"] - no_labour[tag]["results"]["installed_cost"]
        jacket = full[tag]["results"]["installed_cost"] - no_jacket[tag]["results"]["installed_cost"]
        assert labour == pytest.approx(40 * labour_area, rel=1e-9)
        assert jacket == pytest.approx(30 * area(r), rel=1e-9)
        assert res["installed_cost"] == pytest.approx(cost + 40 * labour_area + 30 * area(r), rel=1e-9)


def _area_volume(row):
    """Surface area at radius r and volume between r1 and r2 of the row's shape, in closed form."""
    if row["Shape"] == "sphere":
        return (lambda r: 4 * math.pi * r**2), (lambda r1, r2: 4 / 3 * math.pi * (r2**3 - r1**3))
    if row["Shape"] == "wall":
        a = row["Surface area [m²]"]
        return (lambda r: a), (lambda r1, r2: a * (r2 - r1))
    length = row["Length [m]"]
    return (lambda r: 2 * math.pi * r * length), (lambda r1, r2: math.pi * (r2**2 - r1**2) * length)


# --- critical radius: k of the layer (integral mean), h of the surface; 2k/h for spheres ---

@pytest.mark.parametrize("shape, od, factor", [("pipe", 33.4, 1.0), ("sphere", 400.0, 2.0)])
def test_critical_radius(tmp_path, shape, od, factor):
    """Critical radius = factor x k_mean / h_total with the independent balance's faces and h (k/h, 2k/h)."""
    row = {"Tag": "R-1", "Shape": shape, "Outside diameter [mm]": od, "Length [m]": 10,
           "Operating temperature [°C]": 150, "Condition": "calm", "Insulation": "testwool",
           "Finish": "painted", "Surface emissivity": 0.9, "Fixed thickness [mm]": 30}
    got = run_fill(tmp_path, [row])["R-1"]["results"]
    c = cond("calm")
    geometry, sh = (CYLINDER, PIPE) if shape == "pipe" else (SPHERE, SPHERE_SHAPE)
    line = Line(od, 150.0, 0.030, c["wind"], 0.9, t_air_c=c["t_air_c"], geometry=geometry, shape=sh)
    ts, q = reference_solve(line)
    a, b = WOOL
    k_mean = a + b * 0.5 * (150.0 + C0 + ts)  # integral mean of a linear k over the layer
    d = od / 1000 + 0.060
    h_total = surface_out(ts, line, d) / (ts - (c["t_air_c"] + C0))  # Tsur = Tair here
    assert got["critical_radius_m"] == pytest.approx(factor * k_mean / h_total, rel=1e-3)  # measured 2.8e-4


# --- interface: the inner layer is sized so that the interface stays within the outer material's limit ---

def _two_layer_solve(od_mm, t_op_c, inner, outer, c, eps):
    """Independent two-layer cylinder balance: (surface, interface) temperatures [K] and q' [W/m]."""
    r0 = od_mm / 2000
    r1, r2 = r0 + inner, r0 + inner + outer
    to = t_op_c + C0
    line = Line(2000 * (r2 - outer - inner), t_op_c, inner + outer, c["wind"], eps, t_air_c=c["t_air_c"],
                t_sur_c=c["t_sur_c"])
    (ai, bi), (ao, bo) = WOOL, FOAM

    def interface(ts, q):  # solve int_ts^t1 (ao + bo T) dT = q ln(r2/r1) / 2 pi for t1 (closed form)
        rhs = q * math.log(r2 / r1) / (2 * math.pi) + ao * ts + 0.5 * bo * ts**2
        return (-ao + math.sqrt(ao**2 + 2 * bo * rhs)) / bo

    def residual(ts):
        q = surface_out(ts, line, 2 * r2) * 2 * math.pi * r2
        t1 = interface(ts, q)
        inner_q = 2 * math.pi * (ai * (to - t1) + 0.5 * bi * (to**2 - t1**2)) / math.log(r1 / r0)
        return inner_q - q

    ts = brentq(residual, c["t_air_c"] + C0 + 1e-6, to, xtol=1e-10, rtol=1e-13)
    q = surface_out(ts, line, 2 * r2) * 2 * math.pi * r2
    return ts, interface(ts, q), q


def test_the_interface_stays_within_the_outer_material_limit(tmp_path):
    """A 450 °C line of wool inside foam (limit 150 °C): the reported interface matches the independent
    two-layer balance and is at most 150 °C."""
    row = {"Tag": "I-1", "Shape": "pipe", "Outside diameter [mm]": 168.3, "Length [m]": 20,
           "Operating temperature [°C]": 450, "Condition": "calm", "Insulation": "testwool",
           "Outer insulation": "testfoam", "Finish": "aluminium", "Max surface temperature [°C]": 55}
    got = run_fill(tmp_path, [row])["I-1"]
    assert got["status"] != "error", got["notes"]
    res = got["results"]
    (inner, n1), (outer, n2) = layers_of(res["layers"])
    assert (n1, n2) == ("testwool", "testfoam")
    ts, t1, q = _two_layer_solve(168.3, 450.0, inner, outer, cond("calm"), _finish_eps("aluminium"))
    # aluminium (emissivity 0.09) leaves convection to carry the balance, and the engine's h comes from
    # its 2 K air table: 0.016 K on a 32 K rise measured, so 0.03 K here; the flow agrees to 3e-5
    assert res["surface_temperature_K"] == pytest.approx(ts, abs=0.03)
    assert res["heat_loss_per_length_W_m"] == pytest.approx(q, rel=REL)
    interface = _reported_interface(res)
    assert interface == pytest.approx(t1, abs=0.05)  # the layers text gives it to 0.1 °C
    assert interface <= 150.0 + C0 + 0.05
    # 0.012 K measured, carried from the surface's 0.016 K (aluminium, above): 0.03 K
    assert res["interface_temperature_K"] == pytest.approx(t1, abs=0.03)
    assert res["interface_temperature_K"] <= 150.0 + C0
    # critical radius of a two-layer system: k of the OUTER layer (foam) at its mean temperature / h total
    c = cond("calm")
    ao, bo = FOAM
    k_outer = ao + bo * 0.5 * (t1 + ts)  # integral mean of a linear k between the interface and the surface
    outside = Line(168.3, 450.0, inner + outer, c["wind"], _finish_eps("aluminium"), t_air_c=c["t_air_c"])
    r2 = 0.1683 / 2 + inner + outer
    h_total = surface_out(ts, outside, 2 * r2) / (ts - (c["t_air_c"] + C0))  # Tsur = Tair here
    assert res["critical_radius_m"] == pytest.approx(k_outer / h_total, rel=1e-3)  # measured 5.5e-4


def test_an_interface_hotter_than_the_outer_material_limit_is_an_error(tmp_path):
    """At 350 °C, no sold inner layer (20 or 25 mm) keeps the interface with foam (limit 150 °C) within the
    limit: the line is an error naming the interface, and the reported interface is the independent balance's
    at the thickest system tried, far past 150 °C (the foam's points reach 400 °C, so nothing else fails)."""
    row = {"Tag": "I-2", "Shape": "pipe", "Outside diameter [mm]": 168.3, "Length [m]": 20,
           "Operating temperature [°C]": 350, "Condition": "calm", "Insulation": "thinwool",
           "Outer insulation": "widefoam", "Finish": "aluminium"}
    got = run_fill(tmp_path, [row])["I-2"]
    assert got["status"] == "error"
    note = next(n for n in got["notes"] if n["code"] == "target-not-met")
    assert "interface" in note["message"] and "150" in note["message"], note
    res = got["results"]
    assert res["governing"] == "interface (not met)"
    (inner, n1), (outer, n2) = layers_of(res["layers"])
    assert (n1, n2) == ("thinwool", "widefoam") and (inner, outer) == pytest.approx((0.025, 0.100), abs=1e-9)
    ts, t1, q = _two_layer_solve(168.3, 350.0, inner, outer, cond("calm"), _finish_eps("aluminium"))
    assert t1 > 150.0 + C0 + 50  # the case is what it claims: far past the limit
    assert res["interface_temperature_K"] == pytest.approx(t1, abs=DK)
    assert res["heat_loss_per_length_W_m"] == pytest.approx(q, rel=REL)


def _reported_interface(res) -> float:
    text = res["layers"]
    inside = text.split("(interface ")[1].split(")")[0]
    value, unit = inside.split(" ")
    assert unit == "°C"
    return float(value) + C0


def _finish_eps(name: str) -> float:
    """The finish's emissivity as the built-in table gives it (data, not computation)."""
    from lagsheet.workbook.library import finishes

    return finishes()[name].emissivity


# --- per-area limits: a sphere's and a flat's 'Max heat loss' in W/m² is judged per square metre ---

@pytest.mark.parametrize("shape, od, limit", [("sphere", 2500.0, 60.0), ("wall", None, 100.0)])
def test_a_per_area_limit_is_judged_per_square_metre(tmp_path, shape, od, limit):
    """The chosen thickness keeps the outer flux within the W/m² limit and the next thinner sold one does not,
    both from the independent balance."""
    row = {"Tag": "A-1", "Shape": shape, "Operating temperature [°C]": 220, "Condition": "calm",
           "Insulation": "testwool", "Finish": "painted", "Surface emissivity": 0.9,
           "Max heat loss": f"{limit} W/m²"}
    if od:
        row["Outside diameter [mm]"] = od
    else:
        row.update({"Surface area [m²]": 12.0, "Length [m]": 3.0})
    got = run_fill(tmp_path, [row])["A-1"]
    res = got["results"]
    assert res["governing"] == "heat loss", got["notes"]
    sold = [0.020, 0.025, 0.030, 0.040, 0.050, 0.060, 0.070, 0.080, 0.090, 0.100, 0.120, 0.150]
    chosen = res["thickness_m"]
    k = int(np.argmin([abs(s - chosen) for s in sold]))
    assert sold[k] == pytest.approx(chosen, abs=1e-9)
    c = cond("calm")

    def flux(th):
        if shape == "sphere":
            line = Line(od, 220.0, th, c["wind"], 0.9, t_air_c=c["t_air_c"], geometry=SPHERE, shape=SPHERE_SHAPE)
            ts, q = reference_solve(line)
            return q / (4 * math.pi * (od / 2000 + th) ** 2)
        line = Line(0.0, 220.0, th, c["wind"], 0.9, t_air_c=c["t_air_c"], geometry=FLAT, shape=WALL,
                    height=3.0, flow=4.0)
        return reference_solve(line)[1]

    assert res["heat_flux_W_m2"] == pytest.approx(flux(chosen), rel=REL)
    assert flux(chosen) <= limit
    assert k > 0 and flux(sold[k - 1]) > limit
