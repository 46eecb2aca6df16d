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
    L = ctx.lines[i]
    res.values["layers"][i] = layers_text(rep.chosen_th[i], L.materials, ctx.us,
                                          res.values["interface_temperature"][i], L.series)
    if ch.unmet[i]:
        _unmet(ctx, judged, ch, res, i)
        return
    _target_notes(ctx, judged, ch, res, i)
    _balance_notes(ctx, ch, rep, res, i)
    _surface_notes(ctx, ch, rep, res, i)


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


def _target_notes(ctx: Context, judged, ch, res, i: int) -> None:
    """A fixed thickness that misses a target; no target at all; the condition that governed."""
    L, governing, gov_cond = ctx.lines[i], ch.governing[i], ch.gov_cond[i]
    if L.fixed:
        for name, j in judged.items():
            if j.given[i] and not j.meets[i, 0]:
                _note(ctx, res, i, "warning", "target-not-met",
                      f"the fixed thickness does not meet the {name} target", "fixed_thickness")
    if governing == "none":
        _note(ctx, res, i, "warning", "no-target",
              "no target on this line: the thinnest sold thickness is shown; give 'Max surface "
              "temperature', 'Max heat loss', 'Prevent condensation', 'Min thickness' or 'Economic'")
    if len(L.conditions) > 1 and gov_cond and governing not in ("fixed", "none", THINNEST):
        where = BY_NAME[governing].judged_at if governing in BY_NAME else Target.judged_at
        _note(ctx, res, i, "info", "governing-condition",
              f"{governing} judged {where}'{gov_cond}' governed. Results "
              f"are given at '{L.conditions[0].name}'", "condition")


def _balance_notes(ctx: Context, ch, rep, res, i: int) -> None:
    """The surface balance that did not converge, conductivity outside its points, a system
    that loses more than the bare line."""
    L, sol, th, us = ctx.lines[i], rep.sol, rep.chosen_th[i], ctx.us
    if not sol.converged[i] or not np.isfinite(sol.residual[i]) or abs(sol.residual[i]) > 1e-6 \
            or not np.isfinite(sol.q[i]):
        _note(ctx, res, i, "error", "not-converged", "the surface balance did not converge; check the "
              "inputs of this line")
    if th.sum() > 0 and not ctx.c.in_range[ctx.starts[i], ch.chosen[i]]:
        for j, m in enumerate(L.materials):
            tm = 0.5 * (sol.faces[i, j] + sol.faces[i, j + 1])
            if th[j] > 0 and not (m.mean_temperatures[0] - 1e-9 <= tm <= m.mean_temperatures[-1] + 1e-9):
                _note(ctx, res, i, "error", "k-out-of-range",
                      f"{m.name}: conductivity is needed at a mean temperature of "
                      f"{show(tm, 'temperature', us)}, outside its points "
                      f"({show(m.mean_temperatures[0], 'temperature', us)} to "
                      f"{show(m.mean_temperatures[-1], 'temperature', us)}); add points to "
                      "the Materials sheet", "insulation")
    loss, bare = abs(rep.loss[i]), abs(rep.bare_loss[i])
    if th.sum() > 0 and loss > bare and L.geometry != FLAT:
        hot = L.t_op >= L.conditions[0].t_air
        _note(ctx, res, i, "warning", "more-than-bare",
              f"this system {'loses' if hot else 'gains'} more heat than the bare line "
              f"({show(loss, 'power', us)} against {show(bare, 'power', us)}): "
              f"the outer radius {show(sol.r_outer[i], 'radius', us)} is below the critical "
              f"radius {show(rep.r_crit[i], 'radius', us)} of {_names(L)}")


def _surface_notes(ctx: Context, ch, rep, res, i: int) -> None:
    """A hot surface without a limit, condensation on a cold one, a correlation outside its
    range, the payback of an economic choice."""
    L, sol, us = ctx.lines[i], rep.sol, ctx.us
    ts = rep.t_surface  # the reported: sun-facing on a hot line, shade on a cold one
    hot = L.t_op >= L.conditions[0].t_air
    tmax = ctx.t.get("max_surface_temperature")
    has_limit = tmax is not None and np.isfinite(tmax[i])
    if hot and ts[i] > PERSONNEL_LIMIT_K and not has_limit:
        _note(ctx, res, i, "caution", "hot-surface",
              f"surface {show(ts[i], 'temperature', us)} is above 60 °C, the usual "
              "personnel-protection limit (common practice; ASTM C1055 limits depend on contact "
              "time and surface material): guard it or set 'Max surface temperature'")
    if not hot:
        dew = ctx.dew[ctx.starts[i]]
        if ts[i] < dew + ctx.margin - 1e-9:
            _note(ctx, res, i, "warning", "condensation",
                  f"surface {show(ts[i], 'temperature', us)} is below the dew point "
                  f"{show(dew, 'temperature', us)} plus margin: condensation is expected; "
                  "set 'Prevent condensation' yes")
        _note(ctx, res, i, "caution", "vapour-retarder",
              "cold line: a continuous vapour retarder is required; this calculation does not "
              "cover moisture ingress")
    if sol.convection.outside[i]:
        _note(ctx, res, i, "info", "correlation-range",
              f"{' / '.join(CORRELATION_NAMES[L.shape])}: used outside its published range for "
              "this line; treat h as an estimate")
    payback = res.values["payback"][i]
    if np.isfinite(payback) and ch.governing[i] == "economic":
        _note(ctx, res, i, "info", "payback", f"simple payback against bare: {payback:.1f} years")
