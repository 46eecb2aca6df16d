"""Targets -> the chosen insulation system of every line.

Each line is resolved (:mod:`lagsheet.design.lines`), then expanded into one *case* per
design condition it names. The engine solves every candidate system of every case in
one call. Each target is judged at the case that is worst for it; the chosen system
is the thinnest that meets every target (or, for ``Economic`` lines, the one with the
lowest annualised cost among those). Results are reported at the first named
condition. Calls physics; physics never calls it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from ..errors import Note
from ..physics.balance import System, solve
from ..physics.candidates import evaluate, heat_rate, per_line, whole_factor
from ..physics.layers import CYLINDER, FLAT, SPHERE, MaterialTable
from ..physics.properties import dew_point
from ..physics.surface import CORRELATION_NAMES, linearised_h
from ..workbook import library
from ..workbook.display import show
from ..workbook.inputs import Condition, Inputs
from ..workbook.results import NUMBERS, WORDS
from . import economics
from . import process as limits
from .lines import Line, resolve_lines

THINNEST = "thinnest sold"  # Governing word when the thinnest sold system meets every target
GOVERNING_ORDER = ("surface temperature", "condensation", "heat loss", "temperature drop",
                   "freeze protection", "hold time", "interface", "minimum")
PERSONNEL_LIMIT_K = 333.15  # 60 °C, the usual personnel-protection limit (common practice)



@dataclass
class Results:
    """Per line (same order as the Lines table rows); SI; NaN / None where not computed."""

    n: int
    values: dict[str, np.ndarray] = field(default_factory=dict)
    notes: list[list[Note]] = field(default_factory=list)
    status: list[str] = field(default_factory=list)
    tags: list[str] = field(default_factory=list)
    lines: list[Line] = field(default_factory=list)
    system: System | None = None  # the chosen systems at the first condition, for ``explain``
    table: MaterialTable | None = None
    quantities: Quantities | None = None  # of the chosen systems (lines × 1 × slots)
    chosen: np.ndarray | None = None  # chosen thickness per slot (lines × slots) [m]
    target_thickness: list[dict] = field(default_factory=list)  # per line: target -> its own thinnest [m]
    target_margin: list[dict] = field(default_factory=list)  # per line: target -> (margin at the chosen, kind)

    def __post_init__(self):
        for key in NUMBERS:
            self.values.setdefault(key, np.full(self.n, np.nan))
        for key in WORDS:
            self.values.setdefault(key, np.full(self.n, None, dtype=object))
        if not self.notes:
            self.notes = [[] for _ in range(self.n)]


def _first(mask: np.ndarray) -> np.ndarray:
    """Index of the first True per row, -1 where none."""
    return np.where(mask.any(axis=1), np.argmax(mask, axis=1), -1)


_DEW: dict[tuple[float, float], float] = {}


def _dew(c: Condition) -> float:
    if c.rh <= 0:  # dry air holds no water: nothing condenses on any surface
        return -np.inf
    key = (round(c.t_air, 9), round(c.rh, 9))
    if key not in _DEW:
        _DEW[key] = float(dew_point(c.t_air, c.rh)[0])
    return _DEW[key]


def specify(inputs: Inputs) -> Results:
    """Choose and evaluate the insulation system of every line of ``inputs.lines``.

    Lines whose numbers overflow or come out NaN are reported as errors; numpy's
    floating-point warnings are not raised at the user for them.
    """
    with np.errstate(all="ignore"):
        return _specify(inputs)


def _specify(inputs: Inputs) -> Results:
    t = inputs.lines
    n = len(t.rows) if t is not None else 0
    res = Results(n)
    if t is None or n == 0:
        return res
    us, st = inputs.us_units, inputs.settings
    lines, line_notes = resolve_lines(inputs)  # every input error, as `check` reports them
    for i in range(n):
        res.notes[i].extend(line_notes[i])
    tags = t.get("tag")
    res.tags.extend((tags[i] if tags is not None else None) or "" for i in range(n))
    res.lines = lines

    used: dict[str, library.Material] = {}
    for L in lines:
        for m in L.materials:
            used.setdefault(m.name, m)
    if not used:
        used["mineral wool"] = library.materials()["mineral wool"]
    table = MaterialTable.build({k: (np.array(m.mean_temperatures), np.array(m.conductivities))
                                 for k, m in used.items()})
    res.table = table
    slots = max([len(L.materials) for L in lines] + [1])
    ok = np.array([L.ok and bool(L.candidates) for L in lines])

    # cases: one per (line, condition), contiguous per line
    indoor = inputs.conditions["indoor"]
    case_line, case_cond = [], []
    for i, L in enumerate(lines):
        for c in (L.conditions if ok[i] else []) or [indoor]:
            case_line.append(i)
            case_cond.append(c)
    case_line = np.array(case_line)
    starts = np.flatnonzero(np.r_[True, case_line[1:] != case_line[:-1]])
    first_case = starts  # the first named condition of each line

    def line_arr(get, bad=np.nan):
        return np.array([get(L) if ok[i] else bad for i, L in enumerate(lines)], dtype=float)

    mat = np.zeros((n, slots), dtype=int)
    for i, L in enumerate(lines):
        for j, m in enumerate(L.materials):
            mat[i, j] = table.index(m.name)
        if len(L.materials) == 1 and slots == 2:
            mat[i, 1] = mat[i, 0]
    geometry = np.array([L.geometry for L in lines])
    base = System(
        geometry=geometry, shape=np.array([L.shape for L in lines]),
        t_operating=line_arr(lambda L: L.t_op, 300.0),
        t_air=np.zeros(n), t_surroundings=np.zeros(n), wind=np.zeros(n),
        emissivity=line_arr(lambda L: L.emissivity, 0.9),
        r_inner=line_arr(lambda L: L.r_inner, 0.05),
        height=line_arr(lambda L: L.free_length, 1.0),
        thickness=np.zeros((n, slots)), material=mat,
        flow_length=line_arr(lambda L: L.flow_length, 1.0),
    )
    cases = per_line(base, case_line,
                     t_air=np.array([c.t_air for c in case_cond]),
                     t_surroundings=np.array([c.t_surroundings for c in case_cond]),
                     wind=np.array([c.wind for c in case_cond]))
    width = max(len(L.candidates) for L in lines) or 1
    cand = np.full((n, width, slots), np.nan)
    shared: dict[int, tuple] = {}  # lines of one material share one candidates object: one block each
    for i, L in enumerate(lines):
        if ok[i]:
            shared.setdefault(id(L.candidates), (L.candidates, []))[1].append(i)
    for cands, members in shared.values():
        block = np.zeros((len(cands), slots))
        for k, c in enumerate(cands):
            block[k, :len(c)] = c
        cand[np.array(members)[:, None], np.arange(len(cands))[None, :]] = block
    total = cand.sum(axis=2)

    # the engine: every candidate of every case in one call
    c = evaluate(cases, cand[case_line], mat[case_line], table)
    dew = np.array([_dew(cc) for cc in case_cond])
    margin = float(st["condensation_margin"])

    # targets: per case "meets", then all cases of a line must meet (worst case governs)
    def all_cases(m):
        return np.logical_and.reduceat(m, starts, axis=0)

    valid = np.isfinite(total) & all_cases(c.converged & c.in_range)
    given, meets, worst = {}, {}, {}
    tmax = t.get("max_surface_temperature")
    if tmax is not None:
        given["surface temperature"] = np.isfinite(tmax)
        meets["surface temperature"] = all_cases(c.t_surface <= tmax[case_line][:, None] + 1e-9)
        worst["surface temperature"] = c.t_surface
    qmax = t.get("max_heat_loss")
    per_area = None
    if qmax is not None:
        per_area = _per_area(t, n)
        g = np.isfinite(qmax)  # a per-length limit on a flat line is an input error (resolve)
        measure = np.where(per_area[case_line][:, None], np.abs(c.q), np.abs(c.heat_rate))
        given["heat loss"] = g
        meets["heat loss"] = all_cases(measure <= qmax[case_line][:, None] * (1 + 1e-12))
        worst["heat loss"] = measure
    tmin = t.get("min_thickness")
    if tmin is not None:
        given["minimum"] = np.isfinite(tmin)
        meets["minimum"] = total >= tmin[:, None] - 1e-9
    prevent = t.get("prevent_condensation")
    if prevent is not None:
        given["condensation"] = np.array([v is True for v in prevent])
        above = c.t_surface - (dew + margin)[:, None]
        meets["condensation"] = all_cases(above >= -1e-9)
        worst["condensation"] = -above
    if slots == 2:
        two = np.array([len(L.materials) == 2 for L in lines])
        limit = np.array([L.materials[1].max_temperature if len(L.materials) == 2 else np.inf for L in lines])
        given["interface"] = two & ok
        meets["interface"] = all_cases(c.faces[:, :, 1] <= limit[case_line][:, None] + 1e-9)
        worst["interface"] = c.faces[:, :, 1]

    process_values: dict[str, np.ndarray] = {}  # process target -> its measure (lines × candidates)
    hold = limits.targets(lines, ok, cases, starts, case_line, cand, table, c, all_cases, st, given, meets,
                          worst, process_values)

    # economics of every candidate at the first condition
    cost = _installed_cost(lines, cand, base, st, res, t)
    first_rate = c.heat_rate[first_case]
    whole = _whole(geometry, first_rate, np.array([L.length for L in lines]), np.array([L.area for L in lines]))
    whole = limits.flowing_candidates(lines, np.array([L.economic for L in lines]) & ok, cases, starts, cand, table,
                                      whole)
    hours = np.array([L.conditions[0].hours if ok[i] else 0.0 for i, L in enumerate(lines)])
    energy_cost = _energy_cost(whole, hours[:, None], st)
    crf = float(economics.capital_recovery_factor(float(st["discount_rate"]), float(st["service_life"])))
    annualised = crf * cost + energy_cost
    econ = np.array([L.economic for L in lines]) & ok
    for i in np.flatnonzero(econ & ~np.isfinite(annualised).any(axis=1)):
        ok[i] = lines[i].ok = False
    econ &= ok

    fixed = np.array([L.fixed for L in lines])
    active = np.zeros(n, dtype=bool)
    for name in given:
        active |= given[name]
    none_given = ok & ~fixed & ~active & ~econ
    last = np.array([int(np.flatnonzero(np.isfinite(total[i]))[-1]) if np.isfinite(total[i]).any() else -1
                     for i in range(n)])

    def choose():
        """Per line: the chosen candidate, the first that meets every target, and 'none meets'."""
        feasible = valid.copy()
        for name in meets:
            feasible &= meets[name] | ~given[name][:, None]
        first_feasible = _first(feasible)
        econ_idx = np.where(econ, np.argmin(np.where(feasible & np.isfinite(annualised), annualised, np.inf),
                                            axis=1), -1)
        chosen = np.where(econ, econ_idx, first_feasible)
        chosen = np.where(none_given, _first(valid), chosen)
        chosen = np.where(fixed & ok, 0, chosen)
        unmet = ok & ~fixed & (active | econ) & (first_feasible < 0)
        chosen = np.where(unmet, last, chosen)
        return np.where(ok, chosen, -1), first_feasible, unmet

    chosen, first_feasible, unmet = choose()
    parts = limits.parts_of(lines, res.tags, res, t)
    if len(hold):  # a vessel's hold time counts its parts (heads, bottoms) at their own chosen systems
        picked = np.where((chosen >= 0)[:, None], cand[np.arange(n), np.maximum(chosen, 0)], 0.0)
        limits.hold_targets(lines, hold, cases, starts, cand, table, picked, parts, meets, process_values, n)
        chosen, first_feasible, unmet = choose()

    governing = np.full(n, None, dtype=object)
    gov_name = np.full(n, None, dtype=object)
    own = {name: _first(meets[name] & valid) for name in meets}
    res.target_thickness = [
        {name: (float(total[i, own[name][i]]) if own[name][i] >= 0 else None)
         for name in own if given[name][i]} for i in range(n)]
    for name in reversed(GOVERNING_ORDER):  # earlier names win ties
        if name in own:
            hit = given[name] & (own[name] == chosen)
            gov_name[hit] = name
    if econ.any():
        up = econ & (chosen > first_feasible)
        gov_name[up] = "economic"
        gov_name[econ & (gov_name == None)] = "economic"  # noqa: E711 (object array)
    governing[:] = gov_name
    # the thinnest sold system already meets every target: no target bound (Min thickness too)
    thinnest = ok & ~econ & ~fixed & active & ~unmet & (chosen == 0)
    governing[thinnest] = THINNEST
    governing[fixed & ok] = "fixed"
    governing[none_given] = "none"

    rows = np.arange(n)
    pick = np.maximum(chosen, 0)
    case_pick = pick[case_line]
    res.target_margin = _margins(n, given, worst, starts, case_line, case_pick, tmax, qmax, tmin, total, pick,
                                 per_area, lines)
    for name, need, sign in (("temperature drop", "max_drop", -1), ("freeze protection", "freeze", 1),
                             ("hold time", "hold", 1)):  # process targets: their measure against the need
        if name in process_values and name in given:
            for i in np.flatnonzero(given[name] & ok):
                value = float(process_values[name][i, pick[i]])
                room = sign * (value - float(getattr(lines[i].process, need)))  # not 'margin': that is the dew one
                if np.isfinite(room):
                    res.target_margin[i][name] = (room, "difference" if name == "temperature drop" else "hours")
    gov_cond = np.full(n, None, dtype=object)
    several = np.diff(np.r_[starts, len(case_line)]) > 1
    # a thinnest-sold line is judged where its nearest target (the one the old rule named) is worst
    basis = np.where(thinnest, gov_name, governing)
    for name in worst:
        sel = np.array([g == name for g in basis]) & several & ok
        if not sel.any():
            continue
        w = worst[name][np.arange(len(case_line)), case_pick]
        for i in np.flatnonzero(sel):
            cs = slice(starts[i], starts[i] + len(lines[i].conditions))
            gov_cond[i] = case_cond[cs.start + int(np.nanargmax(w[cs]))].name
    for name in ("freeze protection", "hold time"):  # judged at the coldest named condition
        for i in np.flatnonzero(np.array([g == name for g in basis]) & several & ok):
            gov_cond[i] = lines[i].conditions[limits.coldest(lines[i])].name
    for i in np.flatnonzero(ok & (gov_cond == None)):  # noqa: E711
        gov_cond[i] = lines[i].conditions[0].name
    res.values["governing_condition"][:] = gov_cond

    # the chosen systems at the first condition, solved once more in full
    chosen_th = np.where((chosen >= 0)[:, None], cand[rows, pick], 0.0)
    first_sys = per_line(cases, first_case, thickness=np.nan_to_num(chosen_th))
    sol = solve(first_sys, table)
    bare_eps = np.where(fixed & (np.nan_to_num(total[:, 0]) == 0), base.emissivity,
                        np.array([L.bare_emissivity for L in lines]))
    bare_sys = per_line(first_sys, rows, thickness=np.zeros((n, slots)), emissivity=bare_eps)
    bare = solve(bare_sys, table)
    res.system = first_sys
    res.quantities = quantities(lines, chosen_th[:, None, :], base)
    res.chosen = chosen_th
    rate = heat_rate(geometry, sol.q, sol.r_outer)
    bare_rate = heat_rate(geometry, bare.q, bare.r_outer)
    lengths = np.array([L.length for L in lines])
    areas = np.array([L.area for L in lines])
    loss = _whole(geometry, rate, lengths, areas)
    bare_loss = _whole(geometry, bare_rate, lengths, areas)
    # a line with a flow loses the heat its fluid gives up along the line, not the inlet rate × length
    loss, bare_loss = limits.flowing_lines(lines, ok & (chosen >= 0), first_sys, bare_sys, cases, starts,
                                           chosen_th, table, loss, bare_loss, res, t, us)
    eff, cop, price = float(st["heating_efficiency"]), float(st["cooling_cop"]), float(st["energy_price"])
    energy = economics.annual_energy_kwh(loss, hours)
    bought = economics.energy_bought_kwh(energy, eff, cop)
    bare_bought = economics.energy_bought_kwh(economics.annual_energy_kwh(bare_loss, hours), eff, cop)
    j_out = np.maximum(np.sum(chosen_th > 0, axis=1) - 1, 0)  # outermost layer with a thickness
    outer = mat[rows, j_out]
    k_outer = table.mean_conductivity(outer, sol.faces[rows, j_out], sol.faces[rows, j_out + 1])
    h_total = linearised_h(first_sys.shape, sol.t_surface, first_sys.t_air, first_sys.t_surroundings,
                           first_sys.wind, first_sys.emissivity, 2 * sol.r_outer, first_sys.height,
                           first_sys.flow_length)
    k_bare = table.conductivity(mat[:, 0], 0.5 * (first_sys.t_operating + first_sys.t_air))
    k_rc = np.where(chosen_th.sum(axis=1) > 0, k_outer, k_bare)
    r_crit = np.select([geometry == CYLINDER, geometry == SPHERE], [k_rc / h_total, 2 * k_rc / h_total], np.nan)
    put = ok & (chosen >= 0)
    has_mat = np.array([bool(L.materials) for L in lines])
    v = res.values
    saving = (bare_bought - bought) * price
    inst = cost[rows, pick]
    values = {
        "thickness": chosen_th.sum(axis=1), "surface_temperature": sol.t_surface, "heat_flux": sol.q,
        "heat_loss_per_length": np.where(geometry == CYLINDER, rate, np.nan), "heat_loss": loss,
        "bare_heat_loss": bare_loss, "annual_energy": energy, "annual_cost": bought * price,
        "annual_saving": saving, "co2": bought * float(st["emission_factor"]),
        "dew_point": np.where(_dew_matters(lines, prevent, sol.t_surface, dew[first_case], margin)
                              & np.isfinite(dew[first_case]), dew[first_case], np.nan), "installed_cost": inst,
        "payback": np.where(saving > 0, inst / np.where(saving > 0, saving, 1.0), np.nan),
        "interface_temperature": np.where(np.sum(chosen_th > 0, axis=1) == 2, sol.faces[:, 1], np.nan),
    }
    for key, arr in values.items():
        v[key][put] = arr[put]
    v["critical_radius"][put & has_mat] = r_crit[put & has_mat]
    v["governing"][:] = np.where(put, governing, None)

    for i in np.flatnonzero(put):
        _notes(i, lines[i], res, t, chosen_th[i], c, chosen[i], starts[i], case_cond, given, meets,
               sol, loss, bare_loss, r_crit, dew, first_case, us, margin, unmet[i], last[i],
               governing[i], gov_cond[i], tmax, qmax, tmin, process_values)
    limits.results(lines, put, first_sys, cases, starts, chosen_th, table, loss, st, parts, res, t, us)
    for i in range(n):
        lv = {nt.level for nt in res.notes[i]}
        res.status.append("error" if "error" in lv or not lines[i].ok else
                          "warning" if "warning" in lv else "ok")
    return res


def _margins(n, given, worst, starts, case_line, case_pick, tmax, qmax, tmin, total, pick, per_area, lines):
    """Per line: target -> (its margin at the chosen system over the named conditions, display kind).

    Positive = the target is met with room to spare: limit minus value for surface
    temperature, heat loss and interface; surface minus (dew point + margin) for
    condensation; chosen minus required for the minimum thickness.
    """
    out: list[dict] = [{} for _ in range(n)]
    at = np.arange(len(case_line))

    def per_line_max(w):
        return np.maximum.reduceat(np.nan_to_num(w[at, case_pick], nan=np.inf), starts)

    limit_of = {"surface temperature": tmax, "heat loss": qmax}
    for name, w in worst.items():
        if name not in ("condensation", "interface", *limit_of):
            continue  # process targets: their values and requirements are shown with the process results
        top = per_line_max(w)
        if name == "condensation":
            m = -top
        elif name == "interface":
            m = np.array([L.materials[1].max_temperature if len(L.materials) == 2 else np.nan for L in lines]) - top
        else:
            m = limit_of[name] - top
        kind = ("per_area" if name == "heat loss" and per_area is not None and per_area[i] else
                "per_length" if name == "heat loss" else "difference" for i in range(n))
        for i, k in enumerate(kind):
            if given[name][i] and np.isfinite(m[i]):
                out[i][name] = (float(m[i]), k)
    if tmin is not None and "minimum" in given:
        for i in np.flatnonzero(given["minimum"]):
            out[i]["minimum"] = (float(total[i, pick[i]] - tmin[i]), "thickness")
    return out


def _dew_matters(lines, prevent, t_surface, dew, margin) -> np.ndarray:
    """Per line: is its dew point worth writing? Where condensation is asked about ('Prevent
    condensation' yes) or possible at the first condition: the operating or the surface
    temperature below the dew point plus margin. A steam main's dew point means nothing."""
    asked = np.array([v is True for v in prevent]) if prevent is not None else np.zeros(len(lines), bool)
    t_op = np.array([L.t_op for L in lines], dtype=float)
    with np.errstate(invalid="ignore"):
        return asked | (np.fmin(t_op, t_surface) < dew + margin)


def _per_area(t, n: int) -> np.ndarray:
    """Per line: is its 'Max heat loss' per square metre of outer surface (else per metre)?"""
    col = t.columns["max_heat_loss"]
    return np.array([col.si_of(i) == "W/m**2" for i in range(n)], dtype=bool)


def _whole(geometry, rate, lengths, areas):
    """Whole-line heat flow [W] from the heat rate: × length (cylinders), × area (flats)."""
    extra = (1,) * (np.ndim(rate) - 1)
    return rate * np.reshape(whole_factor(np.asarray(geometry), np.asarray(lengths), np.asarray(areas)),
                             (-1,) + extra)


def _energy_cost(whole, hours, st):
    energy = economics.annual_energy_kwh(whole, hours)
    bought = economics.energy_bought_kwh(energy, float(st["heating_efficiency"]), float(st["cooling_cop"]))
    return bought * float(st["energy_price"])


@dataclass(frozen=True)
class Quantities:
    """Material take-off of candidate systems: per slot (inner, outer) and the jacket."""

    volume: np.ndarray  # (..., slots) insulation volume [m³]
    layers: np.ndarray  # (..., slots) number of layers the slot is built in
    layer_area: np.ndarray  # (..., slots) Σ over its layers of the area at mid-radius [m²]
    jacket_area: np.ndarray  # (...) outer surface [m²]


def quantities(lines: list[Line], thickness: np.ndarray, base: System) -> Quantities:
    """Volumes and areas of systems ``thickness`` (lines × candidates × slots) on ``lines``.

    Cylinders per their length, flats per their area, spheres whole. A slot thicker than
    its material's ``Max layer`` is built of listed thicknesses (:func:`layer_builds`);
    each layer's area is taken at its mid-radius.
    """
    n, m, slots = thickness.shape
    geometry = base.geometry[:, None]
    lengths = np.array([L.length for L in lines])[:, None]
    areas = np.array([L.area for L in lines])[:, None]

    def area_at(r):
        return np.select([geometry == CYLINDER, geometry == SPHERE],
                         [2 * np.pi * r * lengths, 4 * np.pi * r * r], np.broadcast_to(areas, r.shape))

    def volume(r1, r2):
        return np.select([geometry == CYLINDER, geometry == SPHERE],
                         [np.pi * (r2**2 - r1**2) * lengths, 4 / 3 * np.pi * (r2**3 - r1**3)],
                         areas * (r2 - r1))

    vol, count, larea = (np.zeros((n, m, slots)) for _ in range(3))
    r = np.broadcast_to(base.r_inner[:, None], (n, m)).copy()
    for j in range(slots):
        th = np.nan_to_num(thickness[:, :, j])
        each = layer_builds(lines, th, j)  # (n, m, most) layer thicknesses, inner first, 0 = none
        r2 = r + th
        vol[:, :, j] = volume(r, r2)
        count[:, :, j] = np.sum(each > 0, axis=2)
        below = np.cumsum(each, axis=2) - each  # thickness of this slot inside each layer
        mids = sum(area_at(r + below[:, :, q] + 0.5 * each[:, :, q]) * (each[:, :, q] > 0)
                   for q in range(each.shape[2]))
        larea[:, :, j] = mids
        r = r2
    return Quantities(vol, count, larea, area_at(r))


def layer_builds(lines: list[Line], th: np.ndarray, j: int, most: int = 4) -> np.ndarray:
    """The layers of slot ``j`` of thicknesses ``th`` (lines × candidates): (lines × candidates × most).

    Each build is of listed thicknesses of the material (:func:`library.build`); a total no
    list builds (a ``Fixed thickness``) is split into equal layers no thicker than ``Max layer``.
    Lines sharing a material's series are done together, once per distinct thickness.
    """
    n, m = th.shape
    out = np.zeros((n, m, most))
    groups: dict[tuple, list[int]] = {}
    for i, L in enumerate(lines):
        if j < len(L.series):
            groups.setdefault(L.series[j], []).append(i)
    for (listed, max_layer), members in groups.items():
        rows = np.array(members)
        block = th[rows]
        values, inverse = np.unique(block, return_inverse=True)
        table = np.zeros((len(values), most))
        for u, total in enumerate(values):
            table[u] = _build_of(float(total), listed, max_layer, most)
        out[rows] = table[inverse.reshape(block.shape)]
    return out


def _build_of(total: float, listed: tuple[float, ...], max_layer: float, most: int) -> np.ndarray:
    row = np.zeros(most)
    if total <= 0:
        return row
    layers = library.build(total, listed, max_layer)
    if layers is None:
        k = max(1, math.ceil(total / max_layer - 1e-9)) if np.isfinite(max_layer) else 1
        layers = (total / k,) * k
    layers = layers[:most - 1] + (sum(layers[most - 1:]),) if len(layers) > most else layers
    row[:len(layers)] = layers
    return row


def _installed_cost(lines, cand, base, st, res, t):
    """Installed cost of every candidate (lines × candidates), NaN where a cost is missing.

    insulation volume × 'Cost per volume' of its material + outer area × 'Jacket cost per
    area' + Σ over layers of the layer's area at its mid-radius × 'Labour per layer'.
    ('Economic' without a cost it needs is an input error: see resolve.)
    """
    n, m, slots = cand.shape
    jacket = float(st["jacket_cost_per_area"])
    labour = float(st["labour_per_layer"])
    q = quantities(lines, cand, base)
    price = np.array([[L.materials[j].cost_per_volume if j < len(L.materials) else 0.0 for j in range(slots)]
                      for L in lines])[:, None, :]
    total = (price * q.volume + labour * q.layer_area).sum(axis=2) + jacket * q.jacket_area
    total = np.where(np.isfinite(cand[:, :, 0]), total, np.nan)
    return total


def layers_text(th: np.ndarray, materials: list[library.Material], us: bool,
                t_interface: float = np.nan, series: list | None = None) -> str:
    series = series or [library.series(mm, us) for mm in materials]
    text, count = _layer_words(tuple(float(x) for x in th), tuple(materials), us, tuple(series))
    if count == 2 and np.isfinite(t_interface):
        text += f" (interface {show(t_interface, 'temperature', us)})"
    return text


@lru_cache(maxsize=4096)
def _layer_words(th: tuple[float, ...], materials: tuple[library.Material, ...],
                 us: bool, series: tuple) -> tuple[str, int]:
    """('2 × 50 mm calcium silicate + 40 mm mineral wool', 2): few distinct systems in a schedule.

    Layers of one material as built (:func:`layer_builds`): '2 × 60 mm' when equal,
    '2 layers (65 and 50 mm)' when not."""
    parts = []
    for thick, m, (listed, max_layer) in zip(th, materials, series, strict=False):
        if thick <= 0:
            continue
        each = [x for x in _build_of(thick, listed, max_layer, 4) if x > 0]
        shown = [show(x, "thickness", us) for x in each]
        if len(each) == 1:
            parts.append(f"{shown[0]} {m.name}")
        elif len(set(shown)) == 1:
            parts.append(f"{len(each)} × {shown[0]} {m.name}")
        else:
            unit = shown[0].rsplit(" ", 1)[1]
            values = " and ".join(x.rsplit(" ", 1)[0] for x in shown)  # no ' + ': that joins materials
            parts.append(f"{len(each)} layers ({values} {unit}) {m.name}")
    return (" + ".join(parts) if parts else "bare"), len(parts)


def _notes(i, L, res, t, th, c, k, start, case_cond, given, meets, sol, loss, bare_loss, r_crit,
           dew_case, first_case, us, margin, unmet, last, governing, gov_cond, tmax, qmax, tmin,
           process_values):
    """Words for one computed line: the layers, then every warning and caution."""
    dew = dew_case[first_case]
    notes = res.notes[i]
    sheet = t.sheet
    v = res.values
    v["layers"][i] = layers_text(th, L.materials, us, v["interface_temperature"][i], L.series)
    names = " + ".join(m.name for m in L.materials)
    hot = L.t_op >= L.conditions[0].t_air
    ncase = len(L.conditions)
    if unmet:
        missed = [name for name in GOVERNING_ORDER if name in given and given[name][i] and not meets[name][i, last]]
        thick = show(float(np.nansum(c.thickness[start, last])), "thickness", us)
        cases = list(range(start, start + ncase))

        def at(j):
            return f" at condition '{case_cond[j].name}'" if ncase > 1 else ""

        words, worst_j = [], []
        for name in missed:
            j = start
            if name == "surface temperature":
                j = max(cases, key=lambda j: c.t_surface[j, last])
                words.append(f"'Max surface temperature' {show(tmax[i], 'temperature', us)} is not met by "
                             f"any sold thickness: {show(c.t_surface[j, last], 'temperature', us)} at {thick}"
                             f"{at(j)}, the thickest of {names}")
            elif name == "heat loss":
                per_area = t.columns["max_heat_loss"].si_of(i) == "W/m**2"
                kind = "per_area" if per_area else "per_length"
                size = np.abs(c.q[:, last]) if per_area else np.abs(c.heat_rate[:, last])
                j = max(cases, key=lambda j: size[j])
                words.append(f"'Max heat loss' {show(qmax[i], kind, us)} is not met by any sold thickness: "
                             f"{show(size[j], kind, us)} at {thick}{at(j)}, the thickest of {names}")
            elif name == "minimum":
                words.append(f"'Min thickness' {show(tmin[i], 'thickness', us)} is more than the thickest "
                             f"sold {thick} of {names}")
            elif name == "condensation":
                j = min(cases, key=lambda j: c.t_surface[j, last] - dew_case[j])
                words.append(f"condensation is not prevented by any sold thickness: surface "
                             f"{show(c.t_surface[j, last], 'temperature', us)} at {thick}{at(j)} against a dew "
                             f"point of {show(dew_case[j], 'temperature', us)} plus {show(margin, 'difference', us)}")
            elif name in limits.TARGETS:
                words.append(limits.unmet_words(name, process_values[name][i, last], thick, names, us))
            elif name == "interface":
                words.append(f"no sold inner thickness of {L.materials[0].name} keeps the interface within "
                             f"{show(L.materials[1].max_temperature, 'temperature', us)}, the limit of "
                             f"{L.materials[1].name}")
            worst_j.append(j)
        if not words:
            words = ["no sold thickness gives a valid result: the material's conductivity points do not "
                     "cover the temperatures of this line"]
        notes.append(Note("error", "target-not-met", "; ".join(words), sheet, t.cell(i, "tag")))
        res.values["governing"][i] = (missed[0] if missed else "none") + " (not met)"
        if worst_j:
            res.values["governing_condition"][i] = case_cond[worst_j[0]].name
        return
    if L.fixed:
        for name in given:
            if given[name][i] and not meets[name][i, 0]:
                notes.append(Note("warning", "target-not-met",
                                  f"the fixed thickness does not meet the {name} target", sheet,
                                  t.cell(i, "fixed_thickness")))
    if governing == "none":
        notes.append(Note("warning", "no-target",
                          "no target on this line: the thinnest sold thickness is shown; give 'Max surface "
                          "temperature', 'Max heat loss', 'Prevent condensation', 'Min thickness' or "
                          "'Economic'", sheet, t.cell(i, "tag")))
    if ncase > 1 and gov_cond and governing not in ("fixed", "none", THINNEST):
        where = ("at the coldest named condition, " if governing in ("freeze protection", "hold time")
                 else "at every named condition; ")
        notes.append(Note("info", "governing-condition",
                          f"{governing} judged {where}'{gov_cond}' governed. Results "
                          f"are given at '{L.conditions[0].name}'", sheet, t.cell(i, "condition")))
    if not sol.converged[i] or not np.isfinite(sol.residual[i]) or abs(sol.residual[i]) > 1e-6 \
            or not np.isfinite(sol.q[i]):
        notes.append(Note("error", "not-converged", "the surface balance did not converge; check the "
                          "inputs of this line", sheet, t.cell(i, "tag")))
    if th.sum() > 0 and not c.in_range[start, k]:
        for j, m in enumerate(L.materials):
            tm = 0.5 * (sol.faces[i, j] + sol.faces[i, j + 1])
            if th[j] > 0 and not (m.mean_temperatures[0] - 1e-9 <= tm <= m.mean_temperatures[-1] + 1e-9):
                notes.append(Note("error", "k-out-of-range",
                                  f"{m.name}: conductivity is needed at a mean temperature of "
                                  f"{show(tm, 'temperature', us)}, outside its points "
                                  f"({show(m.mean_temperatures[0], 'temperature', us)} to "
                                  f"{show(m.mean_temperatures[-1], 'temperature', us)}); add points to "
                                  "the Materials sheet", sheet, t.cell(i, "insulation")))
    if th.sum() > 0 and abs(loss[i]) > abs(bare_loss[i]) and L.geometry != FLAT:
        notes.append(Note("warning", "more-than-bare",
                          f"this system {'loses' if hot else 'gains'} more heat than the bare line "
                          f"({show(abs(loss[i]), 'power', us)} against {show(abs(bare_loss[i]), 'power', us)}): "
                          f"the outer radius {show(sol.r_outer[i], 'radius', us)} is below the critical "
                          f"radius {show(r_crit[i], 'radius', us)} of {names}", sheet, t.cell(i, "tag")))
    has_limit = tmax is not None and np.isfinite(tmax[i])
    if hot and sol.t_surface[i] > PERSONNEL_LIMIT_K and not has_limit:
        notes.append(Note("caution", "hot-surface",
                          f"surface {show(sol.t_surface[i], 'temperature', us)} is above 60 °C, the usual "
                          "personnel-protection limit (common practice; ASTM C1055 limits depend on contact "
                          "time and surface material): guard it or set 'Max surface temperature'",
                          sheet, t.cell(i, "tag")))
    if not hot:
        if sol.t_surface[i] < dew[i] + margin - 1e-9:
            notes.append(Note("warning", "condensation",
                              f"surface {show(sol.t_surface[i], 'temperature', us)} is below the dew point "
                              f"{show(dew[i], 'temperature', us)} plus margin: condensation is expected; "
                              "set 'Prevent condensation' yes", sheet, t.cell(i, "tag")))
        notes.append(Note("caution", "vapour-retarder",
                          "cold line: a continuous vapour retarder is required; this calculation does not "
                          "cover moisture ingress", sheet, t.cell(i, "tag")))
    if sol.convection.outside[i]:
        notes.append(Note("info", "correlation-range",
                          f"{' / '.join(CORRELATION_NAMES[L.shape])}: used outside its published range for "
                          "this line; treat h as an estimate", sheet, t.cell(i, "tag")))
    payback = res.values["payback"][i]
    if np.isfinite(payback) and governing == "economic":
        notes.append(Note("info", "payback", f"simple payback against bare: {payback:.1f} years",
                          sheet, t.cell(i, "tag")))
