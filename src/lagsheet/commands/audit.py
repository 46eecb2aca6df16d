"""Audit a schedule someone already filled: recompute, compare, and find the likely cause.

The colleague's result columns are found by their headers (ours by default, or mapped
with ``Their header=Thickness``) and read in the units their headers give. A result
differs when the thickness is not the same sold size (0.5 mm, or 2 % so that 2 in and 50 mm
agree), the surface temperature is more
than ``surface_k`` off, or the heat loss more than ``loss_rel`` off. For each line that
differs, the line is recomputed at the colleague's own thickness under each of the
usual slips (:data:`CAUSES`); the one that reproduces their numbers is named.

An audit that compares nothing (none of the columns found, or none holding a value) is an
:class:`AuditError`, never an all-clear; the result says how many lines and columns it
compared. Their values are shown as they wrote them, in their column's unit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from ..design.select import Results, _whole
from ..errors import LagsheetError
from ..io.table import RawSheet, address, fold
from ..physics.balance import System, solve
from ..physics.candidates import heat_rate, per_line
from ..physics.layers import CYLINDER, MaterialTable
from ..workbook.display import show
from ..workbook.inputs import Inputs
from ..workbook.tables import split_header
from ..workbook.units import UnitTextError, is_unit, parse_unit, to_si, unit_label

# our result headers, and the SI unit each is compared in
RESULTS = {
    "thickness": ("Thickness", "m"),
    "surface_temperature": ("Surface temperature", "K"),
    "heat_loss_per_length": ("Heat loss per length", "W/m"),
    "heat_loss": ("Heat loss", "W"),
}
CAUSES = {
    "as computed": "their thickness with lagsheet's method (so the difference is in the thickness chosen)",
    "nominal size as OD": "the nominal size taken as the outside diameter (NPS 4 as 4.0 in, not 4.5 in)",
    "no radiation": "radiation left out (emissivity 0)",
    "fixed h = 10": "a fixed surface coefficient h = 10 W/(m²·K) for convection and radiation together",
    "k at ambient": "the conductivity taken at the ambient temperature instead of the layer's mean",
    "inches read as mm": "the diameter in inches read as millimetres",
    "thickness in the other unit": "the thickness typed in the other unit system (inches in a millimetre "
                                   "column, or millimetres in an inch column)",
}


@dataclass(frozen=True)
class Finding:
    row: int
    tag: str
    quantity: str
    theirs: float
    ours: float
    cause: str | None
    message: str
    theirs_as_written: str = ""


@dataclass(frozen=True)
class TheirColumn:
    """One of the colleague's result columns: where it is, its header and the unit it is read in."""

    key: str
    col: int
    header: str
    unit: object
    unit_text: str
    unit_from_header: bool


@dataclass(frozen=True)
class Audit:
    """What was compared (lines and columns) and what differs."""

    findings: list[Finding]
    columns: list[TheirColumn]  # the columns that had values to compare
    lines_compared: int
    idle: list[TheirColumn] = field(default_factory=list)  # found, but no value in them could be compared

    def summary(self) -> str:
        cols = ", ".join(f"{c.header!r} as {RESULTS[c.key][0]}" for c in self.columns)
        what = f"compared {self.lines_compared} line{'s' * (self.lines_compared != 1)} on " \
               f"{len(self.columns)} column{'s' * (len(self.columns) != 1)} ({cols})"
        if self.idle:
            what += "; nothing compared in " + ", ".join(
                f"{c.header!r} (read as {RESULTS[c.key][0]}: no number on any line)" for c in self.idle)
        if self.findings:
            return f"{what}: {len(self.findings)} result{'s' * (len(self.findings) != 1)} differ beyond tolerance"
        return f"{what}: every audited result agrees"


class AuditError(LagsheetError, ValueError):
    """Nothing to audit, or a --map that cannot be applied: one plain sentence, exit 2."""


_MAP_HINT = "name your columns with --map 'Their header=Thickness' (or Surface temperature, Heat loss, " \
            "Heat loss per length)"


