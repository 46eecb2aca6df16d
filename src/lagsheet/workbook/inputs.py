"""Inputs of a run, assembled from the checked sheets: lines, conditions, materials, settings.

Still the *check* stage: it resolves names (materials, finishes, conditions, nominal
sizes) and the defaults, and notes every doubt; it knows nothing of heat.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from ..errors import Note
from ..io.table import Book, address, fold
from . import codes as codes_
from . import fields as schema
from . import fittings as fitting_rows
from . import library, plausibility
from .tables import Table, read_table, split_header, unused_columns
from .tables import header_map as check_header_map
from .units import UnitTextError, from_si, is_unit, parse_unit, split_currency, to_si, unit_label
from .words import suggest


@dataclass(frozen=True)
class Condition:
    name: str
    t_air: float  # K
    t_surroundings: float  # K
    wind: float  # m/s
    rh: float  # 0-1
    hours: float  # h per year
    source: str = "built-in"
    solar: float = 0.0  # solar irradiance on a surface facing the sun [W/m²]


# Built-in design conditions: placeholders a project replaces with its own (documented).
BUILTIN_CONDITIONS = {
    "indoor": Condition("indoor", 293.15, 293.15, 0.0, 0.60, 8760.0),
    "outdoor": Condition("outdoor", 283.15, 283.15, 3.0, 0.75, 8760.0),
}


@dataclass(frozen=True)
class UserFluid:
    """A process fluid of the Fluids sheet, defined by its specific heat and density."""

    name: str
    cp: float  # J/(kg·K)
    density: float  # kg/m³ (NaN when not given)
    source: str = ""


@dataclass
class Inputs:
    lines: Table | None
    conditions: dict[str, Condition]
    materials: dict[str, library.Material]
    finishes: dict[str, library.Finish]
    settings: dict[str, object]
    notes: list[Note] = field(default_factory=list)  # workbook-level notes
    columns: list[dict] = field(default_factory=list)  # column reports (JSON)
    us_units: bool = False
    fluids: dict[str, UserFluid] = field(default_factory=dict)  # folded name -> fluid
    unusable: dict[str, str] = field(default_factory=dict)  # material key -> its Materials cell in error
    bad_conditions: dict[str, str] = field(default_factory=dict)  # folded condition name -> its row's cell
    codes: dict[str, codes_.Code] = field(default_factory=codes_.builtin)  # folded name -> minimum-thickness table
    bad_codes: dict[str, str] = field(default_factory=dict)  # folded code name -> the Codes cell in error
    fittings: tuple = fitting_rows.BUILTIN  # equivalent lengths: the Fittings sheet's rows, then the built-in


def _find(book: Book, wanted: str) -> str | None:
    for n in book.sheet_names():
        if fold(n) == fold(wanted):
            return n
    return None


def read_inputs(book: Book, lines_sheet: str = "Lines", header_map: dict[str, str] | None = None) -> Inputs:
    """Every sheet checked and in SI; ``header_map`` ('Their header' -> 'Our header', from
    ``--map``) reads the user's own Lines headers as ours."""
    mapping = check_header_map(header_map or {}, schema.LINE_FIELDS)
    notes: list[Note] = []
    columns: list[dict] = []
    settings = _settings(book, notes)
    bad_conditions: dict[str, str] = {}
    conditions = _conditions(book, notes, columns, bad_conditions)
    unusable: dict[str, str] = {}
    materials = _materials(book, notes, columns, unusable)
    fluids = _fluids(book, notes, columns)
    codes, bad_codes = codes_.read_codes(book, notes, columns)
    fittings = fitting_rows.read(book, notes, columns)
    name = _find(book, lines_sheet)
    lines = read_table(book.sheet(name), schema.LINE_FIELDS, "Tag", mapping) if name else None
    if name is None:
        notes.append(Note("error", "no-lines-sheet",
                          f"the workbook has no sheet {lines_sheet!r}; add one with a header row that "
                          f"includes 'Tag' (sheets found: {', '.join(book.sheet_names())})"))
    elif lines is None:
        notes.append(Note("error", "no-header",
                          f"sheet {name!r} has no header row: no cell says 'Tag'. Put the headers "
                          "(Tag, Shape, Size, Operating temperature [°C], ...) in one row", name))
    if lines is not None:
        notes.extend(lines.notes)
        notes.extend(unused_columns(lines, schema.LINE_FIELDS, [o.header for o in schema.OUTPUTS]))
        columns.extend(c.report(lines.sheet) for c in lines.columns.values())
        for req in ("tag", "shape", "operating_temperature"):
            if req not in lines.columns:
                f = next(f for f in schema.LINE_FIELDS if f.key == req)
                notes.append(Note("error", "missing-column",
                                  f"sheet {lines.sheet!r} needs a column {f.header!r}"
                                  + (f" [{f.unit}]" if f.unit else "")
                                  + f" in its header row (row {lines.header_row + 1})", lines.sheet,
                                  address(lines.header_row, 0)))
    us = _us_units(lines)
    return Inputs(lines, conditions, materials, dict(library.finishes()), settings, notes, columns, us,
                  fluids, unusable, bad_conditions, codes, bad_codes, fittings)


