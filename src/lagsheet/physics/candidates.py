"""The thickness search: every candidate system of every line solved in one call.

A candidate is a set of layer thicknesses (one per material slot: inner, outer); a
line's candidates form a padded array (lines × candidates × slots), NaN where a line
has fewer. The engine solves all (line, candidate) pairs as one flat
:class:`~lagsheet.physics.balance.System` and returns matrices; choosing among them is
the job of :mod:`lagsheet.design.select`.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from .balance import System, solve
from .layers import CYLINDER, FLAT, SPHERE, MaterialTable


@dataclass(frozen=True)
class Candidates:
    """Results per line (rows) and candidate (columns); NaN where no candidate."""

    thickness: np.ndarray  # (n, m, slots) [m]
    q: np.ndarray  # outer heat flux [W/m²]
    t_surface: np.ndarray  # [K]
    faces: np.ndarray  # (n, m, slots + 1) face temperatures [K], inner first
    heat_rate: np.ndarray  # per length (cylinder) [W/m], per area (flat) [W/m²], whole (sphere) [W]
    r_outer: np.ndarray  # [m]
    in_range: np.ndarray  # every layer's mean temperature within its material's points
    converged: np.ndarray


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


CHUNK = 100_000  # (line, candidate) pairs solved together: bounds the solver's working memory


def evaluate(base: System, thickness: np.ndarray, material: np.ndarray,
             table: MaterialTable) -> Candidates:
    """Solve every candidate of every line, in chunks of about :data:`CHUNK` pairs.

    ``base`` gives the per-line values (its own layers ignored); ``thickness`` is
    (n, m, slots) and ``material`` (n, slots) the material of each slot.
    """
    n, m, k = thickness.shape
    step = max(1, CHUNK // max(m, 1))
    if n <= step:
        return _evaluate(base, thickness, material, table)
    parts = [_evaluate(per_line(base, np.arange(a, min(a + step, n))), thickness[a:a + step],
                       np.asarray(material)[a:a + step], table) for a in range(0, n, step)]
    return Candidates(**{f.name: np.concatenate([getattr(p, f.name) for p in parts])
                         for f in fields(Candidates)})


def _evaluate(base: System, thickness: np.ndarray, material: np.ndarray,
              table: MaterialTable) -> Candidates:
    n, m, k = thickness.shape
    finite = np.isfinite(thickness).all(axis=2).ravel()
    pick = np.flatnonzero(finite)
    line = pick // m
    s = per_line(base, line, thickness=thickness.reshape(n * m, k)[pick],
                 material=np.asarray(material)[line])
    sol = solve(s, table)

    def mat(values, fill=np.nan):
        values = np.asarray(values)
        out = np.full((n * m,) + values.shape[1:], fill, dtype=values.dtype)
        out[pick] = values
        return out.reshape((n, m) + values.shape[1:])

    in_range = np.ones(len(pick), dtype=bool)
    for j in range(k):
        layer = s.thickness[:, j] > 0
        ok = table.mean_in_range(s.material[:, j], sol.faces[:, j], sol.faces[:, j + 1])
        in_range &= ~layer | ok
    return Candidates(
        thickness=thickness,
        q=mat(sol.q),
        t_surface=mat(sol.t_surface),
        faces=mat(sol.faces),
        heat_rate=mat(heat_rate(s.geometry, sol.q, sol.r_outer)),
        r_outer=mat(sol.r_outer),
        in_range=mat(in_range, False),
        converged=mat(sol.converged, False),
    )
