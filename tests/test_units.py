"""Units: the spellings engineers type, conversions against NIST SP 811, differences."""

from __future__ import annotations

import pytest

from lagsheet.workbook.units import (
    UnitTextError,
    dimensionality,
    parse_quantity_text,
    parse_unit,
    split_currency,
    to_si,
)

SPELLINGS = [
    ("°C", "[temperature]"), ("degC", "[temperature]"), ("C", "[temperature]"),
    ("°F", "[temperature]"), ("F", "[temperature]"), ("K", "[temperature]"), ("R", "[temperature]"),
    ("mm", "[length]"), ("in", "[length]"), ('"', "[length]"), ("ft", "[length]"), ("m", "[length]"),
    ("W/m", "[mass] * [length] / [time] ** 3"), ("Btu/h/ft", "[mass] * [length] / [time] ** 3"),
    ("Btu/(h·ft)", "[mass] * [length] / [time] ** 3"),
    ("W/m²", "[mass] / [time] ** 3"), ("W/m2", "[mass] / [time] ** 3"),
    ("W/(m·K)", "[mass] * [length] / [time] ** 3 / [temperature]"),
    ("W/mK", "[mass] * [length] / [time] ** 3 / [temperature]"),
    ("Btu·in/(h·ft²·°F)", "[mass] * [length] / [time] ** 3 / [temperature]"),
    ("%", "dimensionless"), ("m/s", "[length] / [time]"), ("km/h", "[length] / [time]"),
    ("mph", "[length] / [time]"), ("kWh", "[mass] * [length] ** 2 / [time] ** 2"),
    ("MWh", "[mass] * [length] ** 2 / [time] ** 2"), ("GJ", "[mass] * [length] ** 2 / [time] ** 2"),
    ("MMBtu", "[mass] * [length] ** 2 / [time] ** 2"), ("therm", "[mass] * [length] ** 2 / [time] ** 2"),
    ("kg/kWh", "[time] ** 2 / [length] ** 2"), ("h", "[time]"), ("h/yr", "[time]"),
]


@pytest.mark.parametrize(("text", "dimension"), SPELLINGS)
def test_spellings_parse_to_their_dimension(text, dimension):
    """Every spelling the contract lists parses to a unit of the expected dimension."""
    assert dimensionality(parse_unit(text)) == dimension


# NIST SP 811 (2008), Appendix B.8/B.9 conversion factors.
NIST = [
    ("Btu/h", "W", 0.29307107, 1e-6),
    ("Btu/(h·ft)", "W/m", 0.9615194, 1e-6),
    ("Btu·in/(h·ft²·°F)", "W/(m*K)", 0.1442279, 1e-6),
    ("in", "m", 0.0254, 1e-12),
    ("ft", "m", 0.3048, 1e-12),
    ("mph", "m/s", 0.44704, 1e-12),
]


@pytest.mark.parametrize(("unit", "si", "factor", "rel"), NIST)
def test_conversion_factors_match_nist_sp811(unit, si, factor, rel):
    """One of each US unit converts to SI by the NIST SP 811 factor."""
    assert to_si([1.0], parse_unit(unit), si)[0] == pytest.approx(factor, rel=rel)


def test_temperatures_convert_with_offset_and_differences_without():
    """212 °F is 373.15 K, but a difference of 18 °F is 10 K and of 10 °C is 10 K."""
    assert to_si([212.0], parse_unit("°F"), "K")[0] == pytest.approx(373.15)
    assert to_si([18.0], parse_unit("°F"), "K", difference=True)[0] == pytest.approx(10.0)
    assert to_si([10.0], parse_unit("°C"), "K", difference=True)[0] == pytest.approx(10.0)


@pytest.mark.parametrize(("text", "value", "unit"), [
    ('3/4"', 0.75, "inch"), ("1 1/2 in", 1.5, "inch"), ("150 °F", 150.0, "degree_Fahrenheit"),
    ("2 in", 2.0, "inch"), ("60.3", 60.3, None), ("1e3 mm", 1000.0, "millimeter"),
])
def test_text_quantities_are_read(text, value, unit):
    """A quantity typed as text gives its number and unit."""
    v, u = parse_quantity_text(text)
    assert v == pytest.approx(value)
    assert (str(u) if u is not None else None) == unit


@pytest.mark.parametrize("text", ["bananas/h", "W/", "", "°X"])
def test_unknown_units_raise(text):
    """A unit that does not parse is a UnitTextError, not a pint exception."""
    with pytest.raises(UnitTextError):
        parse_unit(text)


def test_money_per_unit_keeps_the_currency_as_text():
    """'EUR/kWh' is a currency and a 1/kWh unit; 'Btu/h' is not mistaken for money."""
    assert split_currency("EUR/kWh") == ("EUR", "1/kWh")
    assert split_currency("$/MMBtu") == ("$", "1/MMBtu")
    assert split_currency("Btu/h") == (None, "Btu/h")
    assert to_si([1.0], parse_unit("EUR/MWh"), "1/kWh")[0] == pytest.approx(0.001)
