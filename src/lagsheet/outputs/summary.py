"""What estimators receive: the Summary (per area and total) and the Quantities (bill of
materials) of a filled schedule, as plain tables of values in the workbook's units.

Every number is a sum over the lines, so the tests can hold each total to the lines
exactly. Writers turn these tables into sheets.
"""

from __future__ import annotations

import datetime as _dt
import math

import numpy as np

from .. import __version__
from ..design.select import Results
from ..io.table import NewSheet as SheetTable
from ..physics.layers import CYLINDER, FLAT, SPHERE
from ..workbook import fields as schema
from ..workbook import library
from ..workbook.display import show
from ..workbook.inputs import Inputs
from ..workbook.units import from_si
from .cautions import CAUTIONS
from .totals import covered, total
from .tracing_tables import fittings_rows, tracing_rows

# (key, SI unit, US unit) of the quantity columns
_UNITS = {
    "power": ("kW", "MBtu/h"), "energy": ("MWh", "MMBtu"), "co2": ("t/yr", "t/yr"),
    "length": ("m", "ft"), "area": ("m²", "ft²"), "volume": ("m³", "ft³"),
}
# settings with a unit shown in the workbook's own system: SI unit -> (SI shown, US shown)
_SETTING_UNITS = {"m": ("mm", "in"), "K": ("K", "°F")}
_SI = {"power": "W", "energy": "kWh", "co2": "kg/year", "length": "m", "area": "m**2", "volume": "m**3"}


def _conv(values, kind: str, us: bool):
    unit = _UNITS[kind][1 if us else 0]
    return from_si(np.asarray(values, dtype=float), _SI[kind], unit)


def summary(inputs: Inputs, res: Results, today: _dt.date | None = None) -> SheetTable:
    """Per area and in total: counts, heat flows, energy, money, CO2, payback."""
    us = inputs.us_units
    cur = str(inputs.settings["currency"])
    t = inputs.lines
    v = res.values
    area_col = t.get("area") if t is not None else None
    areas = [(area_col[i] if area_col is not None and area_col[i] else "(no area)") for i in range(res.n)]
    order = list(dict.fromkeys(areas))
    p, e = _UNITS["power"][us], _UNITS["energy"][us]
    s = SheetTable("Summary")
    s.add(["lagsheet summary", f"lagsheet {__version__}", (today or _dt.date.today()).isoformat()], bold=True)
    s.add([f"Schedule: {inputs.lines.sheet if inputs.lines else ''}; results at each line's first condition"])
    s.add([])
    head = ["Area", "Lines", "Errors", "Warnings", f"Heat loss [{p}]", f"Heat gain [{p}]",
            f"Bare heat loss [{p}]", f"Annual energy [{e}]", f"Annual cost [{cur}]",
            f"Annual saving [{cur}]", "CO2 [t/yr]", f"Installed cost [{cur}]", "Payback [yr]", "Totals cover"]
    header_row = s.add(head, bold=True)
    fm = {4: "#,##0.0", 5: "#,##0.0", 6: "#,##0.0", 7: "#,##0.0", 8: "#,##0", 9: "#,##0", 10: "#,##0.0",
          11: "#,##0", 12: "0.0"}
    first = None
    groups = [(a, [i for i in range(res.n) if areas[i] == a]) for a in order] + [("Total", list(range(res.n)))]
    for name, idx in groups:
        idx = np.array(idx, dtype=int)
        st = [res.status[i] for i in idx]
        r = s.add([name, len(idx), st.count("error"), st.count("warning"), *_totals(v, idx, us)], fm,
                  bold=name == "Total")
        first = r if first is None else first
    s.chart = {"title": f"Heat loss by area, insulated and bare [{p}]", "categories": (0, first, first + len(order) - 1),
               "series": [((header_row, 4), 4, first, first + len(order) - 1),
                          ((header_row, 6), 6, first, first + len(order) - 1)]}
    tracing_rows(s, inputs, res)
    s.add([])
    s.add(["Settings used", "Value", "Unit", "Source"], bold=True)
    given = inputs.settings.get("_given", set())
    for key, (title, dim, si, _default, _kind) in schema.SETTINGS.items():
        value = inputs.settings.get(key)
        unit = {"dimensionless": "", "1/kWh": f"{cur}/kWh", "1/m**2": f"{cur}/m²", "m": "m", "K": "K",
                "kg/kWh": "kg/kWh", "year": "years", "": ""}.get(si, si)
        if dim == "%" and isinstance(value, float):
            value, unit = value * 100, "%"
        elif si in _SETTING_UNITS and isinstance(value, float):  # in the workbook's own units
            unit = _SETTING_UNITS[si][1 if us else 0]
            value = round(float(from_si(value, si, unit, difference=si == "K")), 3)
        if isinstance(value, bool):
            value = "yes" if value else "no"
        if isinstance(value, float) and not math.isfinite(value):
            value = None
        s.add([title, value, unit, "given" if key in given else ("default" if value is not None else "not set")])
    s.add([])
    _conditions_rows(s, inputs, res, us)
    s.add([])
    s.add(["Cautions"], bold=True)
    for text in CAUTIONS:
        s.add([text])
    s.widths = {0: 28, **{c: 15 for c in range(1, 13)}, 13: 60}
    return s


