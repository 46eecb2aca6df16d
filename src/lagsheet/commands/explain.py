"""The whole calculation of one line, in words and numbers, for a checking engineer.

Inputs as written and in SI; each layer's face temperatures and the conductivity used
(the integral mean over the layer, ASTM C680); the dimensionless groups, correlations
and coefficients at the outer surface; the balance residual; each target's own
thinnest thickness and the governing one; the line's notes.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from ..design.select import Results
from ..io.table import RawSheet, address, fold
from ..outputs.cautions import SHORT
from ..physics.balance import solve
from ..physics.candidates import per_line
from ..physics.layers import CYLINDER, FLAT, SPHERE
from ..physics.radiation import SIGMA
from ..physics.surface import CORRELATION_NAMES
from ..workbook.display import show
from ..workbook.inputs import Inputs


def find_line(res: Results, tag: str) -> int | None:
    for i, t in enumerate(res.tags):
        if fold(t) == fold(tag):
            return i
    return None


def one_line(inputs: Inputs, tag: str) -> tuple[Inputs, int] | None:
    """``inputs`` cut to the line ``tag`` (the first of that tag, as :func:`find_line`) and the
    lines its results depend on: those whose 'Part of' names it (a vessel's time to cool counts
    them) and the one its own 'Part of' names (its notes name it), in sheet order. Returns the
    cut inputs and the line's position in them, or None when no line has that tag. Sizing the
    cut gives the line what sizing the whole sheet gives it (tests/test_explain_one.py)."""
    t = inputs.lines
    tags = t.get("tag") if t is not None else None
    if tags is None:
        return None
    folded = [fold(x) if x else "" for x in tags]
    want = fold(tag)
    if not want or want not in folded:
        return None
    i = folded.index(want)
    by_tag = {f: k for k, f in enumerate(folded) if f}  # the last line of a tag, as 'Part of' reads it
    keep = {i}
    part_of = t.get("part_of")
    if part_of is not None:
        keep |= {k for k, p in enumerate(part_of) if p not in (None, "") and by_tag.get(fold(p)) == i}
        if part_of[i] not in (None, "") and fold(part_of[i]) in by_tag:
            keep.add(by_tag[fold(part_of[i])])
    idx = sorted(keep)
    return replace(inputs, lines=t.take(idx)), idx.index(i)


def explain(inputs: Inputs, raw: RawSheet, res: Results, i: int) -> list[str]:
    """Lines of text explaining line ``i`` of the results."""
    us = inputs.us_units
    t = inputs.lines
    L = res.lines[i]
    out = [f"Line {res.tags[i]} ({t.sheet} row {t.rows[i] + 1}), status: {res.status[i]}", ""]
    out += _inputs_as_written(t, raw, i)
    if not L.ok or res.system is None or not np.isfinite(res.values["thickness"][i]):
        out += ["", "Not computed:"] + [f"  {n.level}: {n.message}" for n in res.notes[i]]
        return out
    cond = L.conditions[0]
    geo = {CYLINDER: "cylinder", FLAT: "flat", SPHERE: "sphere"}[L.geometry]
    out += ["", f"Shape: {L.word} ({geo}); condition of record: {cond.name} — air "
            f"{show(cond.t_air, 'temperature', us)}, surroundings {show(cond.t_surroundings, 'temperature', us)}, "
            f"wind {cond.wind:g} m/s, RH {cond.rh * 100:.0f} %, {cond.hours:g} h/yr"]
    if len(L.conditions) > 1:
        out.append(f"  targets also judged at: {', '.join(c.name for c in L.conditions[1:])}")
    s1 = per_line(res.system, np.array([i]))
    sol = solve(s1, res.table)
    out += _layers(L, s1, sol, res, us)
    out += _outer_surface(L, s1, sol, res.values, i, us)
    out += _sun(L, s1, sol, res.values, i, us)
    out += _targets(res, i, us)
    v = res.values
    out += _process(L, v, i, us)
    cur = inputs.settings["currency"]
    out += ["", f"Energy and money at '{cond.name}': annual energy {v['annual_energy'][i]:,.0f} kWh, "
            f"cost {v['annual_cost'][i]:,.0f} {cur}, saving {v['annual_saving'][i]:,.0f} {cur}, "
            f"CO2 {v['co2'][i]:,.0f} kg/yr"]
    if res.notes[i]:
        out += ["", "Notes:"] + [f"  {n.level}: {n.message}" for n in res.notes[i]]
    out += ["", SHORT]
    return out


def _inputs_as_written(t, raw: RawSheet, i: int) -> list[str]:
    """Each input cell of line ``i`` as written, with its SI value when it is a number."""
    out = ["Inputs as written:"]
    for c in sorted(t.columns.values(), key=lambda c: c.col):
        v = raw.value(t.rows[i], c.col)
        if v is None:
            continue
        si = ""
        if c.values is not None and c.values.dtype != object and np.isfinite(c.values[i]) and c.si_unit:
            si = f"  ->  {c.values[i]:.6g} {c.si_unit.replace('**2', '²')}"
        out.append(f"  {c.header} ({address(t.rows[i], c.col)}): {v!r}{si}")
    return out


def _layers(L, s1, sol, res: Results, us: bool) -> list[str]:
    """The bare surface, then each layer with its face temperatures and mean conductivity."""
    faces, radii = sol.faces[0], sol.radii[0]
    out = ["", "Layers, inner first (conductivity: integral mean over the layer):"]
    out.append(f"  bare surface at {show(faces[0], 'temperature', us)}"
               + (f", outside diameter {show(2 * radii[0], 'radius', us)}" if L.geometry != FLAT else ""))
    for j in range(s1.thickness.shape[1]):
        th = s1.thickness[0, j]
        if th <= 0:
            continue
        m = int(s1.material[0, j])
        k = float(res.table.mean_conductivity(np.array([m]), faces[j:j + 1], faces[j + 1:j + 2])[0])
        out.append(f"  {show(th, 'thickness', us)} {res.table.names[m]}: {show(faces[j], 'temperature', us)} -> "
                   f"{show(faces[j + 1], 'temperature', us)}, k = {k:.4f} W/(m·K)"
                   + _declared(L, res.table.names[m], k))
    return out


def _declared(L, name: str, k: float) -> str:
    """' (design value: declared 0.0400 × 'Design factor' 1.1)' when the material's k is multiplied, else ''."""
    mat = next((m for m in L.materials if m.name == name), None)
    if mat is None or mat.design_factor == 1.0:
        return ""
    return f" (design value: declared {k / mat.design_factor:.4f} × 'Design factor' {mat.design_factor:g})"


