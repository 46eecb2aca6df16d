"""Targets -> the chosen insulation system of every line.

Each line is resolved (:mod:`lagsheet.design.lines`), then expanded into one *case* per
design condition it names. The engine solves the candidate systems the selection reads
(:mod:`lagsheet.design.search`: a few per line, or every one). Each target (:mod:`lagsheet.design.targets`, one class each) is judged at the
case that is worst for it; the chosen system
is the thinnest that meets every target (or, for ``Economic`` lines, the one with the
lowest annualised cost among those). Results are reported at the first named
condition. Calls physics; physics never calls it.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import Note
from ..physics.balance import System, solve
from ..physics.candidates import Grid, heat_rate, per_line
from ..physics.layers import CYLINDER, SPHERE, MaterialTable
from ..physics.properties import dew_point
from ..physics.surface import linearised_h
from ..workbook import library
from ..workbook.inputs import Condition, Inputs
from ..workbook.results import NUMBERS, WORDS
from . import economics, notes, search, sun, targets, tracing
from . import process as limits
from .build import Quantities, quantities
from .lines import Line, resolve_lines
from .notes import THINNEST
from .targets import ECONOMIC, Context, Judgement


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
    lines, line_notes = resolve_lines(inputs)  # every input error, as `check` reports them
    for i in range(n):
        res.notes[i].extend(line_notes[i])
    tags = t.get("tag")
    res.tags.extend((tags[i] if tags is not None else None) or "" for i in range(n))
    res.lines = lines
    res.table = _material_table(lines)
    ctx, base = _context(inputs, lines, res.table)
    judged = targets.judge(ctx)
    econ, annualised, cost, hours = _economics(ctx, base)
    ch = _select(ctx, judged, econ, annualised, res)
    inst = cost[np.arange(n), ch.pick]
    del annualised, cost  # lines × candidates, read by the choice alone: freed before the rest
    rep = _solve_chosen(ctx, base, ch, res, hours)
    tracing.add_fittings(ctx, rep, res)
    _values(ctx, ch, rep, res, inst)
    notes.lines_notes(ctx, judged, ch, rep, res, np.flatnonzero(rep.put))
    sun.notes(ctx, ch, res)
    ctx.memo.pop("ts", None)  # the surface in every role (cases × candidates each): read by the notes alone
    limits.results(ctx, rep.put, rep.chosen_th, rep.loss, res)
    tracing.tracing(ctx, rep, res)
    for i in range(n):
        lv = {nt.level for nt in res.notes[i]}
        res.status.append("error" if "error" in lv or not lines[i].ok else
                          "warning" if "warning" in lv else "ok")
    return res


def _material_table(lines: list[Line]) -> MaterialTable:
    """Conductivity tables of every material the lines use (mineral wool when none)."""
    used: dict[str, library.Material] = {}
    for L in lines:
        for m in L.materials:
            used.setdefault(m.name, m)
    if not used:
        used["mineral wool"] = library.materials()["mineral wool"]
    return MaterialTable.build({k: (np.array(m.mean_temperatures), np.array(m.design_conductivities))
                                for k, m in used.items()})


def _base_system(lines: list[Line], ok: np.ndarray, table: MaterialTable, slots: int) -> System:
    """One system per line (no air yet, no thickness): shape, temperatures, radii, materials."""
    n = len(lines)

    def line_arr(get, bad=np.nan):
        return np.array([get(L) if ok[i] else bad for i, L in enumerate(lines)], dtype=float)

    mat = np.zeros((n, slots), dtype=int)
    for i, L in enumerate(lines):
        for j, m in enumerate(L.materials):
            mat[i, j] = table.index(m.name)
        if len(L.materials) == 1 and slots == 2:
            mat[i, 1] = mat[i, 0]
    return System(
        geometry=np.array([L.geometry for L in lines]), shape=np.array([L.shape for L in lines]),
        t_operating=line_arr(lambda L: L.t_op, 300.0),
        t_air=np.zeros(n), t_surroundings=np.zeros(n), wind=np.zeros(n),
        emissivity=line_arr(lambda L: L.emissivity, 0.9),
        r_inner=line_arr(lambda L: L.r_inner, 0.05),
        height=line_arr(lambda L: L.free_length, 1.0),
        thickness=np.zeros((n, slots)), material=mat,
        flow_length=line_arr(lambda L: L.flow_length, 1.0),
    )


def _candidates(lines: list[Line], ok: np.ndarray, slots: int) -> np.ndarray:
    """Every line's candidate systems (lines × candidates × slots) [m], NaN past its own."""
    width = max(len(L.candidates) for L in lines) or 1
    cand = np.full((len(lines), width, slots), np.nan)
    shared: dict[int, tuple] = {}  # lines of one material share one candidates object: one block each
    for i, L in enumerate(lines):
        if ok[i]:
            shared.setdefault(id(L.candidates), (L.candidates, []))[1].append(i)
    for cands, members in shared.values():
        block = np.zeros((len(cands), slots))
        for k, c in enumerate(cands):
            block[k, :len(c)] = c
        cand[np.array(members)[:, None], np.arange(len(cands))[None, :]] = block
    return cand


