"""The thickness search: every candidate thickness of every line solved in one call.

A line's candidates are the total thicknesses on sale for its material (a padded
matrix, NaN where a line has fewer). The engine solves all (line, candidate) pairs as
one flat :class:`~lagsheet.physics.balance.System` and returns matrices; choosing
among them is the job of :mod:`lagsheet.spec`.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from .balance import Solution, System, solve
from .layers import CYLINDER, SPHERE, MaterialTable


@dataclass(frozen=True)
class Candidates:
    """Results per line (rows) and candidate (columns); NaN where no candidate."""

    thickness: np.ndarray  # [m]
    q: np.ndarray  # outer heat flux [W/m²]
    t_surface: np.ndarray  # [K]
    heat_rate: np.ndarray  # per unit length (cylinder) [W/m], per area (flat) [W/m²], whole (sphere) [W]
    r_outer: np.ndarray  # [m]
    in_range: np.ndarray  # every layer's mean temperature within its material's points
    converged: np.ndarray


def heat_rate(geometry, q, r_outer):
    """Heat rate from the outer flux: ×2πr per length (cylinder), ×4πr² (sphere), ×1 (flat)."""
    return np.select([geometry == CYLINDER, geometry == SPHERE],
                     [q * 2 * np.pi * r_outer, q * 4 * np.pi * r_outer**2], q)


def expand(base: System, thickness: np.ndarray, material: np.ndarray) -> tuple[System, np.ndarray]:
    """One flat System of every (line, candidate) pair with a finite thickness.

    ``base`` gives the per-line values (its own layers ignored); ``thickness`` is
    (n, m) total thicknesses, built as one layer of ``material`` (n,).
    Returns the system and the flat indices of the pairs.
    """
    n, m = thickness.shape
    pick = np.flatnonzero(np.isfinite(thickness).ravel())
    line = pick // m
    per_line = {f.name: getattr(base, f.name) for f in fields(base)
                if f.name not in ("thickness", "material")}
    s = System(**{k: v[line] for k, v in per_line.items()},
               thickness=thickness.ravel()[pick][:, None],
               material=np.asarray(material)[line][:, None])
    return s, pick


def evaluate(base: System, thickness: np.ndarray, material: np.ndarray,
             table: MaterialTable) -> Candidates:
    """Solve every candidate of every line at once."""
    n, m = thickness.shape
    s, pick = expand(base, thickness, material)
    sol: Solution = solve(s, table)

    def mat(values, fill=np.nan):
        out = np.full(n * m, fill, dtype=np.asarray(values).dtype)
        out[pick] = values
        return out.reshape(n, m)

    faces = sol.faces
    in_range = np.ones(len(pick), dtype=bool)
    for j in range(s.thickness.shape[1]):
        layer = s.thickness[:, j] > 0
        ok = table.mean_in_range(s.material[:, j], faces[:, j], faces[:, j + 1])
        in_range &= ~layer | ok
    return Candidates(
        thickness=thickness,
        q=mat(sol.q),
        t_surface=mat(sol.t_surface),
        heat_rate=mat(heat_rate(s.geometry, sol.q, sol.r_outer)),
        r_outer=mat(sol.r_outer),
        in_range=mat(in_range, False),
        converged=mat(sol.converged, False),
    )
