"""Targets -> the chosen insulation system of every line.

Resolves each line's inputs (shape, size, condition, material, finish), asks the
engine for every sold thickness at once, keeps the smallest that meets every target
on the line, names the governing target, and evaluates the choice and the bare line.
Notes explain every doubt in words. Calls physics; physics never calls it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import economics, library, schema
from .check import Table
from .display import show
from .errors import Note
from .inputs import Condition, Inputs
from .io.table import fold
from .physics.balance import System, solve
from .physics.layers import CYLINDER, MaterialTable
from .physics.properties import dew_point
from .physics.sizing import evaluate, heat_rate
from .physics.surface import CORRELATION_NAMES, PIPE, RISER, linearised_h

SHAPE_CODES = {"pipe": (PIPE, CYLINDER), "riser": (RISER, CYLINDER)}
GOVERNING_ORDER = ("surface temperature", "condensation", "heat loss", "minimum", "economic")
PERSONNEL_LIMIT_K = 333.15  # 60 °C, the usual personnel-protection limit (common practice)


@dataclass
class Results:
    """Per line (same order as the Lines table rows); SI; NaN / None where not computed."""

    n: int
    values: dict[str, np.ndarray] = field(default_factory=dict)
    notes: list[list[Note]] = field(default_factory=list)
    status: list[str] = field(default_factory=list)
    tags: list[str] = field(default_factory=list)
    system: System | None = None  # the chosen systems, for ``explain``
    table: MaterialTable | None = None

    def __post_init__(self):
        for key in ("thickness", "t_surface", "heat_flux", "heat_loss_per_length", "heat_loss",
                    "bare_heat_loss", "annual_energy", "annual_cost", "annual_saving", "co2",
                    "critical_radius", "dew_point"):
            self.values.setdefault(key, np.full(self.n, np.nan))
        for key in ("layers", "governing"):
            self.values.setdefault(key, np.full(self.n, None, dtype=object))
        if not self.notes:
            self.notes = [[] for _ in range(self.n)]


@dataclass
class _Line:
    """Resolved inputs of one line (built by a plain loop: resolving names, not physics)."""

    ok: bool = True
    shape: int = PIPE
    geometry: int = CYLINDER
    r_inner: float = np.nan
    length: float = np.nan
    t_op: float = np.nan
    condition: Condition | None = None
    material: library.Material | None = None
    emissivity: float = np.nan
    bare_emissivity: float = np.nan
    candidates: tuple[float, ...] = ()
    fixed: bool = False


def _sold(material: library.Material, settings: dict) -> tuple[float, ...]:
    if material.thicknesses:
        return material.thicknesses
    step, top = float(settings["thickness_step"]), float(settings["max_thickness"])
    return tuple(step * k for k in range(1, int(math.floor(top / step + 1e-9)) + 1))


def _resolve(t: Table, inputs: Inputs, i: int, notes: list[Note]) -> _Line:
    L = _Line()
    sheet = t.sheet

    def err(code: str, key: str, message: str):
        notes.append(Note("error", code, message, sheet, t.cell(i, key)))
        L.ok = False

    def text(key):
        v = t.get(key)
        return None if v is None or v[i] in (None, "") else str(v[i])

    def num(key):
        v = t.get(key)
        return float(v[i]) if v is not None else np.nan

    us = inputs.us_units
    shape_word = text("shape")
    if shape_word is None:
        err("blank-shape", "shape", "'Shape' is blank; write pipe or riser")
    else:
        w = schema.SHAPES.get(fold(shape_word))
        if w is None:
            if fold(shape_word) in schema.LATER_SHAPES:
                err("shape-not-yet", "shape",
                    f"shape {shape_word!r} is not handled by this version yet (pipe and riser are)")
            else:
                import difflib

                near = difflib.get_close_matches(fold(shape_word), list(schema.SHAPES), n=2, cutoff=0.5)
                err("unknown-shape", "shape", f"shape {shape_word!r} is not known; use pipe or riser"
                    + (f" (did you mean {', '.join(repr(x) for x in near)}?)" if near else ""))
        else:
            L.shape, L.geometry = SHAPE_CODES[w]
    od, size = num("outside_diameter"), text("size")
    if size is not None:
        od_size = library.pipe_outside_diameter(size)
        if od_size is None:
            err("unknown-size", "size", f"size {size!r} is not a nominal pipe size lagsheet knows; "
                "write e.g. NPS 4, 4\" or DN 100, or give 'Outside diameter' instead")
        elif np.isfinite(od) and abs(od - od_size) > 0.001:
            notes.append(Note("warning", "size-od-differ",
                              f"'Size' {size} means {show(od_size / 2, 'radius', us).replace(' ', '')} "
                              f"radius; the given 'Outside diameter' is used", sheet, t.cell(i, "outside_diameter")))
        elif not np.isfinite(od):
            od = od_size
    if not np.isfinite(od) and L.ok and size is None:
        err("no-diameter", "outside_diameter", "give 'Size' or 'Outside diameter' for this line")
    L.r_inner = od / 2
    L.length = num("length")
    if not np.isfinite(L.length):
        err("no-length", "length", "'Length' is blank; give the run length (height for risers)")
    L.t_op = num("operating_temperature")
    if not np.isfinite(L.t_op):
        err("no-temperature", "operating_temperature", "'Operating temperature' is blank")
    cname = text("condition") or "indoor"
    cond = inputs.conditions.get(fold(cname))
    if cond is None:
        if ";" in cname:
            err("several-conditions", "condition",
                f"several conditions in one line ({cname!r}) come in a later version; name one")
        else:
            err("unknown-condition", "condition", f"condition {cname!r} is not defined; add it to the "
                f"Conditions sheet or use one of: {', '.join(sorted(c.name for c in inputs.conditions.values()))}")
    L.condition = cond
    fixed = num("fixed_thickness")
    mname = text("insulation")
    if mname is None:
        if not (np.isfinite(fixed) and fixed == 0):
            err("no-insulation", "insulation", "'Insulation' is blank; name a material "
                f"({', '.join(m.name for m in library.materials().values())}) or set 'Fixed thickness' 0 for bare")
    else:
        mat = library.lookup(inputs.materials, mname)
        if mat is None:
            import difflib

            names = sorted({m.name for m in inputs.materials.values()})
            near = difflib.get_close_matches(fold(mname), [fold(n) for n in names], n=2, cutoff=0.5)
            err("unknown-material", "insulation", f"material {mname!r} is not in the Materials sheet "
                "or the built-in library" + (f"; did you mean {', '.join(repr(x) for x in near)}?" if near
                                             else f"; known: {', '.join(names)}"))
        else:
            L.material = mat
            if np.isfinite(L.t_op) and not (mat.min_temperature <= L.t_op <= mat.max_temperature):
                err("service-range", "operating_temperature",
                    f"{show(L.t_op, 'temperature', us)} is outside the service range of {mat.name} "
                    f"({show(mat.min_temperature, 'temperature', us)} to "
                    f"{show(mat.max_temperature, 'temperature', us)}); choose another material")
    if text("outer_insulation") is not None:
        err("not-yet", "outer_insulation", "'Outer insulation' (two-material systems) comes in a "
            "later version; leave it blank")
    fname = text("finish") or "aluminium"
    fin = library.lookup(inputs.finishes, fname)
    if fin is None:
        err("unknown-finish", "finish", f"finish {fname!r} is not known; use one of: "
            f"{', '.join(f.name for f in inputs.finishes.values())}")
    eps = num("surface_emissivity")
    L.emissivity = eps if np.isfinite(eps) else (fin.emissivity if fin else np.nan)
    L.bare_emissivity = float(inputs.settings["bare_emissivity"])
    if np.isfinite(fixed):
        L.fixed = True
        L.candidates = (fixed,)
        if fixed == 0:
            L.emissivity = eps if np.isfinite(eps) else L.bare_emissivity
    elif L.material is not None:
        L.candidates = _sold(L.material, inputs.settings)
    return L


def specify(inputs: Inputs) -> Results:
    """Choose and evaluate the insulation system of every line of ``inputs.lines``."""
    t = inputs.lines
    n = len(t.rows) if t is not None else 0
    res = Results(n)
    if t is None or n == 0:
        return res
    us = inputs.us_units
    st = inputs.settings
    tags = t.get("tag")
    seen: dict[str, int] = {}
    lines: list[_Line] = []
    for i in range(n):
        notes = res.notes[i]
        notes.extend(t.cell_notes.get(i, []))
        tag = tags[i] if tags is not None else None
        res.tags.append(tag or "")
        L = _resolve(t, inputs, i, notes)
        if not tag:
            notes.append(Note("error", "blank-tag", "'Tag' is blank; give every line a unique tag",
                              t.sheet, t.cell(i, "tag")))
            L.ok = False
        elif fold(tag) in seen:
            notes.append(Note("error", "duplicate-tag", f"tag {tag!r} is used again (first in row "
                              f"{t.rows[seen[fold(tag)]] + 1}); tags must be unique", t.sheet, t.cell(i, "tag")))
            L.ok = False
        else:
            seen[fold(tag)] = i
        L.ok = L.ok and not t.bad[i]
        lines.append(L)

    # one material table for every material in use (plus a stand-in for bare lines)
    used: dict[str, library.Material] = {}
    for L in lines:
        if L.material is not None:
            used.setdefault(L.material.name, L.material)
    if not used:
        used["mineral wool"] = library.materials()["mineral wool"]
    table = MaterialTable.build({k: (np.array(m.mean_temperatures), np.array(m.conductivities))
                                 for k, m in used.items()})
    res.table = table
    ok = np.array([L.ok for L in lines])
    mat_idx = np.array([table.index(L.material.name) if L.material is not None else 0 for L in lines])
    cond = [L.condition or inputs.conditions["indoor"] for L in lines]

    def arr(get):
        return np.array([get(L, c) for L, c in zip(lines, cond, strict=True)], dtype=float)

    t_op = np.where(ok, arr(lambda L, c: L.t_op), 300.0)
    base = System(
        geometry=np.array([L.geometry for L in lines]), shape=np.array([L.shape for L in lines]),
        t_operating=t_op, t_air=arr(lambda L, c: c.t_air),
        t_surroundings=arr(lambda L, c: c.t_surroundings), wind=arr(lambda L, c: c.wind),
        emissivity=np.where(ok, arr(lambda L, c: L.emissivity), 0.9),
        r_inner=np.where(ok, arr(lambda L, c: L.r_inner), 0.05),
        height=np.where(ok, arr(lambda L, c: L.length), 1.0),
        thickness=np.zeros((n, 1)), material=mat_idx[:, None],
    )
    width = max((len(L.candidates) for L in lines), default=1) or 1
    cand = np.full((n, width), np.nan)
    for i, L in enumerate(lines):
        if L.ok and L.candidates:
            cand[i, :len(L.candidates)] = L.candidates
    hot = base.t_operating >= base.t_air

    # the engine: every candidate of every line, then the bare lines, in two calls
    c = evaluate(base, cand, mat_idx, table)
    bare_sys = System(**{**base.__dict__, "emissivity": np.where(
        np.array([L.fixed and L.candidates == (0.0,) for L in lines]), base.emissivity,
        np.array([L.bare_emissivity for L in lines]))})
    bare = solve(bare_sys, table)
    bare_rate = heat_rate(base.geometry, bare.q, bare.r_outer)

    # targets, each a (lines × candidates) mask of "meets"
    valid = np.isfinite(cand) & c.converged & c.in_range
    dew = np.array([_dew(cc) for cc in cond])
    res.values["dew_point"][:] = dew
    targets: dict[str, np.ndarray] = {}
    given: dict[str, np.ndarray] = {}
    tmax = t.get("max_surface_temperature")
    if tmax is not None:
        given["surface temperature"] = np.isfinite(tmax)
        targets["surface temperature"] = c.t_surface <= tmax[:, None] + 1e-9
    qmax = t.get("max_heat_loss")
    if qmax is not None:
        per_area = t.columns["max_heat_loss"].si_unit == "W/m**2"
        given["heat loss"] = np.isfinite(qmax)
        measure = np.abs(c.q) if per_area else np.abs(c.heat_rate)
        targets["heat loss"] = measure <= qmax[:, None] * (1 + 1e-12)
    tmin = t.get("min_thickness")
    if tmin is not None:
        given["minimum"] = np.isfinite(tmin)
        targets["minimum"] = cand >= tmin[:, None] - 1e-9
    prevent = t.get("prevent_condensation")
    if prevent is not None:
        want = np.array([v is True for v in prevent])
        given["condensation"] = want
        targets["condensation"] = c.t_surface >= (dew + float(st["condensation_margin"]))[:, None] - 1e-9

    economic = t.get("economic")
    if economic is not None:
        for i in np.flatnonzero([v is True for v in economic]):
            res.notes[i].append(Note("error", "not-yet", "'Economic' thickness comes in a later "
                                     "version of lagsheet; leave it blank or give another target",
                                     t.sheet, t.cell(i, "economic")))
            lines[i].ok = False

    meets_all = valid.copy()
    for name, m in targets.items():
        meets_all &= m | ~given[name][:, None]
    first_all = _first(meets_all)
    thick_idx = np.full(n, -1)
    governing = np.full(n, None, dtype=object)
    for i, L in enumerate(lines):
        notes = res.notes[i]
        if not L.ok:
            continue
        if not np.isfinite(cand[i]).any():
            continue
        if L.fixed:
            thick_idx[i] = 0
            governing[i] = "fixed"
            for name in targets:
                if given[name][i] and not targets[name][i, 0]:
                    notes.append(Note("warning", "target-not-met",
                                      f"the fixed thickness does not meet the {name} target", t.sheet,
                                      t.cell(i, "fixed_thickness")))
            continue
        active = [name for name in GOVERNING_ORDER if name in targets and given[name][i]]
        if not active:
            thick_idx[i] = int(np.flatnonzero(valid[i])[0]) if valid[i].any() else 0
            governing[i] = "none"
            notes.append(Note("warning", "no-target",
                              "no target on this line: the thinnest sold thickness is shown; give "
                              "'Max surface temperature', 'Max heat loss' or 'Min thickness'",
                              t.sheet, t.cell(i, "tag")))
            continue
        if first_all[i] < 0:
            last = int(np.flatnonzero(np.isfinite(cand[i]))[-1])
            thick_idx[i] = last
            missed = [name for name in active if not targets[name][i, last]]
            why = "; ".join(_missed(name, i, last, c, t, dew, st, us, L) for name in missed) or (
                "the material's conductivity points do not cover the temperatures of this line")
            notes.append(Note("error", "target-not-met", why, t.sheet, t.cell(i, "tag")))
            governing[i] = (missed[0] if missed else active[0]) + " (not met)"
            continue
        k = int(first_all[i])
        thick_idx[i] = k
        own = {name: int(_first((targets[name][i] & valid[i])[None, :])[0]) for name in active}
        gov = [name for name in active if own[name] == k] or [max(active, key=lambda x: own[x])]
        governing[i] = gov[0]

    # the chosen systems, solved once more in full for the reported values
    chosen = np.where(thick_idx >= 0, np.take_along_axis(
        np.nan_to_num(cand, nan=0.0), np.maximum(thick_idx, 0)[:, None], axis=1)[:, 0], np.nan)
    computed = np.isfinite(chosen)
    sysc = System(**{**base.__dict__, "thickness": np.nan_to_num(chosen)[:, None]})
    sol = solve(sysc, table)
    res.system, res.values["thickness"][:] = sysc, chosen
    rate = heat_rate(base.geometry, sol.q, sol.r_outer)
    length = base.height
    whole = np.where(base.geometry == CYLINDER, rate * length, rate)
    bare_whole = np.where(base.geometry == CYLINDER, bare_rate * length, bare_rate)
    hours = np.array([cc.hours for cc in cond])
    energy = economics.annual_energy_kwh(whole, hours)
    bought = economics.energy_bought_kwh(energy, float(st["heating_efficiency"]), float(st["cooling_cop"]))
    bare_bought = economics.energy_bought_kwh(economics.annual_energy_kwh(bare_whole, hours),
                                              float(st["heating_efficiency"]), float(st["cooling_cop"]))
    price = float(st["energy_price"])
    k_outer = table.mean_conductivity(mat_idx, sol.faces[:, -2], sol.faces[:, -1])
    h_total = linearised_h(base.shape, sol.t_surface, base.t_air, base.t_surroundings, base.wind,
                           base.emissivity, 2 * sol.r_outer, base.height)
    k_bare = table.conductivity(mat_idx, 0.5 * (base.t_operating + base.t_air))
    k_rc = np.where(chosen > 0, k_outer, k_bare)
    r_crit = np.where(base.geometry == CYLINDER, k_rc / h_total, 2 * k_rc / h_total)
    has_mat = np.array([L.material is not None for L in lines])
    v = res.values
    put = computed
    v["t_surface"][put] = sol.t_surface[put]
    v["heat_flux"][put] = sol.q[put]
    v["heat_loss_per_length"][put] = rate[put]
    v["heat_loss"][put] = whole[put]
    v["bare_heat_loss"][put] = bare_whole[put]
    v["annual_energy"][put] = energy[put]
    v["annual_cost"][put] = (bought * price)[put]
    v["annual_saving"][put] = ((bare_bought - bought) * price)[put]
    v["co2"][put] = (bought * float(st["emission_factor"]))[put]
    v["critical_radius"][put & has_mat] = r_crit[put & has_mat]
    v["governing"][:] = governing

    for i, L in enumerate(lines):
        notes = res.notes[i]
        if not computed[i]:
            continue
        th = chosen[i]
        name = L.material.name if L.material is not None else ""
        v["layers"][i] = _layers(th, L.material, us) if th > 0 else "bare"
        if not sol.converged[i] or abs(sol.residual[i]) > 1e-6:
            notes.append(Note("error", "not-converged", "the surface balance did not converge; "
                              "check the inputs of this line", t.sheet, t.cell(i, "tag")))
        if th > 0 and not c.in_range[i, thick_idx[i]]:
            tm = 0.5 * (sol.faces[i, 0] + sol.faces[i, 1])
            m = L.material
            notes.append(Note("error", "k-out-of-range",
                              f"{name}: conductivity is needed at a mean temperature of "
                              f"{show(tm, 'temperature', us)}, outside its points "
                              f"({show(m.mean_temperatures[0], 'temperature', us)} to "
                              f"{show(m.mean_temperatures[-1], 'temperature', us)}); add points to the "
                              "Materials sheet", t.sheet, t.cell(i, "insulation")))
        if th > 0 and abs(whole[i]) > abs(bare_whole[i]):
            notes.append(Note("warning", "more-than-bare",
                              f"this system {'loses' if hot[i] else 'gains'} more heat than the bare line "
                              f"({show(abs(whole[i]), 'power', us)} against {show(abs(bare_whole[i]), 'power', us)}): "
                              f"the outer radius {show(sol.r_outer[i], 'radius', us)} is below the critical "
                              f"radius {show(r_crit[i], 'radius', us)} of {name}", t.sheet, t.cell(i, "tag")))
        if hot[i] and sol.t_surface[i] > PERSONNEL_LIMIT_K and not (
                "surface temperature" in given and given["surface temperature"][i]):
            notes.append(Note("caution", "hot-surface",
                              f"surface {show(sol.t_surface[i], 'temperature', us)} is above 60 °C, the usual "
                              "personnel-protection limit (common practice; ASTM C1055 limits depend on "
                              "contact time and surface material): guard it or set 'Max surface temperature'",
                              t.sheet, t.cell(i, "tag")))
        if not hot[i]:
            if sol.t_surface[i] < dew[i] + float(st["condensation_margin"]) - 1e-9:
                notes.append(Note("warning", "condensation",
                                  f"surface {show(sol.t_surface[i], 'temperature', us)} is below the dew point "
                                  f"{show(dew[i], 'temperature', us)} plus margin: condensation is expected; "
                                  "set 'Prevent condensation' yes", t.sheet, t.cell(i, "tag")))
            notes.append(Note("caution", "vapour-retarder",
                              "cold line: a continuous vapour retarder is required; this calculation does "
                              "not cover moisture ingress", t.sheet, t.cell(i, "tag")))
        if sol.convection.outside[i]:
            notes.append(Note("info", "correlation-range",
                              f"{' / '.join(CORRELATION_NAMES[L.shape])}: used outside its published "
                              "range for this line; treat h as an estimate", t.sheet, t.cell(i, "tag")))
    for i in range(n):
        lv = {nt.level for nt in res.notes[i]}
        res.status.append("error" if "error" in lv or not lines[i].ok else
                          "warning" if "warning" in lv else "ok")
    return res


def _first(mask: np.ndarray) -> np.ndarray:
    """Index of the first True per row, -1 where none."""
    any_ = mask.any(axis=1)
    return np.where(any_, np.argmax(mask, axis=1), -1)


def _dew(c: Condition) -> float:
    return float(_dew_cached(round(c.t_air, 6), round(c.rh, 6)))


_DEW: dict[tuple[float, float], float] = {}


def _dew_cached(t_air: float, rh: float) -> float:
    if (t_air, rh) not in _DEW:
        _DEW[(t_air, rh)] = float(dew_point(t_air, rh)[0])
    return _DEW[(t_air, rh)]


def _layers(th: float, m: library.Material | None, us: bool) -> str:
    if m is None:
        return show(th, "thickness", us)
    n = max(1, math.ceil(th / m.max_layer - 1e-9)) if np.isfinite(m.max_layer) else 1
    each = show(th / n, "thickness", us)
    return f"{n} × {each} {m.name}" if n > 1 else f"{each} {m.name}"


def _missed(name, i, last, c, t, dew, st, us, L) -> str:
    th = show(c.thickness[i, last], "thickness", us)
    mat = L.material.name if L.material else ""
    if name == "surface temperature":
        return (f"'Max surface temperature' {show(t.get('max_surface_temperature')[i], 'temperature', us)} "
                f"is not met by any sold thickness: {show(c.t_surface[i, last], 'temperature', us)} at "
                f"{th}, the thickest of {mat}")
    if name == "heat loss":
        per_area = t.columns["max_heat_loss"].si_unit == "W/m**2"
        kind = "per_area" if per_area else "per_length"
        got = abs(c.q[i, last]) if per_area else abs(c.heat_rate[i, last])
        return (f"'Max heat loss' {show(t.get('max_heat_loss')[i], kind, us)} is not met by any sold "
                f"thickness: {show(got, kind, us)} at {th}, the thickest of {mat}")
    if name == "minimum":
        return (f"'Min thickness' {show(t.get('min_thickness')[i], 'thickness', us)} is more than the "
                f"thickest sold {th} of {mat}")
    if name == "condensation":
        return (f"condensation is not prevented by any sold thickness: surface "
                f"{show(c.t_surface[i, last], 'temperature', us)} at {th} against a dew point of "
                f"{show(dew[i], 'temperature', us)} plus {show(float(st['condensation_margin']), 'difference', us)}")
    return f"{name} target not met"