def _context(inputs: Inputs, lines: list[Line], table: MaterialTable) -> tuple[Context, System]:
    """The cases (one per line and named condition, contiguous per line) and the candidates
    of every case the selection reads, solved by the engine (:func:`search.solve_needed`)."""
    slots = max([len(L.materials) for L in lines] + [1])
    ok = np.array([L.ok and bool(L.candidates) for L in lines])
    indoor = inputs.conditions["indoor"]
    case_line, case_cond = [], []
    for i, L in enumerate(lines):
        for c in (L.conditions if ok[i] else []) or [indoor]:
            case_line.append(i)
            case_cond.append(c)
    case_line = np.array(case_line)
    starts = np.flatnonzero(np.r_[True, case_line[1:] != case_line[:-1]])
    base = _base_system(lines, ok, table, slots)
    words, alpha = np.array([L.word for L in lines]), np.array([L.absorptance for L in lines], dtype=float)
    t_air = np.array([c.t_air for c in case_cond])
    gain = sun.design(words[case_line], alpha[case_line], [c.solar for c in case_cond],
                      base.t_operating[case_line], t_air)
    cases = per_line(base, case_line, t_air=t_air,
                     t_surroundings=np.array([c.t_surroundings for c in case_cond]),
                     wind=np.array([c.wind for c in case_cond]), absorbed=gain if gain.any() else None)
    cand = _candidates(lines, ok, slots)
    total = cand.sum(axis=2)
    c = Grid(cases, cand, base.material[case_line], table, rows=case_line)
    ctx = Context(lines=lines, ok=ok, t=inputs.lines, settings=inputs.settings, us=inputs.us_units,
                  cases=cases, case_line=case_line, case_cond=case_cond, starts=starts, cand=cand,
                  total=total, table=table, c=c, dew=np.array([_dew(cc) for cc in case_cond]),
                  margin=float(inputs.settings["condensation_margin"]))
    ctx.surface = sun.grids(ctx, words, alpha, bool(inputs.settings["touch_still_air"]))
    ctx.more.extend(ctx.surface.values())
    search.solve_needed(ctx)
    return ctx, base


def _economics(ctx: Context, base: System):
    """The annualised cost of every candidate of the ``Economic`` lines; one none of whose
    candidates can be priced is not computed. Returns (economic lines, annualised,
    installed cost, hours per line)."""
    annualised, cost, hours = ECONOMIC.annualised(ctx, base)
    econ = ECONOMIC.given(ctx)
    for i in np.flatnonzero(econ & ~np.isfinite(annualised).any(axis=1)):
        ctx.ok[i] = ctx.lines[i].ok = False
    econ &= ctx.ok
    return econ, annualised, cost, hours


@dataclass
class Choice:
    """The selection's outcome per line."""

    chosen: np.ndarray  # index of the chosen candidate, -1 where not computed
    first_feasible: np.ndarray  # the thinnest that meets every target, -1 where none does
    unmet: np.ndarray  # a target is given and no candidate meets them all
    last: np.ndarray  # the thickest candidate
    fixed: np.ndarray
    econ: np.ndarray
    active: np.ndarray  # some target given
    none_given: np.ndarray
    governing: np.ndarray | None = None  # the governing word
    gov_basis: np.ndarray | None = None  # the target a line is judged by (a thinnest-sold line: its nearest)
    gov_cond: np.ndarray | None = None  # the condition that governed

    @property
    def pick(self) -> np.ndarray:
        return np.maximum(self.chosen, 0)


