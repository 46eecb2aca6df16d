"""The front of the calculation package: the title page with the approval block and contents,
and the design basis (conditions, settings, materials with their k(T) points, sources and a
plot of each curve, finishes, codes and standards, methods and correlations with their
references, the general cautions)."""

from __future__ import annotations

import math

import numpy as np

from ...design.select import Results
from ...io.table import NewSheet
from ...physics.radiation import SIGMA
from ...workbook import library
from ...workbook.display import show
from ...workbook.inputs import Inputs
from ...workbook.units import from_si
from ..cautions import CAUTIONS
from . import chart as charts
from .document import SMALL, Document

# Methods of the calculation, each with its reference (the correlations' full citations are in
# lagsheet.physics.correlations; every name of physics.surface.CORRELATION_NAMES has a row here).
METHODS: tuple[tuple[str, str, str], ...] = (
    ("Conduction through the layers", "heat rate from the integral of k(T) over each layer's face "
     "temperatures (integral-mean conductivity), cylinders, flats and spheres",
     "ASTM C680, Standard Practice for Estimate of the Heat Gain or Loss and the Surface "
     "Temperatures of Insulated Flat, Cylindrical, and Spherical Systems"),
    ("Churchill-Chu horizontal cylinder", "free convection, pipes; on the outer diameter",
     "Churchill & Chu (1975), Int. J. Heat Mass Transfer 18(9) 1049-1053, doi:10.1016/0017-9310(75)90222-7"),
    ("Churchill-Chu vertical plate", "free convection, risers, vessels, walls; on the height",
     "Churchill & Chu (1975), Int. J. Heat Mass Transfer 18(11) 1323-1329, doi:10.1016/0017-9310(75)90243-4"),
    ("McAdams horizontal plate", "free convection, tops and undersides; L = area/perimeter",
     "McAdams (1954), Heat Transmission, 3rd ed., McGraw-Hill, ch. 7"),
    ("Churchill sphere", "free convection, spheres; on the outer diameter",
     "Churchill (1983), Free convection around immersed bodies, Heat Exchanger Design Handbook 2.5.7"),
    ("Churchill-Bernstein cylinder in cross-flow", "forced convection, wind across pipes, risers, vessels",
     "Churchill & Bernstein (1977), J. Heat Transfer 99(2) 300-306, doi:10.1115/1.3450685"),
    ("flat plate in parallel flow", "forced convection along walls and plates, laminar then turbulent",
     "Pohlhausen (1921), ZAMM 1(2) 115-121; Colburn (1933), Trans. AIChE 29 174-210"),
    ("Whitaker sphere", "forced convection, spheres",
     "Whitaker (1972), AIChE J. 18(2) 361-371, doi:10.1002/aic.690180219"),
    ("Churchill-Usagi", "free and forced convection combined, Nu³ = Nu_free³ + Nu_forced³",
     "Churchill & Usagi (1972), AIChE J. 18(6) 1121-1128, doi:10.1002/aic.690180606"),
    ("Radiation", f"grey surface in large surroundings, q = ε σ (Ts⁴ − Tsur⁴), σ = {SIGMA:.6e} W/(m²·K⁴)",
     "Stefan-Boltzmann law; σ from CODATA 2018 (scipy.constants)"),
    ("Air properties", "dry air at 101 325 Pa at the film temperature, tabulated every 2 K",
     "CoolProp (PropsSI), tables shipped with lagsheet"),
    ("Dew point", "saturation pressure of water in moist air at 101 325 Pa; RH over liquid water",
     "CoolProp (HAPropsSI); Murphy & Koop (2005) below 0 °C"),
    ("Critical radius", "r = k/h (cylinder), 2k/h (sphere), h = h_conv + h_rad linearised",
     "closed form of the conduction-convection balance"),
    ("Economic thickness", "lowest annualised cost: installed cost × capital recovery factor + energy cost",
     "annuity factor a = i(1+i)ⁿ/((1+i)ⁿ − 1), as in VDI 2055"),
)