def _us_units(t: Table | None) -> bool:
    """Results follow the input's unit system: US when most unit-bearing columns are."""
    if t is None:
        return False
    us = si = 0
    for c in t.columns.values():
        if c.unit is None or c.field.kind == schema.TEXT:
            continue
        name = str(c.unit)
        if any(w in name for w in ("Fahrenheit", "Rankine", "inch", "foot", "british", "mile")):
            us += 1
        elif any(w in name for w in ("Celsius", "kelvin", "meter", "watt")):
            si += 1
    return us > si


class _SettingError(ValueError):
    """A setting out of its range, in our own words (shown to the user as they are)."""


def _settings(book: Book, notes: list[Note]) -> dict[str, object]:
    values = {k: v[3] for k, v in schema.SETTINGS.items()}
    values["_given"] = set()
    name = _find(book, "Settings")
    if name is None:
        notes.append(Note("info", "default-settings",
                          "no Settings sheet: built-in defaults used for prices, efficiency and "
                          "economics (see the README); add a Settings sheet to set your own"))
        return values
    raw = book.sheet(name)
    hr = raw.find_header("Setting")
    if hr is None:
        notes.append(Note("warning", "no-header", "sheet 'Settings' has no header cell 'Setting'; "
                          "it is ignored and defaults are used", name))
        return values
    head = {fold(split_header(v)[0]): c for c, v in enumerate(raw.grid[hr]) if isinstance(v, str)}
    cs, cv, cu = head.get("setting"), head.get("value"), head.get("unit")
    by_name = {fold(v[0]): k for k, v in schema.SETTINGS.items()} | schema.SETTING_ALIASES
    priced: list[tuple[str, str, str]] = []  # (currency of a price's unit, setting, unit cell)
    for r in range(hr + 1, len(raw.grid)):
        label = raw.value(r, cs)
        if label is None:
            continue
        key = by_name.get(fold(label))
        where = address(r, cv if cv is not None else cs)
        if key is None:
            notes.append(Note("warning", "unknown-setting", f"setting {label!r} is not known and is ignored"
                              + suggest(label, by_name, show=str), name, where))
            continue
        _setting_row(raw, r, key, (cv, cu), values, notes, name, where)
        if cu is not None and isinstance(raw.value(r, cu), str) and key in values["_given"]:
            currency = split_currency(raw.value(r, cu).strip())[0]
            if currency:
                priced.append((currency, schema.SETTINGS[key][0], address(r, cu)))
    _currency_clash(values, priced, notes, name)
    return values


_CURRENCY_SYMBOLS = {"$": "usd", "€": "eur", "£": "gbp", "¥": "jpy", "₹": "inr"}


