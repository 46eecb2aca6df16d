"""Heat tracing per area and the fittings' boxes and covers, as rows of the Summary and the
Quantities: written only when some line has a tracing duty or counts fittings."""

from __future__ import annotations

import numpy as np

from ..io.table import NewSheet
from ..workbook.units import from_si
from .totals import total

# fitting item -> what the insulator supplies for it on an insulated line
COVERS = {"valve": "valve box", "flange": "flange cover", "support": "insulated support"}


def areas_of(inputs, res) -> list[str]:
    col = inputs.lines.get("area") if inputs.lines is not None else None
    return [(col[i] if col is not None and col[i] else "(no area)") for i in range(res.n)]


def tracing_rows(s: NewSheet, inputs, res) -> None:
    """Per area and in total: traced lines, traced length and the installed tracing duty
    (Σ duty × length, margin included), when some line has a tracing duty."""
    duty = res.values["tracing_duty"]
    traced = np.isfinite(duty)
    if not traced.any():
        return
    us = inputs.us_units
    lengths = np.array([L.length for L in res.lines], dtype=float)
    areas = areas_of(inputs, res)
    lu, pu = ("ft", "MBtu/h") if us else ("m", "kW")
    s.add([])
    s.add(["Heat tracing", "Traced lines", f"Traced length [{lu}]", f"Tracing duty [{pu}]"], bold=True)
    order = [a for a in dict.fromkeys(areas) if any(traced[i] for i in range(res.n) if areas[i] == a)]
    for name in [*order, "Total"]:
        idx = np.array([i for i in range(res.n) if traced[i] and (name == "Total" or areas[i] == name)], dtype=int)
        s.add([name, len(idx), float(from_si([total(lengths, idx)], "m", lu)[0]),
               float(from_si([total(duty[idx] * lengths[idx])], "W", pu)[0])],
              {2: "#,##0.0", 3: "#,##0.00"}, bold=name == "Total")
    s.add(["Tracing duty: the heat per metre that holds each traced line at its 'Maintain temperature' at its "
           "coldest named condition, 'Tracing margin' included, times its length."])


def fittings_rows(s: NewSheet, res, size_of) -> None:
    """Boxes and covers per item and size, over the insulated computed lines that count fittings;
    ``size_of(L)`` -> (label, sort key) as the Quantities label sizes."""
    counts: dict[tuple, int] = {}
    for i, L in enumerate(res.lines):
        if (res.status[i] == "error" or not L.fittings or not np.isfinite(res.values["thickness"][i])
                or res.values["thickness"][i] <= 0):
            continue
        label, order = size_of(L)
        for item, n in L.fittings.items():
            key = (list(COVERS).index(item), order, label)
            counts[key] = counts.get(key, 0) + n
    if not counts:
        return
    s.add([])
    s.add(["Fittings", "Size", "Count"], bold=True)
    for (item, _order, label), n in sorted(counts.items()):
        s.add([COVERS[list(COVERS)[item]], label, n])
    s.add(["Boxes and covers of the fittings on insulated lines ('Valves', 'Flanges' as flange pairs, "
           "'Supports'); a bare line's fittings are bare."])