CODES: tuple[tuple[str, str], ...] = (
    ("ASTM C680", "method of the heat loss and surface temperature of insulated systems"),
    ("ASTM C1055, ISO 13732-1", "surface temperatures for personnel protection (contact time, material)"),
    ("ASME B36.10M", "pipe outside diameters and wall thicknesses (sizes typed as NPS or DN)"),
    ("ASTM C533, C534, C547, C552, C591, C610", "material specifications behind the built-in k(T) points "
     "(each material's source is given above)"),
)


def title_page(pdf: Document, inputs: Inputs, res: Results, scope: str, sheets: int, version: str,
               stale: list[str]) -> None:
    pdf.new_page("title")
    pdf.ln(18)
    pdf.heading("Insulation calculation package", 0)
    pdf.para(f"Workbook: {pdf.workbook}", 11)
    pdf.para(f"Schedule: sheet '{inputs.lines.sheet}', {res.n} lines; units as the workbook: "
             f"{'US customary (°F, in, Btu/h)' if inputs.us_units else 'SI (°C, mm, W)'}", 9)
    pdf.para(f"Date: {pdf.date}. Prepared with lagsheet {version}.", 9)
    pdf.para(f"Calculation sheets: {sheets} ({scope}).", 9)
    if stale:
        pdf.ln(2)
        pdf.para(f"Attention: {len(stale)} result(s) held in the workbook differ from this calculation (were "
                 "its inputs changed after it was filled?); this package shows the calculation from the "
                 "inputs as they are now; fill the workbook again. First: " + "; ".join(stale[:3]) + ".",
                 9, bold=True)
    pdf.heading("Approval", 2)
    pdf.table(["", "Name", "Signature", "Date"], [["Prepared by", "", "", ""], ["Checked by", "", "", ""],
                                                  ["Approved by", "", "", ""]], [1.4, 2.4, 2.4, 1.4],
              size=9)
    pdf.heading("Cautions", 2)
    for text in CAUTIONS:
        pdf.para(f"• {text}", SMALL)
    pdf.insert_toc_placeholder(_contents, pages=1)  # the contents close this page, once pages are known
    pdf.fresh = True


def _contents(pdf: Document, outline) -> None:
    pdf.heading("Contents", 2)
    rows = [[s.name, str(s.page_number)] for s in outline if s.level == 0]
    pdf.table(["Part", "Page"], rows, [6.0, 0.8], "LR", size=8)


def design_basis(pdf: Document, inputs: Inputs, res: Results, summary: NewSheet) -> None:
    us = inputs.us_units
    pdf.new_page("design basis")
    pdf.start_section("1 Design basis")
    pdf.heading("1 Design basis", 1)
    blocks = sheet_blocks(summary)
    for title, key in (("1.1 Conditions", "Conditions used"), ("1.2 Settings", "Settings used")):
        pdf.heading(title, 2)
        head, rows, formats = blocks[key]
        pdf.table(head, [[cell_text(v, formats.get(c)) for c, v in enumerate(r)] for r in rows],
                  [2.2] + [1.2] * (len(head) - 1), "L" + "R" * (len(head) - 1))
    _materials(pdf, res, us)
    _finishes(pdf, inputs, res)
    pdf.heading("1.5 Codes and standards", 2)
    pdf.table(["Code", "Used for"], CODES, [2.0, 5.0], wrap=(0, 1))
    pdf.heading("1.6 Methods and correlations", 2)
    pdf.table(["Method", "What it gives", "Reference"], METHODS, [2.0, 3.2, 3.6], wrap=(0, 1, 2))
    pdf.para("Each line is solved at every condition it names; each target is judged at the condition "
             "worst for it; the chosen system is the thinnest sold that meets every target (the cheapest "
             "over its life for 'Economic' lines). Results are reported at the line's first condition.",
             SMALL)


