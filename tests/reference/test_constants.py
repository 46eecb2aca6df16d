"""The physical constants lagsheet writes out (to spare scipy's import at every start) against
scipy.constants (CODATA 2018, the 2019 SI), exactly."""

from __future__ import annotations

import math

import scipy.constants as sc

from lagsheet.physics import radiation, surface


def test_stefan_boltzmann_and_standard_gravity_are_scipys():
    assert radiation.SIGMA == sc.Stefan_Boltzmann
    assert radiation.SIGMA == 2 * math.pi**5 * sc.k**4 / (15 * sc.h**3 * sc.c**2)
    assert surface.G == sc.g == 9.80665
