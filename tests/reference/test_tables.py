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


@pytest.mark.parametrize("t_c", [-40.0, -20.0, -5.0, 0.0, 10.0, 21.0, 30.0, 45.0, 60.0])
@pytest.mark.parametrize("rh", [0.05, 0.3, 0.55, 0.8, 0.97])
def test_dew_point_matches_coolprop_humid_air(t_c, rh):
    """Dew point from the shipped table within 0.02 K of CoolProp HAPropsSI('D', 'T', T, 'P', 101325, 'R', RH)."""
    t = t_c + 273.15
    expected = HAPropsSI("D", "T", t, "P", 101325.0, "R", rh)
    assert properties.dew_point(t, rh)[0] == pytest.approx(expected, abs=0.02)


def test_dew_point_scalar_equals_array():
    """One call on an array gives what calls on its elements give."""
    t = np.array([273.15, 293.15, 313.15])
    rh = np.array([0.4, 0.6, 0.9])
    together = properties.dew_point(t, rh)
    apart = [properties.dew_point(a, b)[0] for a, b in zip(t, rh, strict=True)]
    np.testing.assert_array_equal(together, apart)
