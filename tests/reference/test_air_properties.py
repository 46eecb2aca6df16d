"""Air properties and dew point of the engine against CoolProp and published forms."""

from __future__ import annotations

import numpy as np
import pytest
from CoolProp.CoolProp import PropsSI
from CoolProp.HumidAirProp import HAProps_Aux, HAPropsSI

from lagsheet.physics.properties import air, dew_point

P = 101325.0  # Pa
# Between the engine's 2 K table knots, from cold to hot film temperatures.
BETWEEN_KNOTS = [151.0, 201.0, 293.15, 333.33, 457.7, 801.1, 1301.0, 1497.3]


def _coolprop(t):
    """k, nu, Pr, beta, mu of air at 101325 Pa from CoolProp PropsSI."""
    mu = PropsSI("V", "T", t, "P", P, "Air")
    k = PropsSI("L", "T", t, "P", P, "Air")
    rho = PropsSI("D", "T", t, "P", P, "Air")
    cp = PropsSI("C", "T", t, "P", P, "Air")
    beta = PropsSI("isobaric_expansion_coefficient", "T", t, "P", P, "Air")
    return k, mu / rho, cp * mu / k, beta, mu


@pytest.mark.parametrize("t", BETWEEN_KNOTS)
def test_air_within_1e4_of_coolprop(t):
    """Conductivity, viscosities and Prandtl number lie within 1e-4 of CoolProp between knots (measured 3.3e-5
    at most, the Prandtl number; 4.7e-6 for k)."""
    k, nu, pr, _, mu = _coolprop(t)  # CoolProp PropsSI 'L', 'V', 'D', 'C' for Air at 101325 Pa
    a = air(np.array([t]))
    assert a.k[0] == pytest.approx(k, rel=1e-4)
    assert a.mu[0] == pytest.approx(mu, rel=1e-4)
    assert a.nu[0] == pytest.approx(nu, rel=1e-4)
    assert a.pr[0] == pytest.approx(pr, rel=1e-4)


@pytest.mark.parametrize("t", [200.0, 300.0, 1000.0])
def test_air_equals_coolprop_at_knots(t):
    """On a table knot the interpolated properties are CoolProp's values to the table's 10 digits."""
    k, nu, pr, _, mu = _coolprop(t)  # CoolProp PropsSI at 101325 Pa
    a = air(np.array([t]))
    # the shipped table keeps 10 significant digits: rounding up to 5e-10 relative
    assert a.k[0] == pytest.approx(k, rel=1e-9)
    assert a.mu[0] == pytest.approx(mu, rel=1e-9)
    assert a.nu[0] == pytest.approx(nu, rel=1e-9)
    assert a.pr[0] == pytest.approx(pr, rel=1e-9)


@pytest.mark.parametrize("t", BETWEEN_KNOTS[1:])
def test_air_expansion_coefficient_is_ideal_gas_within_one_percent(t):
    """The expansion coefficient 1/T lies within 1 % of CoolProp's real-air value from 200 K up."""
    # CoolProp PropsSI('isobaric_expansion_coefficient'): real air departs from the
    # ideal-gas 1/T by 0.85 % at 201 K, 0.27 % at 293 K, < 0.05 % above 450 K; the
    # effect on Nu (through Ra^(1/4..1/3)) stays below 0.3 %.
    beta = _coolprop(t)[3]
    assert air(np.array([t])).beta[0] == pytest.approx(beta, rel=1e-2)


def test_air_scalar_equals_array():
    """air() of a scalar gives the element it gives inside an array."""
    ts = np.array(BETWEEN_KNOTS)
    batch = air(ts)
    for i, t in enumerate(ts):
        one = air(float(t))
        for f in ("k", "mu", "nu", "pr", "beta"):
            assert float(getattr(one, f)) == getattr(batch, f)[i]


# --- dew point --------------------------------------------------------------------------

# Alduchov & Eskridge 1996 (J. Appl. Meteor. 35:601), Magnus form over water, REFERENCES.md
A_W, B_W, C_W = 17.625, 243.04, 6.1094  # -, degC, hPa
# Same paper, form over ice (REFERENCES.md): e_i = 6.1121 exp(22.587 T / (273.86 + T))
A_I, B_I, C_I = 22.587, 273.86, 6.1121


def _magnus_dew_point(t_c, rh):
    """Dew (or frost) point [degC] by the Magnus forms, RH over water at every temperature.

    The vapour pressure is e = RH e_w(T) over (supercooled) water; the result is where e
    saturates over water if above 0 degC, over ice (the frost point) below.
    """
    e = rh * C_W * np.exp(A_W * t_c / (B_W + t_c))
    a, b, c = (A_W, B_W, C_W) if e >= C_W else (A_I, B_I, C_I)
    g = np.log(e / c)
    return b * g / (a - g)