def _materials(pdf: Document, res: Results, us: bool) -> None:
    used: dict[str, library.Material] = {}
    for L in res.lines:
        for m in L.materials:
            used.setdefault(m.name, m)
    pdf.heading("1.3 Materials and their conductivity k(T)", 2)
    k_unit = "Btu·in/(h·ft²·°F)" if us else "W/(m·K)"
    for m in used.values():
        k = np.asarray(m.design_conductivities, dtype=float)  # the design values the calculation used
        k_shown = from_si(k, "W/(m*K)", "Btu*inch/(hour*foot**2*delta_degF)") if us else k
        t_shown = [float(show(t, "temperature", us).split()[0]) for t in m.mean_temperatures]
        pdf.need(max(len(m.conductivities) * (3.6 + 0.6) + 8, 48) + 16)  # the block stays on one page
        pdf.font(8.5, bold=True)
        pdf.cell(0, 4.5, pdf.text_of(m.name), new_x="LMARGIN", new_y="NEXT")
        lo, hi = show(m.min_temperature, "temperature", us), show(m.max_temperature, "temperature", us)
        sold = ", ".join(show(t, "thickness", us) for t in (m.thicknesses_us if us and m.thicknesses_us
                                                              else m.thicknesses)) or "every step"
        factor = (f"; k below is the design value: declared × 'Design factor' {m.design_factor:g} (ISO 23993)"
                  if m.design_factor != 1.0 else "")
        pdf.para(f"Service {lo} to {hi}; sold {sold}; source: {m.source or 'not given'}{factor}", SMALL)
        y = pdf.get_y()
        rows = [[show(t, "temperature", us), f"{kk:.4f}"] for t, kk in zip(m.mean_temperatures, k_shown,
                                                                            strict=True)]
        c = charts.Chart(f"mean temperature [{'°F' if us else '°C'}]", f"k [{k_unit}]",
                         [charts.Series(t_shown, charts.finite(k_shown), "k(T) points as given, joined "
                                        "linearly", charts.RED, marks=True)])
        charts.draw(pdf, c, pdf.l_margin + pdf.epw * 0.42, y, pdf.epw * 0.58, 44)
        pdf.set_xy(pdf.l_margin, y)
        pdf.set_right_margin(pdf.w - pdf.l_margin - pdf.epw * 0.40 + 0.0)
        pdf.table(["Mean temperature", f"k [{k_unit}]"], rows, [1, 1], "RR")
        pdf.set_right_margin(pdf.l_margin)
        pdf.set_xy(pdf.l_margin, max(pdf.get_y(), y + 46))


def _finishes(pdf: Document, inputs: Inputs, res: Results) -> None:
    pdf.heading("1.4 Finishes", 2)
    col = inputs.lines.get("finish")
    names = sorted({str(col[i]).strip() for i in range(res.n) if col is not None and col[i]})
    rows = []
    for name in names:
        f = library.lookup(inputs.finishes, name)
        if f is not None:
            rows.append([name, f"{f.emissivity:.2f}", f.source])
    if rows:
        pdf.table(["Finish", "Emissivity", "Source"], rows, [1.6, 0.9, 5.0], "LRL", wrap=(2,))
    else:
        pdf.para("No finish named on the lines: each line's emissivity is as its inputs give it.", SMALL)


def sheet_blocks(sheet: NewSheet) -> dict[str, tuple[list, list, dict]]:
    """The blocks of a sheet lagsheet writes (Summary, Quantities): runs of rows between blank
    rows, each keyed by the first cell of its header row -> (header, rows, formats by column)."""
    out, k = {}, 0
    rows = sheet.rows
    while k < len(rows):
        if not rows[k] or k not in sheet.bold:
            k += 1
            continue
        head, body, formats, r = rows[k], [], {}, k + 1
        while r < len(rows) and rows[r]:
            body.append(rows[r])
            formats.update({c: f for (rr, c), f in sheet.formats.items() if rr == r})
            r += 1
        out.setdefault(str(head[0]), (list(head), body, formats))
        k = r
    return out


def cell_text(v, fmt: str | None = None) -> str:
    """A cell as a spreadsheet shows it under its number format (the few formats lagsheet writes)."""
    if v is None:
        return ""
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        return str(v)
    if not math.isfinite(v):
        return ""
    decimals = {"0.0": 1, "#,##0.0": 1, "0.00": 2, "#,##0.00": 2, "#,##0": 0, "0": 0}.get(fmt or "", None)
    if decimals is None:
        return f"{v:g}" if isinstance(v, float) else str(v)
    return f"{v:,.{decimals}f}" if "#" in (fmt or "") else f"{v:.{decimals}f}"
