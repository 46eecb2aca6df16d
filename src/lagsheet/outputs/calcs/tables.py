"""The package's tables of the whole schedule: the Summary and the Quantities (the same tables
``fill`` writes as sheets, cell for cell), a compact results table per area, and the index
of the calculation sheets."""

from __future__ import annotations

import numpy as np

from ...design.select import Results
from ...io.table import NewSheet
from ...physics.layers import CYLINDER, FLAT
from ...workbook.display import show
from ...workbook.inputs import Inputs
from ...workbook.results import BY_KEY
from .basis import cell_text, sheet_blocks
from .document import SMALL, Document


def summary_pages(pdf: Document, summary: NewSheet, quantities: NewSheet) -> None:
    pdf.new_page("summary", landscape=True)
    pdf.start_section("2 Summary")
    pdf.heading("2 Summary", 1)
    pdf.para(str(summary.rows[1][0]) if len(summary.rows) > 1 and summary.rows[1] else "", SMALL)
    head, rows, formats = sheet_blocks(summary)["Area"]
    totals = [k for k, r in enumerate(rows) if r and r[0] == "Total"]
    pdf.table(head, [[cell_text(v, formats.get(c)) for c, v in enumerate(r)] for r in rows],
              [1.8] + [0.55] * 3 + [0.95] * 9 + [2.2], "LRRR" + "R" * 9 + "L", bold_rows=totals,
              wrap=(0, 13), size=6.4)
    pdf.new_page("quantities", landscape=True)
    pdf.start_section("3 Quantities")
    pdf.heading("3 Quantities (bill of materials)", 1)
    blocks = sheet_blocks(quantities)
    if "Material" not in blocks:
        pdf.para("No line has a computed insulation system.", SMALL)
        return
    head, rows, formats = blocks["Material"]
    bold = [k for k, r in enumerate(rows) if r and str(r[0]).endswith(" total")]
    pdf.table(head, [[cell_text(v, formats.get(c)) for c, v in enumerate(r)] for r in rows],
              [2.2, 1.3, 1.8, 0.6, 1.1, 1.1, 1.2, 1.1], "LLLRRRRR", bold_rows=bold, wrap=(0, 2))
    foot = [r[0] for r in quantities.rows[-1:] if r]
    if foot:
        pdf.para(str(foot[0]), SMALL)


def results_by_area(pdf: Document, inputs: Inputs, res: Results) -> None:
    """One compact table per area: what each line got."""
    us = inputs.us_units
    t = inputs.lines
    area = t.get("area")
    size = t.get("size")
    names = [(str(area[i]) if area is not None and area[i] else "(no area)") for i in range(res.n)]
    v = res.values
    pdf.new_page("results by area", landscape=True)
    pdf.start_section("4 Results by area")
    pdf.heading("4 Results by area", 1)
    def named(key: str) -> str:  # the workbook's column header and unit, from the registry of results
        r = BY_KEY[key]
        return f"{r.header} [{r.unit(us)}]"

    head = ["Tag", "Shape", "Size", "Operating", "Layers", "Governing", named("surface_temperature"),
            named("heat_loss_per_length"), named("heat_loss"), "Status"]
    for name in dict.fromkeys(names):
        rows = []
        for i in (k for k in range(res.n) if names[k] == name):
            L = res.lines[i]
            loss = show(float(v["heat_loss"][i]), "power", us)
            per = show(float(v["heat_loss_per_length"][i]), "per_length", us) if L.geometry == CYLINDER else ""
            rows.append([res.tags[i] or f"row {t.rows[i] + 1}", L.word,
                         str(size[i]) if size is not None and size[i] else
                         (show(2 * L.r_inner, "radius", us) if np.isfinite(L.r_inner) and L.geometry != FLAT
                          else ""),
                         show(L.t_op, "temperature", us) if np.isfinite(L.t_op) else "",
                         v["layers"][i] or "", v["governing"][i] or "",
                         _number(show(float(v["surface_temperature"][i]), "temperature", us)),
                         _number(per), _number(loss),
                         res.status[i]])
        pdf.heading(f"Area: {name} ({len(rows)} lines)", 2)
        pdf.table(head, rows, [1.3, 0.8, 0.9, 0.9, 3.6, 1.5, 0.9, 1.1, 1.0, 0.8], "LLLRLLRRRL",
                  wrap=(4, 5), size=6.6)


def _number(text: str) -> str:
    """'53.2 °C' -> '53.2' (the unit is in the column's header); 'n/a' and '' -> ''."""
    return "" if text in ("n/a", "") else text.rsplit(" ", 1)[0]


def sheet_index(pdf: Document, entries: list[tuple[str, str, str, str, int]]) -> None:
    """The calculation sheets with the page each starts on: (tag, area, governing, status, page)."""
    pdf.new_page("index of calculation sheets")
    pdf.start_section("6 Index of calculation sheets")
    pdf.heading("6 Index of calculation sheets", 1)
    pdf.table(["Tag", "Area", "Governing", "Status", "Page"], [list(e[:4]) + [str(e[4])] for e in entries],
              [1.6, 2.0, 2.0, 0.9, 0.6], "LLLLR", wrap=(1, 2))