def _magnus_over_water(t_c, rh):
    """Dew point [degC], Magnus form over water: gamma = ln RH + aT/(b+T), Td = b gamma/(a - gamma)."""
    g = np.log(rh) + A_W * t_c / (B_W + t_c)
    return B_W * g / (A_W - g)


AIR_C = [-20.0, -10.0, -1.0, 0.0, 5.0, 10.0, 20.0, 30.0, 40.0, 50.0]
# The engine inverts a 0.5 K table of the saturation pressure (ln p linear in T); its
# documented accuracy against HAPropsSI('D', ...) is 0.02 K.
TABLE_K = 0.02
RH = [0.05, 0.1, 0.3, 0.5, 0.8, 0.95, 1.0]


def _rh_over_ice(t, rh):
    """RH over water at ``t`` [K] -> RH over ice, CoolProp's convention below 0 degC: e_w from the
    Alduchov-Eskridge Magnus form over water, e_i from CoolProp's ice sublimation pressure
    (``HAProps_Aux('p_ws', ...)``, IAPWS)."""
    e_w = 100 * C_W * np.exp(A_W * (t - 273.15) / (B_W + t - 273.15))
    return rh * e_w / HAProps_Aux("p_ws", t, P, 0.0)[0]


def test_dew_point_equals_coolprop():
    """dew_point lies within 0.02 K of CoolProp HAPropsSI('D', ...) at 101325 Pa in air above 0 degC,
    and within 0.05 K below with RH over water converted to CoolProp's RH over ice (measured 0.028 K,
    the Magnus form's own accuracy over supercooled water)."""
    checked = 0
    for t_c in AIR_C:
        t = t_c + 273.15
        for rh in RH:
            if t_c >= 0:
                want, tol = HAPropsSI("D", "T", t, "P", P, "R", rh), TABLE_K
            else:
                rh_ice = _rh_over_ice(t, rh)
                if rh_ice > 1:  # supersaturated over ice: beyond HAPropsSI; the Magnus test covers it
                    continue
                want, tol = HAPropsSI("D", "T", t, "P", P, "R", rh_ice), 0.05
            assert float(dew_point(t, rh)[0]) == pytest.approx(want, abs=tol), (t_c, rh)
            checked += 1
    assert checked >= 60


@pytest.mark.parametrize("t_c", AIR_C)
def test_dew_point_within_magnus_accuracy(t_c):
    """dew_point lies within 0.1 K of the Alduchov-Eskridge Magnus forms over -20...50 degC (measured 0.038 K
    at most)."""
    for rh in RH:
        got = float(dew_point(t_c + 273.15, rh)[0]) - 273.15
        assert got == pytest.approx(_magnus_dew_point(t_c, rh), abs=0.1), (t_c, rh)


def test_dew_point_matches_magnus_over_water_when_above_freezing():
    """Where the dew point is above 0 degC the Magnus form over water alone agrees within 0.1 K (measured
    0.038 K at most)."""
    checked = 0
    for t_c in AIR_C:
        for rh in RH:
            td = _magnus_over_water(t_c, rh)
            if td < 0.5:
                continue
            checked += 1
            got = float(dew_point(t_c + 273.15, rh)[0]) - 273.15
            assert got == pytest.approx(td, abs=0.1), (t_c, rh)
    assert checked >= 25


@pytest.mark.parametrize(
    ("t_c", "rh", "td_c", "tol"),
    [
        # REFERENCES.md, HAPropsSI at 101325 Pa, printed to 0.01 K: half a digit plus the
        # table's 0.02 K
        (20.0, 0.50, 9.27, 0.005 + TABLE_K),
        (30.0, 0.80, 26.17, 0.005 + TABLE_K),
        (10.0, 0.90, 8.44, 0.005 + TABLE_K),
        (21.0, 0.55, 11.6, 0.05),  # about 11.6 degC, common practice
    ],
)
def test_dew_point_published_values(t_c, rh, td_c, tol):
    """dew_point gives the tabulated dew points of common design conditions."""
    assert float(dew_point(t_c + 273.15, rh)[0]) - 273.15 == pytest.approx(td_c, abs=tol)


def test_dew_point_of_dry_air_is_nan():
    """Air of zero relative humidity has no dew point: NaN, next to a finite value in the same call."""
    got = dew_point(np.array([293.15, 293.15]), np.array([0.0, 0.5]))
    assert np.isnan(got[0])
    assert got[1] == pytest.approx(HAPropsSI("D", "T", 293.15, "P", P, "R", 0.5), abs=TABLE_K)


def test_dew_point_broadcasts_a_scalar_temperature():
    """One air temperature with several humidities gives one CoolProp dew point per humidity."""
    rh = np.array([0.3, 0.5, 0.8])
    want = [HAPropsSI("D", "T", 293.15, "P", P, "R", r) for r in rh]  # CoolProp HAPropsSI
    np.testing.assert_allclose(dew_point(293.15, rh), want, rtol=0, atol=TABLE_K)