def _currency_clash(values: dict, priced: list[tuple[str, str, str]], notes: list[Note], name: str) -> None:
    """A price whose unit names another currency than the workbook's: lagsheet converts no currency,
    so its money columns would add up amounts in two currencies under one name. A warning at the unit."""
    def same(a: str, b: str) -> bool:
        return _CURRENCY_SYMBOLS.get(a, a.casefold()) == _CURRENCY_SYMBOLS.get(b, b.casefold())

    if not priced:
        return
    given = "currency" in values["_given"]
    ref, source = (str(values["currency"]), "'Currency'") if given else (priced[0][0], repr(priced[0][1]))
    for currency, title, where in priced:
        if not same(currency, ref):
            notes.append(Note("warning", "currency-clash",
                              f"setting {title!r} is priced in {currency} but {source} says {ref}; lagsheet "
                              f"converts no currency: write every price in one currency"
                              + ("" if given else " (or set 'Currency')"), name, where))


def _setting_row(raw, r: int, key: str, value_unit: tuple[int | None, int | None], values: dict,
                 notes: list[Note], name: str, where: str) -> None:
    """Read the value of setting ``key`` on row ``r`` into ``values`` (SI), noting what it was read
    as; a value that cannot be used is an error note and leaves the default."""
    cv, cu = value_unit
    title, dim, si, default, kind = schema.SETTINGS[key]
    value = raw.value(r, cv) if cv is not None else None
    if value is None:
        return
    if kind == schema.TEXT:
        values[key] = str(value).strip()
        values["_given"].add(key)
        return
    if kind == schema.YESNO:
        word = fold(str(value)) if not isinstance(value, bool) else ("yes" if value else "no")
        if word in schema.YES or word in schema.NO:
            values[key] = word in schema.YES
            values["_given"].add(key)
        else:
            notes.append(Note("error", "bad-setting", f"setting {title!r}: {value!r} cannot be used; write yes "
                              f"or no; the default ({'yes' if default else 'no'}) is used", name, where))
        return
    unit_text = str(raw.value(r, cu)).strip() if cu is not None and raw.value(r, cu) is not None else dim
    # a cell formatted as a percentage holds the fraction: a typed '88%' is stored as 0.88
    percent_cell = (cv is not None and (r, cv) in raw.percent and isinstance(value, (int, float))
                    and not isinstance(value, bool))
    if (dim == "%" and (cu is None or raw.value(r, cu) is None) and isinstance(value, (int, float))
            and not isinstance(value, bool) and 0 < value < 1 and not percent_cell):
        unit_text = "1"  # no unit written and under 1: a fraction (0.85), not 0.85 %
        notes.append(Note("info", "percent-fraction", f"setting {title!r}: {value!r} has no unit and is "
                          f"read as the fraction {value:g} ({value * 100:g} %)", name, where))
    currency, unit_text = split_currency(unit_text)
    try:
        values[key] = _setting_si(key, value, unit_text, percent_cell, notes, name, where)
        values["_given"].add(key)
        if currency and "currency" not in values["_given"]:
            values["currency"] = currency
    except (TypeError, ValueError, OverflowError) as exc:
        written = f"{value} {unit_text or ''}".strip()
        if isinstance(exc, _SettingError):  # our words, with the fix in them
            fix = f"cannot be used: {exc}; the default is used"
        else:
            why = f" ({exc})" if isinstance(exc, UnitTextError) else ""  # our words only
            fix = f"cannot be used{why}; write a number with a unit like {dim or 'none'}; the default is used"
        notes.append(Note("error", "bad-setting", f"setting {title!r}: '{written}' {fix}", name, where))


