"""The built-in library: insulation materials, finishes and nominal pipe sizes.

The tables are data files in ``lagsheet/data`` with a source on every row; this module
only reads them. Conductivity points are kept as published (°F, Btu·in/(h·ft²·°F)) and
converted here.
"""

from __future__ import annotations

import csv
import itertools
import re
from dataclasses import dataclass
from functools import lru_cache
from importlib.resources import files

import numpy as np

from .units import parse_unit, to_si


@dataclass(frozen=True)
class Material:
    name: str
    mean_temperatures: tuple[float, ...]  # K
    conductivities: tuple[float, ...]  # W/(m·K)
    min_temperature: float = -np.inf  # K, service limit
    max_temperature: float = np.inf  # K
    thicknesses: tuple[float, ...] = ()  # m, as sold (metric series)
    max_layer: float = np.inf  # m
    thicknesses_us: tuple[float, ...] = ()  # m, as sold in inch series; () = the metric list
    max_layer_us: float = np.nan  # m, the thickest single layer of the inch series; NaN = max_layer
    cost_per_volume: float = np.nan  # currency per m³ installed
    aliases: tuple[str, ...] = ()
    source: str = ""
    # declared -> design conductivity (ISO 23993: ageing, moisture, installation; VDI 2055-1 §4.1.2):
    # the engine, the code correction and the calculation package use k × design_factor
    design_factor: float = 1.0

    @property
    def design_conductivities(self) -> tuple[float, ...]:
        """The conductivities the calculation uses [W/(m·K)]: declared × 'Design factor'."""
        return tuple(k * self.design_factor for k in self.conductivities)


@dataclass(frozen=True)
class Finish:
    name: str
    emissivity: float
    aliases: tuple[str, ...] = ()
    source: str = ""
    absorptance: float = float("nan")  # solar absorptance α [-]
    absorptance_source: str = ""


