"""Does a column's data fit its unit? The rules for likely mislabelled units, in one place.

Each rule looks at the numbers of one column as written (in the header's unit) and,
when they make sense only in another unit, returns a warning naming the unit the
values suggest. A rule fires only when most values (``SHARE``) support it, so a
single odd line does not; every rule is tested on deliberately mislabelled sheets and
on the clean demo and templates.

The rules:

- **diameter in inches holding millimetres**: an ``[in]`` outside-diameter column
  whose values are ASME B36.10M outside diameters in millimetres (e.g. 114.3);
- **diameter in millimetres holding inches**: a ``[mm]`` column whose values are
  nominal inch sizes or inch outside diameters (4, 4.5, 6.625 …), all below 50;
- **°C holding °F (and the reverse)**: temperatures that fall outside the field's
  plausible range in the written unit but inside it in the other one (an ambient of
  77 "°C", an operating temperature of 1,400 "°C");
- **conductivity in the wrong system**: a W/(m·K) column with values of 0.15–1.5,
  typical of Btu·in/(h·ft²·°F), that become 0.02–0.2 W/(m·K) when read so (and the
  reverse: a Btu·in column of 0.015–0.1);
- **percent holding fractions**: a ``%`` column whose values all lie in 0–1;
- **below still air**: an insulation conductivity below that of still air at its
  mean temperature (0.026 W/(m·K) at 25 °C, from the CoolProp table) for a material
  not named as aerogel or vacuum insulation: still, trapped air is about the best a
  conventional insulation does (common practice).
"""

from __future__ import annotations

import numpy as np

from ..physics.properties import air
from .library import nominal_sizes

SHARE = 0.6  # share of a column's values that must support a rule

# plausible ranges in SI, per field (outside: a warning on the cell, not an error)
PLAUSIBLE = {
    "outside_diameter": (0.006, 30.0),  # pipes to 5 m, vessels and spheres larger
    "length": (0.05, 5000.0),
    "surface_area": (0.01, 50000.0),
    "operating_temperature": (73.15, 1273.15),
    "ambient_temperature": (213.15, 333.15),
    "surroundings_temperature": (3.0, 373.15),
    "max_surface_temperature": (273.15, 373.15),
    "wind_speed": (0.0, 40.0),
    "relative_humidity": (0.0, 1.0),
    "conductivity": (0.01, 1.0),
    "mean_temperature": (73.15, 1273.15),
    "min_thickness": (0.0, 0.5),
    "fixed_thickness": (0.0, 0.5),
}

_MM_ODS = None


def _mm_ods() -> np.ndarray:
    global _MM_ODS
    if _MM_ODS is None:
        _MM_ODS = np.array(sorted(nominal_sizes().values())) * 1000.0
    return _MM_ODS


def _inch_sizes() -> np.ndarray:
    nps = np.array(sorted(nominal_sizes()))
    ods = _mm_ods() / 25.4
    return np.concatenate((nps, ods))


def _share(mask: np.ndarray) -> bool:
    return mask.size > 0 and mask.mean() >= SHARE


def suggest(key: str, unit_name: str, written: np.ndarray, si: np.ndarray) -> str | None:
    """The unit the values of a column suggest instead of ``unit_name``, with the reason; or None.

    ``written`` are the numbers as typed (in the header's unit), ``si`` the same in SI.
    """
    both = np.isfinite(written) & np.isfinite(si)
    w, si = written[both], si[both]
    if w.size == 0:
        return None
    if key == "outside_diameter":
        if unit_name == "inch":
            near = np.min(np.abs(w[:, None] - _mm_ods()[None, :]), axis=1) <= 0.5
            if _share(near & (w > 20)):
                return "mm: the values are pipe outside diameters in millimetres (ASME B36.10M)"
        if unit_name == "millimeter":
            near = np.min(np.abs(w[:, None] - _inch_sizes()[None, :]), axis=1) <= 0.01
            if _share(near) and w.max() < 50:
                return "in: the values are nominal sizes or outside diameters in inches"
    if key in ("operating_temperature", "ambient_temperature", "surroundings_temperature",
               "max_surface_temperature", "mean_temperature"):
        lo, hi = PLAUSIBLE[key]
        ok = (si >= lo) & (si <= hi)
        if unit_name == "degree_Celsius":
            alt = (w - 32) * 5 / 9 + 273.15
            other = "°F"
        elif unit_name == "degree_Fahrenheit":
            alt = w + 273.15
            other = "°C"
        else:
            return None
        alt_ok = (alt >= lo) & (alt <= hi)
        if _share(~ok & alt_ok) and not ok.all():
            return f"{other}: the values are implausible as written but plausible in {other}"
    if key == "conductivity":
        if unit_name.startswith("watt") and _share((w >= 0.15) & (w <= 1.5)):
            return ("Btu·in/(h·ft²·°F): values of 0.15-1.5 are typical of that unit, "
                    "0.02-0.2 W/(m·K) when read so")
        if "british" in unit_name and _share((w >= 0.015) & (w <= 0.1)):
            return "W/(m·K): values of 0.015-0.1 are typical of that unit"
    if key == "relative_humidity" and unit_name == "percent":
        if w.max() <= 1.0 and w.size >= 1 and (w > 0).any():
            return "a fraction: every value is between 0 and 1; write 60 for 60 %"
    return None


def below_still_air(name: str, mean_temperatures: np.ndarray, conductivities: np.ndarray) -> float | None:
    """The still-air conductivity a material's points fall below, or None (aerogels and vacuum exempt)."""
    lowered = name.lower()
    if "aerogel" in lowered or "vacuum" in lowered:
        return None
    k_air = air(np.asarray(mean_temperatures, dtype=float)).k
    below = np.asarray(conductivities) < k_air
    return float(k_air[below][0]) if below.any() else None
