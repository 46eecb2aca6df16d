"""The targets a line's insulation is sized to, one class each, and their registry.

A target knows the input columns it reads (:attr:`Target.columns`), which lines give it
(:meth:`Target.given`), its measure for every candidate system (:meth:`Target.measure`:
per case, cases × candidates, larger is worse, so the worst named condition governs; or
per line for those judged at the coldest named condition), whether each candidate meets
it (:meth:`Target.meets`), its margin at the chosen system (:meth:`Target.margin`) and
its words when no sold system meets it (:meth:`Target.unmet`).

The selection (:mod:`lagsheet.design.select`) loops over :data:`TARGETS`; adding a target
is one class here plus its place in that list. ``order`` breaks ties when several targets
want the same thickness (the lowest names the governing one); ``monotone`` says a thicker
system of one material never does worse, so a search over its sorted thicknesses may
bisect (two materials' candidates run by total thickness, not by either layer: no bisection).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from ..physics.balance import System
from ..physics.layers import CYLINDER, MaterialTable
from ..workbook.display import show
from ..workbook.inputs import Condition
from ..workbook.tables import Table
from . import economics, process
from .build import installed_cost

if TYPE_CHECKING:  # lines resolves each line's inputs and asks every target to check its own
    from .lines import Cells, Line


@dataclass
class Context:
    """What every target is judged on: the lines, their cases (one per named condition,
    contiguous per line) and every candidate system of every case, solved."""

    lines: list[Line]
    ok: np.ndarray  # lines that are computed
    t: Table  # the Lines table
    settings: dict
    us: bool
    cases: System  # one per (line, condition)
    case_line: np.ndarray  # case -> line
    case_cond: list[Condition]  # case -> condition
    starts: np.ndarray  # line -> its first case
    cand: np.ndarray  # lines × candidates × slots [m], NaN past a line's own
    total: np.ndarray  # lines × candidates: total thickness [m]
    table: MaterialTable
    c: Any  # the engine's results (cases × candidates)
    dew: np.ndarray  # per case: dew point [K], -inf in dry air
    margin: float  # the 'Condensation margin' setting [K]
    valid: np.ndarray | None = None  # lines × candidates: converged, conductivity in range, every case
    picked: np.ndarray | None = None  # lines × slots: the chosen systems, for late targets
    parts: dict[int, list[int]] = field(default_factory=dict)  # vessel -> its linked lines

    @property
    def n(self) -> int:
        return len(self.lines)

    @property
    def slots(self) -> int:
        return self.cand.shape[2]

    def all_cases(self, m: np.ndarray) -> np.ndarray:
        """Per line and candidate: ``m`` holds at every one of the line's cases."""
        return np.logical_and.reduceat(m, self.starts, axis=0)

    def per_case(self, per_line_values: np.ndarray) -> np.ndarray:
        """A per-line column as cases × 1."""
        return per_line_values[self.case_line][:, None]

    def cases_of(self, i: int) -> list[int]:
        return list(range(self.starts[i], self.starts[i] + len(self.lines[i].conditions)))

    def at(self, i: int, j: int) -> str:
        """' at condition 'x'' for case ``j`` of a line with several conditions, else ''."""
        return f" at condition '{self.case_cond[j].name}'" if len(self.lines[i].conditions) > 1 else ""


@dataclass
class Judgement:
    """One target judged over every line: who gives it, and which candidates meet it."""

    target: Target
    given: np.ndarray  # lines
    meets: np.ndarray | None = None  # lines × candidates (None until a late target is judged)
    worst: np.ndarray | None = None  # cases × candidates, larger is worse (None: judged at the coldest)
    value: np.ndarray | None = None  # lines × candidates: the number held against the requirement


