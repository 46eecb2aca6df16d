"""Process limits of lines: temperature drop of flowing lines, steam condensate, time to
freeze of stagnant water, cool-down of vessel contents.

Three steps, called by :mod:`lagsheet.design.lines`, :mod:`lagsheet.design.targets` and
:mod:`lagsheet.design.select`:

- :func:`resolve_process` reads a line's process columns (``Flow rate``, ``Fluid``,
  ``Operating pressure``, ``Inside diameter``/``Schedule``, ``Max temperature drop``,
  ``Freeze protection``, ``Contents volume``, ``Hold time``, ``Min temperature``,
  ``Part of``) into a :class:`Process`, with an error naming the cell for every gap;
- :func:`closed_drop`, :func:`freeze_time` and :func:`cool_time` measure every candidate
  system for the process targets (:mod:`lagsheet.design.targets` judges them);
- :func:`results` computes what is reported for the chosen systems (``Outlet
  temperature``, ``Condensate``, ``Time to freeze``, ``Time to cool``) and its notes.

How each is computed (and where it is judged)
    Temperature drop
        Judged at every named condition with the closed form θ_out = θ_a + (θ_in − θ_a)
        exp(−UA/(ṁ c_p)), UA = the line's heat loss at the operating temperature / (θ_in
        − θ_a), c_p at the inlet; the reported ``Outlet temperature`` is marched along
        the line with UA and c_p re-evaluated at the local fluid temperature (20
        Runge–Kutta steps, :func:`lagsheet.physics.process.outlet_temperature_marching`).
        For hot lines UA falls as the fluid cools, so the closed form overstates the
        drop; a line whose marched drop still exceeds the limit gets a warning.
    Heat given up by a flowing fluid
        :func:`flowing_lines`: a line with a flow loses ṁ ∫ c_p dT between inlet and
        outlet (insulated and bare), which replaces the inlet rate × length in its heat
        loss, energy and cost. Water that reaches 0 °C before the outlet at any named
        condition is an error naming the distance; a fluid that comes within 1 K of the
        air is a warning.
    Condensate
        Saturated steam: heat loss / h_fg at the operating pressure (or at saturation at
        the operating temperature), CoolProp.
    Time to freeze
        Water standing in a pipe at the coldest named condition: cool-down from the
        operating temperature to 0 °C (water plus carbon-steel wall, U′ re-evaluated as
        it cools), then freezing the ``Freeze fraction`` setting (25 % by default, common
        practice) with the latent heat of fusion.
    Time to cool
        A vessel's contents (``Contents volume`` of ``Fluid``) from the operating to the
        ``Min temperature`` at the coldest named condition, the shell and every line
        whose ``Part of`` names the vessel (heads, bottoms) losing heat; the shell's own
        heat capacity is left out (which shortens the time: on the safe side).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import lru_cache
from typing import TYPE_CHECKING

import numpy as np

from ..errors import Note
from ..io.table import fold
from ..physics import process as pp
from ..physics.balance import System
from ..physics.candidates import per_line, whole_factor
from ..physics.layers import CYLINDER
from ..physics.properties import P_ATM, coolprop_name, fluid_properties, saturation
from ..workbook import library
from ..workbook.display import show

if TYPE_CHECKING:  # the selection's context (targets imports this module)
    from .targets import Context

STEAM_WORDS = {"steam", "saturated steam", "wet steam", "dry steam"}
STEEL_DENSITY = 7850.0  # kg/m³, carbon steel (handbook value, from memory)
STEEL_CP = 490.0  # J/(kg·K), carbon steel near 20 °C (handbook value, from memory)
SELECT_NODES = 8  # Gauss–Legendre nodes when judging every candidate (24 for the reported value)
STEAM_TOLERANCE_K = 2.0  # operating temperature vs saturation before a warning (our choice)
DEFAULT_SCHEDULE = "40"
# the columns resolve_process reads (as numbers, as text): a line with none of them given has no process inputs
PROCESS_NUMBERS = ("flow_rate", "max_temperature_drop", "freeze_protection", "hold_time", "operating_pressure")
PROCESS_TEXTS = ("part_of", "fluid")

@dataclass
class Process:
    """A line's process inputs, SI; NaN / None where not given."""

    label: str = ""  # Fluid as typed
    coolprop: str | None = None  # CoolProp fluid name
    user_cp: float = math.nan  # specific heat of a Fluids-sheet fluid [J/(kg·K)]
    user_density: float = math.nan  # [kg/m³]
    steam: bool = False
    pressure: float = math.nan  # given absolute pressure [Pa]
    m_dot: float = math.nan  # [kg/s]
    max_drop: float = math.nan  # [K]
    freeze: float = math.nan  # required time to freeze [s]
    bore: float = math.nan  # inside diameter [m]
    wall_area: float = 0.0  # steel cross-section of the pipe wall [m²]
    volume: float = math.nan  # contents [m³]
    hold: float = math.nan  # required time to cool [s]
    t_limit: float = math.nan  # [K]
    part_of: str | None = None
    t_sat: float = math.nan  # steam: saturation temperature [K]
    h_fg: float = math.nan  # steam: latent heat [J/kg]
    cp: float = math.nan  # fluid at the operating state [J/(kg·K)]
    density: float = math.nan

    @property
    def flowing(self) -> bool:
        return np.isfinite(self.m_dot) and not self.steam


