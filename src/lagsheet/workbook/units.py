"""Units: the one pint registry, the spellings engineers type, and conversion to SI.

pint lives here alone. Everything else receives plain SI floats and arrays.
Temperatures are kelvin inside; a temperature *difference* is converted as a
difference (``delta_degC``/``delta_degF``), never with an offset.
"""

from __future__ import annotations

import re
from functools import lru_cache

import numpy as np
import pint

UREG = pint.UnitRegistry(autoconvert_offset_to_baseunit=False)
UREG.define("MMBtu = 1e6 * Btu")
UREG.define("MBtu = 1e3 * Btu")
pint.set_application_registry(UREG)

# Spellings typed in headers, mapped to pint expressions. Keys are compared after
# removing spaces; longer keys first so that 'W/mK' wins over 'W'.
_SPELLINGS = {
    "°c": "degC", "ºc": "degC", "degc": "degC", "c": "degC", "celsius": "degC",
    "°f": "degF", "ºf": "degF", "degf": "degF", "f": "degF", "fahrenheit": "degF",
    "k": "kelvin", "kelvin": "kelvin", "r": "degR", "°r": "degR", "degr": "degR",
    '"': "inch", "in": "inch", "inch": "inch", "inches": "inch", "''": "inch",
    "'": "foot", "ft": "foot", "feet": "foot",
    "mm": "millimeter", "cm": "centimeter", "m": "meter",
    "w/mk": "W/(m*K)", "w/m.k": "W/(m*K)", "w/(mk)": "W/(m*K)",
    "btu/h/ft": "Btu/hour/foot", "btu/hft": "Btu/hour/foot", "btu/(hft)": "Btu/hour/foot",
    "btu/hr/ft": "Btu/hour/foot", "btu/(hrft)": "Btu/hour/foot",
    "btuin/(hft²°f)": "Btu*inch/(hour*foot**2*delta_degF)",
    "btuin/hft²°f": "Btu*inch/(hour*foot**2*delta_degF)",
    "btuin/(hft2°f)": "Btu*inch/(hour*foot**2*delta_degF)",
    "btuin/(hft2f)": "Btu*inch/(hour*foot**2*delta_degF)",
    "btuin/hft2f": "Btu*inch/(hour*foot**2*delta_degF)",
    "btu/(hft°f)": "Btu/(hour*foot*delta_degF)",
    "%": "percent", "percent": "percent", "1": "dimensionless", "-": "dimensionless",
    "h": "hour", "hr": "hour", "h/yr": "hour", "h/a": "hour", "h/year": "hour", "hours": "hour",
    "kwh": "kWh", "mwh": "MWh", "gj": "GJ", "mmbtu": "MMBtu", "therm": "therm",
    "kg/kwh": "kg/kWh", "km/h": "km/hour", "kph": "km/hour", "mph": "mph", "m/s": "m/s",
    "m²": "m**2", "m2": "m**2", "ft²": "foot**2", "ft2": "foot**2", "sqft": "foot**2",
    "m³": "m**3", "m3": "m**3",
    "w/m": "W/m", "w/m²": "W/m**2", "w/m2": "W/m**2", "btu/h": "Btu/hour", "btu/hr": "Btu/hour",
    "btu/(hft²)": "Btu/(hour*foot**2)", "btu/hft²": "Btu/(hour*foot**2)", "btu/hft2": "Btu/(hour*foot**2)",
    "btu/h/ft²": "Btu/(hour*foot**2)", "btu/h/ft2": "Btu/(hour*foot**2)",
    "a": "year", "yr": "year", "years": "year", "year": "year",
}

# Offset temperature units and their difference twins.
_DIFFERENCE = {"degC": "delta_degC", "degF": "delta_degF", "degR": "degR", "kelvin": "kelvin"}


# A money amount per something: 'EUR/kWh', '$/MMBtu', '€/m³' -> '1/kWh' (currency is text).
_CURRENCY = re.compile(
    r"^\s*(?:EUR|USD|GBP|CHF|CAD|AUD|NZD|JPY|CNY|INR|SEK|NOK|DKK|PLN|CZK|ZAR|BRL|MXN|SGD|AED|SAR"
    r"|[$€£¥₹]|currency|Currency)\s*/\s*")


def split_currency(text: str) -> tuple[str | None, str]:
    """'EUR/kWh' -> ('EUR', '1/kWh'); a text with no leading currency -> (None, text)."""
    m = _CURRENCY.match(text)
    if not m:
        return None, text
    return m.group(0).rstrip("/ ").strip(), "1/" + text[m.end():]