class Target:
    """One target: see the module's words."""

    name = ""  # its governing word
    order = 0  # ties: the lowest order governs
    columns: tuple[str, ...] = ()  # the Lines columns it reads
    monotone = True  # a thicker system of one material never does worse (a search may bisect)
    late = False  # judged once every line is chosen (its measure needs other lines' systems)
    coldest = False  # judged at the coldest named condition, not the worst of every one
    needs_fluid = False  # its inputs are checked once the line's fluid and its state are known
    judged_at = "at every named condition; "  # how the governing-condition note says where it was judged

    def check(self, L: Line, cells: Cells) -> None:
        """Note what is wrong with the inputs of line ``L`` this target reads (``check`` runs it)."""

    def given(self, ctx: Context) -> np.ndarray | None:
        """Per line: does it give this target? None when no line can (its column is absent)."""
        raise NotImplementedError

    def measure(self, ctx: Context, given: np.ndarray) -> np.ndarray | None:
        """Per case (cases × candidates, larger is worse) or, for ``coldest`` targets, per line."""
        return None

    def meets(self, ctx: Context, given: np.ndarray, measure) -> np.ndarray:
        """Per line and candidate: is the target met (at every named condition)?"""
        raise NotImplementedError

    def value(self, ctx: Context, given: np.ndarray, measure) -> np.ndarray | None:
        """Per line and candidate: the number the requirement is held against (process targets)."""
        return None

    def judge(self, ctx: Context) -> Judgement | None:
        given = self.given(ctx)
        if given is None:
            return None
        j = Judgement(self, given)
        if not self.late:
            self.complete(ctx, j)
        return j

    def complete(self, ctx: Context, j: Judgement) -> None:
        measure = self.measure(ctx, j.given)
        j.meets = self.meets(ctx, j.given, measure)
        j.worst = None if self.coldest else measure
        j.value = self.value(ctx, j.given, measure)

    def margin(self, ctx: Context, j: Judgement, pick: np.ndarray, case_pick: np.ndarray) -> dict:
        """Line -> (margin at the chosen system, display kind); positive = met with room to spare."""
        return {}

    def unmet(self, ctx: Context, j: Judgement, i: int, last: int, thick: str, names: str) -> tuple[str, int]:
        """Why no sold system of line ``i`` meets it (``last`` its thickest) and the case that shows it."""
        raise NotImplementedError


def _worst_at(ctx: Context, worst: np.ndarray, case_pick: np.ndarray) -> np.ndarray:
    """Per line: the largest of ``worst`` over its cases at the chosen candidate (NaN as +inf)."""
    at = np.arange(len(ctx.case_line))
    return np.maximum.reduceat(np.nan_to_num(worst[at, case_pick], nan=np.inf), ctx.starts)


def _finite(given: np.ndarray, m: np.ndarray, kind) -> dict:
    kinds = kind if isinstance(kind, list) else [kind] * len(m)
    return {i: (float(m[i]), kinds[i]) for i in range(len(m)) if given[i] and np.isfinite(m[i])}


class SurfaceTemperature(Target):
    name, order, columns = "surface temperature", 0, ("max_surface_temperature",)

    def given(self, ctx):
        tmax = ctx.t.get("max_surface_temperature")
        return None if tmax is None else np.isfinite(tmax)

    def measure(self, ctx, given):
        return ctx.c.t_surface

    def meets(self, ctx, given, measure):
        return ctx.all_cases(measure <= ctx.per_case(ctx.t.get("max_surface_temperature")) + 1e-9)

    def margin(self, ctx, j, pick, case_pick):
        return _finite(j.given, ctx.t.get("max_surface_temperature") - _worst_at(ctx, j.worst, case_pick),
                       "difference")

    def unmet(self, ctx, j, i, last, thick, names):
        us, ts = ctx.us, ctx.c.t_surface
        k = max(ctx.cases_of(i), key=lambda k: ts[k, last])
        limit = ctx.t.get("max_surface_temperature")[i]
        return (f"'Max surface temperature' {show(limit, 'temperature', us)} is not met by any sold thickness: "
                f"{show(ts[k, last], 'temperature', us)} at {thick}{ctx.at(i, k)}, the thickest of {names}"), k


