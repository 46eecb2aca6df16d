"""Published convection correlations, one pure array function each.

Arguments use the literature's symbols; regimes are chosen with ``np.where``. Validity
ranges are data (:data:`VALIDITY`): the engine flags lines outside them rather than
extrapolating silently. Each function is checked against the ``ht`` library's
implementation in ``tests/reference/test_correlations.py``.
"""

from __future__ import annotations

import numpy as np

# Validity of each correlation as published: variable -> (low, high).
VALIDITY: dict[str, dict[str, tuple[float, float]]] = {
    "Churchill-Chu horizontal cylinder": {"Ra": (1e-5, 1e12)},
    "Churchill-Chu vertical plate": {"Ra": (1e-1, 1e12)},
    "Churchill-Bernstein cylinder in cross-flow": {"RePr": (0.2, np.inf)},
}


def nu_horizontal_cylinder_churchill_chu(ra, pr):
    r"""Free convection from a long isothermal horizontal cylinder (Churchill & Chu).

    .. math::
        Nu_D = \left[0.60 + \frac{0.387 Ra_D^{1/6}}
               {[1 + (0.559/Pr)^{9/16}]^{8/27}}\right]^2

    Parameters
    ----------
    ra : Rayleigh number on the diameter [-], 1e-5 to about 1e12
    pr : Prandtl number [-]

    Examples
    --------
    >>> round(float(nu_horizontal_cylinder_churchill_chu(0.69 * 2.63e9, 0.69)), 4)
    139.1349

    References
    ----------
    Churchill, S. W., Chu, H. H. S. (1975). Correlating equations for laminar and
    turbulent free convection from a horizontal cylinder. Int. J. Heat Mass Transfer
    18(9), 1049-1053. doi:10.1016/0017-9310(75)90222-7
    """
    ra = np.asarray(ra, dtype=float)
    pr = np.asarray(pr, dtype=float)
    return (0.60 + 0.387 * ra ** (1 / 6) / (1 + (0.559 / pr) ** (9 / 16)) ** (8 / 27)) ** 2


def nu_vertical_plate_churchill_chu(ra, pr):
    r"""Free convection from an isothermal vertical plate, all Ra (Churchill & Chu).

    .. math::
        Nu_L = \left[0.825 + \frac{0.387 Ra_L^{1/6}}
               {[1 + (0.492/Pr)^{9/16}]^{8/27}}\right]^2

    Used for vertical cylinders too, on the height, where D/L ≥ 35/Gr_L^{1/4}.

    Parameters
    ----------
    ra : Rayleigh number on the height [-]
    pr : Prandtl number [-]

    Examples
    --------
    >>> round(float(nu_vertical_plate_churchill_chu(0.69 * 2.63e9, 0.69)), 4)
    147.1619

    References
    ----------
    Churchill, S. W., Chu, H. H. S. (1975). Correlating equations for laminar and
    turbulent free convection from a vertical plate. Int. J. Heat Mass Transfer
    18(11), 1323-1329. doi:10.1016/0017-9310(75)90243-4
    """
    ra = np.asarray(ra, dtype=float)
    pr = np.asarray(pr, dtype=float)
    return (0.825 + 0.387 * ra ** (1 / 6) / (1 + (0.492 / pr) ** (9 / 16)) ** (8 / 27)) ** 2


def nu_cylinder_churchill_bernstein(re, pr):
    r"""Forced convection from a cylinder in cross-flow (Churchill & Bernstein).

    .. math::
        Nu_D = 0.3 + \frac{0.62 Re^{1/2} Pr^{1/3}}{[1 + (0.4/Pr)^{2/3}]^{1/4}}
               \left[1 + \left(\frac{Re}{282000}\right)^{5/8}\right]^{4/5}

    Valid for Re·Pr > 0.2, properties at the film temperature. Re = 0 (still air)
    gives 0 here, so that the forced part drops out of the combination.

    Examples
    --------
    >>> round(float(nu_cylinder_churchill_bernstein(6071.0, 0.7)), 4)
    40.6371

    References
    ----------
    Churchill, S. W., Bernstein, M. (1977). A correlating equation for forced convection
    from gases and liquids to a circular cylinder in crossflow. J. Heat Transfer 99(2),
    300-306. doi:10.1115/1.3450685
    """
    re = np.asarray(re, dtype=float)
    pr = np.asarray(pr, dtype=float)
    nu = 0.3 + (0.62 * np.sqrt(re) * pr ** (1 / 3) / (1 + (0.4 / pr) ** (2 / 3)) ** 0.25
                * (1 + (re / 282000.0) ** (5 / 8)) ** (4 / 5))
    return np.where(re > 0, nu, 0.0)


# Churchill–Usagi exponent for free + forced convection. n = 3 is the value Churchill
# recommends for transverse and assisting flows (Churchill 1977, AIChE J. 23:10; from
# memory); wind across a hot pipe is transverse to the buoyant plume.
CHURCHILL_USAGI_N = 3.0


def nu_combined_churchill_usagi(nu_forced, nu_free, n=CHURCHILL_USAGI_N):
    r"""Combined free and forced convection, :math:`Nu^n = Nu_F^n + Nu_N^n`.

    References
    ----------
    Churchill, S. W., Usagi, R. (1972). A general expression for the correlation of
    rates of transfer and other phenomena. AIChE J. 18(6), 1121-1128.
    doi:10.1002/aic.690180606
    """
    f = np.asarray(nu_forced, dtype=float)
    m = np.asarray(nu_free, dtype=float)
    return (f**n + m**n) ** (1.0 / n)


def outside_validity(name: str, **values) -> np.ndarray:
    """True where any named variable lies outside the published range of ``name``."""
    out = None
    for var, (lo, hi) in VALIDITY[name].items():
        v = np.asarray(values[var], dtype=float)
        bad = (v < lo) | (v > hi)
        out = bad if out is None else (out | bad)
    return out
