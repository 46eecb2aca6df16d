"""What estimators receive: the Summary (per area and total) and the Quantities (bill of
materials) of a filled schedule, as plain tables of values in the workbook's units.

Every number is a sum over the lines, so the tests can hold each total to the lines
exactly. Writers turn these tables into sheets.
"""

from __future__ import annotations

import datetime as _dt
import math

import numpy as np

from . import __version__, schema
from .display import show
from .inputs import Inputs
from .io.table import NewSheet as SheetTable
from .physics.layers import CYLINDER, FLAT
from .report import CAUTIONS
from .spec import Results
from .units import from_si

# (key, SI unit, US unit) of the quantity columns
_UNITS = {
    "power": ("kW", "MBtu/h"), "energy": ("MWh", "MMBtu"), "co2": ("t/yr", "t/yr"),
    "length": ("m", "ft"), "area": ("m²", "ft²"), "volume": ("m³", "ft³"),
}
_PINT = {"kW": "kW", "MBtu/h": "MBtu/hour", "MWh": "MWh", "MMBtu": "MMBtu", "t/yr": "t/year",
         "m": "m", "ft": "foot", "m²": "m**2", "ft²": "foot**2", "m³": "m**3", "ft³": "foot**3"}
_SI = {"power": "W", "energy": "kWh", "co2": "kg/year", "length": "m", "area": "m**2", "volume": "m**3"}


def _conv(values, kind: str, us: bool):
    unit = _UNITS[kind][1 if us else 0]
    return from_si(np.asarray(values, dtype=float), _SI[kind], _PINT[unit])


def _fin(x) -> float:
    x = float(x)
    return x if math.isfinite(x) else 0.0


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
            f"Annual saving [{cur}]", "CO2 [t/yr]", f"Installed cost [{cur}]", "Payback [yr]"]
    header_row = s.add(head, bold=True)
    loss = np.nan_to_num(v["heat_loss"])
    energy = np.nan_to_num(v["annual_energy"])
    fm = {4: "#,##0.0", 5: "#,##0.0", 6: "#,##0.0", 7: "#,##0.0", 8: "#,##0", 9: "#,##0", 10: "#,##0.0",
          11: "#,##0", 12: "0.0"}
    first = None
    groups = [(a, [i for i in range(res.n) if areas[i] == a]) for a in order] + [("Total", list(range(res.n)))]
    for name, idx in groups:
        idx = np.array(idx, dtype=int)
        st = [res.status[i] for i in idx]
        gain = loss[idx][loss[idx] < 0].sum()
        lost = loss[idx][loss[idx] > 0].sum()
        inst = np.array([v["installed_cost"][i] for i in idx])
        saving = sum(_fin(v["annual_saving"][i]) for i in idx)
        cost_known = np.isfinite(inst) & np.isfinite(np.array([v["annual_saving"][i] for i in idx]))
        installed = float(inst[cost_known].sum()) if cost_known.any() else None
        saving_known = float(np.nansum([v["annual_saving"][i] for i in idx[cost_known]])) if cost_known.any() else 0
        payback = installed / saving_known if installed is not None and saving_known > 0 else None
        r = s.add([name, len(idx), st.count("error"), st.count("warning"),
                   float(_conv(lost, "power", us)),
                   float(_conv(-gain, "power", us)),
                   float(_conv(np.nansum(np.abs(np.nan_to_num(v["bare_heat_loss"][idx]))), "power", us)),
                   float(_conv(np.abs(energy[idx]).sum(), "energy", us)),
                   float(sum(_fin(v["annual_cost"][i]) for i in idx)), float(saving),
                   float(np.nansum(v["co2"][idx])) / 1000, installed, payback], fm, bold=name == "Total")
        first = r if first is None else first
    s.chart = {"title": f"Heat loss by area, insulated and bare [{p}]", "categories": (0, first, first + len(order) - 1),
               "series": [((header_row, 4), 4, first, first + len(order) - 1),
                          ((header_row, 6), 6, first, first + len(order) - 1)]}
    s.add([])
    s.add(["Settings used", "Value", "Unit", "Source"], bold=True)
    given = inputs.settings.get("_given", set())
    for key, (title, dim, si, _default, _kind) in schema.SETTINGS.items():
        value = inputs.settings.get(key)
        unit = {"dimensionless": "", "1/kWh": f"{cur}/kWh", "1/m**2": f"{cur}/m²", "m": "m", "K": "K",
                "kg/kWh": "kg/kWh", "year": "years", "": ""}.get(si, si)
        if dim == "%" and isinstance(value, float):
            value, unit = value * 100, "%"
        if isinstance(value, float) and not math.isfinite(value):
            value = None
        s.add([title, value, unit, "given" if key in given else ("default" if value is not None else "not set")])
    s.add([])
    s.add(["Conditions used", "Ambient", "Surroundings", "Wind [m/s]", "RH [%]", "Hours [h/yr]"], bold=True)
    used = {c.name for L in res.lines for c in L.conditions}
    for c in inputs.conditions.values():
        if c.name in used:
            s.add([c.name, show(c.t_air, "temperature", us), show(c.t_surroundings, "temperature", us),
                   c.wind, round(c.rh * 100, 1), c.hours])
    s.add([])
    s.add(["Cautions"], bold=True)
    for text in CAUTIONS:
        s.add([text])
    s.widths = {0: 28, **{c: 15 for c in range(1, 13)}}
    return s


