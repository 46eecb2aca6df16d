"""Numbers in messages, in the workbook's own unit system (SI or US customary)."""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from .units import from_si

# kind -> (SI unit, US unit, decimals SI, decimals US)
_KINDS = {
    "temperature": ("°C", "°F", 1, 0),
    "difference": ("K", "°F", 1, 1),
    "thickness": ("mm", "in", 0, 2),
    "radius": ("mm", "in", 1, 2),
    "per_length": ("W/m", "Btu/(h·ft)", 1, 1),
    "per_area": ("W/m²", "Btu/(h·ft²)", 1, 1),
    "power": ("W", "Btu/h", 0, 0),
    "pressure": ("bar", "psi", 2, 1),
    "length": ("m", "ft", 0, 0),
}
_SI_BASE = {"temperature": "K", "difference": "K", "thickness": "m", "radius": "m",
            "per_length": "W/m", "per_area": "W/m**2", "power": "W",
            "pressure": "Pa", "length": "m"}


def show(value: float, kind: str, us: bool = False) -> str:
    """'57.3 °C' or '135 °F' from an SI value."""
    si_unit, us_unit, d_si, d_us = _KINDS[kind]
    unit = us_unit if us else si_unit
    if not np.isfinite(value):
        return "n/a"
    scale, offset = _linear(kind, unit)
    d = d_us if us else d_si
    v = round(value * scale + offset, d) + 0.0  # + 0.0: no '-0 °F' for -0.4 °F
    return f"{v:.{d}f} {unit}"


@lru_cache(maxsize=64)
def _linear(kind: str, unit: str) -> tuple[float, float]:
    """Every conversion used here is linear: ask pint once for its scale and offset."""
    diff = kind == "difference"
    a, b = from_si([0.0, 1.0], _SI_BASE[kind], unit, difference=diff)
    return float(b - a), float(a)
