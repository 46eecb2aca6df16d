"""Parts of a calculation sheet that read the selection's results: the values written to the
workbook (the cells ``fill`` writes, as the sheet shows them), each target with its limit,
value and margin, the thickness chosen and why, the process results, and the curves
against thickness of every chosen line (solved in one engine call)."""

from __future__ import annotations

import numpy as np

from ..design.select import THINNEST, Results
from ..io.table import RawSheet
from ..outputs.calcs.basis import cell_text
from ..outputs.calcs.chart import BLACK, BLUE, GREEN, RED, Chart, Series, finite
from ..outputs.calcs.sheet import in_units, unit_label
from ..outputs.columns import lines_edits
from ..physics.balance import solve
from ..physics.candidates import heat_rate, per_line
from ..physics.layers import CYLINDER, FLAT
from ..physics.properties import dew_point
from ..workbook.display import show
from ..workbook.inputs import Inputs
from ..workbook.tables import Table

CURVE_POINTS = 48


def written_values(raw: RawSheet, t: Table, res: Results, us: bool,
                   currency: str) -> tuple[list[list[tuple[str, str]]], list[str]]:
    """Per line: (column header, cell as the sheet shows it) of every result ``fill`` writes
    (the same edits, so the same numbers and number formats; Notes are printed whole apart);
    and each result the workbook already holds that differs from this calculation."""
    e = lines_edits(raw, t, res, us, currency)
    cols = sorted(c for (r, c) in e.values if r == t.header_row)
    heads = {c: str(e.values[(t.header_row, c)]) for c in cols}
    held = [c for c in cols if (t.header_row, c) not in e.headers and not heads[c].startswith("Notes")]
    out, stale = [], []
    for i, r in enumerate(t.rows):
        row = []
        for c in cols:
            v = e.values.get((r, c))
            if v is not None and not heads[c].startswith("Notes"):
                row.append((heads[c], cell_text(v, e.number_formats.get((r, c)))))
            if c in held and _differs(raw.value(r, c), v):
                fmt = e.number_formats.get((r, c))
                stale.append(f"{res.tags[i] or f'row {r + 1}'} {heads[c]}: {cell_text(raw.value(r, c), fmt) or 'blank'} "
                             f"in the workbook, {cell_text(v, fmt) or 'blank'} here")
        out.append(row)
    return out, stale


def _differs(held, now) -> bool:
    """Does a result cell the workbook holds differ from the one fill would write now?"""
    number = (int, float)
    if isinstance(held, number) and not isinstance(held, bool) and isinstance(now, number):
        return abs(held - now) > 1e-5 + 1e-7 * abs(now)  # fill writes values rounded to 6 decimals
    return (str(held).strip() if held is not None else "") != (str(now).strip() if now is not None else "")


def _signed(value: float, kind: str, us: bool) -> str:
    text = f"{abs(value) / 3600:.1f} h" if kind == "hours" else show(abs(value), kind, us)
    return ("+" if value >= 0 else "−") + text


def _limit_and_value(name: str, inputs: Inputs, res: Results, i: int, m: float, kind: str, us: bool):
    """(limit text, value text) of target ``name`` on line ``i`` from its margin ``m``."""
    L, t = res.lines[i], inputs.lines
    P = L.process
    if name == "surface temperature":
        lim = float(t.get("max_surface_temperature")[i])
        return f"≤ {show(lim, 'temperature', us)}", show(lim - m, "temperature", us)
    if name == "heat loss":
        lim = float(t.get("max_heat_loss")[i])
        return f"≤ {show(lim, kind, us)}", show(lim - m, kind, us)
    if name == "minimum":
        lim = float(t.get("min_thickness")[i])
        return f"≥ {show(lim, 'thickness', us)}", show(lim + m, "thickness", us)
    if name == "code minimum":
        lim = L.code_thickness
        return f"≥ {show(lim, 'thickness', us)} ({L.code_basis[0]})", show(lim + m, "thickness", us)
    if name == "interface":
        lim = L.materials[1].max_temperature
        return f"≤ {show(lim, 'temperature', us)} ({L.materials[1].name})", show(lim - m, "temperature", us)
    if name == "condensation":
        margin = float(inputs.settings["condensation_margin"])
        limit = f"surface ≥ dew point + {show(margin, 'difference', us)}"
        if len(L.conditions) > 1:
            return limit, "at the worst named condition: see the margin"
        c = L.conditions[0]
        ts = float(res.values["surface_temperature"][i])
        return limit, (f"surface {show(ts, 'temperature', us)}; dew point "
                       f"{show(float(dew_point(c.t_air, c.rh)[0]), 'temperature', us)}")
    if name == "temperature drop":
        return f"≤ {show(P.max_drop, 'difference', us)}", show(P.max_drop - m, "difference", us)
    if name in ("freeze protection", "hold time"):
        need = P.freeze if name == "freeze protection" else P.hold
        return f"≥ {need / 3600:g} h", f"{(need + m) / 3600:.1f} h"
    return "", ""


