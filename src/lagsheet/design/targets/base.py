"""The common ground of every target: the context it is judged on, its judgement, the
base class with the members every target has, and the helpers several share."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from ...physics.balance import System
from ...physics.layers import MaterialTable
from ...workbook.inputs import Condition
from ...workbook.tables import Table

if TYPE_CHECKING:  # lines resolves each line's inputs and asks every target to check its own
    from ..lines import Cells, Line


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
    c: Any  # the engine's results (cases × candidates), a Grid: NaN where not solved
    dew: np.ndarray  # per case: dew point [K], -inf in dry air
    margin: float  # the 'Condensation margin' setting [K]
    valid: np.ndarray | None = None  # lines × candidates: solved, converged, conductivity in range, every case
    picked: np.ndarray | None = None  # lines × slots: the chosen systems, for late targets
    parts: dict[int, list[int]] = field(default_factory=dict)  # vessel -> its linked lines
    # the surface in other roles, solved with ``c`` (:func:`lagsheet.design.sun.grids`): 'shade'
    # (no sun), 'sun' (full sun at the named wind), 'still' (full sun, no wind); 'touch' the worst
    surface: dict[str, Any] = field(default_factory=dict)
    memo: dict = field(default_factory=dict)  # per-line columns a target reads often, computed once
    more: list = field(default_factory=list)  # further grids (cases × candidates) solved with ``c``

    def ensure(self, cols: np.ndarray) -> int:
        """Solve the candidates ``cols`` (lines × candidates) at every case of their lines, in
        every grid (``c`` and :attr:`more`); returns the pairs solved."""
        want = cols[self.case_line]
        solved = sum(g.ensure(want) for g in (self.c, *self.more))
        if solved:
            self.memo.pop("ts", None)
        return solved

    @property
    def n(self) -> int:
        return len(self.lines)

    @property
    def slots(self) -> int:
        return self.cand.shape[2]

    def ts(self, role: str) -> np.ndarray:
        """The surface temperature of every case and candidate in ``role`` (the design cases' when
        that role was not solved: it would be the same); 'touch' the hottest of design, sun and still.
        Kept until the grids solve more (notes read it once per line)."""
        kept = self.memo.setdefault("ts", {})
        if role not in kept:
            kept[role] = self._ts(role)
        return kept[role]

    def _ts(self, role: str) -> np.ndarray:
        if role == "touch":
            out = self.c.t_surface
            for r in ("sun", "still"):
                if r in self.surface:
                    out = np.fmax(out, self.surface[r].t_surface)
            return out
        return self.surface[role].t_surface if role in self.surface else self.c.t_surface

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

    def case_meets(self, ctx: Context, measure: np.ndarray) -> np.ndarray:
        """Per case and candidate: is the target met at that case? (:meth:`meets` at every case.)"""
        raise NotImplementedError

    def monotone_lines(self, ctx: Context, ends: np.ndarray) -> np.ndarray:
        """Per line: may a search bisect this target over the line's sorted candidates? ``ends``
        (lines × 2) are the thinnest and thickest candidates' columns, solved at every case.

        A ``monotone`` target's measure moves one way with thickness at each case (the surface
        temperature heads from the operating temperature towards the air's and the
        surroundings' at every thickness); where it gets worse from the thinnest to the thickest
        (a line colder than the air against a surface limit, warmer than the air against
        condensation) the case must be met at the thickest, and so at every candidate."""
        if not self.monotone:
            return np.zeros(ctx.n, dtype=bool)
        measure = self.measure(ctx, self.given(ctx))
        if measure is None:  # judged on the thickness alone
            return np.ones(ctx.n, dtype=bool)
        at, lo, hi = np.arange(len(ctx.case_line)), ends[ctx.case_line, 0], ends[ctx.case_line, 1]
        better = measure[at, hi] <= measure[at, lo]
        return ctx.all_cases(better | self.case_meets(ctx, measure)[at, hi])

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


def worst_at(ctx: Context, worst: np.ndarray, case_pick: np.ndarray) -> np.ndarray:
    """Per line: the largest of ``worst`` over its cases at the chosen candidate (NaN as +inf)."""
    at = np.arange(len(ctx.case_line))
    return np.maximum.reduceat(np.nan_to_num(worst[at, case_pick], nan=np.inf), ctx.starts)


def finite(given: np.ndarray, m: np.ndarray, kind) -> dict:
    """Line -> (margin, display kind) where the line gives the target and its margin is a number."""
    kinds = kind if isinstance(kind, list) else [kind] * len(m)
    return {i: (float(m[i]), kinds[i]) for i in range(len(m)) if given[i] and np.isfinite(m[i])}


class ProcessTarget(Target):
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
