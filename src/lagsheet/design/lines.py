"""One line's inputs resolved to what the engine needs: shape, dimensions, conditions,
materials and candidates, with a note for every problem.

A plain loop over lines (resolving names and choices, not physics) on what is worked
out once per column (:class:`Columns`: each column's numbers and texts as lists, each
distinct shape word, 'Condition' text, material pair, finish, size and set of sold
thicknesses once, which lines give any process, tracing or target column); the engine
then solves every line at once.
"""

from __future__ import annotations

import gc
import itertools
import math
import re
from collections.abc import Callable, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field, replace
from functools import lru_cache, partial

import numpy as np

from ..errors import Note
from ..io.table import fold
from ..physics.layers import CYLINDER, FLAT, SPHERE
from ..physics.surface import PIPE, RISER, SPHERE_SHAPE, TOP, UNDERSIDE, VESSEL, WALL
from ..workbook import fields as schema
from ..workbook import library
from ..workbook.display import show
from ..workbook.inputs import Condition, Inputs
from ..workbook.tables import Table
from ..workbook.words import suggest
from . import tracing
from .process import PROCESS_NUMBERS, PROCESS_TEXTS, Process, resolve_process
from .targets import CHECK_ORDER, Target

# shape word -> (convection code, conduction geometry)
SHAPE_CODES = {
    "pipe": (PIPE, CYLINDER), "riser": (RISER, CYLINDER), "vessel": (VESSEL, CYLINDER),
    "wall": (WALL, FLAT), "top": (TOP, FLAT), "underside": (UNDERSIDE, FLAT),
    "sphere": (SPHERE_SHAPE, SPHERE),
}
MAX_PAIR_CANDIDATES = 12  # inner thicknesses tried under an outer material


@dataclass
class Line:
    """Resolved inputs of one line, SI."""

    ok: bool = True
    word: str = "pipe"
    shape: int = PIPE
    geometry: int = CYLINDER
    r_inner: float = np.nan  # bare outer radius [m] (cylinders, spheres)
    length: float = np.nan  # run length, or height of vessels and walls [m]
    area: float = np.nan  # bare surface area of flat shapes [m²]
    free_length: float = 1.0  # free-convection length [m]
    flow_length: float = 1.0  # length along the wind for flat shapes [m]
    t_op: float = np.nan
    conditions: list[Condition] = field(default_factory=list)
    materials: list[library.Material] = field(default_factory=list)  # inner first
    emissivity: float = np.nan
    bare_emissivity: float = np.nan
    absorptance: float = np.nan  # solar absorptance of the outer surface
    candidates: Sequence[tuple[float, ...]] = ()  # thickness per slot [m]; may be shared, never mutate
    series: list[tuple[tuple[float, ...], float]] = field(default_factory=list)  # per slot: (listed, max layer)
    fixed: bool = False
    economic: bool = False
    process: Process = field(default_factory=Process)
    code_thickness: float = np.nan  # the 'Code' minimum corrected to the line's material [m] (design.codes)
    code_row: object = None  # the code's row that gave it
    code_basis: tuple = ()  # (code name, its thickness for this line [m], the line's design k there [W/(m·K)])
    maintain: float = np.nan  # 'Maintain temperature' [K], NaN where not traced (design.tracing)
    fittings: dict[str, int] = field(default_factory=dict)  # item -> count on the line
    allowance: float = np.nan  # 'Heat loss allowance' as a fraction (the line's or the setting's)
    l_eq: tuple[float, float] = (0.0, 0.0)  # Σ count × equivalent length of its fittings [m]: insulated, bare

    @property
    def per_length(self) -> bool:
        return self.geometry == CYLINDER


def sold(material: library.Material, settings: dict, us: bool = False) -> tuple[float, ...]:
    """Total thicknesses on sale for a material in the sheet's unit system: its list (inch
    series on a sheet in inches), or every step to the maximum; a total thicker than one
    layer only when it can be built of listed thicknesses (:func:`library.build`)."""
    listed, max_layer = layer_series(material, settings, us)
    return _buildable(listed, max_layer)


def layer_series(material: library.Material, settings: dict, us: bool = False) -> tuple[tuple[float, ...], float]:
    """(listed thicknesses [m], thickest single layer [m]) a build of ``material`` draws on."""
    listed, max_layer = library.series(material, us)
    if not listed:
        step, top = float(settings["thickness_step"]), float(settings["max_thickness"])
        listed = tuple(step * k for k in range(1, int(math.floor(top / step + 1e-9)) + 1))
    return listed, max_layer