def target_rows(inputs: Inputs, res: Results, i: int, us: bool) -> list[tuple[str, ...]]:
    """Each target of the line: limit, value at the chosen system (worst named condition), margin,
    its own thinnest sold thickness and whether it is met."""
    margins = res.target_margin[i] if res.target_margin else {}
    rows = []
    for name, own in (res.target_thickness[i] if res.target_thickness else {}).items():
        own_text = show(own, "thickness", us) if own is not None else "none sold meets it"
        if name in margins:
            m, kind = margins[name]
            limit, value = _limit_and_value(name, inputs, res, i, m, kind, us)
            rows.append((name, limit, value, _signed(m, kind, us), own_text, "yes" if m >= -1e-9 else "NO"))
        else:
            rows.append((name, "", "", "", own_text, "yes" if own is not None else "NO"))
    return rows


def _why(governing: str, condition: str | None) -> str:
    at = f" at condition '{condition}'" if condition else ""
    if governing.endswith("(not met)"):
        return ("no sold thickness meets this target: the thickest is shown and the line is in error "
                "(see the notes)")
    return {
        THINNEST: "the thinnest sold thickness already meets every target",
        "none": "no target is given on this line: the thinnest sold thickness is shown",
        "fixed": "a Fixed thickness is given: it is evaluated, not sized",
        "economic": "the lowest annualised cost (installed cost × capital recovery factor + energy cost) "
                    "among the sold systems that meet every target",
    }.get(governing, f"the thinnest sold system that meets every target; the {governing} target needs "
                     f"it{at} (the thinner ones fail it)")


def chosen_rows(res: Results, i: int, us: bool) -> list[tuple[str, str]]:
    v = res.values
    gov, cond = v["governing"][i] or "", v["governing_condition"][i]
    rows = [("Chosen", f"{v['layers'][i]}, {show(float(v['thickness'][i]), 'thickness', us)} in all"),
            ("Governing", gov + (f" at '{cond}'" if cond else "")),
            ("Why", _why(gov, cond))]
    if gov == "economic" and np.isfinite(v["payback"][i]):
        rows.append(("Payback", f"{float(v['payback'][i]):.1f} years against bare"))
    return rows


def process_rows(L, v, i: int, us: bool) -> list[tuple[str, str]]:
    P, out = L.process, []
    if np.isfinite(v["outlet_temperature"][i]):
        out.append(("Outlet temperature", f"{show(float(v['outlet_temperature'][i]), 'temperature', us)} after the "
                    f"line's length; {P.m_dot:.4g} kg/s of {P.label}, c_p {P.cp:.0f} J/(kg·K) at the inlet; "
                    "marched along the line with the coefficient re-evaluated"))
    if np.isfinite(v["condensate"][i]):
        out.append(("Condensate", f"{v['condensate'][i] * 3600:.2f} kg/h = heat loss / h_fg {P.h_fg / 1000:.1f} "
                    f"kJ/kg (saturation {show(P.t_sat, 'temperature', us)}, CoolProp)"))
    if np.isfinite(v["time_to_freeze"][i]):
        out.append(("Time to freeze", f"{v['time_to_freeze'][i] / 3600:.1f} h (bore {show(P.bore, 'radius', us)}; "
                    f"required {P.freeze / 3600:g} h)"))
    if np.isfinite(v["time_to_cool"][i]):
        out.append(("Time to cool", f"{v['time_to_cool'][i] / 3600:.1f} h to {show(P.t_limit, 'temperature', us)} "
                    f"({P.volume:g} m³ of {P.label}; required {P.hold / 3600:g} h)"))
    return out