def their_columns(raw: RawSheet, header_row: int, mapping: dict[str, str]) -> list[TheirColumn]:
    """The colleague's result columns, with the unit each is read in; a --map that cannot apply is an AuditError."""
    wanted = {fold(RESULTS[k][0]): k for k in RESULTS}
    mapped: dict[str, str] = {}
    for theirs, ours in mapping.items():
        key = wanted.get(fold(split_header(ours)[0]))
        if key is None:
            raise AuditError(f"--map: {ours!r} is not a result lagsheet audits "
                             f"({', '.join(v[0] for v in RESULTS.values())})")
        mapped[fold(split_header(theirs)[0])] = key
    wanted.update(mapped)
    headers = raw.grid[header_row] if header_row < len(raw.grid) else []
    present = {fold(split_header(str(h))[0]) for h in headers if isinstance(h, str)}
    for theirs in mapping:
        if fold(split_header(theirs)[0]) not in present:
            raise AuditError(f"--map: there is no column {split_header(theirs)[0]!r} in the header row of "
                             f"{raw.name} (row {header_row + 1}); give their header as written there")
    found: dict[str, TheirColumn] = {}
    for c, text in enumerate(headers):
        if not isinstance(text, str):
            continue
        name, unit_text = split_header(text)
        key = wanted.get(fold(name))
        if key is None:
            continue
        if key in found:
            if fold(name) in mapped or fold(split_header(found[key].header)[0]) in mapped:
                raise AuditError(f"two columns would be read as {RESULTS[key][0]}: {found[key].header!r} and "
                                 f"{text.strip()!r}; map only one of them (--map 'Their header={RESULTS[key][0]}')")
            continue
        si = RESULTS[key][1]
        written = unit_text if unit_text else _default_unit(key)
        try:
            unit = parse_unit(written)
        except UnitTextError:
            raise AuditError(f"{raw.name}!{address(header_row, c)}: the unit {unit_text!r} of {text.strip()!r} "
                             f"is not one lagsheet knows; write it as e.g. [{_default_unit(key)}]") from None
        if not is_unit(unit, si):
            raise AuditError(f"{raw.name}!{address(header_row, c)}: {text.strip()!r} is in {unit_label(unit)}, "
                             f"which cannot be a {RESULTS[key][0]} ({_default_unit(key)}); "
                             "map it to a result of the same kind")
        found[key] = TheirColumn(key, c, text.strip(), unit, unit_label(unit) if unit_text else written,
                                 bool(unit_text))
    return [found[k] for k in RESULTS if k in found]


def _default_unit(key: str) -> str:
    return {"thickness": "mm", "surface_temperature": "°C", "heat_loss_per_length": "W/m", "heat_loss": "W"}[key]


def _as_written(x: float, unit_text: str) -> str:
    return f"{x:g} {unit_text}"


def audit(inputs: Inputs, raw: RawSheet, res: Results, mapping: dict[str, str] | None = None,
          surface_k: float = 2.0, loss_rel: float = 0.05) -> Audit:
    """Compare the colleague's result columns with lagsheet's; an AuditError when nothing can be compared."""
    if not (math.isfinite(surface_k) and surface_k >= 0):
        raise AuditError(f"--surface-tolerance must be a number of kelvin, 0 or more (got {surface_k})")
    if not (math.isfinite(loss_rel) and loss_rel >= 0):
        raise AuditError(f"--loss-tolerance must be a percentage, 0 or more (got {loss_rel * 100:g})")
    t = inputs.lines
    cols = their_columns(raw, t.header_row, mapping or {})
    if not cols:
        raise AuditError(f"none of the columns audit compares is in the header row of {raw.name} (row "
                         f"{t.header_row + 1}): it looked for {', '.join(repr(v[0]) for v in RESULTS.values())}, "
                         f"each with its unit; {_MAP_HINT}")
    theirs, written = _their_values(raw, t.rows, cols)
    compared, idle = _compared(theirs, res)
    if not compared.any():
        raise AuditError(f"the columns {', '.join(repr(c.header) for c in cols)} hold no value that lagsheet "
                         f"can compare on any line of {raw.name} (blank, text, or lines in error): fill them "
                         f"first, or {_MAP_HINT}")
    checks = _differences(theirs, res.values, surface_k, loss_rel)
    differ = np.zeros(res.n, dtype=bool)
    for _, bad in checks:
        differ |= bad
    by_key = {tc.key: tc for tc in cols}
    other = _other_unit_factor(by_key["thickness"].unit) if "thickness" in by_key else None
    causes = _causes(inputs, res, theirs, np.flatnonzero(differ), surface_k, loss_rel, other) \
        if differ.any() else {}
    findings = _findings(inputs, res, checks, by_key, theirs, written, causes, other)
    return Audit(findings, [c for c in cols if c.key not in idle], int(compared.sum()),
                 [c for c in cols if c.key in idle])


