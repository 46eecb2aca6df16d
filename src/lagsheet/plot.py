"""A picture of one line: heat loss and surface temperature against thickness.

The line's system is solved at many thicknesses in one engine call; the targets the
line carries and the chosen thickness are marked. Drawn with matplotlib's headless
Agg backend (no screen needed).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .display import show
from .inputs import Inputs
from .physics.balance import solve
from .physics.layers import CYLINDER, FLAT
from .physics.sizing import heat_rate, per_line
from .spec import Results


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
    """The matplotlib figure of line ``i``: signed heat flow (left axis, solid red, circles) and
    surface temperature (right axis, dashed blue, squares) against thickness."""
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
    what = ("heat loss per length [W/m]" if L.geometry == CYLINDER else
            "heat flux [W/m²]" if L.geometry == FLAT else "heat loss [W]")
    q_label = what if hot else what + ", negative: heat gained"
    fig, ax1 = plt.subplots(figsize=(8, 4.8), dpi=110)
    marks = max(1, len(x) // 12)
    ax1.plot(x, rate, color="tab:red", linestyle="-", linewidth=2, marker="o", markevery=marks,
             markersize=5, label=q_label, zorder=3)
    ax1.set_xlabel("insulation thickness [in]" if us else "insulation thickness [mm]")
    ax1.set_ylabel(q_label, color="tab:red")
    ax1.tick_params(axis="y", colors="tab:red")
    if not hot:
        ax1.axhline(0.0, color="grey", linewidth=0.8)
    ax2 = ax1.twinx()
    ax2.plot(x, tsd, color="tab:blue", linestyle="--", linewidth=2, marker="s", markevery=(marks // 2, marks),
             markersize=5, markerfacecolor="none", label=f"surface temperature [{t_unit}]", zorder=4)
    ax2.set_ylabel(f"surface temperature [{t_unit}]", color="tab:blue")
    ax2.tick_params(axis="y", colors="tab:blue")
    tmax = inputs.lines.get("max_surface_temperature")
    if tmax is not None and np.isfinite(tmax[i]):
        lim = (tmax[i] - 273.15) * 9 / 5 + 32 if us else tmax[i] - 273.15
        ax2.axhline(lim, color="tab:blue", linestyle=":", label="max surface temperature")
    qmax = inputs.lines.get("max_heat_loss")
    if qmax is not None and np.isfinite(qmax[i]):  # a limit on the size of the flow, either way
        ax1.axhline(qmax[i] if hot else -qmax[i], color="tab:red", linestyle=":",
                    label="max heat loss" if hot else "max heat gain")
    chosen = float(np.nansum(res.chosen[i]))
    ax1.axvline(chosen / 0.0254 if us else chosen * 1000, color="black", linestyle="-.",
                label=f"chosen: {res.values['layers'][i]}")
    lines = ax1.get_legend_handles_labels()
    more = ax2.get_legend_handles_labels()
    ax1.legend(lines[0] + more[0], lines[1] + more[1], loc="center right", fontsize=8, framealpha=0.9)
    ax1.set_title(f"{res.tags[i]}: {L.word}, {show(L.t_op, 'temperature', us)}, "
                  f"{', '.join(m.name for m in L.materials)}, at condition '{cond.name}' — governing: "
                  f"{res.values['governing'][i]}", fontsize=9)
    ax1.grid(alpha=0.3)
    fig.tight_layout()
    return fig


def plot_line(inputs: Inputs, res: Results, i: int, out: Path) -> Path:
    import matplotlib.pyplot as plt

    fig = figure(inputs, res, i)
    out = Path(out)
    fig.savefig(out)
    plt.close(fig)
    return out
