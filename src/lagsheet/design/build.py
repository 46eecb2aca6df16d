"""Insulation systems as built: the layers of each slot, their words, the material take-off
and the installed cost of every candidate."""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import TYPE_CHECKING

import numpy as np

from ..physics.balance import System
from ..physics.candidates import per_line
from ..physics.layers import CYLINDER, SPHERE
from ..workbook import library
from ..workbook.display import show

if TYPE_CHECKING:
    from .lines import Line


@dataclass(frozen=True)
class Quantities:
    """Material take-off of candidate systems: per slot (inner, outer) and the jacket."""

    volume: np.ndarray  # (..., slots) insulation volume [m³]
    layers: np.ndarray  # (..., slots) number of layers the slot is built in
    layer_area: np.ndarray  # (..., slots) Σ over its layers of the area at mid-radius [m²]
    jacket_area: np.ndarray  # (...) outer surface [m²]


def quantities(lines: list[Line], thickness: np.ndarray, base: System) -> Quantities:
    """Volumes and areas of systems ``thickness`` (lines × candidates × slots) on ``lines``.

    Cylinders per their length, flats per their area, spheres whole. A slot thicker than
    its material's ``Max layer`` is built of listed thicknesses (:func:`layer_builds`);
    each layer's area is taken at its mid-radius.
    """
    n, m, slots = thickness.shape
    geometry = base.geometry[:, None]
    lengths = np.array([L.length for L in lines])[:, None]
    areas = np.array([L.area for L in lines])[:, None]

    def area_at(r):
        return np.select([geometry == CYLINDER, geometry == SPHERE],
                         [2 * np.pi * r * lengths, 4 * np.pi * r * r], np.broadcast_to(areas, r.shape))

    def volume(r1, r2):
        return np.select([geometry == CYLINDER, geometry == SPHERE],
                         [np.pi * (r2**2 - r1**2) * lengths, 4 / 3 * np.pi * (r2**3 - r1**3)],
                         areas * (r2 - r1))

    vol, count, larea = (np.zeros((n, m, slots)) for _ in range(3))
    r = np.broadcast_to(base.r_inner[:, None], (n, m)).copy()
    for j in range(slots):
        th = np.nan_to_num(thickness[:, :, j])
        each = layer_builds(lines, th, j)  # (n, m, most) layer thicknesses, inner first, 0 = none
        r2 = r + th
        vol[:, :, j] = volume(r, r2)
        count[:, :, j] = np.sum(each > 0, axis=2)
        below = np.cumsum(each, axis=2) - each  # thickness of this slot inside each layer
        mids = sum(area_at(r + below[:, :, q] + 0.5 * each[:, :, q]) * (each[:, :, q] > 0)
                   for q in range(each.shape[2]))
        larea[:, :, j] = mids
        r = r2
    return Quantities(vol, count, larea, area_at(r))


def layer_builds(lines: list[Line], th: np.ndarray, j: int, most: int = 4) -> np.ndarray:
    """The layers of slot ``j`` of thicknesses ``th`` (lines × candidates): (lines × candidates × most).

    Each build is of listed thicknesses of the material (:func:`library.build`); a total no
    list builds (a ``Fixed thickness``) is split into equal layers no thicker than ``Max layer``.
    Lines sharing a material's series are done together, once per distinct thickness.
    """
    n, m = th.shape
    out = np.zeros((n, m, most))
    groups: dict[tuple, list[int]] = {}
    for i, L in enumerate(lines):
        if j < len(L.series):
            groups.setdefault(L.series[j], []).append(i)
    for (listed, max_layer), members in groups.items():
        rows = np.array(members)
        block = th[rows]
        values, inverse = np.unique(block, return_inverse=True)
        table = np.zeros((len(values), most))
        for u, total in enumerate(values):
            table[u] = _build_of(float(total), listed, max_layer, most)
        out[rows] = table[inverse.reshape(block.shape)]
    return out


def _build_of(total: float, listed: tuple[float, ...], max_layer: float, most: int) -> np.ndarray:
    row = np.zeros(most)
    if total <= 0:
        return row
    layers = library.build(total, listed, max_layer)
    if layers is None:
        k = max(1, math.ceil(total / max_layer - 1e-9)) if np.isfinite(max_layer) else 1
        layers = (total / k,) * k
    layers = layers[:most - 1] + (sum(layers[most - 1:]),) if len(layers) > most else layers
    row[:len(layers)] = layers
    return row


COST_PAIRS = 65_536  # (line, candidate) pairs priced together by :func:`installed_cost`


def installed_cost(lines, cand, base, st):
    """Installed cost of every candidate (lines × candidates), NaN where a cost is missing.

    insulation volume × 'Cost per volume' of its material + outer area × 'Jacket cost per
    area' + Σ over layers of the layer's area at its mid-radius × 'Labour per layer'.
    ('Economic' without a cost it needs is an input error: see resolve.)
    """
    n, m, slots = cand.shape
    jacket = float(st["jacket_cost_per_area"])
    labour = float(st["labour_per_layer"])
    price = np.array([[L.materials[j].cost_per_volume if j < len(L.materials) else 0.0 for j in range(slots)]
                      for L in lines]).reshape(n, 1, slots)
    total = np.full((n, m), np.nan)
    step = max(1, COST_PAIRS // max(m, 1))  # lines a block: the take-off's temporaries stay bounded
    for a in range(0, n, step):  # every line's cost is its own: blocks give the same numbers
        rows = np.arange(a, min(a + step, n))
        q = quantities(lines[a:a + step], cand[rows], per_line(base, rows))
        block = (price[rows] * q.volume + labour * q.layer_area).sum(axis=2) + jacket * q.jacket_area
        total[rows] = np.where(np.isfinite(cand[rows, :, 0]), block, np.nan)
    return total


def layers_text(th: np.ndarray, materials: list[library.Material], us: bool,
                t_interface: float = np.nan, series: list | None = None) -> str:
    series = series or [library.series(mm, us) for mm in materials]
    text, count = _layer_words(tuple(float(x) for x in th), tuple(materials), us, tuple(series))
    if count == 2 and np.isfinite(t_interface):
        text += f" (interface {show(t_interface, 'temperature', us)})"
    return text


@lru_cache(maxsize=4096)
def _layer_words(th: tuple[float, ...], materials: tuple[library.Material, ...],
                 us: bool, series: tuple) -> tuple[str, int]:
    """('2 × 50 mm calcium silicate + 40 mm mineral wool', 2): few distinct systems in a schedule.

    Layers of one material as built (:func:`layer_builds`): '2 × 60 mm' when equal,
    '2 layers (65 and 50 mm)' when not."""
    parts = []
    for thick, m, (listed, max_layer) in zip(th, materials, series, strict=False):
        if thick <= 0:
            continue
        each = [x for x in _build_of(thick, listed, max_layer, 4) if x > 0]
        shown = [show(x, "thickness", us) for x in each]
        if len(each) == 1:
            parts.append(f"{shown[0]} {m.name}")
        elif len(set(shown)) == 1:
            parts.append(f"{len(each)} × {shown[0]} {m.name}")
        else:
            unit = shown[0].rsplit(" ", 1)[1]
            values = " and ".join(x.rsplit(" ", 1)[0] for x in shown)  # no ' + ': that joins materials
            parts.append(f"{len(each)} layers ({values} {unit}) {m.name}")
    return (" + ".join(parts) if parts else "bare"), len(parts)