@lru_cache(maxsize=1024)
def _buildable(listed: tuple[float, ...], max_layer: float) -> tuple[float, ...]:
    return tuple(t for t in listed if library.build(t, listed, max_layer) is not None)


@lru_cache(maxsize=1024)
def _single(thicknesses: tuple[float, ...]) -> tuple[tuple[float, ...], ...]:
    """One-material candidates, shared by every line of that material (never mutated)."""
    return tuple((th,) for th in thicknesses)


@lru_cache(maxsize=1024)
def _pairs(inner: tuple[float, ...], outer: tuple[float, ...]) -> tuple[tuple[float, ...], ...]:
    """Inner × outer candidates, thinnest in total first (then the thinner inner layer)."""
    # totals compared to 1 µm: 0.05 + 0.10 and 0.03 + 0.12 are one total, then the thinner inner layer first
    return tuple(sorted(itertools.product(inner, outer), key=lambda p: (round(p[0] + p[1], 6), p[0])))


class _PerKey(dict):
    """key -> ``make(key)``, made on first use."""

    def __init__(self, make: Callable):
        super().__init__()
        self.make = make

    def __missing__(self, key):
        got = self[key] = self.make(key)
        return got


class Columns:
    """A checked table's columns read once for the loop over lines: as Python lists (an element
    of a list is about ten times cheaper to take than one of an array); each column's numbers
    (:attr:`nums`, NaN where blank or absent) and texts (:attr:`texts`, None where blank or
    absent) made on its first use; and in :attr:`memo` what lines share, worked out once per
    distinct value (a shape word, a 'Condition' text, a material's sold thicknesses ...)."""

    def __init__(self, t: Table):
        self.n = len(t.rows)
        self.lists = {k: (c.values.tolist() if isinstance(c.values, np.ndarray) else list(c.values))
                      for k, c in t.columns.items() if c.values is not None}
        self.floats = {k for k, c in t.columns.items() if isinstance(c.values, np.ndarray) and c.values.dtype.kind == "f"}
        # functions of the lists, not of self: no reference cycle (see resolve_lines)
        self.nums = _PerKey(partial(_numbers, self.lists, self.n))
        self.texts = _PerKey(partial(_texts, self.lists, self.n))
        self.memo: dict = {}

    def get(self, key: str):
        return self.lists.get(key)

    def given(self, name: str, keys: Sequence[str]) -> list[bool] | None:
        """Per line: does any of the columns ``keys`` hold a value (a number column: not NaN; any
        other: not blank)? None when the sheet has none of them. Kept under ``name``."""
        key = ("given", name)
        if key not in self.memo:
            lists = self.lists
            cols = [[x == x for x in lists[k]] if k in self.floats else [x is not None and x != "" for x in lists[k]]
                    for k in dict.fromkeys(keys) if k in lists]  # x == x: not NaN
            self.memo[key] = [any(r) for r in zip(*cols, strict=True)] if cols else None
        return self.memo[key]

    def once(self, kind: str, value, make: Callable):
        """``make()``, worked out once per (``kind``, ``value``) for every line that has it."""
        key = (kind, value)
        got = self.memo.get(key, _NONE)
        if got is _NONE:
            got = self.memo[key] = make()
        return got


def _numbers(lists: dict, n: int, key: str) -> list:
    v = lists.get(key)
    return [np.nan] * n if v is None else [float(x) for x in v]


def _texts(lists: dict, n: int, key: str) -> list:
    v = lists.get(key)
    return [None] * n if v is None else [None if x is None or x == "" else str(x) for x in v]


_NONE = object()


def split_conditions(text: str) -> list[str]:
    return list(_split_conditions(text))


@lru_cache(maxsize=4096)
def _split_conditions(text: str) -> tuple[str, ...]:
    """The names of a 'Condition' text, parsed once per distinct text (lines share a few)."""
    return tuple(p.strip() for p in re.split(r"[;,]", text) if p.strip())