def _their_values(raw: RawSheet, rows: list[int], cols: list[TheirColumn]) -> tuple[dict, dict]:
    """Their values of each column on every line: in SI, and as written (NaN where no number)."""
    theirs: dict[str, np.ndarray] = {}
    written: dict[str, np.ndarray] = {}
    for tc in cols:
        vals = np.array([_num(raw.value(r, tc.col)) for r in rows])
        ok = np.isfinite(vals)
        si = np.full(len(vals), np.nan)
        if ok.any():
            si[ok] = to_si(vals[ok], tc.unit, RESULTS[tc.key][1])
        theirs[tc.key] = si
        written[tc.key] = vals
    return theirs, written


def _compared(theirs: dict, res: Results) -> tuple[np.ndarray, list[str]]:
    """The lines on which some value of theirs meets one of ours; the columns where none does."""
    compared = np.zeros(res.n, dtype=bool)
    idle = []  # columns holding no value to compare (text, blanks): not counted as compared
    for key, their in theirs.items():
        here = np.isfinite(their) & np.isfinite(res.values[key])
        compared |= here
        if not here.any():
            idle.append(key)
    return compared, idle


def _differences(theirs: dict, v: dict, surface_k: float, loss_rel: float) -> list[tuple[str, np.ndarray]]:
    """(key, lines where their value differs from ours beyond the tolerance) for each column."""
    checks = []
    for key, their in theirs.items():
        ours = v[key]
        both = np.isfinite(their) & np.isfinite(ours)
        if key == "thickness":  # the same sold size: within 0.5 mm, or an inch size and its metric twin (2 %)
            bad = both & (np.abs(their - ours) > np.maximum(0.0005, 0.02 * np.abs(ours)))
        elif key == "surface_temperature":
            bad = both & (np.abs(their - ours) > surface_k)
        else:
            bad = both & (np.abs(their - ours) > loss_rel * np.maximum(np.abs(ours), 1e-9))
        checks.append((key, bad))
    return checks


def _findings(inputs: Inputs, res: Results, checks, by_key: dict[str, TheirColumn], theirs: dict,
              written: dict, causes: dict[int, str], other: float | None) -> list[Finding]:
    """A finding for each differing value, naming its cell, both values and the likely cause."""
    t, v, us = inputs.lines, res.values, inputs.us_units
    findings: list[Finding] = []
    for key, bad in checks:
        kind = {"thickness": "thickness", "surface_temperature": "temperature", "heat_loss_per_length": "per_length",
                "heat_loss": "power"}[key]
        tc = by_key[key]
        for i in np.flatnonzero(bad):
            cause = causes.get(int(i))
            if key == "thickness" and other is not None and _same_size(theirs[key][i] * other, v[key][i]):
                cause = "thickness in the other unit"
            cell = address(t.rows[i], tc.col)
            as_written = _as_written(written[key][i], tc.unit_text)
            msg = (f"{RESULTS[key][0]} ({t.sheet}!{cell}): theirs {as_written}, lagsheet "
                   f"{show(v[key][i], kind, us)}" + (f"; likely cause: {CAUSES[cause]}" if cause else
                                                    "; no single usual slip reproduces their value"))
            findings.append(Finding(t.rows[i] + 1, res.tags[i], RESULTS[key][0], float(theirs[key][i]),
                                    float(v[key][i]), cause, msg, as_written))
    return findings


def _other_unit_factor(unit) -> float:
    """Their thickness number read in the other unit system, as a factor on their SI value (mm <-> in)."""
    one = float(to_si(1.0, unit, "m"))
    inch_like = abs(one / 0.0254 - 1) < 1e-9 or abs(one / 0.3048 - 1) < 1e-9
    return (0.001 if inch_like else 0.0254) / one


def _same_size(a: float, b: float) -> bool:
    """Two thicknesses that name the same sold size across unit systems (2 in and 50 mm): within 7 %.

    Neighbouring sold sizes differ by 10 % or more in both systems' usual series, so 7 % does not
    mistake one size for the next (our own tolerance, stated in the README).
    """
    return bool(np.isfinite(a) and np.isfinite(b) and b > 0 and abs(a - b) <= 0.07 * b)


def _num(x) -> float:
    if isinstance(x, bool) or x is None:
        return np.nan
    try:
        return float(x)
    except (TypeError, ValueError):
        return np.nan