def _choose(ctx: Context, judged: dict[str, Judgement], ch: Choice, annualised) -> None:
    """Per line: the chosen candidate, the first that meets every judged target, and 'none meets'."""
    ok = ctx.ok
    feasible = ctx.valid.copy()
    for j in judged.values():
        if j.meets is not None:
            feasible &= j.meets | ~j.given[:, None]
    first_feasible = _first(feasible)
    econ = ch.econ
    econ_idx = np.where(econ, ECONOMIC.choose(feasible, annualised), -1)
    chosen = np.where(econ, econ_idx, first_feasible)
    chosen = np.where(ch.none_given, _first(ctx.valid), chosen)
    chosen = np.where(ch.fixed & ok, 0, chosen)
    ch.unmet = ok & ~ch.fixed & (ch.active | econ) & (first_feasible < 0)
    chosen = np.where(ch.unmet, ch.last, chosen)
    ch.chosen, ch.first_feasible = np.where(ok, chosen, -1), first_feasible


def _select(ctx: Context, judged: dict[str, Judgement], econ, annualised, res: Results) -> Choice:
    """Choose every line's system: a short loop over the targets (late ones judged once the
    others are chosen), then what governed and where."""
    n, lines, ok, total = ctx.n, ctx.lines, ctx.ok, ctx.total
    fixed = np.array([L.fixed for L in lines])
    active = np.zeros(n, dtype=bool)
    for j in judged.values():
        active |= j.given
    finite = np.isfinite(total)
    last = np.where(finite.any(axis=1), total.shape[1] - 1 - np.argmax(finite[:, ::-1], axis=1), -1)
    ch = Choice(chosen=np.full(n, -1), first_feasible=np.full(n, -1), unmet=np.zeros(n, bool), last=last,
                fixed=fixed, econ=econ, active=active, none_given=ok & ~fixed & ~active & ~econ)
    _choose(ctx, judged, ch, annualised)
    ctx.parts = limits.parts_of(lines, res.tags, res, ctx.t)
    late = [j for j in judged.values() if j.target.late]
    if late:  # a vessel's hold time counts its parts (heads, bottoms) at their own chosen systems
        ctx.picked = np.where((ch.chosen >= 0)[:, None], ctx.cand[np.arange(n), ch.pick], 0.0)
        for j in late:
            j.target.complete(ctx, j)
        _choose(ctx, judged, ch, annualised)
    own = _governing(ctx, judged, ch)
    res.target_thickness = [
        {name: (float(total[i, own[name][i]]) if own[name][i] >= 0 else None)
         for name in own if judged[name].given[i]} for i in range(n)]
    res.target_margin = _margins(ctx, judged, ch)
    _governing_condition(ctx, judged, ch, res)
    return ch


def _governing(ctx: Context, judged: dict[str, Judgement], ch: Choice) -> dict[str, np.ndarray]:
    """The governing word per line: the target whose own thinnest is the chosen (earlier in
    :attr:`~lagsheet.design.targets.Target.order` on a tie). Returns each target's own thinnest."""
    ok, chosen, econ, fixed = ctx.ok, ch.chosen, ch.econ, ch.fixed
    own = {name: _first(j.meets & ctx.valid) for name, j in judged.items()}
    gov_name = np.full(ctx.n, None, dtype=object)
    for j in sorted(judged.values(), key=lambda j: j.target.order, reverse=True):  # earlier ones win ties
        gov_name[j.given & (own[j.target.name] == chosen)] = j.target.name
    if econ.any():
        gov_name[econ & (chosen > ch.first_feasible)] = "economic"
        gov_name[econ & (gov_name == None)] = "economic"  # noqa: E711 (object array)
    governing = gov_name.copy()
    # the thinnest sold system already meets every target: no target bound (Min thickness too)
    thinnest = ok & ~econ & ~fixed & ch.active & ~ch.unmet & (chosen == 0)
    governing[thinnest] = THINNEST
    governing[fixed & ok] = "fixed"
    governing[ch.none_given] = "none"
    ch.governing = governing
    # a thinnest-sold line is judged where its nearest target (the one the old rule named) is worst
    ch.gov_basis = np.where(thinnest, gov_name, governing)
    return own


