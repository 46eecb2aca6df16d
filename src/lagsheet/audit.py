"""Audit a schedule someone already filled: recompute, compare, and find the likely cause.

The colleague's result columns are found by their headers (ours by default, or mapped
with ``Their header=Thickness``) and read in the units their headers give. A result
differs when the thickness is not the same sold size, the surface temperature is more
than ``surface_k`` off, or the heat loss more than ``loss_rel`` off. For each line that
differs, the line is recomputed at the colleague's own thickness under each of the
usual slips (:data:`CAUSES`); the one that reproduces their numbers is named.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .check import split_header
from .display import show
from .inputs import Inputs
from .io.table import RawSheet, address, fold
from .physics.balance import System, solve
from .physics.layers import CYLINDER, MaterialTable
from .physics.sizing import heat_rate, per_line
from .spec import Results, _whole
from .units import UnitTextError, parse_unit, to_si

# our result headers, and the SI unit each is compared in
RESULTS = {
    "thickness": ("Thickness", "m"),
    "t_surface": ("Surface temperature", "K"),
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


def their_columns(raw: RawSheet, header_row: int, mapping: dict[str, str]) -> dict[str, tuple[int, object]]:
    """Result key -> (column, pint unit) of the colleague's columns."""
    wanted = {fold(RESULTS[k][0]): k for k in RESULTS}
    for theirs, ours in mapping.items():
        key = wanted.get(fold(split_header(ours)[0]))
        if key is None:
            raise ValueError(f"--map: {ours!r} is not a result lagsheet audits "
                             f"({', '.join(v[0] for v in RESULTS.values())})")
        wanted[fold(split_header(theirs)[0])] = key
    found = {}
    for c, text in enumerate(raw.grid[header_row] if header_row < len(raw.grid) else []):
        if not isinstance(text, str):
            continue
        name, unit = split_header(text)
        key = wanted.get(fold(name))
        if key is None or key in found:
            continue
        try:
            found[key] = (c, parse_unit(unit) if unit else parse_unit(_default_unit(key)))
        except UnitTextError:
            continue
    return found


def _default_unit(key: str) -> str:
    return {"thickness": "mm", "t_surface": "°C", "heat_loss_per_length": "W/m", "heat_loss": "W"}[key]


def audit(inputs: Inputs, raw: RawSheet, res: Results, mapping: dict[str, str] | None = None,
          surface_k: float = 2.0, loss_rel: float = 0.05) -> list[Finding]:
    t = inputs.lines
    cols = their_columns(raw, t.header_row, mapping or {})
    theirs: dict[str, np.ndarray] = {}
    for key, (c, unit) in cols.items():
        vals = np.array([_num(raw.value(r, c)) for r in t.rows])
        ok = np.isfinite(vals)
        si = np.full(len(vals), np.nan)
        if ok.any():
            si[ok] = to_si(vals[ok], unit, RESULTS[key][1])
        theirs[key] = si
    v = res.values
    findings: list[Finding] = []
    differ = np.zeros(res.n, dtype=bool)
    checks = []
    for key, their in theirs.items():
        ours = v[key]
        both = np.isfinite(their) & np.isfinite(ours)
        if key == "thickness":
            bad = both & (np.abs(their - ours) > 0.0005)
        elif key == "t_surface":
            bad = both & (np.abs(their - ours) > surface_k)
        else:
            bad = both & (np.abs(their - ours) > loss_rel * np.maximum(np.abs(ours), 1e-9))
        differ |= bad
        checks.append((key, bad))
    causes = _causes(inputs, res, theirs, np.flatnonzero(differ), surface_k, loss_rel) if differ.any() else {}
    us = inputs.us_units
    for key, bad in checks:
        kind = {"thickness": "thickness", "t_surface": "temperature", "heat_loss_per_length": "per_length",
                "heat_loss": "power"}[key]
        for i in np.flatnonzero(bad):
            cause = causes.get(int(i))
            cell = address(t.rows[i], cols[key][0])
            msg = (f"{RESULTS[key][0]} ({t.sheet}!{cell}): theirs {show(theirs[key][i], kind, us)}, lagsheet "
                   f"{show(v[key][i], kind, us)}" + (f"; likely cause: {CAUSES[cause]}" if cause else
                                                    "; no single usual slip reproduces their value"))
            findings.append(Finding(t.rows[i] + 1, res.tags[i], RESULTS[key][0], float(theirs[key][i]),
                                    float(v[key][i]), cause, msg))
    return findings


def _num(x) -> float:
    if isinstance(x, bool) or x is None:
        return np.nan
    try:
        return float(x)
    except (TypeError, ValueError):
        return np.nan


def _causes(inputs: Inputs, res: Results, theirs, rows: np.ndarray, surface_k: float,
            loss_rel: float) -> dict[int, str]:
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
    lines = [res.lines[i] for i in rows]
    geometry = base.geometry
    lengths = np.array([L.length for L in lines])
    areas = np.array([L.area for L in lines])
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
    # k at ambient: one constant curve per line, at that line's ambient
    curves = {}
    mats = np.zeros_like(base.material)
    for k in range(len(rows)):
        for j in range(base.material.shape[1]):
            m = int(base.material[k, j])
            kk = float(res.table.conductivity(np.array([m]), np.array([base.t_air[k]]))[0])
            name = f"{k}-{j}"
            curves[name] = (np.array([1.0, 4000.0]), np.array([kk, kk]))
            mats[k, j] = len(curves) - 1
    variants["k at ambient"] = (replace(base, material=mats), MaterialTable.build(curves))
    errors = {}
    for name, (s, table) in variants.items():
        sol = solve(s, table)
        rate = heat_rate(geometry, sol.q, sol.r_outer)
        got = {"t_surface": sol.t_surface, "heat_loss_per_length": np.where(geometry == CYLINDER, rate, np.nan),
               "heat_loss": _whole(geometry, rate, lengths, areas)}
        err = np.zeros(len(rows))
        n_cmp = np.zeros(len(rows))
        for key in ("t_surface", "heat_loss_per_length", "heat_loss"):
            if key not in theirs:
                continue
            their = theirs[key][rows]
            ok = np.isfinite(their) & np.isfinite(got[key])
            scale = surface_k if key == "t_surface" else loss_rel * np.maximum(np.abs(their), 1e-9)
            err = err + np.where(ok, np.abs(got[key] - their) / scale, 0.0)
            n_cmp = n_cmp + ok
        errors[name] = np.where(n_cmp > 0, err / np.maximum(n_cmp, 1), np.inf)
    out = {}
    names = list(errors)
    table = np.vstack([errors[nm] for nm in names])
    for k, i in enumerate(rows):
        best = int(np.argmin(table[:, k]))
        if np.isfinite(table[best, k]) and table[best, k] <= 1.0:  # within the tolerances
            out[int(i)] = names[best]
    return out


def _nps_number(size) -> float | None:
    """'NPS 4' or '4"' -> 4.0 (the nominal number, not the OD); DN sizes -> None."""
    from .library import _NPS, _fraction

    if not size or str(size).strip().lower().startswith("dn"):
        return None
    m = _NPS.match(str(size))
    if not m:
        return None
    try:
        return _fraction(m.group(1))
    except (ValueError, ZeroDivisionError):
        return None