def _outer_surface(L, s1, sol, v, i: int, us: bool) -> list[str]:
    """Surface and film temperatures, convection and radiation, heat flux and balance, heat loss
    and critical radius."""
    cond = L.conditions[0]
    conv = sol.convection
    free_name, forced_name = CORRELATION_NAMES[L.shape]
    ts, q = float(sol.t_surface[0]), float(sol.q[0])
    h_c, h_r = float(conv.h[0]), float(sol.h_radiation[0])
    gain = 0.0 if s1.absorbed is None else float(s1.absorbed[0])
    sun = f" − sun absorbed {gain:.3f}" if gain else ""
    out = ["", "Outer surface:",
           f"  surface temperature {show(ts, 'temperature', us)}, film {show(0.5 * (ts + cond.t_air), 'temperature', us)}",
           *_convection_lines(L, s1, sol, free_name, forced_name, us),
           f"  h_conv = Nu k_air / L = {h_c:.3f} W/(m²·K)",
           f"  radiation: emissivity {float(s1.emissivity[0]):.2f}, sigma = {SIGMA:.6e} W/(m²·K⁴), "
           f"q_rad = {float(sol.q_radiation[0]):.2f} W/m², h_rad (linearised) = {h_r:.3f} W/(m²·K)",
           f"  heat flux {q:.3f} W/m² = convection {h_c * (ts - cond.t_air):.3f} + radiation "
           f"{float(sol.q_radiation[0]):.3f}{sun}; balance residual {float(sol.residual[0]):.2e} (relative)"]
    if L.geometry == CYLINDER:
        out.append(f"  heat loss per length {show(float(v['heat_loss_per_length'][i]), 'per_length', us)}")
    out.append(f"  heat loss {show(float(v['heat_loss'][i]), 'power', us)} (bare {show(float(v['bare_heat_loss'][i]), 'power', us)})")
    if np.isfinite(v["critical_radius"][i]):
        rule = "2k/h" if L.geometry == SPHERE else "k/h"
        out.append(f"  critical radius {show(float(v['critical_radius'][i]), 'radius', us)} "
                   f"({rule} with h = h_conv + h_rad = {h_c + h_r:.3f} W/(m²·K))")
    return out