def resolve_process(t, inputs, i: int, L, num, text, err, warn) -> bool:
    """Fill ``L.process`` from the line's process columns; ``err``/``warn`` note problems.

    True when its fluid and its state are known: the inputs of its process targets are
    then checked by those targets (:meth:`lagsheet.design.targets.Target.check`)."""
    P = L.process
    P.part_of = text("part_of")
    label = text("fluid")
    flow = num("flow_rate")
    P.max_drop, P.freeze, P.hold = num("max_temperature_drop"), num("freeze_protection"), num("hold_time")
    P.pressure = num("operating_pressure")
    if label is None and (np.isfinite(P.freeze) or np.isfinite(P.hold)):
        label = "water"  # freeze protection is for water; a hold time without a fluid: water, noted
        if np.isfinite(P.hold):
            warn("fluid-assumed", "fluid", "'Fluid' is blank: the contents are taken as water")
    if label is None:
        if np.isfinite(flow) or np.isfinite(P.max_drop):
            err("no-fluid", "fluid", "'Flow rate' needs its 'Fluid' (water, steam, air, a CoolProp name "
                "or a fluid of the Fluids sheet)")
        return False
    P.label = label
    if not _fluid(P, label, inputs, err) or not np.isfinite(L.t_op):
        return False
    if not _fluid_state(L, inputs.us_units, err, warn):
        return False
    return _mass_flow(t, i, P, flow, label, err)


def _fluid(P: Process, label: str, inputs, err) -> bool:
    """Which fluid ``label`` is: steam, a Fluids-sheet fluid or a CoolProp name."""
    user = inputs.fluids.get(fold(label))
    if fold(label) in STEAM_WORDS:
        P.steam, P.coolprop = True, "Water"
    elif user is not None:
        P.user_cp, P.user_density = user.cp, user.density
    else:
        P.coolprop = coolprop_name(label)
        if P.coolprop is None:
            known = ", ".join(sorted(f.name for f in inputs.fluids.values()))
            err("unknown-fluid", "fluid", f"fluid {label!r} is not known: use water, steam, air, another "
                "CoolProp fluid name (e.g. Nitrogen, R134a, INCOMP::MEG[0.3]) or define it on a 'Fluids' "
                "sheet (Name, Specific heat [kJ/(kg·K)], Density [kg/m³])" + (f"; defined: {known}" if known else ""))
            return False
    return True


def _fluid_state(L, us: bool, err, warn) -> bool:
    """The fluid at the operating state: saturation of steam, c_p and ρ of the others."""
    P = L.process
    p = P.pressure if np.isfinite(P.pressure) else P_ATM
    if P.steam:
        return _steam_state(L, us, err, warn)
    if P.coolprop is not None:
        if P.coolprop == "Water" and not np.isfinite(P.pressure) and L.t_op > 373.15:
            err("water-boils", "operating_pressure", f"water at {show(L.t_op, 'temperature', us)} boils at "
                "1 atm: give its 'Operating pressure' (absolute), or 'Fluid' steam for a steam line")
            return False
        P.cp, P.density = _state(P.coolprop, L.t_op, p)
        if not np.isfinite(P.cp):
            err("fluid-state", "fluid", f"CoolProp has no single-phase state of {P.coolprop} at "
                f"{show(L.t_op, 'temperature', us)} and {show(p, 'pressure', us)}")
            return False
    else:
        P.cp, P.density = P.user_cp, P.user_density
    return True