def _setting_si(key: str, value, unit_text: str, percent_cell: bool, notes: list[Note], name: str,
                where: str) -> float:
    """A setting's number in SI, checked against its range; raises ValueError (a
    :class:`_SettingError` in our words, a UnitTextError) or TypeError when it cannot be used."""
    title, dim, si, default, kind = schema.SETTINGS[key]
    number = float(value)
    unit = parse_unit(unit_text if unit_text else "1")
    if not is_unit(unit, dim):
        raise UnitTextError(f"unit {unit_text!r} is not like {dim}")
    if percent_cell and is_unit(unit, "1"):
        number = float(from_si([number], "1", str(unit))[0])
        label = unit_label(unit)
        notes.append(Note("info", "percent-cell", f"setting {title!r} is formatted as a percentage "
                          f"({value * 100:g}%, stored as {value:g}): read as "
                          + (f"the fraction {number:g}" if label == "1" else f"{number:g} {label}"),
                          name, where))
    converted = float(to_si([number], unit, si, difference=kind == schema.DIFFERENCE)[0])
    lo, closed, hi = schema.SETTING_RANGES[key]
    if not (np.isfinite(converted) and (converted >= lo if closed else converted > lo) and converted <= hi):
        raise _SettingError(f"it must be {'from' if closed else 'above'} {_show_setting(lo, si, unit)} "
                            f"{'to' if closed else 'and at most'} {_show_setting(hi, si, unit)}")
    if str(unit) == "percent" and 0 < number < 1:
        words = (f"{number:g} % looks like {number * 100:g} % stored as a fraction (as a cell formatted "
                 f"as a percentage stores it); write {number * 100:g} %, or the fraction with the unit 1")
        if key == "heating_efficiency":  # no plant runs at under 1 %: the costs would be 100 × off
            raise _SettingError(words)
        notes.append(Note("warning", "percent-fraction", f"setting {title!r}: {words}", name, where))
    return converted


def _show_setting(x: float, si: str, unit) -> str:
    """A bound of a setting in the unit the user wrote it in ('100 %', '2000 mm')."""
    try:
        v = float(from_si([x], si or "dimensionless", str(unit))[0])
    except Exception:  # a unit pint cannot turn back: the SI value
        return f"{x:g} {si}".strip()
    label = unit_label(unit)
    return f"{v:g}" if label == "1" else f"{v:g} {label}"


def _conditions(book: Book, notes: list[Note], columns: list[dict], bad: dict[str, str]) -> dict[str, Condition]:
    """The Conditions sheet over the built-in sets; a row with a cell in error is left out and its
    name goes to ``bad``, so that lines naming it say where the error is."""
    out = dict(BUILTIN_CONDITIONS)
    name = _find(book, "Conditions")
    if name is None:
        notes.append(Note("info", "default-conditions",
                          "no Conditions sheet: the built-in 'indoor' (20 °C, still air, 60 % RH) and "
                          "'outdoor' (10 °C, 3 m/s wind, 75 % RH) sets are used, 8760 h/yr each"))
        return out
    t = read_table(book.sheet(name), schema.CONDITION_FIELDS, "Name")
    if t is None:
        notes.append(Note("warning", "no-header", "sheet 'Conditions' has no header cell 'Name'; "
                          "it is ignored", name))
        return out
    notes.extend(t.notes)
    notes.extend(unused_columns(t, schema.CONDITION_FIELDS))
    columns.extend(c.report(t.sheet) for c in t.columns.values())
    for i in range(len(t.rows)):
        notes.extend(t.cell_notes.get(i, []))
        label = t.get("name")[i] if t.get("name") is not None else None
        if not label:
            continue
        ta = _num(t, "ambient_temperature", i)
        if not np.isfinite(ta) and not t.bad[i]:
            notes.append(Note("error", "bad-condition",
                              f"condition {label!r} is not usable: it needs an 'Ambient temperature'",
                              name, t.cell(i, "ambient_temperature")))
        if not np.isfinite(ta) or t.bad[i]:  # the cell in error has its own note; lines naming it point here
            cells = [n.cell for n in t.cell_notes.get(i, []) if n.level == "error" and n.cell]
            bad[fold(label)] = ", ".join(f"{name}!{c}" for c in dict.fromkeys(cells)) or \
                f"{name}!{t.cell(i, 'name')}"
            continue
        tsur = _num(t, "surroundings_temperature", i)
        base = BUILTIN_CONDITIONS.get(fold(label), BUILTIN_CONDITIONS["indoor"])
        out[fold(label)] = Condition(
            str(label), ta, tsur if np.isfinite(tsur) else ta,
            max(0.0, _or(_num(t, "wind_speed", i), 0.0)), _or(_num(t, "relative_humidity", i), base.rh),
            _or(_num(t, "operating_hours", i), 8760.0), source=f"{name}!{t.cell(i, 'name')}",
            solar=_or(_num(t, "solar_irradiance", i), 0.0))
    return out