def _condition_of(res: Results, i: int):
    L = res.lines[i]
    gov = res.values["governing_condition"][i]
    return next((c for c in L.conditions if c.name == gov), L.conditions[0])


def curves(res: Results, idx: list[int], points: int = CURVE_POINTS):
    """Per line of ``idx``: thicknesses [m], surface temperatures [K] and heat rates of its inner
    material alone from bare to past the chosen thickness, at its governing condition: what
    ``outputs.plot.curve`` gives for one line, here for all in one engine call."""
    if not idx:
        return {}
    tops, conds = [], [_condition_of(res, i) for i in idx]
    for i in idx:
        sold = [th for m in res.lines[i].materials[:1] for th in (m.thicknesses or ())]
        tops.append(max(sold + [float(np.nansum(res.chosen[i])) * 1.5, 0.05]))
    th = np.concatenate([np.linspace(0.0, top, points) for top in tops])
    rows = np.repeat(np.array(idx), points)
    thickness = np.zeros((len(rows), res.system.thickness.shape[1]))
    thickness[:, 0] = th

    def each(get):
        return np.repeat(np.array([get(c) for c in conds], dtype=float), points)

    s = per_line(res.system, rows, thickness=thickness, t_air=each(lambda c: c.t_air),
                 t_surroundings=each(lambda c: c.t_surroundings), wind=each(lambda c: c.wind))
    sol = solve(s, res.table)
    rate = heat_rate(s.geometry, sol.q, sol.r_outer)
    return {i: (th[k * points:(k + 1) * points], sol.t_surface[k * points:(k + 1) * points],
                rate[k * points:(k + 1) * points], conds[k]) for k, i in enumerate(idx)}


def charts(inputs: Inputs, res: Results, idx: list[int]) -> dict[int, tuple[list[Chart], str]]:
    """Per line of ``idx``: its two charts (heat loss, surface temperature against thickness), with
    its limits and the chosen thickness marked, and the sentence that says what they show."""
    us, t = inputs.us_units, inputs.lines
    tmax, qmax = t.get("max_surface_temperature"), t.get("max_heat_loss")
    out = {}
    for i, (th, ts, rate, cond) in curves(res, [i for i in idx if res.lines[i].materials]).items():
        L = res.lines[i]
        kind = "per_length" if L.geometry == CYLINDER else "per_area" if L.geometry == FLAT else "power"
        x = finite(th / 0.0254 if us else th * 1000)  # 1 in = 25.4 mm exactly
        xlabel = f"insulation thickness [{'in' if us else 'mm'}]"
        hot = L.t_op >= cond.t_air
        what = {"per_length": "heat loss per length", "per_area": "heat flux", "power": "heat loss"}[kind]
        q = Chart(xlabel, f"{what} [{unit_label(kind, us)}]" + ("" if hot else ", negative: heat gained"),
                  [Series(x, [in_units(float(v), kind, us) for v in rate], what, RED)])
        t_unit = "°F" if us else "°C"
        temps = [float(show(v, "temperature", us).split()[0]) if np.isfinite(v) else float("nan") for v in ts]
        s = Chart(xlabel, f"surface temperature [{t_unit}]", [Series(x, temps, "surface temperature", BLUE, True)])
        per_area = qmax is not None and t.columns["max_heat_loss"].si_of(i) == "W/m**2"
        if qmax is not None and np.isfinite(qmax[i]) and per_area == (L.geometry == FLAT) and kind != "power":
            q.hlines.append((in_units(float(qmax[i]) * (1 if hot else -1), kind, us), "limit", GREEN))
        if tmax is not None and np.isfinite(tmax[i]):
            s.hlines.append((float(show(float(tmax[i]), "temperature", us).split()[0]), "limit", GREEN))
        chosen = float(np.nansum(res.chosen[i]))
        for c in (q, s):
            c.vlines.append((chosen / 0.0254 if us else chosen * 1000, "thickness chosen", BLACK))
        note = (f"{L.materials[0].name} alone from bare to {show(float(th[-1]), 'thickness', us)}, at condition "
                f"'{cond.name}'" + (" (the governing one)" if res.values["governing_condition"][i] == cond.name
                                    and len(L.conditions) > 1 else "")
                + f"; the vertical line marks the thickness chosen ({res.values['layers'][i]}).")
        out[i] = ([q, s], note)
    return out
