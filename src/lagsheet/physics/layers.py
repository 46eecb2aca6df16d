r"""Conduction through insulation layers whose conductivity varies with temperature.

Each material's conductivity is a piecewise-linear curve k(T) through its points
(mean temperature, apparent conductivity). Following ASTM C680, the heat rate through a
layer is taken from the integral of k over its face temperatures, written with the
Kirchhoff potential :math:`\Phi(T) = \int_{T_0}^{T} k\,dT`:

- flat:     q″ = (Φ(T₁) − Φ(T₂)) / L
- cylinder: q′ = 2π (Φ(T₁) − Φ(T₂)) / ln(r₂/r₁)
- sphere:   Q  = 4π r₁ r₂ (Φ(T₁) − Φ(T₂)) / (r₂ − r₁)

Written per square metre of the *outer* surface with flux q, every case reads
Φ(T_in) − Φ(T_out) = q·g with a geometric length g (:func:`geometric_lengths`), so that
the face temperatures follow from the inner temperature by inverting Φ, exactly, layer
by layer. Φ of a piecewise-linear k is piecewise quadratic, inverted in closed form.

Outside its points a curve is extended linearly from its end segments, bounded to
between a quarter and four times the end value, so that the solver can probe any
temperature; a layer whose *mean* temperature falls outside the points is reported
by the caller (:meth:`MaterialTable.mean_in_range`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

CYLINDER, FLAT, SPHERE = 0, 1, 2
_T_LOW, _T_HIGH = 1.0, 4000.0  # K, ends of the extended curves


@dataclass(frozen=True)
class MaterialTable:
    """Every material's k(T) in one padded table, so one call serves all lines.

    ``t`` [K] and ``k`` [W/(m·K)] are (materials × knots), padded at the high end by
    repeating the last knot; ``phi`` is Φ at each knot, from ``_T_LOW``.
    ``t_min``/``t_max`` are the first and last *given* points.
    """

    names: tuple[str, ...]
    t: np.ndarray
    k: np.ndarray
    phi: np.ndarray
    t_min: np.ndarray
    t_max: np.ndarray

    @classmethod
    def build(cls, curves: dict[str, tuple[np.ndarray, np.ndarray]]) -> MaterialTable:
        """``curves``: name -> (mean temperatures [K], conductivities [W/(m·K)])."""
        names = tuple(curves)
        rows_t, rows_k, tmin, tmax = [], [], [], []
        for name in names:
            t, k = (np.asarray(a, dtype=float) for a in curves[name])
            order = np.argsort(t)
            t, k = t[order], k[order]
            if len(t) == 0 or np.any(k <= 0) or np.any(np.diff(t) <= 0):
                raise ValueError(f"material {name!r}: need increasing temperatures and k > 0")
            if len(t) == 1:
                slope_lo = slope_hi = 0.0
            else:
                slope_lo = (k[1] - k[0]) / (t[1] - t[0])
                slope_hi = (k[-1] - k[-2]) / (t[-1] - t[-2])
            k_lo = np.clip(k[0] + slope_lo * (_T_LOW - t[0]), 0.25 * k[0], 4 * k[0])
            k_hi = np.clip(k[-1] + slope_hi * (_T_HIGH - t[-1]), 0.25 * k[-1], 4 * k[-1])
            te = np.concatenate(([min(_T_LOW, t[0] - 1)], t, [max(_T_HIGH, t[-1] + 1)]))
            ke = np.concatenate(([k_lo], k, [k_hi]))
            rows_t.append(te)
            rows_k.append(ke)
            tmin.append(t[0])
            tmax.append(t[-1])
        width = max(len(r) for r in rows_t)
        T = np.array([np.pad(r, (0, width - len(r)), mode="edge") for r in rows_t])
        K = np.array([np.pad(r, (0, width - len(r)), mode="edge") for r in rows_k])
        seg = 0.5 * (K[:, 1:] + K[:, :-1]) * np.diff(T, axis=1)
        phi = np.concatenate((np.zeros((len(names), 1)), np.cumsum(seg, axis=1)), axis=1)
        return cls(names, T, K, phi, np.array(tmin), np.array(tmax))

    def index(self, name: str) -> int:
        return self.names.index(name)

    def _segment(self, m, x, knots):
        """Index j of the segment [knots[m, j], knots[m, j+1]) holding x (per element)."""
        rows = knots[m]  # (..., width)
        j = np.sum(rows[..., 1:-1] <= x[..., None], axis=-1)
        return j

    def conductivity(self, m, t):
        """k [W/(m·K)] of materials ``m`` (int array) at temperatures ``t`` [K]."""
        m = np.asarray(m)
        t = np.clip(np.asarray(t, dtype=float), _T_LOW, _T_HIGH)
        j = self._segment(m, t, self.t)
        t0, t1 = self.t[m, j], self.t[m, j + 1]
        k0, k1 = self.k[m, j], self.k[m, j + 1]
        w = np.where(t1 > t0, (t - t0) / np.where(t1 > t0, t1 - t0, 1.0), 0.0)
        return k0 + w * (k1 - k0)

    def potential(self, m, t):
        """Φ(T) = ∫ k dT from the low end of the extended curve [W/m]."""
        m = np.asarray(m)
        t = np.clip(np.asarray(t, dtype=float), _T_LOW, _T_HIGH)
        j = self._segment(m, t, self.t)
        t0, k0, k1 = self.t[m, j], self.k[m, j], self.k[m, j + 1]
        dt_seg = self.t[m, j + 1] - t0
        slope = np.where(dt_seg > 0, (k1 - k0) / np.where(dt_seg > 0, dt_seg, 1.0), 0.0)
        d = t - t0
        return self.phi[m, j] + k0 * d + 0.5 * slope * d * d

    def temperature(self, m, phi):
        """Inverse of :meth:`potential`: the temperature [K] where Φ equals ``phi``."""
        m = np.asarray(m)
        phi = np.clip(np.asarray(phi, dtype=float), 0.0, self.phi[m, -1])
        j = np.minimum(self._segment(m, phi, self.phi), self.t.shape[1] - 2)
        t0, k0, k1 = self.t[m, j], self.k[m, j], self.k[m, j + 1]
        dt_seg = self.t[m, j + 1] - t0
        slope = np.where(dt_seg > 0, (k1 - k0) / np.where(dt_seg > 0, dt_seg, 1.0), 0.0)
        r = phi - self.phi[m, j]
        # k0 d + slope d²/2 = r, root in the numerically stable form
        d = 2.0 * r / (k0 + np.sqrt(np.maximum(k0 * k0 + 2.0 * slope * r, 0.0)))
        return t0 + d

    def mean_conductivity(self, m, t1, t2):
        """Integral-mean k between two face temperatures [W/(m·K)]."""
        t1 = np.asarray(t1, dtype=float)
        t2 = np.asarray(t2, dtype=float)
        dt = t1 - t2
        near = np.abs(dt) < 1e-9
        safe = np.where(near, 1.0, dt)
        k_int = (self.potential(m, t1) - self.potential(m, t2)) / safe
        return np.where(near, self.conductivity(m, t1), k_int)

    def mean_in_range(self, m, t1, t2):
        """True where the layer's mean temperature lies within the material's points."""
        tm = 0.5 * (np.asarray(t1) + np.asarray(t2))
        return (tm >= self.t_min[m] - 1e-9) & (tm <= self.t_max[m] + 1e-9)


def outer_radius(geometry, r_inner, thickness):
    """Radius of every face [m], inner bare surface first: shape (n, layers + 1)."""
    thickness = np.asarray(thickness, dtype=float)
    r0 = np.asarray(r_inner, dtype=float)[:, None]
    return np.concatenate((r0, r0 + np.cumsum(thickness, axis=1)), axis=1)


def geometric_lengths(geometry, faces):
    """g [m] per layer such that Φ(T_in) − Φ(T_out) = q_outer · g.

    ``faces`` are the face radii (cylinder, sphere) or positions (flat, starting at any
    value); ``geometry`` holds CYLINDER, FLAT or SPHERE per line.
    """
    geometry = np.asarray(geometry)[:, None]
    r1, r2 = faces[:, :-1], faces[:, 1:]
    ro = faces[:, -1:]
    with np.errstate(divide="ignore", invalid="ignore"):
        cyl = ro * np.log(r2 / r1)
        sph = ro * ro * (r2 - r1) / (r1 * r2)
    flat = r2 - r1
    g = np.select([geometry == CYLINDER, geometry == SPHERE], [cyl, sph], flat)
    return np.where(r2 > r1, g, 0.0)


def march(table: MaterialTable, materials, g, t_inner, q):
    """Face temperatures [K] from the inner face outwards for outer flux ``q`` [W/m²].

    ``materials`` and ``g`` are (n, layers); returns (n, layers + 1).
    """
    faces = [np.asarray(t_inner, dtype=float)]
    for j in range(g.shape[1]):  # over layers (a few), never over lines
        m = materials[:, j]
        phi_in = table.potential(m, faces[-1])
        t_out = table.temperature(m, phi_in - q * g[:, j])
        faces.append(np.where(g[:, j] > 0, t_out, faces[-1]))
    return np.stack(faces, axis=1)
