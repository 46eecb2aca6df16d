"""Heat given up by an outer surface to the air and the surroundings.

Convection is computed, not asked for: one function per shape family builds the
dimensionless groups from air properties at the film temperature and combines the
free and forced correlations; :data:`CONVECTION` dispatches by shape.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import correlations as cr
from .properties import air
from .radiation import h_radiation, q_radiation

G = 9.80665  # standard gravity [m/s²], exact by definition (3rd CGPM, 1901); tests/reference/test_constants.py

# Shape codes of the engine (the workbook's words map onto them in lagsheet.design.select).
PIPE, RISER, VESSEL, WALL, TOP, UNDERSIDE, SPHERE_SHAPE = 0, 1, 2, 3, 4, 5, 6


@dataclass(frozen=True)
class Convection:
    """Convective coefficient and the groups behind it, per line."""

    h: np.ndarray  # [W/(m²·K)]
    ra: np.ndarray  # Rayleigh number on the free-convection length
    re: np.ndarray  # Reynolds number on the forced-convection length
    pr: np.ndarray
    nu_free: np.ndarray
    nu_forced: np.ndarray
    nu: np.ndarray
    outside: np.ndarray  # True where a correlation is used outside its published range


def _groups(ts, ta, wind, length_free, length_forced):
    """Air at the film temperature, Ra on the free length and Re on the forced length."""
    tf = 0.5 * (ts + ta)
    a = air(tf)
    dt = np.abs(ts - ta)
    ra = G * a.beta * dt * length_free**3 / (a.nu * a.nu) * a.pr
    re = wind * length_forced / a.nu
    return a, ra, re


def _horizontal_cylinder(ts, ta, wind, d, height, flow):
    a, ra, re = _groups(ts, ta, wind, d, d)
    nu_n = cr.nu_horizontal_cylinder_churchill_chu(ra, a.pr)
    nu_f = cr.nu_cylinder_churchill_bernstein(re, a.pr)
    nu = cr.nu_combined_churchill_usagi(nu_f, nu_n)
    outside = cr.outside_validity("Churchill-Chu horizontal cylinder", Ra=ra)
    outside |= (re > 0) & cr.outside_validity("Churchill-Bernstein cylinder in cross-flow", RePr=re * a.pr)
    return Convection(nu * a.k / d, ra, re, a.pr, nu_n, nu_f, nu, outside)


def _vertical_cylinder(ts, ta, wind, d, height, flow):
    a, ra, re = _groups(ts, ta, wind, height, d)
    nu_n_l = cr.nu_vertical_plate_churchill_chu(ra, a.pr)  # on the height
    nu_f = cr.nu_cylinder_churchill_bernstein(re, a.pr)  # wind across the cylinder, on D
    # both on the diameter before combining
    nu_n = nu_n_l * d / height
    nu = cr.nu_combined_churchill_usagi(nu_f, nu_n)
    gr = ra / a.pr
    thin = d / height < 35.0 / np.maximum(gr, 1e-30) ** 0.25  # plate result not valid for a thin cylinder
    outside = thin | cr.outside_validity("Churchill-Chu vertical plate", Ra=ra)
    outside |= (re > 0) & cr.outside_validity("Churchill-Bernstein cylinder in cross-flow", RePr=re * a.pr)
    return Convection(nu * a.k / d, ra, re, a.pr, nu_n, nu_f, nu, outside)


def _wall(ts, ta, wind, d, height, flow):
    a, ra, re = _groups(ts, ta, wind, height, flow)
    nu_n_h = cr.nu_vertical_plate_churchill_chu(ra, a.pr)  # on the height
    nu_f_l = cr.nu_flat_plate_parallel(re, a.pr)  # wind along the wall, on its width
    nu_n = nu_n_h * flow / height  # both on the flow length before combining
    nu = cr.nu_combined_churchill_usagi(nu_f_l, nu_n)
    outside = cr.outside_validity("Churchill-Chu vertical plate", Ra=ra)
    outside |= (re > 0) & cr.outside_validity("flat plate in parallel flow", Re=re, Pr=a.pr)
    return Convection(nu * a.k / flow, ra, re, a.pr, nu_n, nu_f_l, nu, outside)


def _horizontal_plate(facing_up):
    def fn(ts, ta, wind, d, length, flow):
        a, ra, re = _groups(ts, ta, wind, length, flow)
        hot = ts >= ta
        assisted = hot == facing_up  # hot facing up or cold facing down
        nu_n_l = cr.nu_horizontal_plate_mcadams(ra, assisted)  # on L = A/P
        nu_f = cr.nu_flat_plate_parallel(re, a.pr)  # on the flow length
        nu_n = nu_n_l * flow / length
        nu = cr.nu_combined_churchill_usagi(nu_f, nu_n)
        outside = np.where(assisted,
                           cr.outside_validity("McAdams horizontal plate, buoyancy-assisted", Ra=ra),
                           cr.outside_validity("McAdams horizontal plate, buoyancy-opposed", Ra=ra))
        outside |= (re > 0) & cr.outside_validity("flat plate in parallel flow", Re=re, Pr=a.pr)
        return Convection(nu * a.k / flow, ra, re, a.pr, nu_n, nu_f, nu, outside)

    return fn


def _sphere(ts, ta, wind, d, height, flow):
    a, ra, _ = _groups(ts, ta, wind, d, d)
    nu_n = cr.nu_sphere_churchill(ra, a.pr)
    free = air(ta)  # Whitaker: properties at the free stream, viscosity ratio to the surface
    re = wind * d / free.nu
    mu_ratio = free.mu / air(ts).mu
    # Whitaker's Nu is on free-stream conductivity: bring it to the film basis before combining
    nu_f = cr.nu_sphere_whitaker(re, free.pr, mu_ratio) * free.k / a.k
    nu = cr.nu_combined_churchill_usagi(nu_f, nu_n)
    outside = cr.outside_validity("Churchill sphere", Ra=ra)
    outside |= (re > 0) & cr.outside_validity("Whitaker sphere", Re=re, Pr=free.pr, mu_ratio=mu_ratio)
    return Convection(nu * a.k / d, ra, re, a.pr, nu_n, nu_f, nu, outside)


# shape code -> convection function(ts, ta, wind, outer diameter, free length, flow length)
CONVECTION = {
    PIPE: _horizontal_cylinder,
    RISER: _vertical_cylinder,
    VESSEL: _vertical_cylinder,
    WALL: _wall,
    TOP: _horizontal_plate(facing_up=True),
    UNDERSIDE: _horizontal_plate(facing_up=False),
    SPHERE_SHAPE: _sphere,
}

CORRELATION_NAMES = {
    PIPE: ("Churchill-Chu horizontal cylinder", "Churchill-Bernstein cylinder in cross-flow"),
    RISER: ("Churchill-Chu vertical plate (height)", "Churchill-Bernstein cylinder in cross-flow"),
    VESSEL: ("Churchill-Chu vertical plate (height)", "Churchill-Bernstein cylinder in cross-flow"),
    WALL: ("Churchill-Chu vertical plate (height)", "flat plate in parallel flow (width)"),
    TOP: ("McAdams horizontal plate (L = A/P)", "flat plate in parallel flow"),
    UNDERSIDE: ("McAdams horizontal plate (L = A/P)", "flat plate in parallel flow"),
    SPHERE_SHAPE: ("Churchill sphere", "Whitaker sphere"),
}


def convection(shape, ts, ta, wind, d, height, flow=None) -> Convection:
    """Convection for every line, each by the correlations of its shape.

    ``d`` outer diameter (cylinders, spheres); ``height`` the free-convection length
    (height of vertical shapes, A/P of horizontal plates); ``flow`` the length along the
    wind for flat shapes.
    """
    flow = np.ones_like(np.asarray(ts, dtype=float)) if flow is None else flow
    shape = np.asarray(shape)
    n = shape.shape[0]
    fields = {f: np.zeros(n) for f in ("h", "ra", "re", "pr", "nu_free", "nu_forced", "nu")}
    outside = np.zeros(n, dtype=bool)
    for code, fn in CONVECTION.items():  # over shapes (a few), never over lines
        sel = shape == code
        if not sel.any():
            continue
        c = fn(ts[sel], ta[sel], wind[sel], d[sel], height[sel], flow[sel])
        for f in fields:
            fields[f][sel] = getattr(c, f)
        outside[sel] = c.outside
    return Convection(outside=outside, **fields)


def surface_flux(shape, ts, ta, tsur, wind, emissivity, d, height, flow=None):
    """Heat flux [W/m²] leaving the surface at ``ts``: convection plus radiation."""
    c = convection(shape, ts, ta, wind, d, height, flow)
    return c.h * (ts - ta) + q_radiation(emissivity, ts, tsur), c


def linearised_h(shape, ts, ta, tsur, wind, emissivity, d, height, flow=None):
    """h_conv + h_rad at the surface [W/(m²·K)] (for the critical radius)."""
    c = convection(shape, ts, ta, wind, d, height, flow)
    return c.h + h_radiation(emissivity, ts, tsur)