def _conditions_rows(s: SheetTable, inputs: Inputs, res: Results, us: bool) -> None:
    """The named conditions the lines use, in the workbook's own units."""
    wind_unit = "mph" if us else "m/s"
    s.add(["Conditions used", "Ambient", "Surroundings", f"Wind [{wind_unit}]", "RH [%]", "Hours [h/yr]"], bold=True)
    used = {c.name for L in res.lines for c in L.conditions}
    for c in inputs.conditions.values():
        if c.name in used:
            s.add([c.name, show(c.t_air, "temperature", us), show(c.t_surroundings, "temperature", us),
                   round(float(from_si(c.wind, "m/s", wind_unit)), 2), round(c.rh * 100, 1), c.hours])


def _totals(v: dict, idx: np.ndarray, us: bool) -> list:
    """A Summary row's totals over lines ``idx``: heat lost, heat gained, bare heat loss, energy (each
    counted as a positive amount), cost, saving, CO2 [t/yr], installed cost, payback and coverage."""
    inst = v["installed_cost"][idx]
    installed = total(inst) if covered(inst) else None
    both = np.isfinite(inst) & np.isfinite(v["annual_saving"][idx])  # payback: lines with both
    saving_known = total(v["annual_saving"], idx[both])
    payback = total(inst[both]) / saving_known if saving_known > 0 else None
    return [float(_conv(total(v["heat_loss"], idx, sign=1), "power", us)),
            float(_conv(-total(v["heat_loss"], idx, sign=-1), "power", us)),
            float(_conv(total(np.abs(v["bare_heat_loss"]), idx), "power", us)),
            float(_conv(total(np.abs(v["annual_energy"]), idx), "energy", us)),
            total(v["annual_cost"], idx), total(v["annual_saving"], idx), total(v["co2"], idx) / 1000,
            installed, payback, coverage(v, idx, both)]


# Summary column -> the per-line result it adds up
COVERED = (("Heat loss", "heat_loss"), ("Heat gain", "heat_loss"), ("Bare heat loss", "bare_heat_loss"),
           ("Annual energy", "annual_energy"), ("Annual cost", "annual_cost"),
           ("Annual saving", "annual_saving"), ("CO2", "co2"), ("Installed cost", "installed_cost"))


def coverage(values: dict, idx: np.ndarray, payback_lines: np.ndarray) -> str | None:
    """Which totals of a Summary row leave lines out, and how many they cover: 'Installed cost,
    Payback: 6 of 10 lines'. None when every total covers every line of the row."""
    n = len(idx)
    counts = {name: covered(values[key], idx) for name, key in COVERED}
    counts["Payback"] = int(payback_lines.sum())
    by_count: dict[int, list[str]] = {}
    for name, k in counts.items():
        if k < n:
            by_count.setdefault(k, []).append(name)
    if not by_count:
        return None
    return "; ".join(f"{', '.join(names)}: {k} of {n} lines" for k, names in sorted(by_count.items(), reverse=True))


SIZE_STYLES = ("NPS", "inch", "DN")


