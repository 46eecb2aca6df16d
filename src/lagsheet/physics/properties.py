"""Properties of air, from CoolProp, tabulated once and interpolated for the engine.

One ``PropsSI`` call costs tens of microseconds; a schedule needs millions of property
evaluations during the surface-balance solve, so the engine reads a table built from
CoolProp at the first use (film temperatures 150 K to 1500 K at 101 325 Pa, every 2 K)
and interpolates linearly. ``tests/reference/test_air_properties.py`` holds the table
within 0.5 % of CoolProp between the knots.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

P_ATM = 101325.0  # Pa, standard atmosphere
T_TABLE = np.arange(150.0, 1500.0 + 1e-9, 2.0)  # K


@dataclass(frozen=True)
class AirProperties:
    """Air at the film temperature. Arrays of the same shape as the temperatures."""

    k: np.ndarray  # thermal conductivity [W/(m·K)]
    mu: np.ndarray  # dynamic viscosity [Pa·s]
    nu: np.ndarray  # kinematic viscosity [m²/s]
    pr: np.ndarray  # Prandtl number [-]
    beta: np.ndarray  # volumetric expansion coefficient, ideal gas 1/T [1/K]


def air_coolprop(t: np.ndarray | float) -> AirProperties:
    """Air properties straight from CoolProp ``PropsSI`` (slow; for tables and checks)."""
    from CoolProp.CoolProp import PropsSI

    t = np.asarray(t, dtype=float)
    mu = np.asarray(PropsSI("V", "T", t, "P", P_ATM, "Air"), dtype=float)
    k = np.asarray(PropsSI("L", "T", t, "P", P_ATM, "Air"), dtype=float)
    cp = np.asarray(PropsSI("C", "T", t, "P", P_ATM, "Air"), dtype=float)
    rho = np.asarray(PropsSI("D", "T", t, "P", P_ATM, "Air"), dtype=float)
    return AirProperties(k=k, mu=mu, nu=mu / rho, pr=cp * mu / k, beta=1.0 / t)


@lru_cache(maxsize=1)
def _table() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    a = air_coolprop(T_TABLE)
    return a.k, a.mu, a.nu, a.pr


def air(t_film: np.ndarray) -> AirProperties:
    """Air at film temperature ``t_film`` [K], interpolated in the CoolProp table.

    Temperatures outside 150–1500 K are clamped to the table's ends (the solver may
    probe there while it brackets; final film temperatures of real lines lie inside).
    """
    k, mu, nu, pr = _table()
    t = np.clip(np.asarray(t_film, dtype=float), T_TABLE[0], T_TABLE[-1])
    return AirProperties(
        k=np.interp(t, T_TABLE, k),
        mu=np.interp(t, T_TABLE, mu),
        nu=np.interp(t, T_TABLE, nu),
        pr=np.interp(t, T_TABLE, pr),
        beta=1.0 / t,
    )


def dew_point(t_air: np.ndarray | float, rh: np.ndarray | float) -> np.ndarray:
    """Dew point [K] of moist air at ``t_air`` [K] and relative humidity ``rh`` [0–1].

    CoolProp ``HAPropsSI('D', 'T', T, 'P', 101325, 'R', rh)``. Called once per design
    condition, not per line. RH of 0 has no dew point: NaN.
    """
    from CoolProp.HumidAirProp import HAPropsSI

    t = np.atleast_1d(np.asarray(t_air, dtype=float))
    r = np.broadcast_to(np.atleast_1d(np.asarray(rh, dtype=float)), t.shape)
    out = np.full(t.shape, np.nan)
    for i, (ti, ri) in enumerate(zip(t, r, strict=True)):  # a handful of conditions
        if ri > 0:
            out[i] = HAPropsSI("D", "T", float(ti), "P", P_ATM, "R", float(min(ri, 1.0)))
    return out
