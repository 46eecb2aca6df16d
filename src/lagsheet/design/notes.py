"""Words for one computed line: its layers, then every error, warning and caution about
the chosen system. Each target's own words when it is not met are its class's
(:meth:`lagsheet.design.targets.Target.unmet`)."""

from __future__ import annotations

import numpy as np

from ..errors import Note
from ..physics.layers import FLAT
from ..physics.surface import CORRELATION_NAMES
from ..workbook.display import show
from .build import layers_text
from .targets import BY_NAME, Context, Judgement, Target

THINNEST = "thinnest sold"  # Governing word when the thinnest sold system meets every target
PERSONNEL_LIMIT_K = 333.15  # 60 °C, the usual personnel-protection limit (common practice)


def line_notes(ctx: Context, judged: dict[str, Judgement], ch, rep, res, i: int) -> None:
    """Words for line ``i``: ``ch`` is the selection's choice, ``rep`` the chosen systems solved."""
    lines_notes(ctx, judged, ch, rep, res, np.array([i]))


def lines_notes(ctx: Context, judged: dict[str, Judgement], ch, rep, res, idx: np.ndarray) -> None:
    """Words for the lines ``idx`` (ascending): each kind of note decided for every line at once
    from per-line arrays and written only where it applies, kind after kind, so each line's
    notes come in the order of :func:`line_notes`."""
    _layers(ctx, rep, res, idx)
    unmet = ch.unmet[idx]
    for i in idx[unmet]:
        _unmet(ctx, judged, ch, res, i)
    met = idx[~unmet]
    _target_notes(ctx, judged, ch, res, met)
    _balance_notes(ctx, ch, rep, res, met)
    _surface_notes(ctx, ch, rep, res, met)


def _layers(ctx: Context, rep, res, idx: np.ndarray) -> None:
    """'Layers' of the lines ``idx``; a one-material line's words (no interface temperature in
    them) worked out once per thickness and material."""
    lines, us, layers = ctx.lines, ctx.us, res.values["layers"]
    th, interface = rep.chosen_th, res.values["interface_temperature"]
    rows, seen = th.tolist(), {}
    for i in idx:
        L = lines[i]
        if len(L.materials) > 1:
            layers[i] = layers_text(th[i], L.materials, us, interface[i], L.series)
            continue
        key = (*rows[i][:len(L.materials)], *map(id, L.materials))  # the words read no other slot
        text = seen.get(key)
        if text is None:
            text = seen[key] = layers_text(th[i], L.materials, us, interface[i], L.series)
        layers[i] = text


def _note(ctx: Context, res, i: int, level: str, code: str, message: str, key: str = "tag") -> None:
    res.notes[i].append(Note(level, code, message, ctx.t.sheet, ctx.t.cell(i, key)))


def _names(L) -> str:
    return " + ".join(m.name for m in L.materials)


def _unmet(ctx: Context, judged, ch, res, i: int) -> None:
    """No sold system meets every target: one error naming each target missed, worst first."""
    last = ch.last[i]
    missed = sorted((j.target for j in judged.values() if j.given[i] and not j.meets[i, last]),
                    key=lambda x: x.order)
    thick = show(float(np.nansum(ctx.cand[i, last])), "thickness", ctx.us)
    words, worst_j = [], []
    for target in missed:
        text, j = target.unmet(ctx, judged[target.name], i, last, thick, _names(ctx.lines[i]))
        words.append(text)
        worst_j.append(j)
    if not words:
        words = ["no sold thickness gives a valid result: the material's conductivity points do not "
                 "cover the temperatures of this line"]
    _note(ctx, res, i, "error", "target-not-met", "; ".join(words))
    res.values["governing"][i] = (missed[0].name if missed else "none") + " (not met)"
    if worst_j:
        res.values["governing_condition"][i] = ctx.case_cond[worst_j[0]].name


def _target_notes(ctx: Context, judged, ch, res, idx: np.ndarray) -> None:
    """A fixed thickness that misses a target; no target at all; the condition that governed."""
    lines, governing, gov_cond = ctx.lines, ch.governing, ch.gov_cond
    for i in idx:
        if lines[i].fixed:
            for name, j in judged.items():
                if j.given[i] and not j.meets[i, 0]:
                    _note(ctx, res, i, "warning", "target-not-met",
                          f"the fixed thickness does not meet the {name} target", "fixed_thickness")
    for i in idx[governing[idx] == "none"]:
        _note(ctx, res, i, "warning", "no-target",
              "no target on this line: the thinnest sold thickness is shown; give 'Max surface "
              "temperature', 'Max heat loss', 'Prevent condensation', 'Min thickness' or 'Economic'")
    for i in idx:
        L, g = lines[i], governing[i]
        if len(L.conditions) > 1 and gov_cond[i] and g not in ("fixed", "none", THINNEST):
            where = BY_NAME[g].judged_at if g in BY_NAME else Target.judged_at
            _note(ctx, res, i, "info", "governing-condition",
                  f"{g} judged {where}'{gov_cond[i]}' governed. Results "
                  f"are given at '{L.conditions[0].name}'", "condition")


