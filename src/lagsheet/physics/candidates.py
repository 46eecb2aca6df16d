"""The thickness search's grid: candidate systems of every line, solved on demand.

A candidate is a set of layer thicknesses (one per material slot: inner, outer); a
line's candidates form a padded array (lines × candidates × slots), NaN where a line
has fewer. The engine solves the (case, candidate) pairs asked for as one flat
:class:`~lagsheet.physics.balance.System` and fills matrices (:class:`Grid`); which
pairs to ask for, and choosing among them, is the job of :mod:`lagsheet.design`.
"""

from __future__ import annotations

from dataclasses import fields

import numpy as np

from .balance import System, solve
from .layers import CYLINDER, FLAT, SPHERE, MaterialTable


def heat_rate(geometry, q, r_outer):
    """Heat rate from the outer flux: ×2πr per length (cylinder), ×4πr² (sphere), ×1 (flat)."""
    return np.select([geometry == CYLINDER, geometry == SPHERE],
                     [q * 2 * np.pi * r_outer, q * 4 * np.pi * r_outer**2], q)


def whole_factor(geometry, lengths, areas):
    """Heat rate -> whole item: × length (cylinders), × area (flats), × 1 (spheres, already whole)."""
    return np.select([geometry == CYLINDER, geometry == FLAT], [lengths, areas], 1.0)


def per_line(system: System, rows: np.ndarray, **replace) -> System:
    """The lines ``rows`` of ``system`` (repeats allowed), with some fields replaced."""
    values = {}
    for f in fields(system):
        if f.name in replace:
            values[f.name] = replace[f.name]
        else:
            v = getattr(system, f.name)
            values[f.name] = None if v is None else v[rows]
    return System(**values)


CHUNK = 100_000  # (case, candidate) pairs solved together: bounds the solver's working memory

_SOLVED = ("q", "t_surface", "faces", "heat_rate", "r_outer", "in_range", "converged")


class Grid:
    """Candidates solved on demand: the same fields as :class:`Candidates` (cases ×
    candidates), NaN (``in_range``/``converged`` False) where a pair is not solved yet.

    ``base`` gives one system per case (its own layers ignored), ``thickness`` is
    (cases, m, slots), NaN past a case's own candidates, and ``material`` (cases, slots).
    :meth:`ensure` solves the pairs asked for that are not solved yet; nothing is solved
    twice. A search asks only for the pairs it reads; a full scan asks for every pair.
    """

    def __init__(self, base: System, thickness: np.ndarray, material: np.ndarray, table: MaterialTable):
        n, m, k = thickness.shape
        self.base, self.thickness, self.material, self.table = base, thickness, np.asarray(material), table
        self.exists = np.isfinite(thickness).all(axis=2)  # cases × m: a candidate to solve
        self.solved = np.zeros((n, m), dtype=bool)
        self.q = np.full((n, m), np.nan)
        self.t_surface = np.full((n, m), np.nan)
        self.faces = np.full((n, m, k + 1), np.nan)
        self.heat_rate = np.full((n, m), np.nan)
        self.r_outer = np.full((n, m), np.nan)
        self.in_range = np.zeros((n, m), dtype=bool)
        self.converged = np.zeros((n, m), dtype=bool)

    def ensure(self, want: np.ndarray) -> int:
        """Solve the pairs ``want`` (cases × m) not solved yet; returns how many were solved."""
        case, cand = np.nonzero(want & self.exists & ~self.solved)
        for a in range(0, case.size, CHUNK):
            self._solve(case[a:a + CHUNK], cand[a:a + CHUNK])
        self.solved[case, cand] = True
        return int(case.size)

    def _solve(self, case: np.ndarray, cand: np.ndarray) -> None:
        s = per_line(self.base, case, thickness=self.thickness[case, cand], material=self.material[case])
        sol = solve(s, self.table)
        in_range = np.ones(case.size, dtype=bool)
        for j in range(s.thickness.shape[1]):  # over layers (a few), never over lines
            ok = self.table.mean_in_range(s.material[:, j], sol.faces[:, j], sol.faces[:, j + 1])
            in_range &= ~(s.thickness[:, j] > 0) | ok
        self.q[case, cand] = sol.q
        self.t_surface[case, cand] = sol.t_surface
        self.faces[case, cand] = sol.faces
        self.heat_rate[case, cand] = heat_rate(s.geometry, sol.q, sol.r_outer)
        self.r_outer[case, cand] = sol.r_outer
        self.in_range[case, cand] = in_range
        self.converged[case, cand] = sol.converged


def evaluate(base: System, thickness: np.ndarray, material: np.ndarray,
             table: MaterialTable) -> Grid:
    """Solve every candidate of every line (a :class:`Grid` with every pair solved), in
    chunks of about :data:`CHUNK` pairs.

    ``base`` gives the per-line values (its own layers ignored); ``thickness`` is
    (n, m, slots) and ``material`` (n, slots) the material of each slot.
    """
    grid = Grid(base, thickness, material, table)
    grid.ensure(np.ones(grid.solved.shape, dtype=bool))
    return grid