class HeatLoss(Target):
    name, order, columns = "heat loss", 2, ("max_heat_loss",)
    monotone = False  # below the critical radius a thicker system loses more (the 'more-than-bare' note)

    def check(self, L, cells):
        q = cells.t.columns.get("max_heat_loss")
        if (q is not None and np.isfinite(cells.num("max_heat_loss")) and q.si_of(cells.i) != "W/m**2"
                and L.geometry != CYLINDER):
            cells.err("heat-loss-unit", "max_heat_loss",
                      "'Max heat loss' is per length (W/m) but this line is flat or a sphere; type its limit "
                      "with its unit, e.g. '60 W/m²'")

    @staticmethod
    def per_area(ctx) -> np.ndarray:
        """Per line: is its 'Max heat loss' per square metre of outer surface (else per metre)?
        (A per-length limit on a flat line is an input error: see lines.resolve.)"""
        col = ctx.t.columns["max_heat_loss"]
        return np.array([col.si_of(i) == "W/m**2" for i in range(ctx.n)], dtype=bool)

    def given(self, ctx):
        qmax = ctx.t.get("max_heat_loss")
        return None if qmax is None else np.isfinite(qmax)

    def measure(self, ctx, given):
        return np.where(ctx.per_case(self.per_area(ctx)), np.abs(ctx.c.q), np.abs(ctx.c.heat_rate))

    def meets(self, ctx, given, measure):
        return ctx.all_cases(measure <= ctx.per_case(ctx.t.get("max_heat_loss")) * (1 + 1e-12))

    def margin(self, ctx, j, pick, case_pick):
        kinds = ["per_area" if a else "per_length" for a in self.per_area(ctx)]
        return _finite(j.given, ctx.t.get("max_heat_loss") - _worst_at(ctx, j.worst, case_pick), kinds)

    def unmet(self, ctx, j, i, last, thick, names):
        us, c = ctx.us, ctx.c
        per_area = ctx.t.columns["max_heat_loss"].si_of(i) == "W/m**2"
        kind = "per_area" if per_area else "per_length"
        size = np.abs(c.q[:, last]) if per_area else np.abs(c.heat_rate[:, last])
        k = max(ctx.cases_of(i), key=lambda k: size[k])
        limit = ctx.t.get("max_heat_loss")[i]
        return (f"'Max heat loss' {show(limit, kind, us)} is not met by any sold thickness: "
                f"{show(size[k], kind, us)} at {thick}{ctx.at(i, k)}, the thickest of {names}"), k


class Minimum(Target):
    name, order, columns = "minimum", 7, ("min_thickness",)

    def given(self, ctx):
        tmin = ctx.t.get("min_thickness")
        return None if tmin is None else np.isfinite(tmin)

    def meets(self, ctx, given, measure):
        return ctx.total >= ctx.t.get("min_thickness")[:, None] - 1e-9

    def margin(self, ctx, j, pick, case_pick):
        tmin = ctx.t.get("min_thickness")
        return {int(i): (float(ctx.total[i, pick[i]] - tmin[i]), "thickness") for i in np.flatnonzero(j.given)}

    def unmet(self, ctx, j, i, last, thick, names):
        tmin = ctx.t.get("min_thickness")[i]
        return (f"'Min thickness' {show(tmin, 'thickness', ctx.us)} is more than the thickest sold {thick} "
                f"of {names}"), ctx.starts[i]


class Condensation(Target):
    """The surface stays at or above the dew point plus the 'Condensation margin' setting."""

    name, order, columns = "condensation", 1, ("prevent_condensation",)

    def given(self, ctx):
        prevent = ctx.t.get("prevent_condensation")
        return None if prevent is None else np.array([v is True for v in prevent])

    def measure(self, ctx, given):
        return -(ctx.c.t_surface - (ctx.dew + ctx.margin)[:, None])  # how far below; larger is worse

    def meets(self, ctx, given, measure):
        return ctx.all_cases(-measure >= -1e-9)

    def margin(self, ctx, j, pick, case_pick):
        return _finite(j.given, -_worst_at(ctx, j.worst, case_pick), "difference")

    def unmet(self, ctx, j, i, last, thick, names):
        us, ts, dew = ctx.us, ctx.c.t_surface, ctx.dew
        k = min(ctx.cases_of(i), key=lambda k: ts[k, last] - dew[k])
        return (f"condensation is not prevented by any sold thickness: surface "
                f"{show(ts[k, last], 'temperature', us)} at {thick}{ctx.at(i, k)} against a dew "
                f"point of {show(dew[k], 'temperature', us)} plus {show(ctx.margin, 'difference', us)}"), k


class Interface(Target):
    """The face between two materials stays within the outer material's service limit."""

    name, order, columns = "interface", 6, ("outer_insulation",)
    monotone = False  # it follows the inner layer, not the total the candidates run by

    @staticmethod
    def limit(ctx) -> np.ndarray:
        return np.array([L.materials[1].max_temperature if len(L.materials) == 2 else np.inf for L in ctx.lines])

    def given(self, ctx):
        if ctx.slots != 2:
            return None
        return np.array([len(L.materials) == 2 for L in ctx.lines]) & ctx.ok

    def measure(self, ctx, given):
        return ctx.c.faces[:, :, 1]

    def meets(self, ctx, given, measure):
        return ctx.all_cases(measure <= ctx.per_case(self.limit(ctx)) + 1e-9)

    def margin(self, ctx, j, pick, case_pick):
        limit = np.array([L.materials[1].max_temperature if len(L.materials) == 2 else np.nan for L in ctx.lines])
        return _finite(j.given, limit - _worst_at(ctx, j.worst, case_pick), "difference")

    def unmet(self, ctx, j, i, last, thick, names):
        inner, outer = ctx.lines[i].materials
        return (f"no sold inner thickness of {inner.name} keeps the interface within "
                f"{show(outer.max_temperature, 'temperature', ctx.us)}, the limit of {outer.name}"), ctx.starts[i]


