"""Radiation between a surface and large surroundings (small body in a large enclosure)."""

from __future__ import annotations

import numpy as np

# Stefan-Boltzmann constant [W/(m²·K⁴)]: 2π⁵k⁴/(15h³c²) from the exact k, h and c of the 2019 SI
# (CODATA 2018 rounds it to 5.670374419e-8), as scipy.constants computes it. Written out rather than
# imported, as scipy's import costs 0.2 s of CPU at every start; tests/reference/test_constants.py
# holds it to scipy's value and to the formula.
SIGMA = 5.6703744191844314e-08


def q_radiation(emissivity, t_surface, t_surroundings):
    r"""Net radiative heat flux from a grey surface to large surroundings.

    .. math:: q = \varepsilon \sigma (T_s^4 - T_{sur}^4)

    Parameters
    ----------
    emissivity : total hemispherical emissivity of the surface [-]
    t_surface, t_surroundings : absolute temperatures [K]

    Returns
    -------
    q : heat flux [W/m²], positive from the surface to the surroundings

    Examples
    --------
    >>> round(float(q_radiation(0.85, 400.0, 305.0)), 3)  # ht.radiation.q_rad: 816.782 (CODATA 2014 σ)
    816.783
    """
    ts = np.asarray(t_surface, dtype=float)
    tsur = np.asarray(t_surroundings, dtype=float)
    return emissivity * SIGMA * (ts**4 - tsur**4)


def h_radiation(emissivity, t_surface, t_surroundings):
    r"""Linearised radiation coefficient, :math:`h_r = \varepsilon\sigma(T_s^2+T_{sur}^2)(T_s+T_{sur})`
    [W/(m²·K)], so that ``h_r (Ts − Tsur)`` equals :func:`q_radiation` exactly."""
    ts = np.asarray(t_surface, dtype=float)
    tsur = np.asarray(t_surroundings, dtype=float)
    return emissivity * SIGMA * (ts**2 + tsur**2) * (ts + tsur)