def _margins(ctx: Context, judged: dict[str, Judgement], ch: Choice) -> list[dict]:
    """Per line: target -> (its margin at the chosen system over the named conditions, display kind).

    Positive = the target is met with room to spare: limit minus value for surface
    temperature, heat loss and interface; surface minus (dew point + margin) for
    condensation; chosen minus required for the minimum thickness; the value against the
    requirement for the process targets.
    """
    out: list[dict] = [{} for _ in range(ctx.n)]
    case_pick = ch.pick[ctx.case_line]
    for name, j in judged.items():
        for i, m in j.target.margin(ctx, j, ch.pick, case_pick).items():
            out[i][name] = m
    return out


def _governing_condition(ctx: Context, judged: dict[str, Judgement], ch: Choice, res: Results) -> None:
    """The named condition that governed each line: the worst for its governing target, or
    the coldest for those judged there; the first named otherwise."""
    lines, ok, n = ctx.lines, ctx.ok, ctx.n
    gov_cond = np.full(n, None, dtype=object)
    several = np.diff(np.r_[ctx.starts, len(ctx.case_line)]) > 1
    case_pick = ch.pick[ctx.case_line]
    for name, j in judged.items():
        sel = np.array([g == name for g in ch.gov_basis]) & several & ok
        if not sel.any():
            continue
        if j.target.coldest:
            for i in np.flatnonzero(sel):
                gov_cond[i] = lines[i].conditions[limits.coldest(lines[i])].name
            continue
        if j.worst is None:  # judged without conditions (Min thickness): the first named
            continue
        w = j.worst[np.arange(len(ctx.case_line)), case_pick]
        for i in np.flatnonzero(sel):
            start = ctx.starts[i]
            gov_cond[i] = ctx.case_cond[start + int(np.nanargmax(w[start:start + len(lines[i].conditions)]))].name
    for i in np.flatnonzero(ok & (gov_cond == None)):  # noqa: E711
        gov_cond[i] = lines[i].conditions[0].name
    res.values["governing_condition"][:] = gov_cond
    ch.gov_cond = gov_cond


@dataclass
class Solved:
    """The chosen systems at the first named condition, solved once more in full, and bare."""

    put: np.ndarray  # lines with a chosen system
    chosen_th: np.ndarray  # lines × slots [m]
    first_sys: System
    sol: object
    bare: object
    loss: np.ndarray  # whole-line heat loss [W]
    bare_loss: np.ndarray
    rate: np.ndarray  # heat rate per metre or per square metre
    r_crit: np.ndarray | None = None
    hours: np.ndarray | None = None  # operating hours a year at the first condition
    t_surface: np.ndarray | None = None  # reported: sun-facing on hot lines, shade on cold (design.sun)


def _solve_chosen(ctx: Context, base: System, ch: Choice, res: Results, hours) -> Solved:
    n, lines, table = ctx.n, ctx.lines, ctx.table
    rows = np.arange(n)
    chosen_th = np.where((ch.chosen >= 0)[:, None], ctx.cand[rows, ch.pick], 0.0)
    first_sys = per_line(ctx.cases, ctx.starts, thickness=np.nan_to_num(chosen_th))
    sol = solve(first_sys, table)
    bare_eps = np.where(ch.fixed & (np.nan_to_num(ctx.total[:, 0]) == 0), base.emissivity,
                        np.array([L.bare_emissivity for L in lines]))
    bare_abs = sun.bare(lines, first_sys)
    bare_sys = per_line(first_sys, rows, thickness=np.zeros((n, ctx.slots)), emissivity=bare_eps,
                        absorbed=bare_abs if bare_abs.any() else None)
    bare = solve(bare_sys, table)
    res.system = first_sys
    res.quantities = quantities(lines, chosen_th[:, None, :], base)
    res.chosen = chosen_th
    geometry = base.geometry
    rate = heat_rate(geometry, sol.q, sol.r_outer)
    lengths = np.array([L.length for L in lines])
    areas = np.array([L.area for L in lines])
    loss = _whole(geometry, rate, lengths, areas)
    bare_loss = _whole(geometry, heat_rate(geometry, bare.q, bare.r_outer), lengths, areas)
    # a line with a flow loses the heat its fluid gives up along the line, not the inlet rate × length
    put = ctx.ok & (ch.chosen >= 0)
    loss, bare_loss = limits.flowing_lines(ctx, put, first_sys, bare_sys, chosen_th, loss, bare_loss, res)
    rep = Solved(put, chosen_th, first_sys, sol, bare, loss, bare_loss, rate)
    rep.r_crit = _critical_radius(ctx, base, rep)
    rep.t_surface = sun.reported(first_sys, sol.t_surface, [L.word for L in lines], [L.absorptance for L in lines],
                                 [ctx.case_cond[k].solar for k in ctx.starts], table)
    rep.hours = hours
    return rep