def resolve(t: Table, inputs: Inputs, i: int, notes: list[Note], cols: Columns | None = None) -> Line:
    """Line ``i`` of ``t``; ``cols`` (:class:`Columns` of ``t``) spares re-reading the columns
    and re-working what lines share when every line is resolved."""
    L = Line()
    sheet, us, st = t.sheet, inputs.us_units, inputs.settings
    cols = cols if cols is not None else Columns(t)
    nums, texts = cols.nums, cols.texts

    def err(code: str, key: str, message: str):
        cell = t.cell(i, key)
        L.ok = False
        if key in t.columns and any(n.level == "error" and n.cell == cell for n in notes):
            return  # the cell already carries its error (e.g. 'must be a number'): not also 'blank'
        notes.append(Note("error", code, message, sheet, cell))

    def text(key):
        return texts[key][i]

    def num(key):
        return nums[key][i]

    _shape(L, text("shape"), err, cols)
    _dimensions(L, t, i, num, text, err, notes, us, cols)
    L.t_op = num("operating_temperature")
    if not math.isfinite(L.t_op):
        err("no-temperature", "operating_temperature", "'Operating temperature' is blank")
    _conditions(L, inputs, text("condition") or "indoor", err, cols)
    over = cols.given("overrides", OVERRIDES)
    if over is not None and over[i]:
        L.conditions = line_conditions(L.conditions, {k: num(k) for k in OVERRIDES})
    fixed = num("fixed_thickness")
    _materials(L, inputs, text("insulation"), text("outer_insulation"), fixed, err, us, cols)
    fname = text("finish") or "aluminium"
    eps = _finish(L, inputs, fname, num("surface_emissivity"), err, cols)
    L.absorptance = _absorptance(inputs, fname, num("solar_absorptance"), fixed, cols)
    economic = cols.lists.get("economic")
    L.economic = economic is not None and economic[i] is True
    _candidates(L, fixed, eps, st, us, err, cols.memo)
    checked = cols.given("checked", _checked_columns())
    if checked is None or not checked[i]:
        tracing.untraced(L, st)
        return L

    def warn(code: str, key: str, message: str):
        notes.append(Note("warning", code, message, sheet, t.cell(i, key)))

    def info(code: str, key: str, message: str):
        notes.append(Note("info", code, message, sheet, t.cell(i, key)))

    _checks(L, Cells(t, i, num, text, err, warn, st, inputs, info), cols)
    return L


def _checks(L: Line, cells: Cells, cols: Columns) -> None:
    """The process inputs, each target's inputs and tracing's, read and checked. What a line
    leaves blank is not read: no process column given, no process inputs; none of a target's
    columns (:attr:`Target.columns`, the columns it reads) given, nothing for it to check; no
    tracing column given, no tracing or fittings (:func:`tracing.untraced`)."""
    t, i, inputs = cells.t, cells.i, cells.inputs
    given = cols.given("process", (*PROCESS_NUMBERS, *PROCESS_TEXTS))
    fluid_known = given is not None and given[i] and resolve_process(
        t, inputs, i, L, cells.num, cells.text, cells.err, cells.warn)
    for target in _own_checks():  # each target checks the inputs it reads
        given = cols.given(target.name, target.columns)
        if given is not None and given[i] and (fluid_known or not target.needs_fluid):
            target.check(L, cells)
    given = cols.given("tracing", tracing.COLUMNS)
    if given is not None and given[i]:
        tracing.check(L, cells, inputs.us_units, inputs.fittings)
    else:
        tracing.untraced(L, cells.settings)


@lru_cache(maxsize=1)
def _checked_columns() -> tuple[str, ...]:
    """Every column :func:`_checks` may read: a line that gives none of them skips it."""
    return (*PROCESS_NUMBERS, *PROCESS_TEXTS, *tracing.COLUMNS, *(k for x in _own_checks() for k in x.columns))


@lru_cache(maxsize=1)
def _own_checks() -> tuple:
    """The targets of :data:`CHECK_ORDER` that check inputs (the others' ``check`` does nothing)."""
    return tuple(x for x in CHECK_ORDER if type(x).check is not Target.check)


def _shape(L: Line, shape_word: str | None, err, cols: Columns) -> None:
    """The line's shape word and its codes, or an error: worked out once per distinct word."""
    def work():
        words = ", ".join(schema.SHAPE_WORDS)
        if shape_word is None:
            return None, ("blank-shape", "shape", f"'Shape' is blank; write one of: {words}")
        w = schema.SHAPES.get(fold(shape_word))
        if w is None:
            return None, ("unknown-shape", "shape", f"shape {shape_word!r} is not known; use one of: {words}"
                          + suggest(shape_word, schema.SHAPES, cutoff=0.5, form=" ({})"))
        return (w, *SHAPE_CODES[w]), None

    known, problem = cols.once("shape", shape_word, work)
    if known is None:
        err(*problem)
    else:
        L.word, L.shape, L.geometry = known


