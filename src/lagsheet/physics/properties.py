"""Properties of air and of water vapour in air, from CoolProp, shipped as tables; and of
process fluids, from CoolProp at run time.

The engine needs millions of property values per run; one ``PropsSI`` call costs tens
of microseconds and importing CoolProp several seconds. So the tables in
``lagsheet/data`` are built from CoolProp by :func:`write_tables` (run
``python -m lagsheet.physics.properties``) and the engine interpolates in them:

- ``air_table.csv``: dry air at 101 325 Pa, 150–1500 K every 2 K: k, μ, ν, Pr
  (``PropsSI`` 'L', 'V', 'D', 'C'); linear interpolation, held within 0.5 % of
  CoolProp by ``tests/reference/test_air_properties.py``;
- ``water_saturation.csv``: the partial pressure of water in saturated moist air at
  101 325 Pa (``HAPropsSI('P_w', 'T', T, 'P', 101325, 'R', 1)``, enhancement factor
  included; over liquid water above 0 °C, over ice below), 190–360 K every 0.5 K; the
  dew point inverts it (ln p linear in T), and a test holds it within 0.02 K of
  ``HAPropsSI('D', ...)`` where the air is above 0 °C.

Relative humidity is taken over liquid water at every temperature, as weather data and
design conditions give it (the WMO convention); CoolProp's humid-air functions take it
over ice below 0 °C. :func:`dew_point` converts with the ratio of the saturation
pressures over supercooled water and over ice (Murphy & Koop 2005).

A test rebuilds both tables from CoolProp and compares them with the shipped files.

Process fluids (:func:`fluid_properties`, :func:`saturation`) are few states per run
(the lines' fluids at their operating temperatures), so those call CoolProp directly,
once per distinct state; CoolProp is imported on first use.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from functools import lru_cache
from importlib.resources import files
from pathlib import Path
from typing import NamedTuple

import numpy as np

P_ATM = 101325.0  # Pa, standard atmosphere
T_AIR = np.arange(150.0, 1500.0 + 1e-9, 2.0)  # K, air table knots
T_WATER = np.arange(190.0, 360.0 + 1e-9, 0.5)  # K, water saturation knots


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


def water_saturation_coolprop(t: np.ndarray) -> np.ndarray:
    """Partial pressure of water in saturated moist air at ``t`` [K] and 101 325 Pa [Pa]."""
    from CoolProp.HumidAirProp import HAPropsSI

    return np.array([HAPropsSI("P_w", "T", float(x), "P", P_ATM, "R", 1.0) for x in np.atleast_1d(t)])


def write_tables(folder: Path) -> None:
    """Build both tables from CoolProp into ``folder`` (the shipped ones live in lagsheet/data)."""
    a = air_coolprop(T_AIR)
    with open(folder / "air_table.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["T_K", "k_W_mK", "mu_Pa_s", "nu_m2_s", "Pr"])
        for row in zip(T_AIR, a.k, a.mu, a.nu, a.pr, strict=True):
            w.writerow([f"{row[0]:.1f}"] + [repr(float(x)) for x in row[1:]])
    p = water_saturation_coolprop(T_WATER)
    with open(folder / "water_saturation.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["T_K", "p_ws_Pa"])
        for t, x in zip(T_WATER, p, strict=True):
            w.writerow([f"{t:.1f}", repr(float(x))])


def _read(name: str) -> np.ndarray:
    with files("lagsheet.data").joinpath(name).open(encoding="utf-8") as fh:
        return np.loadtxt(fh, delimiter=",", skiprows=1, ndmin=2)


@lru_cache(maxsize=1)
def _air() -> np.ndarray:
    """(4, knots): k, mu, nu, Pr on the uniform T_AIR grid."""
    table = _read("air_table.csv")
    return np.ascontiguousarray(table[:, 1:5].T)


@lru_cache(maxsize=1)
def _water() -> tuple[np.ndarray, np.ndarray]:
    table = _read("water_saturation.csv")
    return table[:, 0], np.log(table[:, 1])


def air(t_film: np.ndarray) -> AirProperties:
    """Air at film temperature ``t_film`` [K], interpolated in the table.

    Temperatures outside 150–1500 K are clamped to the table's ends (the solver may
    probe there while it brackets; film temperatures of real lines lie inside).
    """
    props = _air()
    t = np.clip(np.asarray(t_film, dtype=float), T_AIR[0], T_AIR[-1])
    x = (t - T_AIR[0]) / (T_AIR[1] - T_AIR[0])  # uniform grid: the knot index is arithmetic
    i = np.minimum(x.astype(np.intp), len(T_AIR) - 2)
    w = x - i
    lo, hi = props[:, i], props[:, i + 1]
    k, mu, nu, pr = lo + w * (hi - lo)
    return AirProperties(k=k, mu=mu, nu=nu, pr=pr, beta=1.0 / t)


def vapour_pressure_murphy_koop(t: np.ndarray | float, over: str = "water") -> np.ndarray:
    r"""Saturation vapour pressure [Pa] of pure water vapour over a plane surface of liquid
    water (``over='water'``, also supercooled) or of ice (``over='ice'``), Murphy & Koop 2005.

    .. math::
        \ln e_w = 54.842763 - \frac{6763.22}{T} - 4.210 \ln T + 0.000367\,T
                  + \tanh\{0.0415\,(T - 218.8)\}
                    \left(53.878 - \frac{1331.22}{T} - 9.44523 \ln T + 0.014025\,T\right)

        \ln e_i = 9.550426 - \frac{5723.265}{T} + 3.53068 \ln T - 0.00728332\,T

    Parameters
    ----------
    t : array_like
        Temperature [K]; water 123–332 K, ice above 110 K (the paper's ranges).
    over : {'water', 'ice'}

    Returns
    -------
    ndarray
        e [Pa]. Both forms give 611.657 Pa at the triple point 273.16 K.

    References
    ----------
    D. M. Murphy and T. Koop, Review of the vapour pressures of ice and supercooled water
    for atmospheric applications, Q. J. R. Meteorol. Soc. 131 (2005) 1539-1565,
    doi:10.1256/qj.04.94, eqs. (7) and (10) (coefficients from memory; the tests hold
    them to CoolProp's IAPWS values within 0.05 % and to the Alduchov & Eskridge 1996
    Magnus forms within 0.5 %).

    Examples
    --------
    >>> round(float(vapour_pressure_murphy_koop(273.16, "water")), 2)
    611.66
    """
    t = np.asarray(t, dtype=float)
    if over == "ice":
        return np.exp(9.550426 - 5723.265 / t + 3.53068 * np.log(t) - 0.00728332 * t)
    return np.exp(54.842763 - 6763.22 / t - 4.210 * np.log(t) + 0.000367 * t
                  + np.tanh(0.0415 * (t - 218.8)) * (53.878 - 1331.22 / t - 9.44523 * np.log(t) + 0.014025 * t))


T_TRIPLE = 273.16  # K, triple point of water (ITS-90): the table is over ice below it


def dew_point(t_air: np.ndarray | float, rh: np.ndarray | float) -> np.ndarray:
    """Dew point [K] of moist air at ``t_air`` [K] and relative humidity ``rh`` [0–1] over water.

    ``rh`` is relative to liquid water at every air temperature, as weather data and
    design conditions give it: the vapour pressure is e = RH · e_w(T), over supercooled
    water below 0 °C. The result is the temperature at which e saturates the air: over
    water where it lies above 0 °C, over ice (the frost point, where frost forms on a
    cold surface) below. Below 0 °C, e_w/e_i (:func:`vapour_pressure_murphy_koop`)
    converts RH to RH over ice, the convention of the shipped table (CoolProp); at
    −20 °C and 70 % this puts the frost point 2 K above what RH taken over ice gives.
    NaN for RH 0 or temperatures outside 190–360 K.
    """
    tk, lnp = _water()
    t, r = np.broadcast_arrays(np.atleast_1d(np.asarray(t_air, dtype=float)),
                               np.atleast_1d(np.asarray(rh, dtype=float)))
    inside = (t >= tk[0]) & (t <= tk[-1]) & (r > 0)
    cold = t < T_TRIPLE
    tc = np.where(cold & inside, t, T_TRIPLE)
    to_ice = np.where(cold, np.log(vapour_pressure_murphy_koop(tc, "water") / vapour_pressure_murphy_koop(tc, "ice")),
                      0.0)
    with np.errstate(divide="ignore"):
        target = np.interp(t, tk, lnp) + np.log(np.minimum(np.where(r > 0, r, 1.0), 1.0)) + to_ice
    td = np.interp(target, lnp, tk)
    return np.where(inside & (target >= lnp[0]), td, np.nan)


if __name__ == "__main__":
    write_tables(Path(__file__).resolve().parents[1] / "data")


# --------------------------------------------------------------------------- fluids (CoolProp at run time)


def _per_state(fn, n_out: int, *columns) -> tuple[np.ndarray, ...]:
    """``fn(*state) -> n_out values`` once per distinct finite state of the broadcast columns.

    Rows with a non-finite entry, and states CoolProp rejects, give NaN.
    """
    cols = np.broadcast_arrays(*(np.asarray(c, dtype=float) for c in columns))
    shape = cols[0].shape
    flat = np.stack([c.ravel() for c in cols], axis=1)
    out = np.full((n_out, flat.shape[0]), np.nan)
    ok = np.isfinite(flat).all(axis=1)
    if ok.any():
        states, inverse = np.unique(flat[ok], axis=0, return_inverse=True)
        values = np.full((n_out, len(states)), np.nan)
        for j, state in enumerate(states):  # once per distinct state, not per line
            try:
                values[:, j] = fn(*state)
            except (ValueError, RuntimeError):
                pass  # outside the fluid's equation of state (CoolProp raises): NaN
        out[:, ok] = values[:, inverse.ravel()]
    return tuple(o.reshape(shape) for o in out)


class FluidProperties(NamedTuple):
    cp: np.ndarray  # isobaric specific heat [J/(kg·K)]
    density: np.ndarray  # [kg/m³]


def fluid_properties(fluid, t, p=P_ATM) -> FluidProperties:
    """Specific heat and density of a pure fluid at (T, p), from CoolProp.

    ``PropsSI('C', 'T', T, 'P', p, fluid)`` and ``PropsSI('D', ...)``, called once per
    distinct (fluid, T, p) among the lines, so a schedule of thousands of lines at a
    few states costs a few calls.

    Parameters
    ----------
    fluid : str or array of str
        CoolProp fluid name per line (``"Water"``, ``"Air"``, ``"Nitrogen"``, ...).
    t : array_like
        Temperature [K].
    p : array_like
        Absolute pressure [Pa]; 101 325 Pa by default.

    Returns
    -------
    FluidProperties
        ``cp`` [J/(kg·K)] and ``density`` [kg/m³], broadcast shape of the inputs; NaN
        where CoolProp has no single-phase state (e.g. water below its triple point
        273.16 K, a state exactly on the saturation line, an unknown fluid name).

    References
    ----------
    CoolProp (Bell et al. 2014, Ind. Eng. Chem. Res. 53:2498); water by IAPWS-95.
    """
    names, code = np.unique(np.asarray(fluid, dtype=str), return_inverse=True)

    def props(c, tt, pp):
        from CoolProp.CoolProp import PropsSI  # imported on first use: its import costs seconds

        name = str(names[int(c)])
        return PropsSI("C", "T", tt, "P", pp, name), PropsSI("D", "T", tt, "P", pp, name)

    code = np.asarray(code).reshape(np.shape(np.asarray(fluid)))
    cp, rho = _per_state(props, 2, code, t, p)
    return FluidProperties(cp=cp, density=rho)


class Saturation(NamedTuple):
    t: np.ndarray  # saturation temperature [K]
    p: np.ndarray  # saturation pressure [Pa]
    h_fg: np.ndarray  # latent heat of vaporisation [J/kg]


def saturation(*, t=None, p=None, fluid: str = "Water") -> Saturation:
    """Saturation temperature, pressure and latent heat of vaporisation, from CoolProp.

    Give exactly one of ``t`` or ``p``. h_fg = h(Q=1) − h(Q=0) at that state
    (``PropsSI('H', ..., 'Q', 1, fluid) − PropsSI('H', ..., 'Q', 0, fluid)``), one set of
    calls per distinct value.

    Parameters
    ----------
    t : array_like, optional
        Saturation temperature [K].
    p : array_like, optional
        Saturation (absolute) pressure [Pa]; a steam main at 10 bar(a) is 1e6 Pa.
    fluid : str
        CoolProp fluid name, water by default.

    Returns
    -------
    Saturation
        ``t`` [K], ``p`` [Pa], ``h_fg`` [J/kg]; NaN outside the triple point to critical
        point range (water: 273.16–647.096 K, 611.655 Pa–22.064 MPa).

    References
    ----------
    CoolProp, water by IAPWS-95; the tests compare with IAPWS-IF97 steam-table values.
    """
    if (t is None) == (p is None):
        raise ValueError("give exactly one of t or p")
    given, other = ("T", "P") if p is None else ("P", "T")

    def sat(x):
        from CoolProp.CoolProp import PropsSI

        y = PropsSI(other, given, x, "Q", 0, fluid)
        h_fg = PropsSI("H", given, x, "Q", 1, fluid) - PropsSI("H", given, x, "Q", 0, fluid)
        return y, h_fg

    x = np.asarray(t if p is None else p, dtype=float)
    y, h_fg = _per_state(sat, 2, x)
    x = np.where(np.isfinite(y), x, np.nan)
    return Saturation(t=x, p=y, h_fg=h_fg) if p is None else Saturation(t=y, p=x, h_fg=h_fg)


@lru_cache(maxsize=256)
def coolprop_name(text: str) -> str | None:
    """CoolProp's own name of a pure fluid (``'water'`` -> ``'Water'``), or None if unknown.

    Incompressible mixtures in CoolProp's own notation (``INCOMP::MEG[0.3]``) are passed
    through as typed; their states are checked when their properties are taken.
    """
    from CoolProp.CoolProp import get_fluid_param_string

    name = str(text).strip()
    if name.upper().startswith("INCOMP::"):
        return "INCOMP::" + name.split("::", 1)[1]
    try:
        return get_fluid_param_string(name, "name")
    except ValueError:
        return None
