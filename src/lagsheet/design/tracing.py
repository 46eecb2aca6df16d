"""Heat tracing and fittings: two results of the chosen system (neither chooses a thickness).

Tracing duty
    The heat per metre that holds the pipe at its ``Maintain temperature`` with the chosen
    insulation at the line's coldest named condition, in that condition's wind, the sun left
    out (a second solve of the chosen system with the maintain temperature inside), times
    1 + ``Tracing margin`` (IEEE 515 / IEC/IEEE 60079-30-2 design practice: 10-25 % is usual,
    20 % by default; common practice). Tracing only adds heat, so the maintain temperature must
    lie above the air of the coldest named condition; it may lie above the operating temperature
    (tracing that warms a line) if the insulation is rated for it. Pipes and risers only.
    A water line whose time to freeze falls short of its ``Freeze protection`` hours is told in
    its note the duty that holds it at 5 °C (common practice for freeze protection of water).

Fittings and thermal bridges
    Each valve, flange pair and support loses as much as its equivalent length of the same
    pipe in the same state (:mod:`lagsheet.workbook.fittings`): ``q′ × Σ nᵢ L_eq,i``, with q′
    the line's mean loss per metre. A line's fittings are insulated when the line is (boxes
    and covers), bare when it is bare; the bare line of the saving has bare fittings. The
    ``Heat loss allowance`` Z covers the remaining thermal bridges of the whole line as
    ``q′ L Z`` (ISO 12241, VDI 2055). Both add into ``Heat loss`` and the bare heat loss, so
    energy, cost, CO2 and saving follow.
"""

from __future__ import annotations

import numpy as np

from ..errors import Note
from ..physics.balance import solve
from ..physics.candidates import heat_rate, per_line
from ..physics.layers import CYLINDER
from ..workbook import fittings as fitting_rows
from ..workbook.display import show
from .process import coldest_cases

TRACED = ("pipe", "riser")  # shapes with a duty per metre and fittings on a run of pipe
ITEM_COLUMNS = (("valve", "valves"), ("flange", "flanges"), ("support", "supports"))
# the columns check reads (as numbers): a line with none of them given takes :func:`untraced`
COLUMNS = ("maintain_temperature", *(key for _, key in ITEM_COLUMNS), "heat_loss_allowance")
FREEZE_HOLD = 278.15  # K: 5 °C, the usual maintain temperature of freeze protection (common practice)


def check(L, cells, us: bool, table: tuple = fitting_rows.BUILTIN) -> None:
    """Read and check the line's tracing and fittings inputs onto ``L`` (each problem one note);
    ``table`` is the Fittings rows (the sheet's, then the built-in) its equivalent lengths come from."""
    _maintain(L, cells, us)
    for item, key in ITEM_COLUMNS:
        n = cells.num(key)
        if not np.isfinite(n) or n == 0:
            continue
        if n < 0 or abs(n - round(n)) > 1e-9:
            cells.err("bad-count", key, f"'{key.capitalize()}' must be a whole number of items (0, 1, 2 ...)")
        elif L.word not in TRACED:
            cells.warn("fittings-shape", key, f"'{key.capitalize()}' count equivalent lengths of pipe; a {L.word} "
                       "has none: use 'Heat loss allowance' for its thermal bridges")
        else:
            L.fittings[item] = int(round(n))
    L.l_eq = (_sum_lengths(L, cells, table, True), _sum_lengths(L, cells, table, False))
    allowance = cells.num("heat_loss_allowance")
    L.allowance = allowance if np.isfinite(allowance) else float(cells.settings["heat_loss_allowance"])


def untraced(L, settings: dict) -> None:
    """What :func:`check` gives a line with none of :data:`COLUMNS` given: no fittings, the
    setting's allowance."""
    L.l_eq = (0.0, 0.0)
    L.allowance = float(settings["heat_loss_allowance"])


def _maintain(L, cells, us: bool) -> None:
    maintain = cells.num("maintain_temperature")
    if not np.isfinite(maintain):
        return
    if L.word not in TRACED:
        cells.warn("tracing-shape", "maintain_temperature", f"'Maintain temperature' gives a tracing duty per "
                   f"metre of pipe; a {L.word} gets none: leave it blank here")
        return
    if not L.conditions:
        return
    cold = min(L.conditions, key=lambda c: c.t_air)
    if maintain <= cold.t_air:
        cells.err("tracing-below-air", "maintain_temperature",
                  f"'Maintain temperature' {show(maintain, 'temperature', us)} is not above the air at condition "
                  f"'{cold.name}' (the coldest named, {show(cold.t_air, 'temperature', us)}): tracing only adds "
                  "heat; raise it or leave it blank")
    elif L.materials and maintain > L.materials[0].max_temperature:
        cells.err("tracing-over-material", "maintain_temperature",
                  f"'Maintain temperature' {show(maintain, 'temperature', us)} is above the service limit of "
                  f"{L.materials[0].name} ({show(L.materials[0].max_temperature, 'temperature', us)}); "
                  "lower it or choose another material")
    else:
        L.maintain = maintain


def _sum_lengths(L, cells, table, insulated: bool) -> float:
    """Σ nᵢ L_eq,i [m] of the line's fittings in one state; an item without a row is a warning."""
    total = 0.0
    for item, count in L.fittings.items():
        row = fitting_rows.find(table, item, 2 * L.r_inner, insulated)
        if row is None:
            cells.warn("no-fitting-row", item + "s", f"no Fittings row for {'an insulated' if insulated else 'a bare'} "
                       f"{item} of this size: its heat loss is left out; add a row to the Fittings sheet")
            continue
        total += count * row.length
    return total