def _finish(L: Line, inputs: Inputs, fname: str, eps: float, err, cols: Columns | None = None) -> float:
    """The surface's emissivity: 'Surface emissivity', else its finish's; returns the given one."""
    fin = _finish_of(inputs, fname, cols)
    if fin is None:
        err("unknown-finish", "finish", f"finish {fname!r} is not known; use one of: "
            f"{', '.join(f.name for f in inputs.finishes.values())}")
    L.emissivity = eps if math.isfinite(eps) else (fin.emissivity if fin else np.nan)
    L.bare_emissivity = float(inputs.settings["bare_emissivity"])
    return eps


def _finish_of(inputs: Inputs, fname: str, cols: Columns | None):
    if cols is None:
        return library.lookup(inputs.finishes, fname)
    return cols.once("finish", fname, lambda: library.lookup(inputs.finishes, fname))


def _absorptance(inputs: Inputs, fname: str, alpha: float, fixed: float, cols: Columns | None = None) -> float:
    """The surface's solar absorptance: 'Solar absorptance', else the finish's (a bare line's:
    bare steel's); NaN when the finish is unknown (that is an error already)."""
    if math.isfinite(alpha):
        return alpha
    if math.isfinite(fixed) and fixed == 0:
        fname = "bare steel"
    fin = _finish_of(inputs, fname, cols)
    return fin.absorptance if fin is not None else np.nan


# Lines columns that override that field of every condition the line names: column -> Condition field
OVERRIDES = {"ambient_temperature": "t_air", "surroundings_temperature": "t_surroundings", "wind_speed": "wind",
             "relative_humidity": "rh", "solar_irradiance": "solar"}


def line_conditions(conditions: list[Condition], given: dict[str, float]) -> list[Condition]:
    """The line's named conditions with the fields its own columns give replaced (``given``:
    column -> SI value, NaN where blank). A condition whose surroundings were its ambient (blank
    on the Conditions sheet) follows a new ambient unless the line gives its surroundings too."""
    change = {OVERRIDES[k]: v for k, v in given.items() if np.isfinite(v)}
    if not change:
        return conditions
    out = []
    for c in conditions:
        new = dict(change)
        if "t_air" in new and "t_surroundings" not in new and c.t_surroundings == c.t_air:
            new["t_surroundings"] = new["t_air"]
        out.append(replace(c, **new))
    return out


def _candidates(L: Line, fixed: float, eps: float, st: dict, us: bool, err, memo: dict | None = None) -> None:
    """The systems to choose from: the 'Fixed thickness' alone (0: bare), every sold
    thickness of one material, or inner × outer thicknesses of two. ``memo`` keeps them for
    each combination of materials, for the lines after (the settings are one run's)."""
    mats = L.materials
    if mats:
        key = (us, *map(id, mats))
        got = memo.get(key) if memo is not None else None
        if got is None:
            got = _on_sale(mats, st, us)
            if memo is not None:
                memo[key] = got
        candidates, series = got[0], list(got[1])
    else:
        candidates, series = (), []
    if math.isfinite(fixed):
        L.fixed = True
        if fixed == 0:
            L.candidates = [tuple(0.0 for _ in (mats or [None]))]
            L.emissivity = eps if math.isfinite(eps) else L.bare_emissivity
        elif len(mats) == 2:
            err("fixed-two-materials", "fixed_thickness",
                "'Fixed thickness' with 'Outer insulation' is ambiguous; give the inner and outer "
                "materials as two lines, or leave 'Fixed thickness' blank to size them")
        else:
            L.candidates = [(fixed,)]
    elif mats:
        L.candidates = candidates
    L.series = series


def _on_sale(mats: list, st: dict, us: bool) -> tuple:
    """(candidates, each material's layer series, the materials) of one material or an inner and an
    outer (the materials kept: the memo's key holds their ids)."""
    series = tuple(layer_series(m, st, us) for m in mats)
    if len(mats) == 1:
        return _single(sold(mats[0], st, us)), series, tuple(mats)
    inner = sold(mats[0], st, us)[:MAX_PAIR_CANDIDATES]
    return _pairs(inner, sold(mats[1], st, us)), series, tuple(mats)


