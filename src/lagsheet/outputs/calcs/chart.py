"""Line charts drawn as PDF vector paths (no image is rendered): frame, grid, ticks, curves,
limit lines and a legend. Used for each material's k(T) and each line's curves against
thickness."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from .document import GREY, Document

RED, BLUE, BLACK, GREEN = (200, 30, 30), (30, 80, 190), (0, 0, 0), (20, 130, 60)


@dataclass
class Series:
    x: Sequence[float]
    y: Sequence[float]
    label: str
    color: tuple[int, int, int] = RED
    dashed: bool = False
    marks: bool = False  # a small square at every point (measured points)


@dataclass
class Chart:
    xlabel: str
    ylabel: str
    series: list[Series] = field(default_factory=list)
    hlines: list[tuple[float, str, tuple[int, int, int]]] = field(default_factory=list)  # (y, label, colour)
    vlines: list[tuple[float, str, tuple[int, int, int]]] = field(default_factory=list)  # (x, label, colour)
    title: str = ""


def ticks(lo: float, hi: float, most: int = 6) -> list[float]:
    """Round tick values covering [lo, hi]: steps of 1, 2 or 5 × 10^k."""
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return [0.0, 1.0]
    if hi - lo < 1e-12 * max(1.0, abs(hi)):
        lo, hi = lo - max(1.0, abs(lo) * 0.1), hi + max(1.0, abs(hi) * 0.1)
    raw = (hi - lo) / max(most - 1, 1)
    mag = 10 ** math.floor(math.log10(raw))
    step = next(s * mag for s in (1, 2, 5, 10) if s * mag >= raw)
    first = math.floor(lo / step + 1e-9) * step
    last = math.ceil(hi / step - 1e-9) * step
    count = int(round((last - first) / step)) + 1
    return [first + k * step for k in range(count)]


def _label(v: float, step: float) -> str:
    decimals = max(0, -int(math.floor(math.log10(step) + 1e-9))) if step > 0 else 0
    return f"{v:,.{decimals}f}"


def draw(pdf: Document, chart: Chart, x: float, y: float, w: float, h: float) -> None:
    """Draw ``chart`` in the box (x, y, w, h) [mm]; the legend goes below the plot area."""
    left, bottom, top = 14.0, 8.0, 5.0 if chart.title else 1.5
    entries = [(s.label, s.color, s.dashed) for s in chart.series] + \
              [(lab, c, True) for _, lab, c in chart.hlines + chart.vlines]
    per_row = 1 if len(entries) == 1 else 2
    legend_h = 3.2 * math.ceil(len(entries) / per_row)
    px, py, pw, ph = x + left, y + top, w - left - 2, h - top - bottom - legend_h
    xs = [v for s in chart.series for v in s.x if math.isfinite(v)] + [v for v, _, _ in chart.vlines]
    ys = [v for s in chart.series for v in s.y if math.isfinite(v)] + [v for v, _, _ in chart.hlines]
    if not xs or not ys:
        return
    xt, yt = ticks(min(xs), max(xs)), ticks(min(ys), max(ys))
    x0, x1, y0, y1 = xt[0], xt[-1], yt[0], yt[-1]

    def X(v):
        return px + (v - x0) / (x1 - x0) * pw

    def Y(v):
        return py + ph - (v - y0) / (y1 - y0) * ph

    pdf.font(6.2)
    if chart.title:
        pdf.set_xy(x, y)
        pdf.cell(w, 3.5, pdf.text_of(chart.title))
    pdf.set_line_width(0.1)
    pdf.set_draw_color(215, 215, 215)
    pdf.set_text_color(*GREY)
    for v in xt:
        pdf.line(X(v), py, X(v), py + ph)
        pdf.set_xy(X(v) - 8, py + ph + 0.4)
        pdf.cell(16, 2.8, _label(v, xt[1] - xt[0] if len(xt) > 1 else 1.0), align="C")
    for v in yt:
        pdf.line(px, Y(v), px + pw, Y(v))
        pdf.set_xy(px - 13.5, Y(v) - 1.4)
        pdf.cell(13, 2.8, _label(v, yt[1] - yt[0] if len(yt) > 1 else 1.0), align="R")
    pdf.set_draw_color(*GREY)
    pdf.rect(px, py, pw, ph)
    pdf.set_xy(px, py + ph + 3.2)
    pdf.cell(pw, 3, pdf.text_of(chart.xlabel), align="C")
    pdf.set_xy(px + 0.8, py + 0.5)
    pdf.cell(pw, 3, pdf.text_of(chart.ylabel))
    pdf.set_text_color(0, 0, 0)
    for v, _, color in chart.hlines:
        _path(pdf, [(px, Y(v)), (px + pw, Y(v))], color, True, 0.25)
    for v, _, color in chart.vlines:
        _path(pdf, [(X(v), py), (X(v), py + ph)], color, True, 0.25)
    for s in chart.series:
        pts = [(X(a), Y(b)) for a, b in zip(s.x, s.y, strict=True) if math.isfinite(a) and math.isfinite(b)]
        _path(pdf, pts, s.color, s.dashed, 0.45)
        if s.marks:
            pdf.set_fill_color(*s.color)
            for a, b in pts:
                pdf.rect(a - 0.5, b - 0.5, 1.0, 1.0, style="F")
    _legend(pdf, entries, px, py + ph + 6.6, pw, per_row)


def _path(pdf: Document, pts, color, dashed: bool, width: float) -> None:
    if len(pts) < 2:
        return
    pdf.set_draw_color(*color)
    pdf.set_line_width(width)
    if dashed:
        pdf.set_dash_pattern(dash=1.2, gap=0.8)
    pdf.polyline(pts)
    if dashed:
        pdf.set_dash_pattern()
    pdf.set_line_width(0.1)


def _legend(pdf: Document, entries, x: float, y: float, w: float, per_row: int) -> None:
    pdf.font(6.2)
    col = w / per_row
    for k, (label, color, dashed) in enumerate(entries):
        cx, cy = x + (k % per_row) * col, y + (k // per_row) * 3.2
        _path(pdf, [(cx, cy + 1.4), (cx + 6, cy + 1.4)], color, dashed, 0.45)
        pdf.set_xy(cx + 7, cy)
        pdf.cell(col - 8, 2.8, pdf._cut(pdf.text_of(label), col - 8))
    pdf.font()


def finite(values) -> list[float]:
    return [float(v) for v in np.asarray(values, dtype=float)]