class _ProcessTarget(Target):
    """A process target: its value per line and candidate against the line's requirement."""

    needs_fluid = True
    monotone = False  # each follows the heat loss, which is not monotone below the critical radius
    need = ""  # the Process attribute it is held against
    sign = 1  # +1: the value must reach the need (times); -1: stay within it (a drop)
    kind = "hours"

    def margin(self, ctx, j, pick, case_pick):
        out = {}
        for i in np.flatnonzero(j.given & ctx.ok):
            room = self.sign * (float(j.value[i, pick[i]]) - float(getattr(ctx.lines[i].process, self.need)))
            if np.isfinite(room):
                out[int(i)] = (room, self.kind)
        return out


class TemperatureDrop(_ProcessTarget):
    """A flowing line's inlet-to-outlet change, closed form with U′ at the inlet, every named condition."""

    name, order, columns = "temperature drop", 3, ("max_temperature_drop", "flow_rate", "fluid")
    need, sign, kind = "max_drop", -1, "difference"

    def check(self, L, cells):
        process.drop_inputs(L, cells.err)

    def given(self, ctx):
        g = np.array([ctx.ok[i] and L.process.flowing and np.isfinite(L.process.max_drop)
                      for i, L in enumerate(ctx.lines)])
        return g if g.any() else None

    def measure(self, ctx, given):
        return process.closed_drop(ctx.lines, ctx.cases, ctx.case_line, ctx.c)

    def meets(self, ctx, given, measure):
        limit = ctx.per_case(np.array([L.process.max_drop for L in ctx.lines]))
        return ctx.all_cases(np.where(np.isfinite(measure), measure <= limit + 1e-9, False))

    def value(self, ctx, given, measure):
        return np.maximum.reduceat(np.nan_to_num(measure, nan=np.inf), ctx.starts, axis=0)

    def unmet(self, ctx, j, i, last, thick, names):
        return (f"'Max temperature drop' is not met by any sold thickness: the temperature changes by "
                f"{show(j.value[i, last], 'difference', ctx.us)} at {thick}, the thickest of {names}"), ctx.starts[i]


class FreezeProtection(_ProcessTarget):
    """Time for standing water to freeze, at the coldest named condition."""

    name, order, columns = "freeze protection", 4, ("freeze_protection", "inside_diameter", "schedule")
    need, coldest, judged_at = "freeze", True, "at the coldest named condition, "

    def check(self, L, cells):
        if np.isfinite(L.process.freeze):
            process.freeze_inputs(cells.t, cells.i, L, cells.num, cells.text, cells.err, cells.warn)

    def given(self, ctx):
        g = np.array([ctx.ok[i] and np.isfinite(L.process.freeze) and np.isfinite(L.process.bore)
                      for i, L in enumerate(ctx.lines)])
        return g if g.any() else None

    def measure(self, ctx, given):
        idx = np.flatnonzero(given)
        out = np.full(ctx.total.shape, np.nan)
        out[idx] = process.freeze_time(ctx, idx, ctx.cand[idx], process.SELECT_NODES)
        return out

    def meets(self, ctx, given, measure):
        idx = np.flatnonzero(given)
        met = np.zeros(ctx.total.shape, dtype=bool)
        met[idx] = measure[idx] >= np.array([ctx.lines[i].process.freeze for i in idx])[:, None]
        return met

    def value(self, ctx, given, measure):
        return measure

    def unmet(self, ctx, j, i, last, thick, names):
        return (f"'Freeze protection' is not met by any sold thickness: water freezes in "
                f"{j.value[i, last] / 3600:.1f} h at {thick}, the thickest of {names}; add heat tracing"), ctx.starts[i]