@dataclass(frozen=True)
class Cells:
    """Line ``i`` of ``t`` as a target's check reads it: ``num``/``text`` of a column,
    ``err``/``warn`` noting a problem on a cell."""

    t: Table
    i: int
    num: Callable
    text: Callable
    err: Callable
    warn: Callable
    settings: dict
    inputs: Inputs | None = None
    info: Callable | None = None


def resolve_lines(inputs: Inputs) -> tuple[list[Line], list[list[Note]]]:
    """Every line of ``inputs.lines`` resolved, with its notes from reading and resolving.

    The one place that decides what is wrong with a line's input: ``check`` and ``fill``
    both call it, so they report the same input errors.
    """
    t = inputs.lines
    if t is None:
        return [], []
    cols = Columns(t)
    lines, notes = [], []
    bad, cell_notes = t.bad.tolist(), t.cell_notes
    with _collector_paused():
        for i in range(len(t.rows)):
            ns = list(cell_notes[i]) if i in cell_notes else []
            L = resolve(t, inputs, i, ns, cols)
            L.ok = L.ok and not bad[i]
            lines.append(L)
            notes.append(ns)
    _tags(t, lines, notes, cols.lists.get("tag"))
    return lines, notes


@contextmanager
def _collector_paused():
    """Python's cycle collector paused while the lines are made: they hold no reference cycles
    (freed as ever when dropped), and its passes would walk every object made so far again and
    again (a third of the loop's time at 20,000 lines)."""
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


def _tags(t: Table, lines: list[Line], notes: list[list[Note]], tags: list | None) -> None:
    """A blank or repeated 'Tag' is an error; an example row of the template a warning."""
    seen: dict[str, int] = {}
    for i, L in enumerate(lines):
        tag = tags[i] if tags is not None else None
        if not tag:
            notes[i].append(Note("error", "blank-tag", "'Tag' is blank; give every line a unique tag",
                                 t.sheet, t.cell(i, "tag")))
            L.ok = False
            continue
        key = _fold_tag(tag)
        if key in seen:
            notes[i].append(Note("error", "duplicate-tag", f"tag {tag!r} is used again (first in row "
                                 f"{t.rows[seen[key]] + 1}); tags must be unique", t.sheet, t.cell(i, "tag")))
            L.ok = False
        else:
            seen[key] = i
            if key.startswith("example"):
                notes[i].append(Note("warning", "example-row", "example row from the lagsheet template: "
                                     "replace it with your own line or delete it", t.sheet, t.cell(i, "tag")))


def _fold_tag(tag) -> str:
    """:func:`fold` of a tag without its cache (every tag is new, so each would miss it and
    push out another): the same words, as ``re``'s ``\\s`` and ``str.split`` take the same
    whitespace (tests/test_spec.py)."""
    return " ".join(str(tag).split()).lower()


def _dimensions(L: Line, t: Table, i: int, num, text, err, notes, us, cols: Columns | None = None) -> None:
    if L.geometry == FLAT:
        _flat(L, num, err)
        return
    od, size = num("outside_diameter"), text("size")
    if size is not None:
        od_size = (cols.once("size", size, lambda: library.pipe_outside_diameter(size)) if cols is not None
                   else library.pipe_outside_diameter(size))
        if od_size is None:
            err("unknown-size", "size", f"size {size!r} is not a nominal pipe size lagsheet knows; "
                "write e.g. NPS 4, 4\" or DN 100, or give 'Outside diameter' instead")
        elif math.isfinite(od) and abs(od - od_size) > 0.001:
            notes.append(Note("warning", "size-od-differ",
                              f"'Size' {size} has an outside diameter of {show(od_size, 'radius', us)}, "
                              f"not {show(od, 'radius', us)}; the given 'Outside diameter' is used",
                              t.sheet, t.cell(i, "outside_diameter")))
        elif not math.isfinite(od):
            od = od_size
    if not math.isfinite(od) and L.ok and size is None:
        err("no-diameter", "outside_diameter", "give 'Size' or 'Outside diameter' for this line")
    L.r_inner = od / 2
    L.length = num("length")
    if L.word == "sphere":
        L.free_length = od
        return
    if not math.isfinite(L.length):
        what = "height" if L.word in ("vessel", "riser") else "run length"
        err("no-length", "length", f"'Length' is blank; give the {what}")
    L.free_length = L.length if L.word in ("riser", "vessel") else od