def _balance_notes(ctx: Context, ch, rep, res, idx: np.ndarray) -> None:
    """The surface balance that did not converge, conductivity outside its points, a system
    that loses more than the bare line."""
    lines, sol, us = ctx.lines, rep.sol, ctx.us
    residual = sol.residual[idx]
    failed = ~np.asarray(sol.converged[idx], dtype=bool) | ~np.isfinite(residual) | (np.abs(residual) > 1e-6) | ~np.isfinite(sol.q[idx])
    for i in idx[failed]:
        _note(ctx, res, i, "error", "not-converged", "the surface balance did not converge; check the "
              "inputs of this line")
    thick = rep.chosen_th[idx].sum(axis=1) > 0
    for i in idx[thick & ~ctx.c.in_range[ctx.starts[idx], ch.chosen[idx]]]:
        _k_notes(ctx, rep, res, i)
    geometry = np.array([lines[i].geometry for i in idx], dtype=int)
    more = thick & (np.abs(rep.loss[idx]) > np.abs(rep.bare_loss[idx])) & (geometry != FLAT)
    for i in idx[more]:
        L, loss, bare = lines[i], abs(rep.loss[i]), abs(rep.bare_loss[i])
        hot = L.t_op >= L.conditions[0].t_air
        _note(ctx, res, i, "warning", "more-than-bare",
              f"this system {'loses' if hot else 'gains'} more heat than the bare line "
              f"({show(loss, 'power', us)} against {show(bare, 'power', us)}): "
              f"the outer radius {show(sol.r_outer[i], 'radius', us)} is below the critical "
              f"radius {show(rep.r_crit[i], 'radius', us)} of {_names(L)}")


def _k_notes(ctx: Context, rep, res, i: int) -> None:
    """Each layer of line ``i`` whose conductivity is needed outside its material's points."""
    L, sol, th, us = ctx.lines[i], rep.sol, rep.chosen_th[i], ctx.us
    for j, m in enumerate(L.materials):
        tm = 0.5 * (sol.faces[i, j] + sol.faces[i, j + 1])
        if th[j] > 0 and not (m.mean_temperatures[0] - 1e-9 <= tm <= m.mean_temperatures[-1] + 1e-9):
            _note(ctx, res, i, "error", "k-out-of-range",
                  f"{m.name}: conductivity is needed at a mean temperature of "
                  f"{show(tm, 'temperature', us)}, outside its points "
                  f"({show(m.mean_temperatures[0], 'temperature', us)} to "
                  f"{show(m.mean_temperatures[-1], 'temperature', us)}); add points to "
                  "the Materials sheet", "insulation")


def _surface_notes(ctx: Context, ch, rep, res, idx: np.ndarray) -> None:
    """A hot surface without a limit, condensation on a cold one, a correlation outside its
    range, the payback of an economic choice."""
    lines, sol, us = ctx.lines, rep.sol, ctx.us
    ts = rep.t_surface  # the reported: sun-facing on a hot line, shade on a cold one
    hot = (np.array([lines[i].t_op for i in idx], dtype=float)
           >= np.array([lines[i].conditions[0].t_air for i in idx], dtype=float))
    tmax = ctx.t.get("max_surface_temperature")
    has_limit = np.isfinite(tmax[idx]) if tmax is not None else np.zeros(len(idx), dtype=bool)
    for i in idx[hot & (ts[idx] > PERSONNEL_LIMIT_K) & ~has_limit]:
        _note(ctx, res, i, "caution", "hot-surface",
              f"surface {show(ts[i], 'temperature', us)} is above 60 °C, the usual "
              "personnel-protection limit (common practice; ASTM C1055 limits depend on contact "
              "time and surface material): guard it or set 'Max surface temperature'")
    cold = idx[~hot]
    for i in cold[ts[cold] < ctx.dew[ctx.starts[cold]] + ctx.margin - 1e-9]:
        _note(ctx, res, i, "warning", "condensation",
              f"surface {show(ts[i], 'temperature', us)} is below the dew point "
              f"{show(ctx.dew[ctx.starts[i]], 'temperature', us)} plus margin: condensation is expected; "
              "set 'Prevent condensation' yes")
    for i in cold:
        _note(ctx, res, i, "caution", "vapour-retarder",
              "cold line: a continuous vapour retarder is required; this calculation does not "
              "cover moisture ingress")
    for i in idx[np.asarray(sol.convection.outside[idx], dtype=bool)]:
        _note(ctx, res, i, "info", "correlation-range",
              f"{' / '.join(CORRELATION_NAMES[lines[i].shape])}: used outside its published range for "
              "this line; treat h as an estimate")
    payback = res.values["payback"]
    for i in idx[np.isfinite(payback[idx]) & (ch.governing[idx] == "economic")]:
        _note(ctx, res, i, "info", "payback", f"simple payback against bare: {payback[i]:.1f} years")
