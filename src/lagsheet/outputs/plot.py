"""A picture of one line: heat loss and surface temperature against thickness.

The line's system is solved at many thicknesses in one engine call; the targets the
line carries and the chosen thickness are marked. Drawn with matplotlib's headless
Agg backend (no screen needed).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..design.select import Results
from ..physics.balance import solve
from ..physics.candidates import heat_rate, per_line
from ..physics.layers import CYLINDER, FLAT
from ..workbook.display import show
from ..workbook.inputs import Inputs
from ..workbook.units import from_si


def curve(res: Results, i: int, condition=None, top: float | None = None, points: int = 120):
    """Thicknesses [m], surface temperatures [K] and heat rates of line ``i`` (its inner material),
    at ``condition`` (default: the line's first)."""
    L = res.lines[i]
    c = condition or L.conditions[0]
    sold = [th for m in L.materials[:1] for th in (m.thicknesses or ())]
    top = top or max(sold + [float(np.nansum(res.chosen[i])) * 1.5, 0.05])
    th = np.linspace(0.0, top, points)
    rows = np.full(points, i)
    thickness = np.zeros((points, res.system.thickness.shape[1]))
    thickness[:, 0] = th
    s = per_line(res.system, rows, thickness=thickness, t_air=np.full(points, c.t_air),
                 t_surroundings=np.full(points, c.t_surroundings), wind=np.full(points, c.wind))
    sol = solve(s, res.table)
    return th, sol.t_surface, heat_rate(s.geometry, sol.q, sol.r_outer)


def figure(inputs: Inputs, res: Results, i: int):
    """The matplotlib figure of line ``i``: signed heat flow (top panel, solid red, circles) and
    surface temperature (bottom panel, dashed blue, open squares) against thickness."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    us = inputs.us_units
    L = res.lines[i]
    gov = res.values["governing_condition"][i]
    cond = next((c for c in L.conditions if c.name == gov), L.conditions[0])
    th, ts, rate = curve(res, i, cond)
    hot = L.t_op >= cond.t_air
    t_unit = "°F" if us else "°C"
    tsd = (ts - 273.15) * 9 / 5 + 32 if us else ts - 273.15
    x = th / 0.0254 if us else th * 1000
    si, unit, label = (("W/m", "Btu/hour/foot", "Btu/(h·ft)") if L.geometry == CYLINDER else
                       ("W/m**2", "Btu/(hour*foot**2)", "Btu/(h·ft²)") if L.geometry == FLAT else
                       ("W", "Btu/hour", "Btu/h"))
    if not us:
        label = si.replace("**2", "²")
    scale = float(from_si([1.0], si, unit)[0]) if us else 1.0
    rate = rate * scale
    what = ("heat loss per length" if L.geometry == CYLINDER else "heat flux" if L.geometry == FLAT
            else "heat loss") + f" [{label}]"
    q_label = what if hot else what + ", negative: heat gained"
    # two panels on one thickness axis: the curves often have nearly the same shape, and on twin
    # axes one would hide the other
    fig, (ax1, ax2) = plt.subplots(2, 1, sharex=True, figsize=(8, 6.4), dpi=110)
    marks = max(1, len(x) // 12)
    ax1.plot(x, rate, color="tab:red", linestyle="-", linewidth=2, marker="o", markevery=marks,
             markersize=5, label=q_label)
    ax1.set_ylabel(what if hot else what + "\nnegative: heat gained", color="tab:red")
    if not hot:
        ax1.axhline(0.0, color="grey", linewidth=0.8)
    ax2.plot(x, tsd, color="tab:blue", linestyle="--", linewidth=2, marker="s", markevery=marks,
             markersize=5, markerfacecolor="none", label=f"surface temperature [{t_unit}]")
    ax2.set_ylabel(f"surface temperature [{t_unit}]", color="tab:blue")
    ax2.set_xlabel("insulation thickness [in]" if us else "insulation thickness [mm]")
    tmax = inputs.lines.get("max_surface_temperature")
    if tmax is not None and np.isfinite(tmax[i]):
        lim = (tmax[i] - 273.15) * 9 / 5 + 32 if us else tmax[i] - 273.15
        ax2.axhline(lim, color="tab:blue", linestyle=":", label="max surface temperature")
    qmax = inputs.lines.get("max_heat_loss")
    per_area = qmax is not None and inputs.lines.columns["max_heat_loss"].si_of(i) == "W/m**2"
    same_kind = per_area == (L.geometry == FLAT)  # a W/m² limit on a pipe is not on this curve's axis
    if qmax is not None and np.isfinite(qmax[i]) and same_kind:  # a limit on the size of the flow, either way
        ax1.axhline(scale * (qmax[i] if hot else -qmax[i]), color="tab:red", linestyle=":",
                    label="max heat loss" if hot else "max heat gain")
    chosen = float(np.nansum(res.chosen[i]))
    for ax in (ax1, ax2):
        ax.axvline(chosen / 0.0254 if us else chosen * 1000, color="black", linestyle="-.",
                   label=f"chosen: {res.values['layers'][i]}")
        ax.legend(loc="best", fontsize=8, framealpha=0.9)
        ax.grid(alpha=0.3)
    ax1.set_title(f"{res.tags[i]}: {L.word}, {show(L.t_op, 'temperature', us)}, "
                  f"{', '.join(m.name for m in L.materials)}, at condition '{cond.name}' — governing: "
                  f"{res.values['governing'][i]}", fontsize=9)
    fig.tight_layout()
    return fig


def plot_line(inputs: Inputs, res: Results, i: int, out: Path, *, never=()) -> Path:
    """Draw line ``i``'s curves into ``out`` (a PNG) through the one safe save; never onto a file of ``never``."""
    import matplotlib.pyplot as plt

    from ..io.save import atomic_write

    fig = figure(inputs, res, i)
    out = Path(out)
    fmt = out.suffix[1:].lower() or "png"  # the temporary file's name says nothing of the format
    if fmt not in fig.canvas.get_supported_filetypes():
        plt.close(fig)
        from ..errors import WorkbookError

        raise WorkbookError(f"{out.name}: a plot is drawn as .png, .svg or .pdf; give a name ending in one of them")

    def write(tmp: str) -> None:
        fig.savefig(tmp, format=fmt)

    try:
        atomic_write(out, write, inputs=never, what="plot")
    finally:
        plt.close(fig)
    return out