def _steam_state(L, us: bool, err, warn) -> bool:
    """Saturation temperature and latent heat of a steam line, with a warning where the
    operating temperature and the pressure disagree."""
    P = L.process
    P.t_sat, P.h_fg = _saturation_p(P.pressure) if np.isfinite(P.pressure) else _saturation_t(L.t_op)
    if not np.isfinite(P.h_fg):
        err("steam-state", "operating_pressure" if np.isfinite(P.pressure) else "operating_temperature",
            "saturated steam needs a temperature between 0.01 °C and 373.9 °C (or a pressure between "
            "0.006 bar and 220 bar absolute); check the value and its unit")
        return False
    if np.isfinite(P.pressure) and L.t_op < P.t_sat - STEAM_TOLERANCE_K:
        gauge = _saturation_p(P.pressure + P_ATM)[0]
        warn("steam-state", "operating_pressure",
             f"steam at {show(P.pressure, 'pressure', us)} (absolute) condenses at "
             f"{show(P.t_sat, 'temperature', us)}, above the operating temperature "
             f"{show(L.t_op, 'temperature', us)}; if the pressure is gauge, add the atmosphere "
             f"(saturation then {show(gauge, 'temperature', us)}). Condensate uses the pressure")
    elif np.isfinite(P.pressure) and L.t_op > P.t_sat + STEAM_TOLERANCE_K:
        warn("superheated", "operating_temperature",
             f"steam at {show(L.t_op, 'temperature', us)} is superheated (saturation "
             f"{show(P.t_sat, 'temperature', us)}): the heat lost first cools the steam, so the "
             "condensate shown is an upper bound")
    return True


def _mass_flow(t, i: int, P: Process, flow: float, label: str, err) -> bool:
    """``P.m_dot`` from 'Flow rate' (a volume flow × the density). A steam line's condensate
    comes from its heat loss, not its flow."""
    if np.isfinite(flow) and not P.steam:
        if t.columns["flow_rate"].si_of(i) == "m**3/s":  # a volume flow
            rho = P.density
            if not np.isfinite(rho):
                err("no-density", "flow_rate", f"a volume flow needs the density of {label!r}: give "
                    "'Density' on the Fluids sheet, or the flow in kg/s")
                return False
            flow = flow * rho
        P.m_dot = flow
    return True


def drop_inputs(L, err) -> None:
    """'Max temperature drop' needs a flowing fluid that is not condensing steam."""
    P = L.process
    if P.steam and np.isfinite(P.max_drop):
        err("steam-drop", "max_temperature_drop", "saturated steam stays at its saturation temperature "
            "while it condenses: 'Max temperature drop' does not apply; limit 'Max heat loss' instead")
    if not np.isfinite(P.m_dot) and np.isfinite(P.max_drop):
        err("no-flow", "flow_rate", "'Max temperature drop' needs the line's 'Flow rate'")


def hold_inputs(L, num, err) -> None:
    """'Hold time' needs the contents volume, the limit temperature and the fluid's density."""
    P = L.process
    P.volume, P.t_limit = num("contents_volume"), num("min_temperature")
    if not np.isfinite(P.volume):
        err("no-volume", "contents_volume", "'Hold time' needs the 'Contents volume' of the vessel")
    if not np.isfinite(P.t_limit):
        err("no-limit", "min_temperature", "'Hold time' needs the 'Min temperature' the contents may "
            "cool to (for cold contents: the warmest they may reach)")
    elif abs(P.t_limit - L.t_op) < 1e-9:
        err("no-limit", "min_temperature", "'Min temperature' equals the operating temperature: "
            "there is no time to hold")
    if np.isfinite(P.user_cp) and not np.isfinite(P.user_density):
        err("no-density", "fluid", f"'Contents volume' needs the density of {P.label!r}: give "
            "'Density' on the Fluids sheet")


# CoolProp once per distinct state of a schedule, not once per line
@lru_cache(maxsize=4096)
def _state(fluid: str, t: float, p: float) -> tuple[float, float]:
    props = fluid_properties(fluid, t, p)
    return float(props.cp), float(props.density)


@lru_cache(maxsize=4096)
def _saturation_p(p: float) -> tuple[float, float]:
    sat = saturation(p=p)
    return float(sat.t), float(sat.h_fg)


@lru_cache(maxsize=4096)
def _saturation_t(t: float) -> tuple[float, float]:
    sat = saturation(t=t)
    return float(sat.t), float(sat.h_fg)