def _fluids(book: Book, notes: list[Note], columns: list[dict]) -> dict[str, UserFluid]:
    """The optional Fluids sheet: Name, Specific heat, Density."""
    name = _find(book, "Fluids")
    if name is None:
        return {}
    t = read_table(book.sheet(name), schema.FLUID_FIELDS, "Name")
    if t is None:
        notes.append(Note("warning", "no-header", "sheet 'Fluids' has no header cell 'Name'; ignored", name))
        return {}
    notes.extend(t.notes)
    notes.extend(unused_columns(t, schema.FLUID_FIELDS))
    columns.extend(c.report(t.sheet) for c in t.columns.values())
    out: dict[str, UserFluid] = {}
    for i in range(len(t.rows)):
        notes.extend(t.cell_notes.get(i, []))
        label = t.get("name")[i] if t.get("name") is not None else None
        if not label:
            continue
        cp = _num(t, "specific_heat", i)
        if not np.isfinite(cp) or t.bad[i]:
            notes.append(Note("error", "bad-fluid", f"fluid {label!r} is not usable: it needs a "
                              "'Specific heat' [kJ/(kg·K)]", name, t.cell(i, "specific_heat")))
            continue
        out[fold(label)] = UserFluid(str(label), cp, _num(t, "density", i),
                                     source=f"{name}!{t.cell(i, 'name')}")
    return out


def _num(t: Table, key: str, i: int) -> float:
    v = t.get(key)
    return float(v[i]) if v is not None else float("nan")


def _or(x: float, default: float) -> float:
    return x if np.isfinite(x) else default


_THICKNESS = (1e-3, 2.0)  # m: a thickness on sale, from 1 mm to 2 m


def _materials(book: Book, notes: list[Note], columns: list[dict],
               unusable: dict[str, str]) -> dict[str, library.Material]:
    """The built-in materials, with the Materials sheet's rows added or overriding them.

    A material whose rows have an error is not used at all, not even as the built-in of
    that name: its key goes to ``unusable`` so that a line naming it is an error too.
    """
    out = dict(library.materials())
    name = _find(book, "Materials")
    if name is None:
        return out
    t = read_table(book.sheet(name), schema.MATERIAL_FIELDS, "Name")
    if t is None:
        notes.append(Note("warning", "no-header", "sheet 'Materials' has no header cell 'Name'; ignored", name))
        return out
    notes.extend(t.notes)
    notes.extend(unused_columns(t, schema.MATERIAL_FIELDS))
    columns.extend(c.report(t.sheet) for c in t.columns.values())
    groups: dict[str, list[int]] = {}
    names = t.get("name")
    for i in range(len(t.rows)):
        notes.extend(t.cell_notes.get(i, []))
        if names is not None and names[i]:
            groups.setdefault(library.key(names[i]), []).append(i)
    for idx in groups.values():
        label = names[idx[0]]
        base = library.lookup(library.materials(), label)
        try:
            rec = _material(t, label, idx, base, notes)
        except _Unusable as u:
            where = f"{name}!{t.cell(idx[0], u.key)}"
            unusable[library.key(label)] = where
            if base is not None:
                unusable[library.key(base.name)] = where
            continue
        out[library.key(base.name if base is not None else label)] = rec
        if base is not None and library.key(label) != library.key(base.name):
            out[library.key(label)] = rec
    return out


class _Unusable(Exception):
    """A material of the Materials sheet that cannot be used (its error is noted); ``key`` is the
    field whose cell the lines naming it are pointed to."""

    def __init__(self, key: str):
        super().__init__(key)
        self.key = key