def loss_factor(lines) -> np.ndarray:
    """Per line: whole-line heat loss with fittings and allowance / without, for an insulated system
    (1 + Z + Σ nᵢ L_eq,i / L; the economic thickness prices candidates with it)."""
    return np.array([1.0 + (L.allowance if np.isfinite(L.allowance) else 0.0)
                     + (L.l_eq[0] / L.length if L.fittings and L.length > 0 else 0.0) for L in lines])


def add_fittings(ctx, rep, res) -> None:
    """Fittings and the thermal-bridge allowance into the chosen and bare heat losses of ``rep``."""
    lines, put = ctx.lines, rep.put
    lengths = np.array([L.length if L.geometry == CYLINDER else np.nan for L in lines])
    allowance = np.array([L.allowance if np.isfinite(L.allowance) else 0.0 for L in lines])
    insulated = rep.chosen_th.sum(axis=1) > 0
    l_eq = np.array([L.l_eq[0] if ins else L.l_eq[1] for L, ins in zip(lines, insulated, strict=True)])
    l_bare = np.array([L.l_eq[1] for L in lines])
    with np.errstate(all="ignore"):
        fit = np.where(l_eq > 0, rep.loss / lengths * l_eq, 0.0)
        fit_bare = np.where(l_bare > 0, rep.bare_loss / lengths * l_bare, 0.0)
    has = put & np.array([bool(L.fittings) for L in lines])
    res.values["fittings_heat_loss"][has] = fit[has]
    rep.loss = np.where(put, rep.loss * (1 + allowance) + fit, rep.loss)
    rep.bare_loss = np.where(put, rep.bare_loss * (1 + allowance) + fit_bare, rep.bare_loss)
    t, us = ctx.t, ctx.us
    for i in np.flatnonzero(has):
        L = lines[i]
        what = ", ".join(f"{n} {k if n == 1 else k + 's'}" for k, n in L.fittings.items())
        state = ("insulated (boxes and covers, as the line is insulated)" if insulated[i]
                 else "bare (as the line is bare)")
        first = next(key for item, key in ITEM_COLUMNS if item in L.fittings)
        res.notes[i].append(Note(
            "info", "fittings", f"{what}, {state}: as much heat as {_metres(l_eq[i], us)} more of this line, "
            f"{show(fit[i], 'power', us)} in 'Heat loss'; the bare line's fittings are bare",
            t.sheet, t.cell(i, first)))
    for i in np.flatnonzero(put & (allowance > 0)):
        res.notes[i].append(Note("info", "heat-loss-allowance", f"'Heat loss allowance' {allowance[i] * 100:g} % "
                                 "added to the line's heat loss for thermal bridges not counted as fittings "
                                 "(ISO 12241, VDI 2055)", t.sheet, t.cell(i, "heat_loss_allowance")))


def _metres(x: float, us: bool) -> str:
    return f"{x / 0.3048:.3g} ft" if us else f"{x:.3g} m"


def hold_duty(ctx, rep, idx: np.ndarray, t_hold: np.ndarray) -> np.ndarray:
    """The heat [W/m] that holds lines ``idx`` at ``t_hold`` [K] with their chosen insulation at
    their coldest named condition (its wind; no sun), times 1 + ``Tracing margin``."""
    cases = coldest_cases(ctx.lines, idx, ctx.starts)
    s = per_line(ctx.cases, cases, thickness=np.nan_to_num(rep.chosen_th[idx]), t_operating=t_hold,
                 absorbed=np.zeros(len(idx)))
    sol = solve(s, ctx.table)
    rate = heat_rate(s.geometry, sol.q, sol.r_outer)
    rate = np.where(sol.converged, rate, np.nan)
    return rate * (1 + float(ctx.settings["tracing_margin"]))


def tracing(ctx, rep, res) -> None:
    """``Tracing duty`` of the lines with a maintain temperature, and the 5 °C duty in the note of a
    water line whose time to freeze falls short (after :func:`lagsheet.design.process.results`)."""
    lines, put, t, us, v = ctx.lines, rep.put, ctx.t, ctx.us, res.values
    margin = float(ctx.settings["tracing_margin"]) * 100

    def where(i):
        return lines[i].conditions[coldest_cases(lines, [i], ctx.starts)[0] - ctx.starts[i]].name

    traced = np.flatnonzero(put & np.array([np.isfinite(L.maintain) for L in lines]))
    if len(traced):
        duty = hold_duty(ctx, rep, traced, np.array([lines[i].maintain for i in traced]))
        v["tracing_duty"][traced] = duty
        for i in traced:
            res.notes[i].append(Note("info", "tracing-duty", f"tracing duty: the heat that holds the pipe at "
                                     f"{show(lines[i].maintain, 'temperature', us)} with this insulation at condition "
                                     f"'{where(i)}' (the coldest named, in its wind, no sun), {margin:g} % 'Tracing "
                                     f"margin' included", t.sheet, t.cell(i, "maintain_temperature")))
    want = v["time_to_freeze"] < np.array([L.process.freeze for L in lines])
    short = np.flatnonzero(put & want & np.array([not np.isfinite(L.maintain) for L in lines]))
    if len(short):
        duty = hold_duty(ctx, rep, short, np.full(len(short), FREEZE_HOLD))
        for j, i in enumerate(short):
            if np.isfinite(duty[j]) and duty[j] > 0:
                res.notes[i].append(Note(
                    "info", "tracing-for-freeze", f"the time to freeze is shorter than asked: heat tracing that "
                    f"holds the water at {show(FREEZE_HOLD, 'temperature', us)} (common practice) needs "
                    f"{show(duty[j], 'per_length', us)} with this insulation at condition '{where(i)}', "
                    f"{margin:g} % 'Tracing margin' included", t.sheet, t.cell(i, "freeze_protection")))