def _sun(L, s1, sol, v, i: int, us: bool) -> list[str]:
    """The sun on the line (README, 'Sun on outdoor surfaces'): what the balance above takes in, and
    the reported surface where it is not the one above."""
    g = L.conditions[0].solar
    if not g > 0:
        return []
    gain = 0.0 if s1.absorbed is None else float(s1.absorbed[0])
    out = ["", f"Sun: {g:g} W/m², solar absorptance {L.absorptance:g}"]
    if gain > 0:
        out.append(f"  a line colder than the air: {gain:.2f} W/m² absorbed, averaged over the surface, is one "
                   "more gain in the balance above (conduction in + sun = convection + radiation out); the "
                   "reported surface temperature and the dew point are in the shade")
    else:
        out.append("  the balance above is in the shade (the sun never reduces a loss); the reported surface "
                   f"temperature is the sun-facing side's, {show(float(v['surface_temperature'][i]), 'temperature', us)}")
    return out


def _targets(res: Results, i: int, us: bool) -> list[str]:
    """Each target's own thinnest thickness and margin, the governing target and the system chosen."""
    v = res.values
    out = ["", "Targets (each one's own thinnest sold thickness; margin at the chosen system, worst named "
           "condition; a surface limit on its sun-facing side, and in still air unless the touch check "
           "in still air is off):"]
    margins = res.target_margin[i] if res.target_margin else {}
    for name, th in (res.target_thickness[i] if res.target_thickness else {}).items():
        text = show(th, "thickness", us) if th is not None else "not met by any sold thickness"
        if name in margins:
            m, kind = margins[name]
            text += f"; margin {_signed(m, kind, us)}"
        out.append(f"  {name}: {text}")
    out += _code(res.lines[i], us)
    out.append(f"  governing: {v['governing'][i]}" + (f" at '{v['governing_condition'][i]}'"
                                                      if v["governing_condition"][i] else ""))
    out.append(f"  chosen: {v['layers'][i]}")
    return out


def _code(L, us: bool) -> list[str]:
    """How the line's code minimum was found: the row, its thickness and the correction."""
    if not L.code_basis:
        return []
    name, t, k_line = L.code_basis
    row = L.code_row
    rng = (f"{row.k_low:.4f} to {row.k_rating:.4f}" if np.isfinite(row.k_low) else f"{row.k_rating:.4f}")
    return [f"    code {name} ({row.where}): {show(t, 'thickness', us)} at k {rng} W/(m·K), "
            f"{show(row.t_rating, 'temperature', us)}; the line's design k there {k_line:.4f} W/(m·K); "
            f"T = r[(1 + t/r)^(K/k) - 1] with r = {show(L.r_inner, 'radius', us)}: "
            f"{show(L.code_thickness, 'radius', us)}"]