def _rows(name: str) -> list[dict]:
    with files("lagsheet.data").joinpath(name).open(encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


@lru_cache(maxsize=4096)
def key(name: str) -> str:
    """How names are compared: case-insensitive, spaces and hyphens folded."""
    return re.sub(r"[\s_\-]+", " ", str(name).strip().lower())


def parse_thickness_list(text: str) -> tuple[float, ...]:
    """'25, 40, 50' (numbers in the caller's unit) -> sorted unique floats."""
    values, unit = parse_thickness_cell(text)
    if unit is not None:
        raise ValueError(f"thickness list {text!r} must hold plain numbers")
    return values


_LIST_UNITS = {"mm": "mm", "cm": "cm", "m": "m", "in": "in", "inch": "in", "inches": "in", '"': "in", "''": "in"}
_ITEM = re.compile(r'^(\d+(?:\.\d*)?(?:[\s-]+\d+/\d+|\s*[½¼¾⅛⅜])?|\d+/\d+|[½¼¾⅛⅜])\s*(mm|cm|m|inches|inch|in|"|\'\')?$',
                   re.I)


def parse_thickness_cell(text: str) -> tuple[tuple[float, ...], str | None]:
    """A 'Thicknesses' cell -> (sorted unique numbers, the unit written in it or None).

    '25, 40, 50' -> ((25, 40, 50), None); '1, 1½, 2 in' and '1", 1-1/2", 2"' ->
    ((1, 1.5, 2), 'in'). Items are separated by commas, semicolons or spaces.
    """
    raw = str(text).strip()
    chunks = [c.strip() for c in re.split(r"[;,]", raw) if c.strip()]
    items: list[str] = []
    for c in chunks:  # '1 1/2' is one item; '25 40 50' three
        items += [c] if _ITEM.match(c) else [p for p in re.split(r"\s+", c) if p]
    values, units = set(), set()
    for k, it in enumerate(items):
        if k + 1 < len(items) and it.lower() in _LIST_UNITS:
            raise ValueError(f"thickness list {text!r}: put the unit after the numbers")
        if it.lower() in _LIST_UNITS and k > 0:  # '25 40 50 mm': the unit as the last item
            units.add(_LIST_UNITS[it.lower()])
            continue
        m = _ITEM.match(it)
        if not m:
            raise ValueError(f"thickness list {text!r} must hold positive numbers")
        values.add(_fraction(m.group(1)))
        if m.group(2):
            units.add(_LIST_UNITS[m.group(2).lower()])
    if len(units) > 1:
        raise ValueError(f"thickness list {text!r} mixes units ({', '.join(sorted(units))}); use one")
    out = tuple(sorted(values))
    if not out or out[0] <= 0:
        raise ValueError(f"thickness list {text!r} must hold positive numbers")
    return out, (units.pop() if units else None)


def series(material: Material, us: bool) -> tuple[tuple[float, ...], float]:
    """(thicknesses sold [m], thickest single layer [m]) in the sheet's unit system."""
    if us and material.thicknesses_us:
        lim = material.max_layer_us
        return material.thicknesses_us, (lim if np.isfinite(lim) else material.max_layer)
    return material.thicknesses, material.max_layer


@lru_cache(maxsize=65536)
def build(total: float, listed: tuple[float, ...], max_layer: float, most: int = 3) -> tuple[float, ...] | None:
    """Layers [m], inner first, each a listed thickness no thicker than ``max_layer``, that add up
    to ``total``: the fewest layers, then the most even, thicker inside. None when no such build
    of up to ``most`` layers exists."""
    tol = 1e-7
    usable = sorted((t for t in listed if t <= max_layer + tol), reverse=True)
    if total <= max_layer + tol and any(abs(t - total) < tol for t in listed):
        return (total,)
    best = None
    for k in range(2, most + 1):
        for combo in itertools.combinations_with_replacement(usable, k):
            if abs(sum(combo) - total) < tol:
                spread = combo[0] - combo[-1]
                if best is None or spread < best[0] - tol:
                    best = (spread, combo)
        if best is not None:
            return best[1]
    return None


@lru_cache(maxsize=1)
def materials() -> dict[str, Material]:
    points: dict[str, list[tuple[float, float]]] = {}
    sources: dict[str, set[str]] = {}
    for r in _rows("conductivity.csv"):
        t = float(to_si([float(r["mean_temperature"])], parse_unit(r["temperature_unit"]), "K")[0])
        k = float(to_si([float(r["conductivity"])], parse_unit(r["conductivity_unit"]), "W/(m*K)")[0])
        points.setdefault(r["material"], []).append((t, k))
        sources.setdefault(r["material"], set()).add(r["source"])
    out = {}
    for r in _rows("materials.csv"):
        name = r["material"]
        pts = sorted(points[name])
        lo, hi = to_si([float(r["min_temperature"]), float(r["max_temperature"])],
                       parse_unit(r["temperature_unit"]), "K")
        out[key(name)] = Material(
            name=name,
            mean_temperatures=tuple(p[0] for p in pts),
            conductivities=tuple(p[1] for p in pts),
            min_temperature=float(lo),
            max_temperature=float(hi),
            thicknesses=tuple(t / 1000 for t in parse_thickness_list(r["thicknesses_mm"])),
            max_layer=float(r["max_layer_mm"]) / 1000,
            thicknesses_us=tuple(t * 0.0254 for t in parse_thickness_list(r["thicknesses_in"])),
            max_layer_us=float(r["max_layer_in"]) * 0.0254,
            aliases=tuple(a.strip() for a in r["aliases"].split(";") if a.strip()),
            source="; ".join(sorted(sources[name] | {r["source"]})),
        )
    return out


@lru_cache(maxsize=1)
def finishes() -> dict[str, Finish]:
    return {
        key(r["finish"]): Finish(
            r["finish"], float(r["emissivity"]),
            tuple(a.strip() for a in r["aliases"].split(";") if a.strip()), r["source"],
            float(r["absorptance"]), r["absorptance_source"])
        for r in _rows("finishes.csv")
    }


def lookup(table: dict, name: str):
    """Find a record by name or alias; None when unknown."""
    k = key(name)
    if k in table:
        return table[k]
    for rec in table.values():
        if any(k == key(a) for a in rec.aliases):
            return rec
    return None


@lru_cache(maxsize=1)
def _pipe_table() -> tuple[dict[float, float], dict[int, float]]:
    by_nps, by_dn = {}, {}
    for r in _rows("pipe_sizes.csv"):
        od = float(r["outside_diameter_mm"]) / 1000
        by_nps[_fraction(r["nps"])] = od
        by_dn[int(r["dn"])] = od
    return by_nps, by_dn


_UNICODE_FRACTIONS = {"½": " 1/2", "¼": " 1/4", "¾": " 3/4", "⅛": " 1/8", "⅜": " 3/8"}


def _fraction(text: str) -> float:
    t = text.strip()
    for u, a in _UNICODE_FRACTIONS.items():
        t = t.replace(u, a)
    t = t.replace("-", " ").strip()
    total = 0.0
    for part in t.split():
        if "/" in part:
            a, b = part.split("/")
            total += float(a) / float(b)
        else:
            total += float(part)
    return total


_NPS = re.compile(r'^\s*(?:nps\s*)?([\d\s/½¼¾⅛⅜.\-]+?)\s*(?:"|in|inch|inches|\'\')?\s*$', re.I)
_DN = re.compile(r"^\s*dn\s*(\d+)\s*$", re.I)


def _nps_of(size: str) -> float | None:
    """The NPS (inches, as a number) of a nominal size text, or None."""
    by_nps, _ = _pipe_table()
    text = str(size).strip()
    m = _DN.match(text)
    if m:
        return _dn_to_nps().get(int(m.group(1)))
    m = _NPS.match(text)
    if m and m.group(1).lstrip().startswith("-"):
        return None  # 'NPS -4', '-4"': no size is negative (a hyphen only joins '1-1/2')
    if m and (text.lower().startswith("nps") or re.search(r'("|in|inch|inches|\'\')\s*$', text, re.I)):
        try:
            nps = round(_fraction(m.group(1)), 4)
        except (ValueError, ZeroDivisionError):
            return None
        return nps if nps in by_nps else None
    return None


@lru_cache(maxsize=1)
def _dn_to_nps() -> dict[int, float]:
    return {int(r["dn"]): round(_fraction(r["nps"]), 4) for r in _rows("pipe_sizes.csv")}


@lru_cache(maxsize=4096)
def pipe_outside_diameter(size: str) -> float | None:
    """Outside diameter [m] of a nominal size (``NPS 4``, ``4"``, ``1 1/2"``, ``DN 100``).

    None when the text is not a nominal size in the table (ASME B36.10M).
    """
    nps = _nps_of(size)
    return None if nps is None else _pipe_table()[0][nps]


SCHEDULES = ("40", "STD", "80", "XS")  # the schedules of pipe_walls.csv


@lru_cache(maxsize=1)
def _wall_table() -> dict[tuple[float, str], float]:
    return {(round(_fraction(r["nps"]), 4), r["schedule"].upper()): float(r["wall_thickness_in"]) * 0.0254
            for r in _rows("pipe_walls.csv")}


def pipe_wall_thickness(size: str, schedule: str) -> float | None:
    """Wall thickness [m] of a nominal size in a schedule (``40``, ``STD``, ``80``, ``XS``;
    ``Sch 40`` and ``S40`` are read too); None when the pair is not in the table
    (ASME B36.10M carbon steel pipe)."""
    nps = _nps_of(size)
    sch = re.sub(r"^(sch(edule)?\.?\s*|s(?=\d))", "", str(schedule).strip(), flags=re.I).upper()
    return None if nps is None else _wall_table().get((nps, sch))


def nominal_sizes() -> dict[float, float]:
    return dict(_pipe_table()[0])




OD_TOLERANCE = 0.0005  # m: published tabulations of B36.10M differ in the last digit at NPS 10, 12, 18, 24


@lru_cache(maxsize=4096)
def nominal_size(od: float) -> tuple[str, int] | None:
    """(NPS as written in the table, e.g. ``'1 1/2'``, and DN) of the nominal pipe size whose
    outside diameter is within :data:`OD_TOLERANCE` of ``od`` [m]; None if none is."""
    best = None
    for r in _rows("pipe_sizes.csv"):
        d = abs(float(r["outside_diameter_mm"]) / 1000 - od)
        if d <= OD_TOLERANCE and (best is None or d < best[0]):
            best = (d, r["nps"], int(r["dn"]))
    return None if best is None else (best[1], best[2])
