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
    "Churchill-Chu vertical plate": {"Ra": (1e-1, np.inf)},  # "all Ra" as published
    "Churchill-Bernstein cylinder in cross-flow": {"RePr": (0.2, np.inf)},
    "McAdams horizontal plate, buoyancy-assisted": {"Ra": (1e4, 1e11)},
    "McAdams horizontal plate, buoyancy-opposed": {"Ra": (1e5, 1e10)},
    "Churchill sphere": {"Ra": (0.0, 1e13)},
    # Whitaker gives Pr 0.71-380; air near room temperature (Pr 0.707 in CoolProp) is taken as inside
    "Whitaker sphere": {"Re": (3.5, 7.6e4), "Pr": (0.70, 380.0), "mu_ratio": (1.0, 3.2)},
    "flat plate in parallel flow": {"Re": (0.0, 1e8), "Pr": (0.6, 10.0)},
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


def nu_horizontal_plate_mcadams(ra, buoyancy_assisted):
    r"""Free convection from a horizontal plate, McAdams' form, length L = A/P.

    Buoyancy-assisted (hot facing up, cold facing down):
    :math:`Nu = 0.54 Ra^{1/4}` for Ra ≤ 1e7, :math:`0.15 Ra^{1/3}` above (to 1e11).
    Buoyancy-opposed (hot facing down, cold facing up): :math:`Nu = 0.27 Ra^{1/4}`
    (1e5–1e10).

    Examples
    --------
    >>> round(float(nu_horizontal_plate_mcadams(5.54 * 3.21e8, True)), 3)
    181.731
    >>> round(float(nu_horizontal_plate_mcadams(5.54 * 3.21e8, False)), 3)
    55.446

    References
    ----------
    McAdams, W. H. (1954). Heat Transmission, 3rd ed. McGraw-Hill, ch. 7.
    """
    ra = np.asarray(ra, dtype=float)
    up = np.where(ra <= 1e7, 0.54 * ra**0.25, 0.15 * ra ** (1 / 3))
    down = 0.27 * ra**0.25
    return np.where(np.asarray(buoyancy_assisted), up, down)


def nu_sphere_churchill(ra, pr):
    r"""Free convection from an isothermal sphere (Churchill), to Ra about 1e13.

    .. math::
        Nu = 2 + \frac{0.589 Ra^{1/4}}{[1 + (0.469/Pr)^{9/16}]^{4/9}}
        \left[1 + \frac{7.44\times10^{-8} Ra}{[1 + (0.469/Pr)^{9/16}]^{16/9}}\right]^{1/12}

    Examples
    --------
    >>> round(float(nu_sphere_churchill(0.7 * 1e7, 0.7)), 4)
    25.6709

    References
    ----------
    Churchill, S. W. (1983). Free convection around immersed bodies. In Heat Exchanger
    Design Handbook, section 2.5.7. Hemisphere.
    """
    ra = np.asarray(ra, dtype=float)
    pr = np.asarray(pr, dtype=float)
    f = 1 + (0.469 / pr) ** (9 / 16)
    return 2 + 0.589 * ra**0.25 / f ** (4 / 9) * (1 + 7.44e-8 * ra / f ** (16 / 9)) ** (1 / 12)


def nu_sphere_whitaker(re, pr, mu_ratio):
    r"""Forced convection from a sphere (Whitaker), properties at the free stream.

    .. math:: Nu = 2 + (0.4 Re^{1/2} + 0.06 Re^{2/3}) Pr^{0.4} (\mu/\mu_s)^{1/4}

    Valid for 3.5 < Re < 7.6e4, 0.71 < Pr < 380, 1 < μ/μs < 3.2. Re = 0 gives 0 here
    (the conduction limit 2 is carried by the free-convection part).

    References
    ----------
    Whitaker, S. (1972). Forced convection heat transfer correlations for flow in pipes,
    past flat plates, single cylinders, single spheres, and for flow in packed beds and
    tube bundles. AIChE J. 18(2), 361-371. doi:10.1002/aic.690180219
    """
    re = np.asarray(re, dtype=float)
    pr = np.asarray(pr, dtype=float)
    nu = 2 + (0.4 * np.sqrt(re) + 0.06 * re ** (2 / 3)) * pr**0.4 * np.asarray(mu_ratio) ** 0.25
    return np.where(re > 0, nu, 0.0)


RE_TRANSITION = 5e5  # flat plate, laminar to turbulent


def nu_flat_plate_parallel(re, pr, re_transition=RE_TRANSITION):
    r"""Average Nu of an isothermal flat plate in parallel flow, laminar then turbulent.

    Laminar below the transition, :math:`Nu = 0.664 Re^{1/2} Pr^{1/3}` (Pohlhausen;
    ``ht`` gives the same as Baehr's form for 0.6 < Pr < 10). Above it, the laminar
    leading part plus the turbulent rest, from integrating the local laminar
    :math:`0.332 Re_x^{1/2} Pr^{1/3}` and turbulent :math:`0.0296 Re_x^{4/5} Pr^{1/3}`
    (Colburn) coefficients over the length:

    .. math:: Nu = [0.664 Re_c^{1/2} + 0.037 (Re^{4/5} - Re_c^{4/5})] Pr^{1/3}

    Re = 0 gives 0.

    References
    ----------
    Pohlhausen, E. (1921). Der Wärmeaustausch zwischen festen Körpern und Flüssigkeiten
    mit kleiner Reibung und kleiner Wärmeleitung. ZAMM 1(2), 115-121.
    Colburn, A. P. (1933). A method of correlating forced convection heat transfer data
    and a comparison with fluid friction. Trans. AIChE 29, 174-210.
    """
    re = np.asarray(re, dtype=float)
    pr = np.asarray(pr, dtype=float)
    lam = 0.664 * np.sqrt(re) * pr ** (1 / 3)
    mixed = (0.664 * np.sqrt(re_transition) + 0.037 * (re**0.8 - re_transition**0.8)) * pr ** (1 / 3)
    return np.where(re < re_transition, lam, mixed)


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