def freeze_inputs(t, i, L, num, text, err, warn) -> None:
    """'Freeze protection' needs a water pipe and its bore ('Inside diameter', or 'Size' and 'Schedule')."""
    P = L.process
    if L.geometry != CYLINDER or L.word == "vessel":
        err("freeze-shape", "freeze_protection", "'Freeze protection' is for pipes and risers (water "
            "standing in the line); a vessel's cool-down takes 'Hold time' and 'Min temperature'")
        return
    if P.steam or P.coolprop != "Water":
        err("freeze-fluid", "fluid", "'Freeze protection' is computed for water only")
        return
    od = 2 * L.r_inner
    bore = num("inside_diameter")
    if np.isfinite(bore):
        if not np.isfinite(od) or bore >= od:
            err("bore", "inside_diameter", "'Inside diameter' must be less than the outside diameter")
            return
    else:
        size, sch = text("size"), text("schedule")
        if size is None:
            err("no-bore", "inside_diameter", "'Freeze protection' needs the water volume: give 'Inside "
                "diameter', or 'Size' with 'Schedule'")
            return
        wall = library.pipe_wall_thickness(size, sch or DEFAULT_SCHEDULE)
        if wall is None:
            err("unknown-schedule", "schedule", f"schedule {sch or DEFAULT_SCHEDULE!r} of size {size!r} is "
                f"not in the table ({', '.join(library.SCHEDULES)}); give 'Inside diameter' instead")
            return
        if sch is None:
            warn("schedule-assumed", "schedule", f"'Schedule' is blank: schedule {DEFAULT_SCHEDULE} "
                 "(ASME B36.10M) taken for the water volume and the wall")
        bore = od - 2 * wall
    P.bore = bore
    P.wall_area = math.pi / 4 * (od**2 - bore**2)


# --------------------------------------------------------------------------- targets


def _factor(lines, rows) -> np.ndarray:
    """Heat rate -> whole line for the lines ``rows`` (:func:`~lagsheet.physics.candidates.whole_factor`)."""
    return whole_factor(*(np.array([getattr(lines[i], a) for i in rows], dtype=float)
                          for a in ("geometry", "length", "area")))


def coldest(line) -> int:
    """Index among the line's named conditions of the coldest one (freeze and hold time are judged there)."""
    return int(np.argmin([c.t_air for c in line.conditions]))


def coldest_cases(lines, idx, starts) -> np.ndarray:
    """Case index of the coldest named condition of each line ``idx``."""
    return np.array([starts[i] + coldest(lines[i]) for i in idx], dtype=int)


def closed_drop(lines, cases: System, case_line, c) -> np.ndarray:
    """Inlet-to-outlet temperature change [K] of every candidate of every case (cases ×
    candidates), closed form with UA at the inlet: UA = the line's heat loss at the
    operating temperature / (θ_in − θ_a), c_p at the inlet."""
    procs = [L.process for L in lines]
    factor = _factor(lines, range(len(lines)))
    t_in = cases.t_operating[:, None]
    ta = cases.t_air[:, None]
    ua = c.heat_rate * factor[case_line][:, None] / np.where(t_in != ta, t_in - ta, np.nan)
    m_dot = np.array([P.m_dot for P in procs])[case_line][:, None]
    cp = np.array([P.cp for P in procs])[case_line][:, None]
    return np.where(t_in == ta, 0.0, np.abs(t_in - pp.outlet_temperature_closed(t_in, ta, ua, 1.0, m_dot, cp)))


def parts_of(lines, tags, res, t) -> dict[int, list[int]]:
    """Vessel line -> the lines whose 'Part of' names its tag (a note on each linking line)."""
    by_tag = {fold(tag): i for i, tag in enumerate(tags) if tag}
    out: dict[int, list[int]] = {}
    for i, L in enumerate(lines):
        name = L.process.part_of
        if name is None:
            continue
        v = by_tag.get(fold(name))
        if v is None or v == i:
            res.notes[i].append(Note("warning", "part-of", f"'Part of' {name!r} is not the Tag of another "
                                     "line; its heat loss is not added to any vessel", t.sheet,
                                     t.cell(i, "part_of")))
        elif not L.ok:
            res.notes[v].append(Note("warning", "part-of", f"{tags[i] or 'a line'} is linked by 'Part of' but "
                                     "has errors: its heat loss is left out of the time to cool", t.sheet,
                                     t.cell(v, "hold_time")))
        elif not np.isfinite(lines[v].process.hold):
            res.notes[i].append(Note("info", "part-of", f"'Part of' {name!r}: that line has no 'Hold time', "
                                     "so nothing is added up", t.sheet, t.cell(i, "part_of")))
        else:
            out.setdefault(v, []).append(i)
            res.notes[i].append(Note("info", "part-of", f"its heat loss counts in the 'Time to cool' of "
                                     f"{tags[v]}", t.sheet, t.cell(i, "part_of")))
    return out


