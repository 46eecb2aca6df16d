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
    With ``rows`` (per case, a row of ``thickness``) ``thickness`` is per line (lines × m ×
    slots), shared by a line's cases and not copied. ``keep`` names the solved fields held
    (every one by default; a grid read only for its surface keeps ``t_surface`` and
    ``converged``); :meth:`ensure` solves the pairs asked for that are not solved yet;
    nothing is solved twice. A search asks only for the pairs it reads; a full scan asks
    for every pair.
    """

    def __init__(self, base: System, thickness: np.ndarray, material: np.ndarray, table: MaterialTable,
                 rows: np.ndarray | None = None, keep: tuple[str, ...] = _SOLVED):
        self.rows = np.arange(thickness.shape[0]) if rows is None else np.asarray(rows)
        n, (_, m, k) = self.rows.size, thickness.shape
        self.base, self.candidates, self.material, self.table = base, thickness, np.asarray(material), table
        self.keep = keep
        self.exists = np.isfinite(thickness).all(axis=2)[self.rows]  # cases × m: a candidate to solve
        self.solved = np.zeros((n, m), dtype=bool)
        for name in keep:
            if name in ("in_range", "converged"):
                setattr(self, name, np.zeros((n, m), dtype=bool))
            else:
                setattr(self, name, np.full((n, m, k + 1) if name == "faces" else (n, m), np.nan))

    def thickness(self, case, cand) -> np.ndarray:
        """The layer thicknesses (…, slots) of the pairs (``case``, ``cand``) [m]."""
        return self.candidates[self.rows[case], cand]

    def ensure(self, want: np.ndarray) -> int:
        """Solve the pairs ``want`` (cases × m) not solved yet; returns how many were solved."""
        case, cand = np.nonzero(want & self.exists & ~self.solved)
        for a in range(0, case.size, CHUNK):
            self._solve(case[a:a + CHUNK], cand[a:a + CHUNK])
        self.solved[case, cand] = True
        return int(case.size)

    def _solve(self, case: np.ndarray, cand: np.ndarray) -> None:
        s = per_line(self.base, case, thickness=self.thickness(case, cand), material=self.material[case])
        sol = solve(s, self.table)
        got = {"q": sol.q, "t_surface": sol.t_surface, "faces": sol.faces, "r_outer": sol.r_outer,
               "converged": sol.converged}
        if "in_range" in self.keep:
            in_range = np.ones(case.size, dtype=bool)
            for j in range(s.thickness.shape[1]):  # over layers (a few), never over lines
                ok = self.table.mean_in_range(s.material[:, j], sol.faces[:, j], sol.faces[:, j + 1])
                in_range &= ~(s.thickness[:, j] > 0) | ok
            got["in_range"] = in_range
        if "heat_rate" in self.keep:
            got["heat_rate"] = heat_rate(s.geometry, sol.q, sol.r_outer)
        for name in self.keep:
            getattr(self, name)[case, cand] = got[name]


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