class HoldTime(FreezeProtection):
    """Time for a vessel's contents to cool to 'Min temperature', at the coldest named condition,
    its linked lines ('Part of') at their own chosen systems: judged once they are chosen."""

    name, order, columns = "hold time", 5, ("hold_time", "contents_volume", "min_temperature", "part_of")
    need, late = "hold", True

    def check(self, L, cells):
        if np.isfinite(L.process.hold):
            process.hold_inputs(L, cells.num, cells.err)

    def given(self, ctx):
        g = np.array([ctx.ok[i] and np.isfinite(L.process.hold) and np.isfinite(L.process.volume)
                      and np.isfinite(L.process.t_limit) for i, L in enumerate(ctx.lines)])
        return g if g.any() else None

    def measure(self, ctx, given):
        idx = np.flatnonzero(given)
        out = np.full(ctx.total.shape, np.nan)
        out[idx] = process.cool_time(ctx, idx, ctx.cand[idx], ctx.picked, process.SELECT_NODES)
        return out

    def meets(self, ctx, given, measure):
        idx = np.flatnonzero(given)
        met = np.zeros(ctx.total.shape, dtype=bool)
        met[idx] = measure[idx] >= np.array([ctx.lines[i].process.hold for i in idx])[:, None]
        return met

    def unmet(self, ctx, j, i, last, thick, names):
        return (f"'Hold time' is not met by any sold thickness: the contents cool in {j.value[i, last] / 3600:.1f} h "
                f"at {thick}, the thickest of {names}"), ctx.starts[i]


class Economic:
    """Not a limit but a choice: an ``Economic`` line takes, among the systems that meet
    every target, the one with the lowest annualised cost: capital recovery factor ×
    installed cost + the energy bought in a year at the first named condition (a flowing
    line: the heat its fluid gives up along the line)."""

    name, columns = "economic", ("economic",)
    needs_fluid = False

    def check(self, L, cells):
        """'Economic' needs the cost per volume of its materials, the jacket and labour costs."""
        if not (L.economic and L.materials):
            return
        st = cells.settings
        missing = [f"'Cost per volume' of {m.name} (Materials sheet)" for m in L.materials
                   if not np.isfinite(m.cost_per_volume)]
        missing += [f"the setting {name!r}" for name, key in (("Jacket cost per area", "jacket_cost_per_area"),
                                                           ("Labour per layer", "labour_per_layer"))
                    if not np.isfinite(float(st[key]))]
        if missing:
            cells.err("economic-costs", "economic", "'Economic' needs " + ", ".join(missing) + "; give them, or "
                      "leave 'Economic' blank")

    def given(self, ctx: Context) -> np.ndarray:
        return np.array([L.economic for L in ctx.lines]) & ctx.ok

    def annualised(self, ctx: Context, base: System) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(annualised cost, installed cost) of every candidate (lines × candidates) and the
        operating hours of every line at its first named condition."""
        lines, st = ctx.lines, ctx.settings
        cost = installed_cost(lines, ctx.cand, base, st)
        whole = economics.whole_heat_flow(base.geometry, ctx.c.heat_rate[ctx.starts],
                                          np.array([L.length for L in lines]), np.array([L.area for L in lines]))
        whole = process.flowing_candidates(ctx, self.given(ctx), whole)
        hours = np.array([L.conditions[0].hours if ctx.ok[i] else 0.0 for i, L in enumerate(lines)])
        energy_cost = economics.energy_cost(whole, hours[:, None], st)
        crf = float(economics.capital_recovery_factor(float(st["discount_rate"]), float(st["service_life"])))
        return crf * cost + energy_cost, cost, hours

    @staticmethod
    def choose(feasible: np.ndarray, annualised: np.ndarray) -> np.ndarray:
        """Per line: the feasible candidate of the lowest annualised cost."""
        return np.argmin(np.where(feasible & np.isfinite(annualised), annualised, np.inf), axis=1)


# The registry, in the order targets are judged and listed (``explain``); ties go by ``order``.
TARGETS: tuple[Target, ...] = (SurfaceTemperature(), HeatLoss(), Minimum(), Condensation(), Interface(),
                               TemperatureDrop(), FreezeProtection(), HoldTime())
BY_ORDER: tuple[Target, ...] = tuple(sorted(TARGETS, key=lambda x: x.order))
GOVERNING_ORDER = tuple(x.name for x in BY_ORDER)
BY_NAME: dict[str, Target] = {x.name: x for x in TARGETS}


ECONOMIC = Economic()
# Inputs are checked in this order: the process targets once the fluid is known, then the others.
CHECK_ORDER: tuple[Target | Economic, ...] = (*(x for x in TARGETS if x.needs_fluid),
                                              *(x for x in TARGETS if not x.needs_fluid), ECONOMIC)


def judge(ctx: Context) -> dict[str, Judgement]:
    """Every target some line can give, judged (late ones given but not yet judged)."""
    out = {}
    for target in TARGETS:
        j = target.judge(ctx)
        if j is not None:
            out[target.name] = j
    return out