def _pairs(cases: System, case_idx, thickness) -> System:
    """One system per (line, candidate): the line's case ``case_idx`` with each candidate."""
    k, m, slots = thickness.shape
    rows = np.repeat(case_idx, m)
    th = thickness.reshape(k * m, slots)
    good = np.isfinite(th).all(axis=1)
    return per_line(cases, rows, thickness=np.where(good[:, None], th, 0.0)), good


def freeze_time(ctx: Context, idx, thickness, nodes) -> np.ndarray:
    """Time to freeze [s] of lines ``idx`` for every candidate ``thickness`` (len(idx) ×
    candidates × slots) at their coldest named condition: (len(idx) × candidates)."""
    lines, cases, table, settings = ctx.lines, ctx.cases, ctx.table, ctx.settings
    case_idx = coldest_cases(lines, idx, ctx.starts)
    k, m, _ = thickness.shape
    sysp, good = _pairs(cases, case_idx, thickness)
    rep = np.repeat(np.asarray(idx), m)
    procs = [lines[i].process for i in rep]
    bore = np.array([P.bore for P in procs])
    wall = np.array([P.wall_area for P in procs])
    u = pp.loss_coefficient(sysp, table)
    ft = pp.freeze_time(sysp.t_operating, sysp.t_air, u, np.pi / 4 * bore**2, wall * STEEL_DENSITY,
                        STEEL_CP, float(settings["freeze_fraction"]), nodes=nodes)
    return np.where(good, ft.total, np.nan).reshape(k, m)


def cool_time(ctx: Context, idx, thickness, chosen_th, nodes) -> np.ndarray:
    """Time to cool [s] of vessels ``idx`` for every candidate at their coldest named
    condition, their parts (``ctx.parts``) at ``chosen_th``
    (:func:`lagsheet.physics.process.vessel_cooldown`, the shell's heat capacity left out)."""
    lines, cases, starts, table, parts = ctx.lines, ctx.cases, ctx.starts, ctx.table, ctx.parts
    case_idx = coldest_cases(lines, idx, starts)
    k, m, _ = thickness.shape
    sysp, good = _pairs(cases, case_idx, thickness)
    rep = np.repeat(np.asarray(idx), m)
    surfaces = [pp.loss_coefficient(sysp, table, scale=_factor(lines, rep))]
    parts_ua = _parts_coefficient(lines, rep, sysp, cases, starts, table, chosen_th, parts)
    if parts_ua is not None:
        surfaces.append(parts_ua)
    procs = [lines[i].process for i in rep]
    time = pp.vessel_cooldown(sysp.t_operating, np.array([P.t_limit for P in procs]), sysp.t_air, surfaces,
                              np.array([P.volume for P in procs]), np.array([P.coolprop or "" for P in procs]),
                              np.array([P.pressure if np.isfinite(P.pressure) else P_ATM for P in procs]),
                              nodes=nodes, cp=np.array([P.user_cp for P in procs]),
                              density=np.array([P.user_density for P in procs])).time
    return np.where(good, time, np.nan).reshape(k, m)


def _parts_coefficient(lines, rep, sysp: System, cases, starts, table, chosen_th, parts):
    """UA(θ) [W/K] of the lines linked to each vessel ``rep`` ('Part of'), each at its chosen
    system in the vessel's air (the condition the vessel is judged at); None when none is."""
    owner = [j for j, v in enumerate(rep) for _ in parts.get(int(v), [])]
    rows = [p for v in rep for p in parts.get(int(v), [])]
    if not rows:
        return None
    rows_a, owner_a = np.array(rows), np.array(owner)
    psys = replace(per_line(cases, np.asarray(starts)[rows_a], thickness=np.nan_to_num(chosen_th[rows_a])),
                   t_air=sysp.t_air[owner_a], t_surroundings=sysp.t_surroundings[owner_a],
                   wind=sysp.wind[owner_a])
    ua_p = pp.loss_coefficient(psys, table, scale=_factor(lines, rows))

    def ua_parts(tt):
        return np.bincount(owner_a, weights=ua_p(np.asarray(tt)[owner_a]), minlength=len(rep))
    return ua_parts


# --------------------------------------------------------------------------- flowing lines

CP_KNOTS = 65  # knots of a flowing line's c_p(T) table (linear: water's c_p within 1e-5 of CoolProp)
APPROACH_K = 1.0  # a fluid within 1 K of the air has reached the air temperature (our choice)


