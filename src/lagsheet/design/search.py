"""Which candidates the engine solves: a search that solves few, or the full scan.

The full scan solves every sold thickness of every line at every named condition. The
search solves, per line, its thinnest and thickest candidates, then bisects each target
it gives over the line's candidates (sorted by thickness), all lines at once: about
log2(candidates) more solves per target instead of every candidate. A line is searched
only when that gives what the full scan gives:

- one material (two materials' candidates run by total thickness, not by either layer),
  candidates strictly thicker one after another, not 'Economic' (every candidate is priced);
- both ends solved and valid (converged, each layer's mean temperature within its
  material's points): the mean temperature moves one way with thickness, so every
  candidate between them is valid too;
- every target it gives monotone on it (:meth:`~lagsheet.design.targets.Target.monotone_lines`:
  a thicker system never does worse; process targets never, 'Max heat loss' beyond the
  critical radius).

Any other line is scanned whole, and so is a searched line one of whose solved candidates
turns out invalid. The selection then reads the grid as it reads a full one: a candidate
not solved counts as not valid, and every solved one before a target's first met fails
it, so the first feasible, each target's own thinnest and every value read at the chosen
or the thickest candidate are those of the full scan (tests/test_search.py runs both).
"""

from __future__ import annotations

import numpy as np

from . import targets
from .targets import ECONOMIC, Context

FULL_SCAN = False  # True: solve every candidate of every line (the reference the search is checked against)


def solve_needed(ctx: Context, full_scan: bool | None = None) -> None:
    """Solve the candidates the selection reads (every one with ``full_scan``, default
    :data:`FULL_SCAN`), then set ``ctx.valid``."""
    exists = np.isfinite(ctx.total)
    if FULL_SCAN if full_scan is None else full_scan:
        ctx.ensure(exists)
        ctx.valid = _valid(ctx)
        return
    searched = _searchable(ctx)
    ctx.ensure(exists & ~searched[:, None])
    rows = np.arange(ctx.n)
    last = np.where(exists.any(axis=1), exists.shape[1] - 1 - np.argmax(exists[:, ::-1], axis=1), 0)
    ends = np.stack([np.zeros(ctx.n, dtype=int), last], axis=1)
    both = np.zeros(exists.shape, dtype=bool)
    both[rows[searched], 0] = both[rows[searched], last[searched]] = True
    ctx.ensure(both)
    valid = _valid(ctx)
    searched &= valid[rows, 0] & valid[rows, last]
    given = []
    for target in targets.TARGETS:  # read at the call: the registry may grow
        g = target.given(ctx)
        if g is not None and (g & searched).any():
            given.append((target, g & searched))
            searched &= ~g | target.monotone_lines(ctx, ends)
    ctx.ensure(exists & (_searchable(ctx) & ~searched)[:, None])
    _bisect(ctx, [(target, g & searched) for target, g in given], ends)
    # a solved candidate of a searched line that is not valid: not as assumed, scan it whole
    valid = _valid(ctx)
    odd = searched & (ctx.c.solved[ctx.starts] & ~valid).any(axis=1)
    if odd.any():
        ctx.ensure(exists & odd[:, None])
        valid = _valid(ctx)
    ctx.valid = valid


def _valid(ctx: Context) -> np.ndarray:
    c = ctx.c
    return np.isfinite(ctx.total) & ctx.all_cases(c.solved & c.converged & c.in_range)


def _searchable(ctx: Context) -> np.ndarray:
    """Lines a search may bisect, before anything is solved."""
    total = ctx.total
    step = np.diff(total, axis=1)
    rising = np.where(np.isfinite(step), step > 0, True).all(axis=1)
    one = np.array([len(L.materials) <= 1 for L in ctx.lines])
    return ctx.ok & one & rising & np.isfinite(total[:, 0]) & ~ECONOMIC.given(ctx)


def _meets(ctx: Context, target, given: np.ndarray) -> np.ndarray:
    return target.meets(ctx, given, target.measure(ctx, given))


def _bisect(ctx: Context, given: list[tuple], ends: np.ndarray) -> None:
    """Per target and line: solve the candidates that bracket its first met one, halving the
    bracket (thinnest not met, thickest met) until the two are neighbours."""
    rows = np.arange(ctx.n)
    state = {}
    for k, (target, g) in enumerate(given):
        if not g.any():
            continue
        meets = _meets(ctx, target, g)
        lo, hi = ends[:, 0].copy(), ends[:, 1].copy()
        state[k] = (g & ~meets[rows, lo] & meets[rows, hi], lo, hi)
    while True:
        want = np.zeros(ctx.total.shape, dtype=bool)
        mids = {}
        for k, (active, lo, hi) in state.items():
            act = active & (hi - lo > 1)
            mids[k] = (act, (lo + hi) // 2)
            want[rows[act], mids[k][1][act]] = True
        if not want.any():
            return
        ctx.ensure(want)
        for k, (act, mid) in mids.items():
            _, lo, hi = state[k]
            met = _meets(ctx, *given[k])[rows, mid]
            hi[act & met] = mid[act & met]
            lo[act & ~met] = mid[act & ~met]
