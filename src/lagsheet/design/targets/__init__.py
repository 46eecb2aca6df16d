"""The targets a line's insulation is sized to, one module and one class each, and their registry.

A target knows the input columns it reads (:attr:`Target.columns`), which lines give it
(:meth:`Target.given`), its measure for every candidate system (:meth:`Target.measure`:
per case, cases × candidates, larger is worse, so the worst named condition governs; or
per line for those judged at the coldest named condition), whether each candidate meets
it (:meth:`Target.meets`), its margin at the chosen system (:meth:`Target.margin`) and
its words when no sold system meets it (:meth:`Target.unmet`), and checks its own inputs
(:meth:`Target.check`, run for every line by :func:`lagsheet.design.lines.resolve`, so
``check`` and ``fill`` report the same errors). :mod:`.base` holds what they share.

The selection (:mod:`lagsheet.design.select`) loops over :data:`TARGETS`; adding a target
is one module here (its class) plus its place in that list. ``order`` breaks ties when
several targets want the same thickness (the lowest names the governing one); ``monotone`` says a thicker
system of one material never does worse, so a search over its sorted thicknesses may
bisect (two materials' candidates run by total thickness, not by either layer: no bisection).
"""

from __future__ import annotations

from .base import Context, Judgement, ProcessTarget, Target
from .code_minimum import CodeMinimum
from .condensation import Condensation
from .economic import Economic
from .freeze_protection import FreezeProtection
from .heat_loss import HeatLoss
from .hold_time import HoldTime
from .interface import Interface
from .minimum import Minimum
from .surface_temperature import SurfaceTemperature
from .temperature_drop import TemperatureDrop

__all__ = ["BY_NAME", "BY_ORDER", "CHECK_ORDER", "ECONOMIC", "GOVERNING_ORDER", "TARGETS", "CodeMinimum", "Condensation",
           "Context", "Economic", "FreezeProtection", "HeatLoss", "HoldTime", "Interface", "Judgement", "Minimum",
           "ProcessTarget", "SurfaceTemperature", "Target", "TemperatureDrop", "judge"]

# The registry, in the order targets are judged and listed (``explain``); ties go by ``order``.
TARGETS: tuple[Target, ...] = (SurfaceTemperature(), HeatLoss(), Minimum(), Condensation(), Interface(),
                               TemperatureDrop(), FreezeProtection(), HoldTime(), CodeMinimum())
BY_ORDER: tuple[Target, ...] = tuple(sorted(TARGETS, key=lambda x: x.order))
GOVERNING_ORDER = tuple(x.name for x in BY_ORDER)
BY_NAME: dict[str, Target] = {x.name: x for x in TARGETS}


ECONOMIC = Economic()
# Inputs are checked in this order: the process targets once the fluid is known, then the others.
CHECK_ORDER: tuple[Target | Economic, ...] = (*(x for x in TARGETS if x.needs_fluid),
                                              *(x for x in TARGETS if not x.needs_fluid), ECONOMIC)


def judge(ctx: Context) -> dict[str, Judgement]:
    """Every target some line can give, judged (late ones given but not yet judged)."""
    out = {}
    for target in TARGETS:
        j = target.judge(ctx)
        if j is not None:
            out[target.name] = j
    return out