def _specific_heat(lines, idx, cases: System, starts) -> pp.SpecificHeat:
    """c_p(T) of the fluid of each line ``idx`` over its inlet and all its air temperatures:
    CoolProp at :data:`CP_KNOTS` temperatures (water not below its triple point), or the
    Fluids sheet's constant."""
    procs = [lines[i].process for i in idx]
    t_in = np.array([lines[i].t_op for i in idx])
    airs = [cases.t_air[starts[i]:starts[i] + len(lines[i].conditions)] for i in idx]
    lo = np.minimum(t_in, [a.min() for a in airs]) - 1.0
    hi = np.maximum(t_in, [a.max() for a in airs]) + 1.0
    water = np.array([P.coolprop == "Water" for P in procs])
    lo = np.where(water, np.maximum(lo, pp.T_TRIPLE_WATER), lo)
    hi = np.maximum(hi, lo + 1.0)
    knots = lo + (hi - lo) * np.linspace(0.0, 1.0, CP_KNOTS)[:, None]
    values = np.broadcast_to(np.array([P.cp for P in procs]), knots.shape).copy()
    cool = np.array([P.coolprop is not None for P in procs])
    if cool.any():
        names = np.broadcast_to(np.array([P.coolprop or "" for P in procs])[cool], (CP_KNOTS, int(cool.sum())))
        pressure = np.array([P.pressure if np.isfinite(P.pressure) else P_ATM for P in procs])[cool]
        cp = fluid_properties(names, knots[:, cool], pressure[None, :]).cp
        for j, col in enumerate(np.flatnonzero(cool)):
            good = np.isfinite(cp[:, j])
            if good.any():  # states CoolProp rejects (a liquid past its boiling point): the nearest known c_p
                values[:, col] = np.interp(knots[:, col], knots[good, col], cp[good, j])
    return pp.SpecificHeat(lo, hi, values)


def flowing_lines(ctx: Context, put, first_sys: System, bare_sys: System, chosen_th, loss, bare_loss,
                  res) -> tuple[np.ndarray, np.ndarray]:
    """Heat loss and bare heat loss [W] of every line with a flow: the heat its fluid gives up
    between inlet and outlet, ṁ ∫ c_p dT over the marched profile (insulated and bare, at the
    first named condition), in place of the inlet heat rate × length. Writes ``Outlet
    temperature``; a water line that reaches 0 °C before its outlet at any named condition is
    an error naming the distance, a fluid that comes within :data:`APPROACH_K` of the air is a
    warning. Returns the new (loss, bare_loss)."""
    lines, cases, starts, table, t, us = ctx.lines, ctx.cases, ctx.starts, ctx.table, ctx.t, ctx.us
    v = res.values
    procs = [L.process for L in lines]
    flowing = np.array([bool(put[i]) and P.flowing and np.isfinite(P.cp) for i, P in enumerate(procs)])
    if not flowing.any():
        return loss, bare_loss
    loss, bare_loss = np.array(loss, dtype=float), np.array(bare_loss, dtype=float)
    idx = np.flatnonzero(flowing)
    m_dot = np.array([procs[i].m_dot for i in idx])
    cp = _specific_heat(lines, idx, cases, starts)
    factor = _factor(lines, idx)
    sysf, bare = per_line(first_sys, idx), per_line(bare_sys, idx)
    t_in, t_air = sysf.t_operating, sysf.t_air
    out = pp.outlet_temperature_marching(t_in, t_air, pp.loss_coefficient(sysf, table, scale=factor), 1.0,
                                         m_dot, cp)
    # the bare line for the saving (a bare water line in frost would freeze: its liquid c_p is held)
    bare_out = pp.outlet_temperature_marching(t_in, t_air, pp.loss_coefficient(bare, table, scale=factor), 1.0,
                                              m_dot, cp)
    given_up = m_dot * (cp.enthalpy(t_in) - cp.enthalpy(out))
    inlet_rate = loss[idx].copy()
    loss[idx] = given_up
    bare_loss[idx] = m_dot * (cp.enthalpy(t_in) - cp.enthalpy(bare_out))
    v["outlet_temperature"][idx] = out

    reach = _reach(lines, idx, cases, starts, chosen_th, table, m_dot, cp)
    for j, i in enumerate(idx):
        if not _flow_notes(lines[i], i, reach[j], out[j], given_up[j], inlet_rate[j], res, t, us):
            v["outlet_temperature"][i] = np.nan  # frozen at the first condition: no liquid outlet, no heat
            loss[i] = bare_loss[i] = np.nan
    return loss, bare_loss