class UnitTextError(ValueError):
    """A unit text that does not parse."""


def _normalise(text: str) -> str:
    t = text.strip().replace("·", "").replace("⋅", "").replace("*", "").replace(" ", "")
    return t.lower()


@lru_cache(maxsize=512)
def parse_unit(text: str) -> pint.Unit:
    """The pint unit of a header's unit text (``°C``, ``in``, ``W/mK``, ``Btu/(h·ft)``)."""
    raw = text.strip()
    if not raw:
        raise UnitTextError("empty unit")
    raw = _CURRENCY.sub("1/", raw)
    key = _normalise(raw)
    expr = _SPELLINGS.get(key)
    if expr is None:
        expr = raw.replace("²", "**2").replace("³", "**3").replace("·", "*").replace("⋅", "*")
        expr = expr.replace("°C", "delta_degC").replace("°F", "delta_degF") if "/" in expr else expr
        expr = re.sub(r"\bh\b", "hour", expr)
        expr = re.sub(r"\bhr\b", "hour", expr)
    try:
        unit = UREG.parse_units(expr)
    except Exception as exc:  # pint raises several kinds; all mean "does not parse"
        raise UnitTextError(f"{text!r} is not a unit lagsheet knows") from exc
    return unit


def dimensionality(unit: pint.Unit) -> str:
    """Dimension of a unit as text, offset temperatures counted as temperature."""
    return str(UREG.Quantity(1, unit).dimensionality)


def is_unit(unit: pint.Unit, dimension: str) -> bool:
    """True when ``unit`` has the dimension of ``dimension`` (a unit text like 'W/m')."""
    return dimensionality(unit) == dimensionality(parse_unit(dimension))


def to_si(values, unit: pint.Unit, si: str, *, difference: bool = False) -> np.ndarray:
    """Convert numbers in ``unit`` to the SI unit text ``si`` (``K``, ``m``, ``W/m``).

    With ``difference=True`` an offset temperature unit is read as a difference.
    """
    values = np.asarray(values, dtype=float)
    target = parse_unit(si)
    if difference:  # both sides: a difference in °F converts to one in °C (or K), not to a temperature
        unit, target = (UREG.parse_units(_DIFFERENCE.get(_short(str(u)), str(u))) for u in (unit, target))
    return UREG.Quantity(values, unit).to(target).magnitude


def from_si(values, si: str, unit_text: str, *, difference: bool = False) -> np.ndarray:
    """Convert SI numbers to the unit of ``unit_text`` (for writing results)."""
    values = np.asarray(values, dtype=float)
    target = parse_unit(unit_text)
    if difference:
        name = str(target)
        target = UREG.parse_units(_DIFFERENCE.get(_short(name), name))
    return UREG.Quantity(values, parse_unit(si)).to(target).magnitude


def _short(name: str) -> str:
    return {"degree_Celsius": "degC", "degree_Fahrenheit": "degF", "degree_Rankine": "degR",
            "kelvin": "kelvin"}.get(name, name)


_QUANTITY = re.compile(r"^\s*([-+]?(?:\d+\s+\d+/\d+|\d+/\d+|\d*\.?\d+(?:[eE][-+]?\d+)?))\s*(.*?)\s*$")


def parse_quantity_text(text: str) -> tuple[float, pint.Unit | None]:
    """A quantity typed as text: ``'2 in'``, ``'150 °F'``, ``'3/4"'``, ``'1 1/2 in'``.

    Returns the number and its unit (None when no unit is written).
    """
    m = _QUANTITY.match(text)
    if not m:
        raise UnitTextError(f"{text!r} is not a number with a unit")
    number, unit_text = m.group(1), m.group(2)
    if re.search(r"/\s*0+(?:\.0*)?\s*$", number):
        raise UnitTextError(f"{text!r} divides by zero")
    if " " in number:
        whole, frac = number.split()
        a, b = frac.split("/")
        value = float(whole) + float(a) / float(b)
    elif "/" in number:
        a, b = number.split("/")
        value = float(a) / float(b)
    else:
        value = float(number)
    return value, (parse_unit(unit_text) if unit_text else None)


def unit_label(unit: pint.Unit) -> str:
    """A short readable label of a unit for messages (``°C``, ``in``, ``W/(m·K)``)."""
    return f"{unit:~P}" or "1"