def _flat(L: Line, num, err) -> None:
    """Area, height and the convection lengths of a wall, top or underside."""
    L.area = num("surface_area")
    if not math.isfinite(L.area):
        err("no-area", "surface_area", f"a {L.word} needs its 'Surface area'")
        return
    width = num("width")
    L.length = num("length")
    if L.word == "wall":
        if not math.isfinite(L.length):
            err("no-height", "length", "a wall needs its height in 'Length' (for natural convection)")
            return
        L.free_length = L.length
        L.flow_length = width if math.isfinite(width) else L.area / L.length
    else:
        side = width if math.isfinite(width) else math.sqrt(L.area)
        other = L.area / side
        L.free_length = L.area / (2 * (side + other))  # A/P
        L.flow_length = side
    L.r_inner = 0.0


def _conditions(L: Line, inputs: Inputs, cname: str, err, cols: Columns | None = None) -> None:
    """The named conditions of 'Condition' (errors for the unknown): once per distinct text."""
    found, problems = (cols.once("condition", cname, lambda: _named_conditions(inputs, cname)) if cols is not None
                       else _named_conditions(inputs, cname))
    for problem in problems:
        err(*problem)
    L.conditions.extend(found)


def _named_conditions(inputs: Inputs, cname: str) -> tuple[tuple[Condition, ...], tuple[tuple[str, str, str], ...]]:
    names = split_conditions(cname)
    found, problems = [], []
    for name in names or ["indoor"]:
        cond = inputs.conditions.get(fold(name))
        if fold(name) in inputs.bad_conditions:  # before a built-in set of that name could stand in for it
            problems.append(("bad-condition", "condition", f"condition {name!r} has a cell in error on its row "
                             f"({inputs.bad_conditions[fold(name)]}); fix it there"))
        elif cond is None:
            problems.append(("unknown-condition", "condition", f"condition {name!r} is not defined; add it to the "
                             "Conditions sheet or use one of: "
                             f"{', '.join(sorted(c.name for c in inputs.conditions.values()))}"))
        else:
            found.append(cond)
    return tuple(found), tuple(problems)


def _materials(L: Line, inputs: Inputs, mname, oname, fixed, err, us, cols: Columns | None = None) -> None:
    if mname is None:
        if not (math.isfinite(fixed) and fixed == 0):
            err("no-insulation", "insulation", "'Insulation' is blank; name a material "
                f"({', '.join(m.name for m in library.materials().values())}) or set 'Fixed thickness' 0 for bare")
        return
    found, problems = (cols.once("materials", (mname, oname), lambda: _named_materials(inputs, mname, oname))
                       if cols is not None else _named_materials(inputs, mname, oname))
    for problem in problems:
        err(*problem)
    L.materials.extend(found)
    if L.materials and math.isfinite(L.t_op):
        mat = L.materials[0]
        if not (mat.min_temperature <= L.t_op <= mat.max_temperature):
            err("service-range", "operating_temperature",
                f"{show(L.t_op, 'temperature', us)} is outside the service range of {mat.name} "
                f"({show(mat.min_temperature, 'temperature', us)} to "
                f"{show(mat.max_temperature, 'temperature', us)}); choose another material"
                + (" or put a higher-temperature material inside it ('Outer insulation')"
                   if L.t_op > mat.max_temperature else ""))


def _named_materials(inputs: Inputs, mname: str, oname: str | None) -> tuple[tuple, tuple]:
    """The materials of 'Insulation' and 'Outer insulation' (inner first), and an error for each
    that is unusable or unknown."""
    found, problems = [], []
    for key, name in (("insulation", mname), ("outer_insulation", oname)):
        if name is None:
            continue
        where = inputs.unusable.get(library.key(name))
        if where is not None:
            problems.append(("bad-material", key, f"material {name!r} is not used: its row on the Materials "
                             f"sheet has an error ({where}); fix it there"))
            continue
        mat = library.lookup(inputs.materials, name)
        if mat is None:
            names = sorted({m.name for m in inputs.materials.values()})
            problems.append(("unknown-material", key, f"material {name!r} is not in the Materials sheet "
                             "or the built-in library" + (suggest(name, [fold(n) for n in names], cutoff=0.5)
                                                          or f"; known: {', '.join(names)}")))
            continue
        found.append(mat)
    return tuple(found), tuple(problems)