def _flow_notes(L, i: int, reach, out: float, given_up: float, inlet_rate: float, res, t, us: bool) -> bool:
    """The notes of flowing line ``i``: water that freezes before the outlet, a fluid that
    reaches the air temperature, the heat it gives up, a marched drop past the limit.
    False when the water freezes at the first named condition (no outlet to report)."""
    P = L.process

    def note(level, code, message, key="tag"):
        res.notes[i].append(Note(level, code, message, t.sheet, t.cell(i, key)))

    freeze, approach = reach
    if freeze is not None:
        x, name = freeze
        note("error", "fluid-freezes",
             f"the water reaches {show(pp.T_ICE, 'temperature', us)} {show(x, 'length', us)} from the inlet of this "
             f"{show(L.length, 'length', us)} line at condition '{name}' and would freeze before the "
             "outlet: give more flow, more insulation, or heat tracing", "flow_rate")
        if out < pp.T_ICE:  # at the first condition: no liquid outlet, no heat to report
            return False
    elif approach is not None:
        x, name = approach
        note("warning", "fluid-at-air",
             f"the {P.label} comes within {show(APPROACH_K, 'difference', us)} of the air temperature "
             f"{show(x, 'length', us)} from the inlet of this {show(L.length, 'length', us)} line at "
             f"condition '{name}': beyond that the line delivers air temperature; give more flow or "
             "more insulation if the outlet temperature matters", "flow_rate")
    gives = "gives up" if given_up >= 0 else "takes up"
    note("info", "flow-heat",
         f"heat loss = the heat the {P.label} {gives} between inlet and outlet, ṁ ∫c_p dT along the "
         f"marched profile: {show(abs(given_up), 'power', us)} (the inlet rate × length would give "
         f"{show(abs(inlet_rate), 'power', us)}); heat loss per length, heat flux and surface "
         "temperature are at the inlet", "flow_rate")
    limit = P.max_drop
    change = abs(L.t_op - out)
    if np.isfinite(limit) and change > limit + 1e-9:
        note("warning", "temperature-drop",
             f"marched along the line with the heat-loss coefficient re-evaluated, the temperature "
             f"changes by {show(change, 'difference', us)}, more than 'Max temperature drop' "
             f"{show(limit, 'difference', us)} (the thickness was judged with the coefficient at "
             "the inlet); choose the next thickness up", "max_temperature_drop")
    return True


def flowing_candidates(ctx: Context, use, whole) -> np.ndarray:
    """``whole`` (lines × candidates, the heat flow [W] of every candidate at the first named
    condition) with the lines ``use`` that have a flow given the heat their fluid gives up
    along the line with each candidate (marched, as :func:`flowing_lines`): what the
    economic choice prices."""
    lines, cases, starts, cand, table = ctx.lines, ctx.cases, ctx.starts, ctx.cand, ctx.table
    procs = [L.process for L in lines]
    sel = np.flatnonzero([bool(use[i]) and P.flowing and np.isfinite(P.cp) for i, P in enumerate(procs)])
    if not sel.size:
        return whole
    k, m = len(sel), cand.shape[1]
    sysp, good = _pairs(cases, np.asarray(starts)[sel], cand[sel])
    rep = np.repeat(sel, m)
    u = pp.loss_coefficient(sysp, table, scale=_factor(lines, rep))
    cp = _specific_heat(lines, sel, cases, starts).take(np.repeat(np.arange(k), m))
    m_dot = np.repeat([procs[i].m_dot for i in sel], m)
    out = pp.outlet_temperature_marching(sysp.t_operating, sysp.t_air, u, 1.0, m_dot, cp)
    whole = np.array(whole, dtype=float)
    given_up = m_dot * (cp.enthalpy(sysp.t_operating) - cp.enthalpy(out))
    whole[sel] = np.where(good, given_up, np.nan).reshape(k, m)
    return whole


