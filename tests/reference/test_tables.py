"""The shipped property tables are what CoolProp gives today, and the dew point inverts them exactly."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from CoolProp.HumidAirProp import HAPropsSI

from lagsheet.physics import properties

DATA = Path(properties.__file__).resolve().parents[1] / "data"


def test_shipped_tables_equal_a_fresh_build_from_coolprop(tmp_path):
    """Rebuilding air_table.csv and water_saturation.csv from CoolProp gives the shipped numbers."""
    properties.write_tables(tmp_path)
    for name in ("air_table.csv", "water_saturation.csv"):
        fresh = np.loadtxt(tmp_path / name, delimiter=",", skiprows=1)
        shipped = np.loadtxt(DATA / name, delimiter=",", skiprows=1)
        assert fresh.shape == shipped.shape
        np.testing.assert_allclose(fresh, shipped, rtol=1e-8)


@pytest.mark.parametrize("t_c", [0.0, 10.0, 21.0, 30.0, 45.0, 60.0])
@pytest.mark.parametrize("rh", [0.05, 0.3, 0.55, 0.8, 0.97])
def test_dew_point_matches_coolprop_humid_air(t_c, rh):
    """Dew point from the shipped table within 0.02 K of CoolProp HAPropsSI('D', 'T', T, 'P', 101325, 'R', RH)
    in air at or above 0 °C, where both take RH over water."""
    t = t_c + 273.15
    expected = HAPropsSI("D", "T", t, "P", 101325.0, "R", rh)
    assert properties.dew_point(t, rh)[0] == pytest.approx(expected, abs=0.02)


@pytest.mark.parametrize("t_c", [-40.0, -20.0, -5.0])
@pytest.mark.parametrize("rh", [0.05, 0.3, 0.55])
def test_frost_point_inverts_the_ice_table_with_rh_converted_to_ice(t_c, rh):
    """Below 0 °C the shipped (ice) table is inverted at RH·e_w/e_i: the table's frost point at that RH
    is CoolProp HAPropsSI('D', ..., 'R', RH·e_w/e_i) within 0.02 K, e_w/e_i of Murphy & Koop 2005."""
    t = t_c + 273.15
    ratio = properties.vapour_pressure_murphy_koop(t, "water") / properties.vapour_pressure_murphy_koop(t, "ice")
    expected = HAPropsSI("D", "T", t, "P", 101325.0, "R", rh * ratio)
    assert properties.dew_point(t, rh)[0] == pytest.approx(expected, abs=0.02)


@pytest.mark.parametrize("t", [233.15, 253.15, 263.15, 273.16, 283.15, 303.15, 323.15])
def test_murphy_koop_vapour_pressures_match_coolprop(t):
    """Murphy & Koop 2005 over ice and over water within 0.05 % of CoolProp's IAPWS values (sublimation
    below the triple point, IAPWS-95 saturation above), and over supercooled water within 0.5 % of the
    Alduchov & Eskridge 1996 Magnus form (REFERENCES.md)."""
    from CoolProp.CoolProp import PropsSI
    from CoolProp.HumidAirProp import HAProps_Aux

    if t <= 273.16:
        ice = HAProps_Aux("p_ws", t, 101325.0, 0.0)[0]  # CoolProp: over ice at and below the triple point
        assert properties.vapour_pressure_murphy_koop(t, "ice") == pytest.approx(ice, rel=5e-4)
        magnus = 610.94 * np.exp(17.625 * (t - 273.15) / (243.04 + t - 273.15))
        assert properties.vapour_pressure_murphy_koop(t, "water") == pytest.approx(magnus, rel=5e-3)
    if t >= 273.16:
        water = PropsSI("P", "T", t, "Q", 0, "Water")
        assert properties.vapour_pressure_murphy_koop(t, "water") == pytest.approx(water, rel=5e-4)


def test_dew_point_scalar_equals_array():
    """One call on an array gives what calls on its elements give."""
    t = np.array([273.15, 293.15, 313.15])
    rh = np.array([0.4, 0.6, 0.9])
    together = properties.dew_point(t, rh)
    apart = [properties.dew_point(a, b)[0] for a, b in zip(t, rh, strict=True)]
    np.testing.assert_array_equal(together, apart)