def size_style(sizes, us: bool) -> str:
    """How the sheet writes pipe sizes: 'NPS' (``NPS 2``), 'inch' (``2"``), 'DN' (``DN 50``) or
    'OD' when it types no nominal size. A mixed sheet takes the style most of its lines use;
    a tie goes to the style of its unit system (NPS in inches, DN in millimetres)."""
    count = dict.fromkeys(SIZE_STYLES, 0)
    for text in sizes:
        if not text or library.pipe_outside_diameter(str(text)) is None:
            continue
        t = str(text).strip().lower()
        count["DN" if t.startswith("dn") else "NPS" if t.startswith("nps") else "inch"] += 1
    if not any(count.values()):
        return "OD"
    prefer = ("NPS", "inch", "DN") if us else ("DN", "NPS", "inch")
    return max(prefer, key=lambda k: count[k])  # max keeps the first of equals: the preferred


def size_label(od: float, style: str, us: bool) -> tuple[str, float]:
    """(label, sort key) of an outside diameter [m] in the sheet's style; a diameter that is no
    nominal pipe size (within 0.5 mm, ASME B36.10M) is labelled by its OD."""
    nominal = library.nominal_size(round(float(od), 6)) if style != "OD" else None
    if nominal is None:
        return f"OD {show(od, 'radius', us)}", round(float(od), 4)
    nps, dn = nominal
    od_table = library.pipe_outside_diameter(f"DN {dn}")
    return {"NPS": f"NPS {nps}", "inch": f'{nps}"', "DN": f"DN {dn}"}[style], od_table


def quantities_table(inputs: Inputs, res: Results) -> SheetTable:
    """Bill of materials: material × size × layer build, summed over computed lines.

    One row per outside diameter, whatever it was typed as (``NPS 2``, ``2"``, ``DN 50`` and
    ``Outside diameter`` 60.3 mm are one size), labelled as the sheet labels its sizes
    (:func:`size_style`). Pipes give their length, flats and spheres their surface area. A line
    is one line of each material it holds: one material in both slots is one row of it
    (:func:`_build`), so lines, length, area and jacket count once and the volume is both slots'.
    """
    us = inputs.us_units
    t = inputs.lines
    s = SheetTable("Quantities")
    lu, au, vu = _UNITS["length"][us], _UNITS["area"][us], _UNITS["volume"][us]
    s.add(["lagsheet quantities", f"lagsheet {__version__}"], bold=True)
    s.add([])
    s.add(["Material", "Size", "Layers", "Lines", f"Pipe length [{lu}]", f"Surface area [{au}]",
           f"Insulation volume [{vu}]", f"Jacket area [{au}]"], bold=True)
    if res.quantities is None:
        return s
    size_col = t.get("size")
    style = size_style([size_col[i] for i in range(res.n)] if size_col is not None else [], us)
    _material_rows(s, _groups(res, style, us), us)
    tracing_rows(s, inputs, res)
    fittings_rows(s, res, lambda L: _size_of(L, style, us))
    s.add([])
    s.add([{"NPS": "Sizes as NPS, the way most lines of the sheet give them; ",
            "inch": "Sizes in inches, the way most lines of the sheet give them; ",
            "DN": "Sizes as DN, the way most lines of the sheet give them; ",
            "OD": "Sizes by outside diameter, as the sheet gives them; "}[style]
           + "lines of one outside diameter are one size however typed (ASME B36.10M, within 0.5 mm). "
           "Pipe length for pipes and risers (a vessel's height), surface area for flats and spheres."])
    s.widths = {0: 26, 1: 14, 2: 22, 3: 8, 4: 16, 5: 16, 6: 18, 7: 16}
    return s


def _size_of(L, style: str, us: bool) -> tuple[str, float]:
    """(label, sort key) of a line's size in the Quantities: flats by their word, vessels and
    spheres by their outside diameter, pipes in the sheet's own style (:func:`size_label`)."""
    od = 2 * L.r_inner
    if L.geometry == FLAT:
        return L.word, 1e9
    if L.geometry == SPHERE or L.word == "vessel":
        return f"{L.word}, OD {show(od, 'radius', us)}", round(od, 4)
    return size_label(od, style, us)


