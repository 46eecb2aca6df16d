"""The outer-surface energy balance, solved for every line at once.

Conduction in through the layers plus the absorbed sunlight α·G equals convection plus
radiation out. The unknown is
the outer heat flux q [W/m²], scaled by q₀, the flux the outer surface would give up at
the operating temperature: x = q/q₀ lies in [0, 1] for hot and cold lines alike, and
the residual x − q_surf(T_s(x q₀))/q₀ rises monotonically from −1 to ≥ 0 across that
bracket (with sunlight q_surf is net of α·G, and q₀ too: the bracket still holds). Chandrupatla's
root finder (:mod:`.roots`, scipy's algorithm) solves all lines together, each started in a narrow bracket around a
guess from the layers in series (:func:`_bracket`: about 6 residual evaluations a line instead of
10 to 11 from [0, 1]); the lines whose narrow bracket misses the root search the whole of [0, 1].
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .layers import MaterialTable, geometric_lengths, march, outer_radius
from .radiation import h_radiation, q_radiation
from .roots import SIGN_ERROR, chandrupatla
from .surface import Convection, surface_flux

X_TOL = 1e-11  # on x = q/q0: closes the balance far below 1e-6 and Ts far below 0.01 K


@dataclass(frozen=True)
class System:
    """Lines to solve, SI, one element (or row of layers) per line.

    ``geometry`` CYLINDER/FLAT/SPHERE; ``shape`` the convection code
    (:mod:`lagsheet.physics.surface`); ``r_inner`` bare outer radius [m] (flat: any);
    ``height`` [m] the free-convection length (height of vertical shapes, A/P of
    horizontal plates); ``thickness`` and ``material`` are
    (n, layers), a zero thickness being no layer.
    """

    geometry: np.ndarray
    shape: np.ndarray
    t_operating: np.ndarray
    t_air: np.ndarray
    t_surroundings: np.ndarray
    wind: np.ndarray
    emissivity: np.ndarray
    r_inner: np.ndarray
    height: np.ndarray
    thickness: np.ndarray
    material: np.ndarray
    flow_length: np.ndarray | None = None  # [m] along the wind, flat shapes (None: 1 m)
    # a fixed combined surface coefficient [W/(m²·K)] in place of the correlations and radiation,
    # NaN where not fixed (None: nowhere). For audits that reproduce simplified hand methods.
    h_fixed: np.ndarray | None = None
    # absorbed solar irradiation α·G·F [W/m²] at the outer surface, one more gain in the balance
    # (None: none). The caller decides G's geometry factor F and where the sun may count.
    absorbed: np.ndarray | None = None


@dataclass(frozen=True)
class Solution:
    q: np.ndarray  # outer heat flux [W/m²], positive leaving
    faces: np.ndarray  # face temperatures [K], (n, layers + 1), inner first
    radii: np.ndarray  # face radii/positions [m], (n, layers + 1)
    convection: Convection
    h_radiation: np.ndarray  # linearised [W/(m²·K)]
    q_radiation: np.ndarray  # [W/m²]
    residual: np.ndarray  # (in − out)/max(|in|, |out|) at the surface
    converged: np.ndarray

    @property
    def t_surface(self) -> np.ndarray:
        return self.faces[:, -1]

    @property
    def r_outer(self) -> np.ndarray:
        return self.radii[:, -1]


def solve(s: System, table: MaterialTable) -> Solution:
    """Solve the surface balance of every line of ``s``, conductivities from ``table``.

    Degenerate inputs (overflowing magnitudes, NaN) give NaN results for their lines, which
    the caller reports; numpy's floating-point warnings are not raised for them.
    """
    with np.errstate(all="ignore"):
        return _solve(s, table)


BRACKET = (0.8, 1.25)  # around the guess of :func:`_bracket`; a bracket that misses falls back to [0, 1]


def _bracket(s: System, table: MaterialTable, g: np.ndarray, q0: np.ndarray, todo: np.ndarray):
    """A narrow bracket on x = q/q0 around a guess: the layers in series at k of the mean of the
    operating and air temperatures, with the surface coefficient h0 = q0/(T_op − T_air) the surface
    would have at the operating temperature, x ≈ 1/(1 + h0·Σ g/k). Only where to start looking: the
    root finder checks the bracket holds the root, and the caller searches all of [0, 1] where not."""
    t_op, dt = s.t_operating[todo], s.t_operating[todo] - s.t_air[todo]
    tm = t_op - 0.5 * dt
    resistance = sum(g[todo, j] / table.conductivity(s.material[todo, j], tm) for j in range(g.shape[1]))
    guess = 1.0 / (1.0 + q0[todo] / dt * resistance)
    guess = np.where(np.isfinite(guess) & (guess > 0), guess, 0.5)
    return np.clip(guess * BRACKET[0], 0.0, 1.0), np.clip(guess * BRACKET[1], 0.0, 1.0)


def _solve(s: System, table: MaterialTable) -> Solution:
    n = s.t_operating.shape[0]
    radii = outer_radius(s.geometry, s.r_inner, s.thickness)
    g = geometric_lengths(s.geometry, radii)
    d_out = 2.0 * radii[:, -1]
    flow = np.ones(n) if s.flow_length is None else s.flow_length
    fixed = np.full(n, np.nan) if s.h_fixed is None else np.asarray(s.h_fixed, dtype=float)
    sun = np.zeros(n) if s.absorbed is None else np.asarray(s.absorbed, dtype=float)

    def flux(rows, ts):
        """What conduction must bring to the surface: convection + radiation out − sun in."""
        q, c = surface_flux(s.shape[rows], ts, s.t_air[rows], s.t_surroundings[rows], s.wind[rows],
                            s.emissivity[rows], d_out[rows], s.height[rows], flow[rows])
        hf = fixed[rows]
        return np.where(np.isfinite(hf), hf * (ts - s.t_air[rows]), q) - sun[rows], c

    every = np.arange(n)
    q0, _ = flux(every, s.t_operating)
    insulated = g.sum(axis=1) > 0
    zero = np.abs(q0) < 1e-12
    x = np.where(insulated & ~zero, np.nan, 1.0)
    x = np.where(zero, 0.0, x)
    todo = np.flatnonzero(np.isnan(x))
    converged = np.ones(n, dtype=bool)
    if todo.size:
        def residual(xi, idx):
            idx = np.asarray(idx, dtype=np.intp)  # no copy when it is (scipy's find_root, put in by a test, hands floats)
            q = xi * q0[idx]
            ts = march(table, s.material[idx], g[idx], s.t_operating[idx], q)[:, -1]
            qs, _ = flux(idx, ts)
            return xi - qs / q0[idx]

        lo, hi = _bracket(s, table, g, q0, todo)
        x[todo], status = chandrupatla(residual, lo, hi, (todo,), xatol=X_TOL, maxiter=200)
        converged[todo] = status == 0
        again = todo[status == SIGN_ERROR]  # the guessed bracket missed the root: the whole of [0, 1]
        if again.size:
            x[again], status = chandrupatla(residual, np.zeros(again.size), np.ones(again.size), (again,),
                                            xatol=X_TOL, maxiter=200)
            converged[again] = status == 0
    q = x * q0
    faces = march(table, s.material, g, s.t_operating, q)
    ts = faces[:, -1]
    q_out, conv = flux(every, ts)
    scale = np.maximum(np.maximum(np.abs(q), np.abs(q_out)), 1e-300)
    return Solution(
        q=q, faces=faces, radii=radii, convection=conv,
        h_radiation=h_radiation(s.emissivity, ts, s.t_surroundings),
        q_radiation=q_radiation(s.emissivity, ts, s.t_surroundings),
        residual=(q - q_out) / scale, converged=converged,
    )

