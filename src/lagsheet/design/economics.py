"""Energy, money and CO2 of a heat flow; the annualised cost used for economic thickness.

Conventions (documented in the README):

- annual energy [kWh] = heat flow [W] × operating hours / 1000, negative for a gain;
- energy bought = |annual energy| / heating efficiency for a loss, / cooling COP for a gain;
- annual cost = energy bought × energy price; CO2 = energy bought × emission factor;
- annualised cost = capital recovery factor × installed cost + annual cost.
"""

from __future__ import annotations

import numpy as np

from ..physics.candidates import whole_factor


def annual_energy_kwh(heat_w, hours):
    return np.asarray(heat_w, dtype=float) * hours / 1000.0


def energy_bought_kwh(energy_kwh, heating_efficiency, cooling_cop):
    e = np.asarray(energy_kwh, dtype=float)
    return np.where(e >= 0, e / heating_efficiency, -e / cooling_cop)


def capital_recovery_factor(rate, years):
    r"""Annuity factor :math:`a = i(1+i)^n / ((1+i)^n - 1)`; :math:`1/n` at :math:`i = 0`.

    Examples
    --------
    >>> round(float(capital_recovery_factor(0.04, 30)), 4)
    0.0578
    """
    rate = np.asarray(rate, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        f = rate * (1 + rate) ** years / ((1 + rate) ** years - 1)
    return np.where(rate == 0, 1.0 / years, f)


def whole_heat_flow(geometry, rate, lengths, areas):
    """Whole-line heat flow [W] from the heat rate: × length (cylinders), × area (flats)."""
    extra = (1,) * (np.ndim(rate) - 1)
    return rate * np.reshape(whole_factor(np.asarray(geometry), np.asarray(lengths), np.asarray(areas)),
                             (-1,) + extra)


def energy_cost(whole, hours, st):
    """Cost of the energy bought in a year [currency] for heat flows ``whole`` [W] over ``hours``."""
    energy = annual_energy_kwh(whole, hours)
    bought = energy_bought_kwh(energy, float(st["heating_efficiency"]), float(st["cooling_cop"]))
    return bought * float(st["energy_price"])