def _reach(lines, idx, cases: System, starts, chosen_th, table, m_dot, cp) -> list[tuple]:
    """Per flowing line ``idx``: (freeze, approach), each None or (distance from the inlet [m],
    condition name), the nearest over the line's named conditions: where water reaches 0 °C,
    where the fluid comes within :data:`APPROACH_K` of the air."""
    rows, owner = [], []
    for j, i in enumerate(idx):
        for k in range(len(lines[i].conditions)):
            rows.append(starts[i] + k)
            owner.append(j)
    rows, owner = np.array(rows), np.array(owner)
    sysc = per_line(cases, rows, thickness=np.nan_to_num(chosen_th[np.asarray(idx)[owner]]))
    u = pp.loss_coefficient(sysc, table, scale=_factor(lines, np.asarray(idx)[owner]))
    t_in, t_air = sysc.t_operating, sysc.t_air
    water = np.array([lines[idx[j]].process.coolprop == "Water" for j in owner])
    cp_rows = cp.take(owner)
    freezes = water & (t_air < pp.T_ICE) & (t_in > pp.T_ICE)
    x_freeze = np.where(freezes, pp.distance_to(np.where(freezes, t_in, pp.T_ICE + 1.0), pp.T_ICE, t_air, u,
                                                m_dot[owner], cp_rows), np.inf)
    d = t_in - t_air
    far = np.abs(d) > APPROACH_K
    x_air = np.where(far, pp.distance_to(t_in, t_air + np.sign(d) * APPROACH_K, t_air, u, m_dot[owner], cp_rows),
                     np.inf)
    out = []
    for j, i in enumerate(idx):
        mine = np.flatnonzero(owner == j)
        pair = []
        for x in (x_freeze, x_air):
            k = mine[int(np.argmin(x[mine]))]
            if x[k] < 1.0:  # a fraction of the line (U′ is the whole line's UA)
                pair.append((float(x[k]) * lines[i].length, lines[i].conditions[k - mine[0]].name))
            else:
                pair.append(None)
        out.append(tuple(pair))
    return out


# --------------------------------------------------------------------------- results


def results(ctx: Context, put, chosen_th, loss, res) -> None:
    """Condensate, time to freeze and time to cool of the chosen systems ``chosen_th``
    (lines × slots) of the lines ``put``, whose heat loss [W] is ``loss``."""
    lines, starts, settings, parts, t, us = ctx.lines, ctx.starts, ctx.settings, ctx.parts, ctx.t, ctx.us
    v = res.values
    procs = [L.process for L in lines]

    def note(i, level, code, message, key="tag"):
        res.notes[i].append(Note(level, code, message, t.sheet, t.cell(i, key)))

    for i in np.flatnonzero(put):
        P = procs[i]
        if P.steam and np.isfinite(P.h_fg):
            v["condensate"][i] = float(pp.condensate_kg_per_h(loss[i], P.h_fg)) / 3600.0

    freezing = np.array([bool(put[i]) and np.isfinite(P.freeze) and np.isfinite(P.bore)
                         for i, P in enumerate(procs)])
    if freezing.any():
        idx = np.flatnonzero(freezing)
        cold = coldest_cases(lines, idx, starts)
        times = freeze_time(ctx, idx, chosen_th[idx][:, None, :], pp.NODES)[:, 0]
        fraction = float(settings["freeze_fraction"])
        for j, i in enumerate(idx):
            name = lines[i].conditions[cold[j] - starts[i]].name
            if np.isinf(times[j]):
                note(i, "info", "no-freezing", f"the air at condition '{name}' (the coldest named) is above "
                     "0 °C: standing water does not freeze there", "freeze_protection")
                continue
            v["time_to_freeze"][i] = times[j]
            note(i, "info", "time-to-freeze",
                 f"time to freeze at condition '{name}' (the coldest named): water standing from "
                 f"{show(lines[i].t_op, 'temperature', us)} cools to 0 °C, then {fraction * 100:g} % of it freezes "
                 f"(the 'Freeze fraction' setting; 25 % is common practice)", "freeze_protection")
        for i in idx:
            note(i, "caution", "freeze", "insulation delays freezing but never prevents it: for water that "
                 "may stand longer, heat tracing or keeping it flowing is needed", "freeze_protection")

    holding = np.array([bool(put[i]) and np.isfinite(P.hold) and np.isfinite(P.volume)
                        and np.isfinite(P.t_limit) for i, P in enumerate(procs)])
    if holding.any():
        idx = np.flatnonzero(holding)
        cold = coldest_cases(lines, idx, starts)
        times = cool_time(ctx, idx, chosen_th[idx][:, None, :], chosen_th, pp.NODES)[:, 0]
        for j, i in enumerate(idx):
            name = lines[i].conditions[cold[j] - starts[i]].name
            if np.isfinite(times[j]):
                v["time_to_cool"][i] = times[j]
            with_parts = len(parts.get(int(i), []))
            note(i, "info", "time-to-cool",
                 f"time to cool at condition '{name}' (the coldest named) from "
                 f"{show(lines[i].t_op, 'temperature', us)} to {show(procs[i].t_limit, 'temperature', us)}: "
                 f"the shell{f' and {with_parts} linked line(s)' if with_parts else ''} losing heat, the "
                 "shell's own heat capacity left out" if np.isfinite(times[j]) else
                 f"the contents never reach {show(procs[i].t_limit, 'temperature', us)} at condition "
                 f"'{name}': the air is at or beyond it", "hold_time")
