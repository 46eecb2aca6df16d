"""The numbers of each chosen line's calculation sheet (:class:`LineSheet`), for all chosen
lines at once: the chosen systems solved again in one engine call (layers, coefficients and
the surface balance, as ``explain`` prints them for one line), and every line's curves
against thickness in one more call (as ``explain --plot`` draws them for one line)."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np

from ..design.select import Results
from ..io.table import RawSheet, address
from ..outputs.calcs.records import Balance, LineSheet
from ..physics.balance import solve
from ..physics.candidates import heat_rate, per_line, whole_factor
from ..physics.layers import CYLINDER, FLAT, SPHERE
from ..physics.surface import CORRELATION_NAMES
from ..workbook.display import show
from ..workbook.inputs import Inputs
from ..workbook.tables import Table
from ..workbook.units import from_si
from .calcs_parts import charts, chosen_rows, process_rows, target_rows, written_values
from .explain import convection_lengths

GEOMETRY = {CYLINDER: "cylinder", FLAT: "flat", SPHERE: "sphere"}


def computed(res: Results, i: int) -> bool:
    """Has line ``i`` an evaluated insulation system (what a balance can be shown for)?"""
    return bool(res.lines[i].ok and res.system is not None and np.isfinite(res.values["thickness"][i]))


def gather(inputs: Inputs, raw: RawSheet, res: Results, idx: list[int]) -> tuple[list[LineSheet], list[str]]:
    """One :class:`LineSheet` per line of ``idx``, in that order; and the results the workbook
    holds that differ from this calculation (its inputs changed after it was filled)."""
    us, t = inputs.us_units, inputs.lines
    written, stale = written_values(raw, t, res, us, str(inputs.settings["currency"]))
    done = [i for i in idx if computed(res, i)]
    solved = _solved(res, done)
    drawn = charts(inputs, res, done)
    area = t.get("area")
    service = t.get("service")
    sheets = []
    for i in idx:
        words = [f"{t.sheet} row {t.rows[i] + 1}"] + [str(c[i]) for c in (area, service) if c is not None and c[i]]
        s = LineSheet(res.tags[i] or f"row {t.rows[i] + 1}", " — ".join(words), res.status[i])
        s.inputs = _inputs(t, raw, i)
        s.results = written[i]
        s.notes = [(n.level, n.message) for n in res.notes[i]]
        if i in solved:
            _fill(s, inputs, res, i, solved[i], us)
            s.charts, s.chart_note = drawn.get(i, ([], ""))
        sheets.append(s)
    return sheets, stale


def _inputs(t: Table, raw: RawSheet, i: int) -> list[tuple[str, str, str, str, str]]:
    """Each input cell of the line as written, its unit and its SI value."""
    rows = []
    for c in sorted(t.columns.values(), key=lambda c: c.col):
        v = raw.value(t.rows[i], c.col)
        if v is None or (isinstance(v, str) and not v.strip()):
            continue
        si = ""
        if c.values is not None and c.values.dtype != object and np.isfinite(c.values[i]) and c.si_unit:
            si = f"{c.values[i]:.6g} {c.si_of(i).replace('**2', '²').replace('**3', '³')}"
        written = f"{v:.10g}" if isinstance(v, float) else str(v)
        rows.append((c.header, written, c.unit_text or "", si, address(t.rows[i], c.col)))
    return rows


def _solved(res: Results, idx: list[int]) -> dict[int, SimpleNamespace]:
    """The chosen system of every line of ``idx`` at its condition of record, solved in one call."""
    if not idx:
        return {}
    rows = np.array(idx)
    s1 = per_line(res.system, rows)
    sol = solve(s1, res.table)
    slots = s1.thickness.shape[1]
    k = np.stack([res.table.mean_conductivity(s1.material[:, j], sol.faces[:, j], sol.faces[:, j + 1])
                  for j in range(slots)], axis=1)
    return {i: SimpleNamespace(j=j, s=s1, sol=sol, k=k) for j, i in enumerate(idx)}


def _fill(s: LineSheet, inputs: Inputs, res: Results, i: int, x: SimpleNamespace, us: bool) -> None:
    L, j, s1, sol = res.lines[i], x.j, x.s, x.sol
    cond = L.conditions[0]
    s.condition = _condition(L, cond, us)
    faces = sol.faces[j]
    s.layers = [("bare surface", "", "", "", show(faces[0], "temperature", us), "")]
    for slot in range(s1.thickness.shape[1]):
        th = float(s1.thickness[j, slot])
        if th > 0:
            s.layers.append((f"layer {len(s.layers)}", res.table.names[int(s1.material[j, slot])],
                             show(th, "thickness", us), show(faces[slot], "temperature", us),
                             show(faces[slot + 1], "temperature", us), _k(float(x.k[j, slot]), us)))
    s.surface = _surface(L, s1, sol, j, cond, res.values["critical_radius"][i], us)
    s.balance = _balance(L, s1, sol, j, res, i, us)
    s.targets = target_rows(inputs, res, i, us)
    s.chosen = chosen_rows(res, i, us)
    s.process = process_rows(L, res.values, i, us)


def _condition(L, cond, us: bool) -> list[tuple[str, str]]:
    rows = [("Shape", f"{L.word} ({GEOMETRY[L.geometry]})"),
            ("Condition of record", f"'{cond.name}': air {show(cond.t_air, 'temperature', us)}, surroundings "
             f"{show(cond.t_surroundings, 'temperature', us)}, wind {_wind(cond.wind, us)}, relative humidity "
             f"{cond.rh * 100:.0f} %, {cond.hours:g} h/yr")]
    rows += _sun(L, cond, us)
    for c in L.conditions[1:]:
        rows.append(("Targets also judged at", f"'{c.name}': air {show(c.t_air, 'temperature', us)}, wind "
                     f"{_wind(c.wind, us)}, relative humidity {c.rh * 100:.0f} %"))
    size = f"operating {show(L.t_op, 'temperature', us)}"
    if L.geometry != FLAT:
        size += f"; bare outside diameter {show(2 * L.r_inner, 'radius', us)}"
    if L.geometry == CYLINDER:
        size += f"; {'height' if L.word in ('riser', 'vessel') else 'length'} {show(L.length, 'length', us)}"
    elif L.geometry == FLAT:
        size += f"; area {_area(L.area, us)}"
    rows.append(("Line", size))
    return rows


def _sun(L, cond, us: bool) -> list[tuple[str, str]]:
    """Where the sun counts (lagsheet.design.sun): a cold line's gain in the balance below, a hot
    line's surface limit and reported surface on the sun-facing side, never a hot line's loss."""
    if not cond.solar > 0:
        return []
    g = f"{show(cond.solar, 'per_area', us)}, solar absorptance {L.absorptance:g}"
    if L.t_op < cond.t_air:
        return [("Sun", f"{g}: the balance below takes it in averaged over the surface (it adds to the "
                        "gain); the dew point is judged in the shade")]
    return [("Sun", f"{g}: the balance below is in the shade (the sun never reduces a loss); the "
                    "reported surface temperature and a surface limit are on the sun-facing side in full sun")]


def _k(k: float, us: bool) -> str:
    """A conductivity in W/(m·K), and on a US sheet in Btu·in/(h·ft²·°F) beside it."""
    if not us:
        return f"{k:.4f}"
    return f"{k:.4f} ({float(from_si([k], 'W/(m*K)', 'Btu*inch/(hour*foot**2*delta_degF)')[0]):.3f})"


def _h(h: float, us: bool) -> str:
    """A surface coefficient in W/(m²·K), and on a US sheet in Btu/(h·ft²·°F) beside it."""
    if not us:
        return f"{h:.3f} W/(m²·K)"
    return f"{h:.3f} W/(m²·K) ({float(from_si([h], 'W/(m**2*K)', 'Btu/(hour*foot**2*delta_degF)')[0]):.3f} Btu/(h·ft²·°F))"


def _wind(v: float, us: bool) -> str:
    return f"{v / 0.44704:.1f} mph" if us else f"{v:g} m/s"  # 1 mph = 0.44704 m/s exactly


def _area(a: float, us: bool) -> str:
    return f"{a / 0.09290304:,.1f} ft²" if us else f"{a:,.2f} m²"  # 1 ft² = 0.09290304 m² exactly


def _surface(L, s1, sol, j: int, cond, r_crit: float, us: bool) -> list[tuple[str, str]]:
    """The correlations used at the outer surface, with their groups and lengths, and h."""
    conv = sol.convection
    one_s = SimpleNamespace(height=s1.height[j:j + 1], flow_length=None if s1.flow_length is None
                            else s1.flow_length[j:j + 1])
    (fw, lf), (gw, lg), (hw, lh) = convection_lengths(L, one_s, SimpleNamespace(r_outer=sol.r_outer[j:j + 1]))
    free, forced = CORRELATION_NAMES[L.shape]
    ts, h_c = float(sol.t_surface[j]), float(conv.h[j])
    nu = float(conv.nu[j])
    k_air = h_c * lh / nu if nu > 0 else float("nan")

    def length(name, v):
        return f"{name} L = {v / 0.3048:.4g} ft" if us else f"{name} L = {v:.4g} m"  # 1 ft = 0.3048 m

    rows = [("Surface", f"{show(ts, 'temperature', us)}; film {show(0.5 * (ts + cond.t_air), 'temperature', us)} "
             "(air properties at the film)"),
            ("Free convection", f"{free}, on the {length(fw, lf)}: Ra = {conv.ra[j]:.4g}, "
             f"Nu = {float(conv.nu_free[j]) * lf / lh:.4g}"),
            ("Forced convection", f"{forced}, on the {length(gw, lg)}: Re = {conv.re[j]:.4g}, "
             f"Nu = {float(conv.nu_forced[j]) * lg / lh:.4g}" if conv.re[j] > 0 else f"{forced}: no wind (Re = 0)"),
            ("Combined", f"Churchill-Usagi, n = 3, on the {length(hw, lh)}: Nu = {nu:.4g}; Pr = {conv.pr[j]:.4f}; "
             f"k_air = {k_air:.5f} W/(m·K)"),
            ("Convection coefficient", f"h_conv = Nu k_air / L = {_h(h_c, us)}"),
            ("Radiation", f"emissivity {float(s1.emissivity[j]):.2f}; q_rad = ε σ (Ts⁴ − Tsur⁴) = "
             f"{float(sol.q_radiation[j]):.3f} W/m²; h_rad (linearised) = {_h(float(sol.h_radiation[j]), us)}"),
            ("Outer heat flux", f"q = {float(sol.q[j]):.4f} W/m² through the insulation")]
    if np.isfinite(r_crit):
        rule = "2k/h" if L.geometry == SPHERE else "k/h"
        rows.append(("Critical radius", f"{show(r_crit, 'radius', us)} ({rule}, k of the outer layer, "
                     f"h = h_conv + h_rad = {_h(h_c + float(sol.h_radiation[j]), us)})"))
    return rows


def _balance(L, s1, sol, j: int, res: Results, i: int, us: bool) -> Balance:
    """Conduction in and convection, radiation and sun out, per unit of the line and whole."""
    g, r = s1.geometry[j:j + 1], sol.r_outer[j:j + 1]
    conv = sol.convection.h[j:j + 1] * (sol.faces[j:j + 1, -1] - s1.t_air[j:j + 1])

    def per_unit(flux):
        return float(heat_rate(g, flux, r)[0])

    factor = float(whole_factor(g, np.array([L.length]), np.array([L.area]))[0])
    unit = {CYLINDER: "per_length", FLAT: "per_area", SPHERE: "power"}[L.geometry]
    text = (f"{'height' if L.word in ('riser', 'vessel') else 'length'} {show(L.length, 'length', us)}"
            if L.geometry == CYLINDER else f"area {_area(L.area, us)}" if L.geometry == FLAT else "")
    factor, text = _with_fittings(L, factor, text, res, i, us)
    sun = np.zeros(1) if s1.absorbed is None else -s1.absorbed[j:j + 1]  # a cold line's gain (design.sun)
    return Balance(unit, factor, text, per_unit(sol.q[j:j + 1]), per_unit(conv),
                   per_unit(sol.q_radiation[j:j + 1]), per_unit(sun), float(sol.residual[j]),
                   float(res.values["heat_loss"][i]), bool(np.isfinite(res.values["outlet_temperature"][i])))


def _with_fittings(L, factor: float, text: str, res: Results, i: int, us: bool) -> tuple[float, str]:
    """The whole-line factor with the 'Heat loss allowance' Z and the fittings' equivalent length:
    L (1 + Z) + Σ nᵢ L_eq,i (:mod:`lagsheet.design.tracing`), and its words."""
    z = L.allowance if np.isfinite(L.allowance) else 0.0
    insulated = res.chosen is not None and float(np.nansum(res.chosen[i])) > 0
    extra = (L.l_eq[0] if insulated else L.l_eq[1]) if L.fittings else 0.0
    if z > 0:
        factor *= 1 + z
        text += f" × (1 + {z * 100:g} % heat loss allowance)"
    if extra > 0:
        factor += extra
        text += f" + {show(extra, 'length', us) if us else f'{extra:.3g} m'} of pipe for the fittings"
    return factor, text