def _critical_radius(ctx: Context, base: System, rep: Solved) -> np.ndarray:
    """k/h (cylinders) or 2k/h (spheres) with k of the outermost layer (of the bare pipe's
    material when bare) and h the linearised surface coefficient of the chosen system."""
    rows, sol, s, table, mat = np.arange(ctx.n), rep.sol, rep.first_sys, ctx.table, base.material
    j_out = np.maximum(np.sum(rep.chosen_th > 0, axis=1) - 1, 0)  # outermost layer with a thickness
    k_outer = table.mean_conductivity(mat[rows, j_out], sol.faces[rows, j_out], sol.faces[rows, j_out + 1])
    h_total = linearised_h(s.shape, sol.t_surface, s.t_air, s.t_surroundings, s.wind, s.emissivity,
                           2 * sol.r_outer, s.height, s.flow_length)
    k_bare = table.conductivity(mat[:, 0], 0.5 * (s.t_operating + s.t_air))
    k_rc = np.where(rep.chosen_th.sum(axis=1) > 0, k_outer, k_bare)
    return np.select([base.geometry == CYLINDER, base.geometry == SPHERE], [k_rc / h_total, 2 * k_rc / h_total],
                     np.nan)


def _values(ctx: Context, ch: Choice, rep: Solved, res: Results, inst: np.ndarray) -> None:
    """The reported values of every computed line (:mod:`lagsheet.workbook.results`)."""
    st, lines, sol, put = ctx.settings, ctx.lines, rep.sol, rep.put
    eff, cop, price = float(st["heating_efficiency"]), float(st["cooling_cop"]), float(st["energy_price"])
    energy = economics.annual_energy_kwh(rep.loss, rep.hours)
    bought = economics.energy_bought_kwh(energy, eff, cop)
    bare_bought = economics.energy_bought_kwh(economics.annual_energy_kwh(rep.bare_loss, rep.hours), eff, cop)
    saving = (bare_bought - bought) * price
    dew = ctx.dew[ctx.starts]
    has_mat = np.array([bool(L.materials) for L in lines])
    values = {
        "thickness": rep.chosen_th.sum(axis=1), "surface_temperature": rep.t_surface, "heat_flux": sol.q,
        "heat_loss_per_length": np.where(rep.first_sys.geometry == CYLINDER, rep.rate, np.nan),
        "heat_loss": rep.loss, "bare_heat_loss": rep.bare_loss, "annual_energy": energy,
        "annual_cost": bought * price, "annual_saving": saving, "co2": bought * float(st["emission_factor"]),
        "dew_point": np.where(_dew_matters(lines, ctx.t.get("prevent_condensation"), rep.t_surface, dew,
                                           ctx.margin) & np.isfinite(dew), dew, np.nan),
        "installed_cost": inst,
        "payback": np.where(saving > 0, inst / np.where(saving > 0, saving, 1.0), np.nan),
        "interface_temperature": np.where(np.sum(rep.chosen_th > 0, axis=1) == 2, sol.faces[:, 1], np.nan),
        "code_thickness": np.array([L.code_thickness for L in lines]),
    }
    v = res.values
    for key, arr in values.items():
        v[key][put] = arr[put]
    v["critical_radius"][put & has_mat] = rep.r_crit[put & has_mat]
    v["governing"][:] = np.where(put, ch.governing, None)


def _dew_matters(lines, prevent, t_surface, dew, margin) -> np.ndarray:
    """Per line: is its dew point worth writing? Where condensation is asked about ('Prevent
    condensation' yes) or possible at the first condition: the operating or the surface
    temperature below the dew point plus margin. A steam main's dew point means nothing."""
    asked = np.array([v is True for v in prevent]) if prevent is not None else np.zeros(len(lines), bool)
    t_op = np.array([L.t_op for L in lines], dtype=float)
    with np.errstate(invalid="ignore"):
        return asked | (np.fmin(t_op, t_surface) < dew + margin)


_whole = economics.whole_heat_flow  # the name ``audit`` imports