def _causes(inputs: Inputs, res: Results, theirs, rows: np.ndarray, surface_k: float,
            loss_rel: float, other: float | None = None) -> dict[int, str]:
    """For each differing line, the usual slip that reproduces the colleague's numbers best."""
    base = per_line(res.system, rows)
    th_theirs = theirs.get("thickness")
    thick = base.thickness.copy()
    if th_theirs is not None:
        tt = th_theirs[rows]
        use = np.isfinite(tt)
        # their total thickness, as one layer of the inner material
        thick[use] = 0.0
        thick[use, 0] = tt[use]
    base = replace(base, thickness=thick)
    variants = _slips(inputs, res, base, rows)
    if other is not None and th_theirs is not None:
        # their surface and loss come from their thickness in the other unit; their column's number is not it
        thick_other = thick.copy()
        thick_other[use, 0] = tt[use] * other
        variants["thickness in the other unit"] = (replace(base, thickness=thick_other), res.table)
    variants["k at ambient"] = _k_at_ambient(base, res.table)
    lines = [res.lines[i] for i in rows]
    errors = {name: _misfit(s, table, theirs, rows, np.array([L.length for L in lines]),
                            np.array([L.area for L in lines]), surface_k, loss_rel)
              for name, (s, table) in variants.items()}
    out = {}
    names = list(errors)
    table = np.vstack([errors[nm] for nm in names])
    for k, i in enumerate(rows):
        best = int(np.argmin(table[:, k]))
        if np.isfinite(table[best, k]) and table[best, k] <= 1.0:  # within the tolerances
            out[int(i)] = names[best]
    return out


def _slips(inputs: Inputs, res: Results, base: System, rows: np.ndarray) -> dict[str, tuple[System, MaterialTable]]:
    """The system at their thickness as computed, and under the slips of size, radiation and h."""
    variants: dict[str, tuple[System, MaterialTable]] = {"as computed": (base, res.table)}
    r_nominal = base.r_inner.copy()
    r_inch_mm = base.r_inner / 0.0254 * 0.001
    size_col = inputs.lines.get("size")
    for k, i in enumerate(rows):
        nps = _nps_number(size_col[i] if size_col is not None else None)
        if nps is not None:
            r_nominal[k] = nps * 0.0254 / 2
    variants["nominal size as OD"] = (replace(base, r_inner=r_nominal), res.table)
    variants["no radiation"] = (replace(base, emissivity=np.zeros(len(rows))), res.table)
    variants["fixed h = 10"] = (replace(base, h_fixed=np.full(len(rows), 10.0)), res.table)
    variants["inches read as mm"] = (replace(base, r_inner=r_inch_mm), res.table)
    return variants


def _k_at_ambient(base: System, table: MaterialTable) -> tuple[System, MaterialTable]:
    """The slip 'k at ambient': one constant curve per line and layer, at that line's ambient."""
    curves = {}
    mats = np.zeros_like(base.material)
    for k in range(base.material.shape[0]):
        for j in range(base.material.shape[1]):
            m = int(base.material[k, j])
            kk = float(table.conductivity(np.array([m]), np.array([base.t_air[k]]))[0])
            name = f"{k}-{j}"
            curves[name] = (np.array([1.0, 4000.0]), np.array([kk, kk]))
            mats[k, j] = len(curves) - 1
    return replace(base, material=mats), MaterialTable.build(curves)


def _misfit(s: System, table: MaterialTable, theirs, rows: np.ndarray, lengths: np.ndarray,
            areas: np.ndarray, surface_k: float, loss_rel: float) -> np.ndarray:
    """Per line, the mean distance of a variant's results from theirs in tolerances (inf: none compared)."""
    geometry = s.geometry
    sol = solve(s, table)
    rate = heat_rate(geometry, sol.q, sol.r_outer)
    got = {"surface_temperature": sol.t_surface, "heat_loss_per_length": np.where(geometry == CYLINDER, rate, np.nan),
           "heat_loss": _whole(geometry, rate, lengths, areas)}
    err = np.zeros(len(rows))
    n_cmp = np.zeros(len(rows))
    for key in ("surface_temperature", "heat_loss_per_length", "heat_loss"):
        if key not in theirs:
            continue
        their = theirs[key][rows]
        ok = np.isfinite(their) & np.isfinite(got[key])
        scale = surface_k if key == "surface_temperature" else loss_rel * np.maximum(np.abs(their), 1e-9)
        err = err + np.where(ok, np.abs(got[key] - their) / scale, 0.0)
        n_cmp = n_cmp + ok
    return np.where(n_cmp > 0, err / np.maximum(n_cmp, 1), np.inf)


def _nps_number(size) -> float | None:
    """'NPS 4' or '4"' -> 4.0 (the nominal number, not the OD); DN sizes -> None."""
    from ..workbook.library import _NPS, _fraction

    if not size or str(size).strip().lower().startswith("dn"):
        return None
    m = _NPS.match(str(size))
    if not m:
        return None
    try:
        return _fraction(m.group(1))
    except (ValueError, ZeroDivisionError):
        return None
