"""Sun on outdoor surfaces: the absorbed irradiation α·G·F each case's surface balance gains.

``G`` is the condition's (or the line's) 'Solar irradiance', the beam on a surface facing
the sun; ``α`` the finish's (or the line's) solar absorptance. Two geometry factors per
shape:

* ``face``: the sun-facing element of the surface, which sees the beam squarely (F = 1);
  an underside sees no beam (F = 0; light reflected from the ground neglected, common
  practice). Used where the *hottest* spot matters: the surface temperature of a hot line
  (its 'Surface temperature' and the 'Max surface temperature' target).
* ``average``: the absorbed power averaged over the whole surface, the projected area the
  beam meets over the surface area. Used where the heat *through* the whole surface matters:
  the heat gain of a cold line.

The sun counts only where it makes a result worse: it never reduces a hot line's loss
(the design cases of a line hotter than the air get none), and a cold surface is judged
against its dew point without it (:mod:`lagsheet.design.targets.condensation`).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import Note
from ..physics.balance import System, solve
from ..physics.candidates import Grid, per_line
from ..workbook import library
from ..workbook.display import show

# shape word -> (face, average, where the average comes from)
FACTORS = {
    # beam across the axis: projected width D over perimeter πD (closed form)
    "pipe": (1.0, 1 / math.pi, "horizontal cylinder: projected width over perimeter, 1/π (closed form)"),
    # a vertical cylinder meets the beam at elevation β with D·H·cos β over πD·H: at most 1/π (sun low)
    "riser": (1.0, 1 / math.pi, "vertical cylinder: D·H·cos β over πD·H, at most 1/π (closed form, sun low)"),
    "vessel": (1.0, 1 / math.pi, "vertical cylinder: D·H·cos β over πD·H, at most 1/π (closed form, sun low)"),
    # projected disc πr² over the sphere's 4πr² (closed form)
    "sphere": (1.0, 0.25, "sphere: projected disc over surface, 1/4 (closed form)"),
    # a flat surface facing the beam squarely takes all of it (cos 0 = 1): the upper bound
    "top": (1.0, 1.0, "horizontal surface facing up, sun overhead: 1 (closed form, upper bound)"),
    "wall": (1.0, 1.0, "vertical surface facing the sun squarely: 1 (upper bound, common practice)"),
    "underside": (0.0, 0.0, "horizontal surface facing down sees no beam: 0 (common practice)"),
}


def absorbed(words, alpha, solar, average: bool) -> np.ndarray:
    """α·G·F per case: ``words`` the shape word, ``alpha`` the absorptance, ``solar`` G [W/m²];
    the averaged factor where ``average``, else the sun-facing one. 0 where anything is unknown."""
    f = np.array([FACTORS.get(w, (0.0, 0.0, ""))[1 if average else 0] for w in words], dtype=float)
    out = np.asarray(alpha, dtype=float) * np.asarray(solar, dtype=float) * f
    return np.where(np.isfinite(out) & (out > 0), out, 0.0)


def design(words, alpha, solar, t_operating, t_air) -> np.ndarray:
    """The design cases' sun: averaged over the surface on lines colder than the air (a gain),
    none on the others (it would reduce their loss)."""
    cold = np.asarray(t_operating, dtype=float) < np.asarray(t_air, dtype=float)
    return np.where(cold, absorbed(words, alpha, solar, average=True), 0.0)


def grids(ctx, words: np.ndarray, alpha: np.ndarray, touch_still: bool) -> dict[str, RoleGrid]:
    """The surface of every case and candidate in the roles other than design, each solved
    (with the design grid, on demand) only for the cases where it differs from the design
    cases: 'shade' (no sun: condensation), 'sun' (full sun on the sun-facing side at the named
    wind) and 'still' (full sun, no wind) for the lines that give a 'Max surface temperature';
    :meth:`~lagsheet.design.targets.Context.ts` gives 'touch', the worst of design, sun and still."""
    cases, at = ctx.cases, ctx.case_line
    solar = np.array([c.solar for c in ctx.case_cond], dtype=float)
    design_abs = np.zeros(len(at)) if cases.absorbed is None else cases.absorbed
    full = absorbed(words[at], alpha[at], solar, average=False)
    limit = ctx.t.get("max_surface_temperature")
    touched = np.isfinite(limit)[at] & ctx.ok[at] if limit is not None else np.zeros(len(at), bool)
    below = np.where(np.isfinite(limit), limit, np.inf)[at] if limit is not None else None
    out = {"shade": RoleGrid(ctx, design_abs > 0, None, absorbed=np.zeros(len(at))),
           "sun": RoleGrid(ctx, touched & (full != design_abs), below, absorbed=full)}
    if touch_still:
        out["still"] = RoleGrid(ctx, touched & ((cases.wind > 0) | (full != design_abs)), below, absorbed=full,
                                wind=np.zeros(len(at)))
    return out


class RoleGrid:
    """The design grid's surface temperatures with the cases ``rows`` solved again with the case
    fields ``replace`` (per case) in place of theirs, on demand: :meth:`ensure` solves a pair
    once the design grid has it. With ``below`` (per case, a surface limit) a candidate already
    over it at the design case is not solved again: more sun and less wind only warm a surface
    (Nu of free and forced combined >= Nu free alone), so it is over it here too, and keeps
    the design value."""

    def __init__(self, ctx, rows: np.ndarray, below: np.ndarray | None, **replace):
        self.design, self.below = ctx.c, below
        self.rows = np.flatnonzero(rows)
        self.grid = None
        if self.rows.size:
            base = per_line(ctx.cases, self.rows, **{k: np.asarray(v)[self.rows] for k, v in replace.items()})
            self.grid = Grid(base, ctx.cand, ctx.cases.material[self.rows], ctx.table,
                             rows=ctx.case_line[self.rows], keep=("t_surface", "converged"))

    def ensure(self, want: np.ndarray) -> int:
        if self.grid is None:
            return 0
        w = want[self.rows] & self.design.solved[self.rows]
        if self.below is not None:
            w &= self.design.t_surface[self.rows] <= self.below[self.rows][:, None]
        return self.grid.ensure(w)

    @property
    def t_surface(self) -> np.ndarray:
        out = self.design.t_surface.copy()
        if self.grid is not None:
            g = self.grid
            out[self.rows] = np.where(g.solved, np.where(g.converged, g.t_surface, np.nan), out[self.rows])
        return out


def reported(first: System, t_surface: np.ndarray, words, alpha, solar, table) -> np.ndarray:
    """The reported surface temperature of the chosen systems (``first``, solved to
    ``t_surface``, at the first named condition, ``solar`` its G): on the sun-facing side of a
    line not colder than the air (full sun), in the shade on a colder one (as its dew point is
    judged); solved again where that differs from the design case."""
    cold = first.t_operating < first.t_air
    want = np.where(cold, 0.0, absorbed(words, alpha, solar, average=False))
    have = np.zeros(len(want)) if first.absorbed is None else first.absorbed
    rows = np.flatnonzero(want != have)
    if rows.size == 0:
        return t_surface
    out = t_surface.copy()
    out[rows] = solve(per_line(first, rows, absorbed=want[rows]), table).t_surface
    return out


def bare(lines, first: System) -> np.ndarray:
    """The bare comparison's sun: the design cases' rule with bare steel's absorptance (a line
    left bare on purpose: its own)."""
    steel = library.finishes()["bare steel"].absorptance
    alpha = [L.absorptance if L.fixed and not sum(map(sum, L.candidates)) else steel for L in lines]
    return design([L.word for L in lines], alpha, [L.conditions[0].solar if L.conditions else 0.0 for L in lines],
                  first.t_operating, first.t_air)


def notes(ctx, ch, res) -> None:
    """Words on the lines the sun or the still-air touch check changed: where the surface limit
    governs, how hot the surface gets in still air and how much the sun raises it (and what
    would have done without them); on a cold line in the sun, the gain it adds."""
    limit = ctx.t.get("max_surface_temperature")
    lines = np.flatnonzero(ctx.ok & (ch.chosen >= 0))
    touch = np.zeros(ctx.n, dtype=bool)
    if limit is not None:
        touch[lines] = np.isfinite(limit[lines]) & (ch.governing[lines] == "surface temperature")
        first = _would_do(ctx, ch, touch, limit)
    for i in lines:
        if touch[i]:
            _touch_note(ctx, ch, res, int(i), float(limit[i]), int(first[i]))
        k = ctx.starts[i]
        if ctx.cases.absorbed is not None and ctx.cases.absorbed[k] > 0:
            _note(ctx, res, int(i), "sun-gain", f"the sun adds {show(ctx.cases.absorbed[k], 'per_area', ctx.us)} "
                  f"(α {ctx.lines[i].absorptance:g} × {ctx.case_cond[k].solar:g} W/m², averaged over the "
                  "surface) to the heat gain; the surface and the dew point are judged in the shade")


def _plain(ctx, limit: np.ndarray, col: np.ndarray) -> np.ndarray:
    """Per line: does its candidate ``col`` (per line) meet the surface limit at the named wind in
    the shade (the design cases), valid at every case?"""
    at = np.arange(len(ctx.case_line))
    j, c = col[ctx.case_line], ctx.c
    ok = (c.t_surface[at, j] <= limit[ctx.case_line] + 1e-9) & c.converged[at, j] & c.in_range[at, j]
    return np.logical_and.reduceat(ok, ctx.starts) & np.isfinite(ctx.total[np.arange(ctx.n), col])


def _would_do(ctx, ch, touch: np.ndarray, limit: np.ndarray) -> np.ndarray:
    """Per line of ``touch``: the thinnest candidate that meets the surface limit without the sun
    and still air (-1: none). Lines the search bisected (their thicknesses solved in part)
    are bisected again below the chosen one, which meets it (the surface falls as the
    insulation thickens); the others (scanned whole, or no system met) read every candidate."""
    p = np.maximum(ch.chosen, 0)
    partly = touch & ~ctx.all_cases(ctx.c.solved | ~ctx.c.exists).all(axis=1) & _plain(ctx, limit, p)
    ctx.ensure(np.isfinite(ctx.total) & (touch & ~partly)[:, None])
    lo, hi = np.full(ctx.n, -1), p.copy()
    while (act := partly & (hi - lo > 1)).any():
        mid = (lo + hi) // 2
        want = np.zeros(ctx.total.shape, dtype=bool)
        want[act, mid[act]] = True
        ctx.ensure(want)
        met = _plain(ctx, limit, np.maximum(mid, 0))
        hi, lo = np.where(act & met, mid, hi), np.where(act & ~met, mid, lo)
    first = np.full(ctx.n, -1)
    for i in np.flatnonzero(touch & ~partly):
        cases = ctx.cases_of(i)
        c = ctx.c
        valid = np.isfinite(ctx.total[i]) & (c.converged[cases] & c.in_range[cases]).all(axis=0)
        plain = (c.t_surface[cases] <= limit[i] + 1e-9).all(axis=0) & valid
        first[i] = int(np.argmax(plain)) if plain.any() else -1
    return np.where(partly, hi, first)


def _touch_note(ctx, ch, res, i: int, limit: float, first: int) -> None:
    p, cases = int(ch.chosen[i]), ctx.cases_of(i)
    touch = ctx.ts("touch")
    k = max(cases, key=lambda k: touch[k, p])
    design, sunny = ctx.c.t_surface[k, p], ctx.ts("sun")[k, p]
    still = ctx.ts("still")[k, p] if "still" in ctx.surface else -np.inf
    if first == p or not (sunny > design + 1e-6 or still > design + 1e-6):
        return  # neither the sun nor still air changed the choice
    us, c = ctx.us, ctx.case_cond[k]
    words = []
    if still >= sunny and still > design + 1e-6:
        words.append(f"in still air{' and full sun' if sunny > design + 1e-6 else ''} the surface reaches "
                     f"{show(still, 'temperature', us)} (touch check in still air)")
    if sunny > design + 1e-6:
        words.append(f"the sun raises the sun-facing surface by {show(sunny - design, 'difference', us)}, to "
                     f"{show(sunny, 'temperature', us)}, at {c.wind:g} m/s wind")
    without = show(float(ctx.total[i, first]), "thickness", us) if first >= 0 else "no sold thickness"
    _note(ctx, res, i, "surface-governs", f"'Max surface temperature' governs{ctx.at(i, k)}: " + "; ".join(words)
          + f"; judged at the condition's wind in the shade, {without} would do")


def _note(ctx, res, i: int, code: str, message: str) -> None:
    res.notes[i].append(Note("info", code, message, ctx.t.sheet, ctx.t.cell(i, "tag")))
