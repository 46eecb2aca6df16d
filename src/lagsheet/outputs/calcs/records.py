"""What one calculation sheet holds: the numbers of one line, gathered by the ``calcs`` command
(:mod:`lagsheet.commands.calcs`) and set on the page by :mod:`lagsheet.outputs.calcs.sheet`.

Texts are already in the workbook's units; the surface balance is kept in SI numbers so the
page prints it at the precision that lets a reader add it up."""

from __future__ import annotations

from dataclasses import dataclass, field

from .chart import Chart


@dataclass(frozen=True)
class Balance:
    """The outer-surface balance of the chosen system at the condition of record.

    ``conduction``, ``convection``, ``radiation`` and ``sun`` are per unit of the line
    (per metre of a cylinder, per m² of a flat, the whole of a sphere) [W/m, W/m², W];
    ``factor`` turns them into the whole line (its length, its area, 1)."""

    unit: str  # 'per_length', 'per_area' or 'power': what one unit's terms are
    factor: float
    factor_text: str  # 'length 60 m', 'area 12 m²', ''
    conduction: float
    convection: float
    radiation: float
    sun: float  # minus the absorbed sunlight α·G·F (a gain: negative out; 0 where the sun is not counted)
    residual: float  # (in − out)/max(|in|, |out|), as the solver left it
    heat_loss: float  # the reported heat loss of the line [W]
    flowing: bool  # the reported heat loss is the fluid's heat given up along the line

    @property
    def out(self) -> float:
        return self.convection + self.radiation + self.sun


@dataclass
class LineSheet:
    tag: str
    title: str  # 'Lines row 12 — Boiler house — Saturated steam header'
    status: str
    inputs: list[tuple[str, str, str, str, str]] = field(default_factory=list)  # header, written, unit, SI, cell
    condition: list[tuple[str, str]] = field(default_factory=list)
    layers: list[tuple[str, ...]] = field(default_factory=list)  # rows of the construction table
    surface: list[tuple[str, str]] = field(default_factory=list)  # correlations, groups and coefficients
    balance: Balance | None = None
    targets: list[tuple[str, ...]] = field(default_factory=list)  # target, limit, value, margin, own, met
    chosen: list[tuple[str, str]] = field(default_factory=list)  # chosen, governing, condition, why
    process: list[tuple[str, str]] = field(default_factory=list)
    results: list[tuple[str, str]] = field(default_factory=list)  # workbook header, cell as shown
    notes: list[tuple[str, str]] = field(default_factory=list)  # level, message
    charts: list[Chart] = field(default_factory=list)
    chart_note: str = ""