def convection_lengths(L, s1, sol) -> tuple[tuple[str, float], tuple[str, float], tuple[str, float]]:
    """(name, length [m]) on which the free-convection Ra and Nu, the forced Re and Nu, and the
    combined Nu and h are based, for the line's shape (as the engine's correlations use them)."""
    d = 2 * float(sol.r_outer[0])
    free, flow = float(s1.height[0]), float(s1.flow_length[0]) if s1.flow_length is not None else 1.0
    if L.word in ("pipe", "sphere"):
        return ("outer diameter", d), ("outer diameter", d), ("outer diameter", d)
    if L.word in ("riser", "vessel"):
        return ("height", free), ("outer diameter", d), ("outer diameter", d)
    if L.word == "wall":
        return ("height", free), ("width along the wind", flow), ("width along the wind", flow)
    return ("A/P", free), ("length along the wind", flow), ("length along the wind", flow)


def _convection_lines(L, s1, sol, free_name, forced_name, us) -> list[str]:
    """Ra and Nu of free convection on its own length, Re and Nu of forced convection on theirs,
    and the combination on the length h is taken on: each group printed beside its length."""
    conv = sol.convection
    (fw, lf), (gw, lg), (hw, lh) = convection_lengths(L, s1, sol)
    nu_free = float(conv.nu_free[0]) * lf / lh  # the engine carries it on the combining length
    nu_forced = float(conv.nu_forced[0]) * lg / lh
    k_air = float(conv.h[0]) * lh / float(conv.nu[0]) if conv.nu[0] > 0 else float("nan")

    def length(name, x):
        return f"{name} L = {x / 0.3048:.4g} ft" if us else f"{name} L = {x:.4g} m"  # 1 ft = 0.3048 m exactly

    return [f"  free convection: {free_name}, on the {length(fw, lf)}: Ra = {conv.ra[0]:.4g}, Nu = {nu_free:.4g}",
            f"  forced convection: {forced_name}, on the {length(gw, lg)}: Re = {conv.re[0]:.4g}, Nu = {nu_forced:.4g}",
            f"  combined (Churchill-Usagi, n = 3), on the {length(hw, lh)}: Nu_free = {conv.nu_free[0]:.4g}, "
            f"Nu_forced = {conv.nu_forced[0]:.4g}, Nu = {conv.nu[0]:.4g}; Pr = {conv.pr[0]:.4f}, "
            f"k_air = {k_air:.5f} W/(m·K) at the film"]


def _signed(value: float, kind: str, us: bool) -> str:
    """'+26.2 K' (room to spare) or '-1.5 K' (short), in the workbook's units."""
    text = f"{abs(value) / 3600:.1f} h" if kind == "hours" else show(abs(value), kind, us)
    return ("+" if value >= 0 else "-") + text


def _process(L, v, i: int, us: bool) -> list[str]:
    """The process results of the line (outlet, condensate, freeze and cool-down), if any."""
    P, out = L.process, []
    if np.isfinite(v["outlet_temperature"][i]):
        out.append(f"  outlet temperature {show(float(v['outlet_temperature'][i]), 'temperature', us)} after "
                   f"the line's length, flow {P.m_dot:.4g} kg/s of {P.label} (c_p {P.cp:.0f} J/(kg·K) at the "
                   "inlet; marched with the coefficient re-evaluated along the line)")
    if np.isfinite(v["condensate"][i]):
        out.append(f"  condensate {v['condensate'][i] * 3600:.2f} kg/h = heat loss / h_fg "
                   f"{P.h_fg / 1000:.1f} kJ/kg (saturation {show(P.t_sat, 'temperature', us)}, CoolProp)")
    if np.isfinite(v["time_to_freeze"][i]):
        out.append(f"  time to freeze {v['time_to_freeze'][i] / 3600:.1f} h (bore "
                   f"{show(P.bore, 'radius', us)}; required {P.freeze / 3600:g} h)")
    if np.isfinite(v["time_to_cool"][i]):
        out.append(f"  time to cool {v['time_to_cool'][i] / 3600:.1f} h to {show(P.t_limit, 'temperature', us)} "
                   f"({P.volume:g} m³ of {P.label}; required {P.hold / 3600:g} h)")
    return ["", "Process:"] + out if out else []