def quantities_table(inputs: Inputs, res: Results) -> SheetTable:
    """Bill of materials: material × size × layer build, summed over computed lines."""
    us = inputs.us_units
    t = inputs.lines
    q = res.quantities
    s = SheetTable("Quantities")
    lu, au, vu = _UNITS["length"][us], _UNITS["area"][us], _UNITS["volume"][us]
    s.add(["lagsheet quantities", f"lagsheet {__version__}"], bold=True)
    s.add([])
    s.add(["Material", "Size", "Layers", "Lines", f"Pipe length [{lu}]", f"Flat area [{au}]",
           f"Insulation volume [{vu}]", f"Jacket area [{au}]"], bold=True)
    if q is None:
        return s
    size_col = t.get("size")
    groups: dict[tuple, dict] = {}
    for i, L in enumerate(res.lines):
        if res.status[i] == "error" or not np.isfinite(res.values["thickness"][i]):
            continue
        for j, m in enumerate(L.materials):
            th = res.chosen[i, j]
            if th <= 0:
                continue
            count = int(q.layers[i, 0, j])
            build = (f"{count} × {show(th / count, 'thickness', us)}" if count > 1
                     else show(th, "thickness", us))
            if L.geometry == FLAT:
                size, order = L.word, 1e9
            elif size_col is not None and size_col[i]:
                size, order = str(size_col[i]), 2 * L.r_inner
            else:
                size, order = f"OD {show(2 * L.r_inner, 'radius', us)}", 2 * L.r_inner
            g = groups.setdefault((m.name, order, size, build, th),
                                  {"lines": 0, "length": 0.0, "area": 0.0, "volume": 0.0, "jacket": 0.0})
            g["lines"] += 1
            if L.geometry == CYLINDER:
                g["length"] += L.length
            elif L.geometry == FLAT:
                g["area"] += L.area
            g["volume"] += float(q.volume[i, 0, j])
            if j == len([x for x in res.chosen[i] if x > 0]) - 1:  # the jacket goes on the outer material
                g["jacket"] += float(q.jacket_area[i, 0])
    fm = {4: "#,##0.0", 5: "#,##0.0", 6: "#,##0.00", 7: "#,##0.0"}
    by_material: dict[str, list] = {}
    for key in sorted(groups):
        by_material.setdefault(key[0], []).append(key)
    for mat, keys in by_material.items():
        tot = {"lines": 0, "length": 0.0, "area": 0.0, "volume": 0.0, "jacket": 0.0}
        for key in keys:
            g = groups[key]
            for k in tot:
                tot[k] += g[k]
            s.add(_q_row(mat, key[2], key[3], g, us), fm)
        s.add(_q_row(f"{mat} total", "", "", tot, us), fm, bold=True)
    s.widths = {0: 26, 1: 14, 2: 22, 3: 8, 4: 16, 5: 16, 6: 18, 7: 16}
    return s


def _q_row(mat, size, build, g, us) -> list:
    return [mat, size, build, g["lines"], float(_conv(g["length"], "length", us)),
            float(_conv(g["area"], "area", us)), float(_conv(g["volume"], "volume", us)),
            float(_conv(g["jacket"], "area", us))]