def _material(t: Table, label, idx: list[int], base: library.Material | None,
              notes: list[Note]) -> library.Material:
    """The material of rows ``idx`` (one name) of the Materials sheet, over the built-in ``base``
    of that name if any; raises :class:`_Unusable` (with the error noted) when it cannot be used."""
    name = t.sheet
    if any(t.bad[i] for i in idx):
        notes.append(Note("error", "bad-material", f"material {label!r} has cells in error and is not used",
                          name, t.cell(idx[0], "name")))
        raise _Unusable("name")
    fields = _conductivity_curve(t, label, idx, base, notes)
    for key_, attr in (("max_temperature", "max_temperature"), ("min_temperature", "min_temperature"),
                       ("cost_per_volume", "cost_per_volume"), ("max_layer", "max_layer"),
                       ("design_factor", "design_factor")):
        vals = [_num(t, key_, i) for i in idx]
        vals = [v for v in vals if np.isfinite(v)]
        if vals:
            fields[attr] = vals[0]
            if attr == "max_layer":
                fields["max_layer_us"] = vals[0]
    fields.update(_thickness_list(t, label, idx, notes))
    if "conductivities" in fields:
        floor = plausibility.below_still_air(str(label), np.array(fields["mean_temperatures"]),
                                             np.array(fields["conductivities"]))
        if floor is not None:
            notes.append(Note("warning", "below-still-air",
                              f"material {label!r} has a conductivity below still air "
                              f"({floor:.4f} W/(m·K) at that temperature, CoolProp); a conventional insulation "
                              "cannot do that (common practice): check the unit of 'Conductivity', or name "
                              "the material as an aerogel or vacuum insulation", name, t.cell(idx[0], "conductivity")))
    if base is not None:
        return replace(base, **fields, source=f"{name} sheet (overrides the built-in {base.name!r})")
    return library.Material(name=str(label), source=f"{name} sheet", **fields)


def _conductivity_curve(t: Table, label, idx: list[int], base: library.Material | None,
                        notes: list[Note]) -> dict:
    """The material's conductivity against mean temperature, sorted, from its rows (none given:
    the built-in's, or :class:`_Unusable`); a mean temperature listed twice is :class:`_Unusable`."""
    tm = np.array([_num(t, "mean_temperature", i) for i in idx])
    kk = np.array([_num(t, "conductivity", i) for i in idx])
    ok = np.isfinite(tm) & np.isfinite(kk)
    if ok.any():
        order = np.argsort(tm[ok])
        tm_s, k_s = tm[ok][order], kk[ok][order]
        if np.any(np.diff(tm_s) <= 0):
            notes.append(Note("error", "bad-material", f"material {label!r} lists the same mean temperature twice",
                              t.sheet, t.cell(idx[0], "mean_temperature")))
            raise _Unusable("mean_temperature")
        return {"mean_temperatures": tuple(tm_s), "conductivities": tuple(k_s)}
    if base is None:
        notes.append(Note("error", "bad-material",
                          f"material {label!r} needs 'Mean temperature' and 'Conductivity' "
                          "on at least one row", t.sheet, t.cell(idx[0], "conductivity")))
        raise _Unusable("conductivity")
    return {}


def _thickness_list(t: Table, label, idx: list[int], notes: list[Note]) -> dict:
    """The material's own list of sold thicknesses (its first 'Thicknesses' cell), for either unit
    system; {} when none; :class:`_Unusable` when the list does not read."""
    th = t.get("thicknesses")
    if th is None:
        return {}
    texts = [th[i] for i in idx if th[i] not in (None, "")]
    if not texts:
        return {}
    col = t.columns["thicknesses"]
    try:
        nums, unit = library.parse_thickness_cell(str(texts[0]))  # '1, 1½, 2 in': inches
        th_si = tuple(float(x) for x in to_si(nums, parse_unit(unit) if unit else col.unit, "m"))
        if not all(_THICKNESS[0] <= x <= _THICKNESS[1] for x in th_si):
            raise ValueError(f"thickness list {texts[0]!r} must hold thicknesses from "
                             f"{_THICKNESS[0] * 1000:g} mm to {_THICKNESS[1] * 1000:g} mm")
    except (ValueError, OverflowError) as exc:
        notes.append(Note("error", "bad-thicknesses", f"{exc}; write e.g. '25, 40, 50'; material "
                          f"{label!r} is not used until then", t.sheet, t.cell(idx[0], "thicknesses")))
        raise _Unusable("thicknesses") from None
    return {"thicknesses": th_si, "thicknesses_us": th_si}  # the user's list, either system