def _groups(res: Results, style: str, us: bool) -> dict[tuple, dict]:
    """(material, size order, size, thickness, build) -> its lines, length, area, volume and jacket
    area, over the computed lines. A line is one line of each material it holds: slots of one
    material (Insulation and Outer insulation alike) make one row, their layers inner first.

    The arrays are read once, as one list per slot (floats: no object per line for the
    collector to trace), and a size or build already labelled is not labelled again."""
    q = res.quantities
    groups: dict[tuple, dict] = {}
    chosen, layers = res.chosen.T.tolist(), q.layers[:, 0].T.tolist()  # [slot][line]
    volume, jacket = q.volume[:, 0].T.tolist(), q.jacket_area[:, 0].tolist()
    sized = np.isfinite(res.values["thickness"]).tolist()
    sizes: dict[tuple, tuple[str, float]] = {}
    builds: dict[tuple, str] = {}
    for i, L in enumerate(res.lines):
        if res.status[i] == "error" or not sized[i]:
            continue
        size, order = sizes.get((L.geometry, L.word, L.r_inner)) or sizes.setdefault(
            (L.geometry, L.word, L.r_inner), _size_of(L, style, us))
        laid = [j for j in range(len(L.materials)) if chosen[j][i] > 0]
        by_name: dict[str, list[int]] = {}
        for j in laid:
            by_name.setdefault(L.materials[j].name, []).append(j)
        for name, slots in by_name.items():
            th = float(sum(chosen[j][i] for j in slots))
            shape = tuple((chosen[j][i], layers[j][i]) for j in slots)
            build = builds.get(shape) or builds.setdefault(
                shape, _build([c[i] for c in chosen], [n[i] for n in layers], slots, us))
            g = groups.get((name, order, size, th, build))
            if g is None:
                g = groups[(name, order, size, th, build)] = {**dict.fromkeys(_AMOUNTS, 0.0), "lines": 0}
            g["lines"] += 1
            if L.geometry == CYLINDER:
                g["length"] += L.length
            elif L.geometry == FLAT:
                g["area"] += L.area
            elif L.geometry == SPHERE:
                g["area"] += math.pi * (2 * L.r_inner) ** 2  # the sphere's own surface, to be covered
            g["volume"] += float(sum(volume[j][i] for j in slots))
            if laid[-1] in slots:  # the jacket goes on the outer material
                g["jacket"] += float(jacket[i])
    return groups


_AMOUNTS = ("lines", "length", "area", "volume", "jacket")


def _material_rows(s: SheetTable, groups: dict[tuple, dict], us: bool) -> None:
    """One row per material, size and build (thin to thick), then the material's total; the
    amounts of all rows converted to the sheet's units at once."""
    fm = {4: "#,##0.0", 5: "#,##0.0", 6: "#,##0.00", 7: "#,##0.0"}
    by_material: dict[str, list] = {}
    for key in sorted(groups):
        by_material.setdefault(key[0], []).append(key)
    rows = []  # (material, size, build, amounts, bold)
    for mat, keys in by_material.items():
        tot = {**dict.fromkeys(_AMOUNTS, 0.0), "lines": 0}
        for key in keys:
            for k in tot:
                tot[k] += groups[key][k]
            rows.append((mat, key[2], key[4], groups[key], False))
        rows.append((f"{mat} total", "", "", tot, True))
    if not rows:
        return
    conv = [_conv([g[k] for *_, g, _b in rows], kind, us).tolist()
            for k, kind in (("length", "length"), ("area", "area"), ("volume", "volume"), ("jacket", "area"))]
    for (mat, size, build, g, bold), *amounts in zip(rows, *conv, strict=True):
        s.add([mat, size, build, g["lines"], *amounts], fm, bold=bold)


def _build(chosen, layers, slots: list[int], us: bool) -> str:
    """The layer build of one material on one line, inner slot first: ``20 mm``, ``2 × 40 mm``,
    and for a material in both slots ``20 + 20 mm`` (``2 × 40 mm + 20 mm`` when a slot has layers)."""
    parts = []
    for j in slots:
        th, count = float(chosen[j]), int(layers[j])
        parts.append(f"{count} × {show(th / count, 'thickness', us)}" if count > 1 else show(th, "thickness", us))
    units = {p.rsplit(" ", 1)[-1] for p in parts}
    if len(parts) > 1 and len(units) == 1 and not any("×" in p for p in parts):
        return " + ".join(p.rsplit(" ", 1)[0] for p in parts) + " " + units.pop()
    return " + ".join(parts)
