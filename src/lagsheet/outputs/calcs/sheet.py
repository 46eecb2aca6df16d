"""One line's calculation sheet on the page: inputs, condition, construction, outer surface
(correlations), the surface balance in watts, targets with limit, value and margin, the
thickness chosen and why, process results, the values written to the workbook, notes and
cautions, and the curves against thickness."""

from __future__ import annotations

import math

from ...workbook.units import from_si
from . import chart as charts
from .document import SMALL, Document
from .records import Balance, LineSheet

# how a balance term is written: (SI unit, pint unit on a US sheet, label SI, label US)
_UNITS = {"per_length": ("W/m", "Btu/hour/foot", "W/m", "Btu/(h·ft)"),
          "per_area": ("W/m**2", "Btu/(hour*foot**2)", "W/m²", "Btu/(h·ft²)"),
          "power": ("W", "Btu/hour", "W", "Btu/h")}


def number(v: float) -> str:
    """At least five significant figures, thousands separated: a sum of printed terms then
    agrees with the printed total far inside 0.1 %."""
    if not math.isfinite(v):
        return "n/a"
    size = abs(v)
    decimals = 1 if size >= 1000 else 2 if size >= 100 else 3 if size >= 1 else 4
    return f"{v:,.{decimals}f}"


def in_units(v: float, kind: str, us: bool) -> float:
    si, pint_us, _, _ = _UNITS[kind]
    return float(from_si([v], si, pint_us)[0]) if us and math.isfinite(v) else v


def unit_label(kind: str, us: bool) -> str:
    return _UNITS[kind][3 if us else 2]


def balance_rows(b: Balance, us: bool) -> tuple[list[str], list[list[str]]]:
    """Header and rows of the balance table: each term per unit of the line and for the whole line."""
    whole = b.unit != "power"
    head = ["Term", f"[{unit_label(b.unit, us)}]"] + ([f"whole line [{unit_label('power', us)}]"] if whole else [])
    terms = (("Conduction through the insulation (in)", b.conduction),
             ("Convection at the outer surface (out)", b.convection),
             ("Radiation to the surroundings (out)", b.radiation),
             ("Sun absorbed (in, counted as negative out)", b.sun),
             ("Convection + radiation + sun (out)", b.out))
    rows = []
    for name, v in terms:
        row = [name, number(in_units(v, b.unit, us))]
        if whole:
            row.append(number(in_units(v * b.factor, "power", us)))
        rows.append(row)
    return head, rows


def draw_sheet(pdf: Document, s: LineSheet, us: bool, section: str | None = None) -> int:
    """Line ``s`` from a new page (returned); ``section`` opens a part of the outline on that page first."""
    pdf.new_page(f"calculation sheet {s.tag}")
    start = pdf.page_no()
    _body(pdf, s, us, section)
    return start


def _body(pdf: Document, s: LineSheet, us: bool, section: str | None) -> None:
    if section:
        pdf.start_section(section)
    pdf.start_section(s.tag, level=1)
    pdf.heading(f"Calculation sheet: {s.tag}", 1)
    pdf.para(f"{s.title}. Status: {s.status}.", SMALL)
    pdf.heading("Inputs", 2)
    pdf.table(["Column", "As written", "Unit", "Read as (SI)", "Cell"], s.inputs, [3.2, 2.6, 1.3, 2.0, 0.8],
              wrap=(0, 1))
    if not s.balance:
        _not_computed(pdf, s)
        return
    pdf.heading("Condition of record and construction", 2)
    pdf.pairs(s.condition)
    pdf.table(["Layer, inner first", "Material", "Thickness", "Inner face", "Outer face",
               "k, integral mean [W/(m·K)]" + (" (Btu·in/(h·ft²·°F))" if us else "")], s.layers, [1.6, 2.4, 1.2, 1.3, 1.3, 1.9], "LLRRRR")
    pdf.heading("Outer surface: correlations used", 2)
    pdf.pairs(s.surface)
    _balance(pdf, s.balance, us)
    pdf.heading("Targets", 2)
    if s.targets:
        pdf.table(["Target", "Limit", "Value at the chosen system", "Margin", "Its own thinnest", "Met"],
                  s.targets, [2.0, 1.9, 2.0, 1.5, 1.5, 0.7], "LRRRRL", wrap=(0, 1, 2))
    else:
        pdf.para("No target on this line.", SMALL)
    pdf.heading("Thickness chosen", 2)
    pdf.pairs(s.chosen)
    if s.process:
        pdf.heading("Process results", 2)
        pdf.pairs(s.process)
    _results_and_notes(pdf, s)
    _charts(pdf, s)
    _checked(pdf)


def _checked(pdf: Document) -> None:
    """The checker's initials and date at the end of each sheet."""
    pdf.need(12)
    pdf.ln(3)
    pdf.table(["Sheet checked by", "Initials", "Date", "Remarks"], [["", "", "", "\n\n"]], [1.6, 1.2, 1.2, 4.0],
              wrap=(3,), size=8)


def _balance(pdf: Document, b: Balance, us: bool) -> None:
    pdf.heading("Surface balance: conduction in = convection + radiation out", 2)
    head, rows = balance_rows(b, us)
    pdf.table(head, rows, [4.0, 1.6] + ([1.8] if len(head) == 3 else []), "LRR", bold_rows=(0, 4))
    loss = number(in_units(b.heat_loss, "power", us))
    where = f" ({b.factor_text})" if b.factor_text else ""
    text = (f"Heat loss of the line as reported: {loss} {unit_label('power', us)}{where}; the solver's relative "
            f"residual at the surface is {b.residual:.1e}.")
    if b.flowing:
        text += (" This line carries a flow: its heat loss is the heat the fluid gives up along the line, "
                 "so it differs from the inlet balance above times the length (see the notes).")
    else:
        text += " Conduction through the insulation is the heat loss; the outgoing terms add up to it."
    if b.conduction < 0:
        text += " Negative terms: heat flows in from the air and the surroundings (a heat gain)."
    pdf.para(text, SMALL)


def _not_computed(pdf: Document, s: LineSheet) -> None:
    pdf.heading("Not computed", 2)
    pdf.para("This line has errors in its inputs or no insulation system could be computed; "
             "correct the cells named below and run again.", SMALL)
    _results_and_notes(pdf, s)


def _results_and_notes(pdf: Document, s: LineSheet) -> None:
    if s.results:
        pdf.heading("Values written to the workbook", 2)
        pdf.table(["Column", "Value as written"], s.results, [2.0, 4.0], wrap=(1,))
    pdf.heading("Notes and cautions", 2)
    if s.notes:
        pdf.table(["Level", "Note"], s.notes, [0.8, 6.0], wrap=(1,))
    else:
        pdf.para("None on this line.", SMALL)
    pdf.para("The general cautions on page 1 apply to every line.", SMALL)


def _charts(pdf: Document, s: LineSheet) -> None:
    if not s.charts:
        return
    height = 62.0
    pdf.need(height + 12)
    pdf.heading("Heat loss and surface temperature against thickness", 2)
    if s.chart_note:
        pdf.para(s.chart_note, SMALL)
    y, w = pdf.get_y(), (pdf.epw - 6) / 2
    for k, c in enumerate(s.charts[:2]):
        charts.draw(pdf, c, pdf.l_margin + k * (w + 6), y, w, height)
    pdf.set_xy(pdf.l_margin, y + height + 1)
