"""Build the blank workbooks that ``lagsheet new`` copies: ``lagsheet.xlsx`` and ``lagsheet.ods``.

Run from the top of the repository, after any change to the fields, settings, built-in
materials, finishes or conditions::

    python sheet_templates/build_templates.py

It writes both files into ``sheet_templates/`` (the source of truth, committed) and the
same bytes into ``src/lagsheet/templates_data/`` (what the installed package ships).
``--out DIR`` writes the two files into DIR only (the tests rebuild them that way and
compare with the committed ones).

Both files hold the same sheets: ``Instructions`` (plain words), ``Lines`` (every input
header of the contract with its unit, dropdowns, a frozen header row and two example
rows of an invented plant), ``Conditions`` (the built-in sets), ``Materials`` (headers
only) and ``Settings`` (every setting with its default and unit). The content comes
from ``lagsheet.workbook.fields``, ``lagsheet.workbook.library`` and ``lagsheet.workbook.inputs``, so it cannot
drift from what ``fill`` reads.

The output is deterministic: fixed timestamps (:data:`STAMP`), fixed member order and
zip dates, so rebuilding an unchanged template gives the same bytes. The ``.xlsx`` is
written with openpyxl; the ``.ods`` is written here as plain OpenDocument XML (with
``table:content-validations`` for the dropdowns and the frozen rows in
``settings.xml``).
"""

from __future__ import annotations

import argparse
import io
import math
import re
import shutil
import sys
import textwrap
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from xml.sax.saxutils import escape, quoteattr

from lagsheet.io.xlsx import fonts_in_schema_order
from lagsheet.workbook import fields as schema
from lagsheet.workbook import library
from lagsheet.workbook.inputs import BUILTIN_CONDITIONS
from lagsheet.workbook.units import from_si

HERE = Path(__file__).resolve().parent
SHIPPED = HERE.parent / "src" / "lagsheet" / "templates_data"
NAMES = ("lagsheet.xlsx", "lagsheet.ods")

# Bump with any change of the templates' content; it is the files' creation and
# modification time (so that a rebuild of unchanged content gives the same bytes).
STAMP = "2026-12-01T00:00:00Z"
ZIP_DATE = (2026, 12, 1, 0, 0, 0)
CURRENCY = str(schema.SETTINGS["currency"][3])
LAST_ROW = 5000  # dropdowns reach down to this row of Lines
CONDITION_ROWS = (2, 50)  # the Condition dropdown lists Conditions!A2:A50

# --------------------------------------------------------------------------------------
# Content
# --------------------------------------------------------------------------------------

# Lines: (header, width in characters, what to enter). Headers carry the field's unit.
_HELP = {
    "tag": "Unique name of the line, e.g. P-101. Required.",
    "area": "Plant area or system; the summary groups by it. Optional.",
    "service": "What the line carries. Optional.",
    "shape": "pipe, riser (vertical pipe), vessel (vertical shell), wall (vertical flat), "
             "top (flat facing up), underside (flat facing down) or sphere. Required.",
    "size": "Nominal pipe size: NPS 4, 4\", DN 100. Pipes need this or Outside diameter.",
    "outside_diameter": "Outside diameter of the bare pipe, vessel or sphere.",
    "length": "Run length. For riser, vessel and wall it is also the height.",
    "surface_area": "Bare surface area of a flat shape (wall, top, underside).",
    "width": "Side of a flat along the wind. Optional (wall: area / height; top, underside: square).",
    "operating_temperature": "Temperature of the bare metal surface, taken as the fluid's. Required.",
    "condition": "A name from the Conditions sheet; several as 'outdoor; summer'. Blank: indoor.",
    "insulation": "A built-in material (dropdown) or a name from the Materials sheet. Required, "
                  "unless Fixed thickness is 0.",
    "outer_insulation": "A second, outer material. Optional; the inner layer keeps the interface "
                        "within its limit.",
    "finish": "Outer jacket or coating; it sets the emissivity. Blank: aluminium.",
    "surface_emissivity": "Overrides the finish's emissivity (0 to 1). Optional.",
    "max_surface_temperature": "Target: the outer surface no hotter than this.",
    "max_heat_loss": "Target: heat loss per metre of pipe or vessel; for a flat write the cell "
                     "with its unit, e.g. 60 W/m².",
    "prevent_condensation": "Target (yes/no): the outer surface stays above the dew point plus the "
                            "margin. For cold lines.",
    "economic": "Target (yes/no): the thickness with the lowest annualised cost (needs costs, "
                "see Settings and Materials).",
    "min_thickness": "Floor on the thickness, e.g. from an energy code table.",
    "fixed_thickness": "Evaluate this thickness instead of sizing one; 0 = bare.",
    "flow_rate": "Process: the line's flow, kg/s or m³/h (a volume flow needs the fluid's density). "
                 "Gives Outlet temperature after Length.",
    "fluid": "Process: water, steam (saturated), air, another CoolProp fluid name, or a fluid of "
             "the Fluids sheet.",
    "operating_pressure": "Process: absolute pressure (bar(a) = bar(g) + 1.013). Steam: the "
                          "saturation pressure for Condensate; water above 100 °C needs it.",
    "inside_diameter": "Process: bore of the pipe for Freeze protection. Blank: from Size and "
                       "Schedule.",
    "schedule": "Process: pipe schedule (40, STD, 80, XS) for the bore and wall. Blank: 40.",
    "max_temperature_drop": "Target: the fluid changes temperature by at most this along Length "
                            "(needs Flow rate and Fluid).",
    "freeze_protection": "Target: hours standing water takes to freeze at the coldest named "
                         "condition. Insulation delays freezing, it never prevents it.",
    "contents_volume": "Process: liquid in a vessel, for Hold time.",
    "hold_time": "Target: hours the contents take to cool to Min temperature at the coldest named "
                 "condition (needs Contents volume, Min temperature, Fluid).",
    "min_temperature": "Process: the lowest temperature the contents may cool to (for cold "
                       "contents: the warmest they may reach).",
    "part_of": "Process: the Tag of the vessel this line is a head or bottom of; its heat loss "
               "counts in the vessel's Hold time.",
    "code": "Target: an energy code's minimum thickness: ASHRAE 90.1 (by fluid temperature and "
            "nominal size), GEG (by inside diameter; 200 % outdoors) or a table of the Codes sheet. "
            "Pipes and risers. Corrected to the material's conductivity; gives Code thickness [mm].",
    "ambient_temperature": "This line's air temperature, in place of its named conditions'. Optional.",
    "wind_speed": "This line's wind, in place of its named conditions' (0 = still air). Optional.",
    "relative_humidity": "This line's relative humidity, in place of its named conditions'. Optional.",
    "surroundings_temperature": "This line's surroundings (radiation), in place of its named "
                                "conditions'. Blank: follows the line's ambient. Optional.",
    "solar_irradiance": "Sun on a surface facing it, W/m² (1000: full sun), in place of the named "
                        "conditions'. Counts only where it makes a result worse. Optional.",
    "solar_absorptance": "Overrides the finish's solar absorptance (0 to 1). Optional.",
    "maintain_temperature": "Heat tracing (pipes and risers): hold the pipe at this temperature; gives "
                            "Tracing duty in W/m at the coldest named condition, Tracing margin included. "
                            "Must be above that condition's air.",
    "valves": "Fittings: number of valves on the line; each adds its Equivalent length of pipe (Fittings "
              "sheet). Insulated (a box) when the line is insulated.",
    "flanges": "Fittings: number of flange pairs (flanged joints) on the line, as Valves.",
    "supports": "Fittings: number of pipe supports on the line, as Valves.",
    "heat_loss_allowance": "Extra heat loss for thermal bridges not counted as fittings, as a share of "
                           "the line's (ISO 12241, VDI 2055). Blank: the Settings value.",
}
_WIDTH = {
    "tag": 14, "area": 16, "service": 28, "shape": 10, "size": 10, "outside_diameter": 13,
    "length": 10, "surface_area": 12, "width": 10, "operating_temperature": 16, "condition": 14,
    "insulation": 18, "outer_insulation": 18, "finish": 16, "surface_emissivity": 14,
    "max_surface_temperature": 16, "max_heat_loss": 13, "prevent_condensation": 13,
    "economic": 10, "min_thickness": 13, "fixed_thickness": 14,
    "flow_rate": 12, "fluid": 12, "operating_pressure": 14, "inside_diameter": 13, "schedule": 10,
    "max_temperature_drop": 15, "freeze_protection": 13, "contents_volume": 13, "hold_time": 10,
    "min_temperature": 14, "part_of": 12, "code": 13,
    "ambient_temperature": 14, "wind_speed": 11, "relative_humidity": 12, "surroundings_temperature": 16,
    "solar_irradiance": 13, "solar_absorptance": 12,
    "maintain_temperature": 15, "valves": 9, "flanges": 9, "supports": 10, "heat_loss_allowance": 14,
}
# Units shown in headers where the field's own unit text is not the one to show.
_SHOW_UNIT = {"cost_per_volume": f"{CURRENCY}/m³", "operating_hours": "h/yr"}
_NUMERIC = (schema.NUMBER, schema.TEMPERATURE, schema.DIFFERENCE)


def header(f: schema.Field) -> str:
    """The header of a field in the template: its name, and its unit in brackets."""
    unit = _SHOW_UNIT.get(f.key, f.unit)
    return f"{f.header} [{unit}]" if unit and not f.count else f.header


LINE_HEADERS = [header(f) for f in schema.LINE_FIELDS]
COL = {f.key: i for i, f in enumerate(schema.LINE_FIELDS)}

# Two example rows of an invented plant (no real site): a hot line and a cold line.
EXAMPLES = [
    {"tag": "EXAMPLE-1", "area": "Example plant", "service": "Steam main (example)", "shape": "pipe",
     "size": "NPS 6", "length": 40, "operating_temperature": 180, "condition": "outdoor",
     "insulation": "mineral wool", "finish": "aluminium", "max_surface_temperature": 55,
     "max_heat_loss": 100},
    {"tag": "EXAMPLE-2", "area": "Example plant", "service": "Chilled water (example)", "shape": "pipe",
     "size": "DN 100", "length": 25, "operating_temperature": 6, "condition": "indoor",
     "insulation": "elastomeric foam", "finish": "none", "prevent_condensation": "yes"},
]


def _number(x: float) -> int | float:
    """A default for a cell: an int when whole, else rounded to 9 significant digits."""
    r = float(f"{x:.9g}")
    return int(r) if r.is_integer() else r


def _material_names() -> list[str]:
    return [m.name for m in library.materials().values()]


def _finish_names() -> list[str]:
    return [f.name for f in library.finishes().values()]


@dataclass
class Dropdown:
    """A list validation on one column of a sheet, from row ``first`` to ``last`` (1-based)."""

    col: int
    words: tuple[str, ...] = ()  # a fixed list ...
    source: tuple[str, int, int] | None = None  # ... or a range: (sheet, first row, last row) of column A
    title: str = ""
    message: str = ""
    first: int = 2
    last: int = LAST_ROW


@dataclass
class Sheet:
    name: str
    rows: list[list]
    widths: list[float]  # characters
    bold: set[tuple[int, int]] = field(default_factory=set)  # (row, col), 0-based
    header_row: int | None = None  # 0-based row that is styled as a header (bold, wrapped, taller)
    freeze: tuple[int, int] | None = None  # (rows, columns) frozen
    dropdowns: list[Dropdown] = field(default_factory=list)


def _lines_sheet() -> Sheet:
    rows = [list(LINE_HEADERS)]
    for ex in EXAMPLES:
        unknown = set(ex) - set(COL)
        if unknown:
            raise ValueError(f"example row names fields that do not exist: {sorted(unknown)}")
        rows.append([ex.get(f.key) for f in schema.LINE_FIELDS])
    yes_no = ("yes", "no")
    dd = [
        Dropdown(COL["shape"], schema.SHAPE_WORDS, title="Shape",
                 message="Not one of lagsheet's shape words. Keep it only if it is an alias lagsheet "
                         "knows; fill checks every cell."),
        Dropdown(COL["condition"], source=("Conditions", *CONDITION_ROWS), title="Condition",
                 message="Not a name in the Conditions sheet. Several names go as 'outdoor; summer'; "
                         "fill checks every name."),
    ]
    for key, title in (("insulation", "Insulation"), ("outer_insulation", "Outer insulation")):
        dd.append(Dropdown(COL[key], tuple(_material_names()), title=title,
                           message="Not a built-in material. Keep it if the Materials sheet defines it "
                                   "or it is an alias; fill checks every name."))
    dd.append(Dropdown(COL["finish"], tuple(_finish_names()), title="Finish",
                       message="Not a built-in finish. Keep it only if it is an alias lagsheet knows; "
                               "fill checks every name."))
    for key, title in (("prevent_condensation", "Prevent condensation"), ("economic", "Economic")):
        dd.append(Dropdown(COL[key], yes_no, title=title, message="Write yes or no."))
    dd.append(Dropdown(COL["code"], ("ASHRAE 90.1", "GEG"), title="Code",
                       message="Not a built-in code. Keep it if the Codes sheet has a table of that name; "
                               "fill checks every name."))
    return Sheet("Lines", rows, [_WIDTH[f.key] for f in schema.LINE_FIELDS], header_row=0,
                 freeze=(1, 1), dropdowns=dd)


def _conditions_sheet() -> Sheet:
    rows = [[header(f) for f in schema.CONDITION_FIELDS]]
    for c in BUILTIN_CONDITIONS.values():
        rows.append([c.name, _number(c.t_air - 273.15), _number(c.t_surroundings - 273.15),
                     _number(c.wind), _number(c.rh * 100), _number(c.hours), _number(c.solar)])
    return Sheet("Conditions", rows, [14, 16, 16, 11, 12, 12, 13], header_row=0, freeze=(1, 0))


def _materials_sheet() -> Sheet:
    return Sheet("Materials", [[header(f) for f in schema.MATERIAL_FIELDS]],
                 [18, 16, 14, 16, 16, 16, 26, 11, 12], header_row=0, freeze=(1, 0))


_SETTING_MEANING = {
    "currency": "Currency of every cost and price (any text).",
    "energy_price": "Price of a kWh of delivered heat or electricity.",
    "heating_efficiency": "Converts heat lost to fuel bought.",
    "cooling_cop": "Converts heat gained to electricity bought. 3.5 is a whole chilled-water plant "
                   "(chillers, pumps, towers) at about 1 kW per ton of refrigeration (common practice).",
    "emission_factor": "CO2 per kWh bought.",
    "discount_rate": "For the annualised cost of Economic lines.",
    "service_life": "For the annualised cost of Economic lines.",
    "jacket_cost_per_area": "Installed jacket, per m² of outer surface. Needed for Economic lines.",
    "labour_per_layer": "Labour per m² of each layer. Needed for Economic lines.",
    "condensation_margin": "Prevent condensation keeps the surface this far above the dew point.",
    "thickness_step": "Thickness steps for a material that lists no Thicknesses.",
    "max_thickness": "Largest thickness tried in those steps.",
    "bare_emissivity": "Emissivity of the bare line, for the bare heat loss.",
    "freeze_fraction": "Share of standing water allowed to freeze for Freeze protection (25 % is "
                       "common practice).",
    "touch_still_air": "yes: Max surface temperature is also judged with no wind and full sun (a "
                       "person touches a line on a calm day; common practice). no: at the named wind only.",
    "tracing_margin": "Tracing duty = heat loss at the Maintain temperature × (1 + this); 10-25 % is usual "
                      "in IEEE 515 / IEC/IEEE 60079-30-2 designs (common practice).",
    "heat_loss_allowance": "Extra heat loss for thermal bridges not counted as fittings, for lines that "
                           "give none (ISO 12241, VDI 2055).",
}
_SETTING_UNIT = {"year": "yr"}


def _codes_sheet() -> Sheet:
    return Sheet("Codes", [[header(f) for f in schema.CODE_FIELDS]], [16, 16, 16, 11, 11, 14, 16, 18],
                 header_row=0, freeze=(1, 0))


def _fluids_sheet() -> Sheet:
    return Sheet("Fluids", [[header(f) for f in schema.FLUID_FIELDS]], [18, 16, 14], header_row=0,
                 freeze=(1, 0))


def _fittings_sheet() -> Sheet:
    return Sheet("Fittings", [[header(f) for f in schema.FITTING_FIELDS]], [10, 12, 12, 10, 18], header_row=0,
                 freeze=(1, 0))


def _settings_sheet() -> Sheet:
    rows: list[list] = [["Setting", "Value", "Unit", "Meaning"]]
    for key, (name, dim, si, default, kind) in schema.SETTINGS.items():
        if kind == schema.YESNO:
            rows.append([name, "yes" if default else "no", None, _SETTING_MEANING.get(key)])
            continue
        if kind == schema.TEXT:
            rows.append([name, default, None, _SETTING_MEANING.get(key)])
            continue
        value = None
        if not (isinstance(default, float) and math.isnan(default)):
            value = _number(float(from_si([default], si, dim, difference=kind == schema.DIFFERENCE)[0]))
        unit = f"{CURRENCY}{dim[1:]}" if dim.startswith("1/") else _SETTING_UNIT.get(dim, dim)
        rows.append([name, value, unit, _SETTING_MEANING.get(key)])
    return Sheet("Settings", rows, [22, 10, 10, 70], header_row=0, freeze=(1, 0))


INSTRUCTION_WIDTH = 100  # characters a line of the Instructions sheet holds (no wrapping needed)


def _paragraphs() -> list[tuple[str | None, str | None]]:
    """The Instructions: (heading, paragraph); a paragraph is wrapped into rows of text."""
    outputs = ", ".join(o.header for o in schema.OUTPUTS[:15])
    extra = ", ".join(o.header for o in schema.OUTPUTS[15:] if not o.optional)
    return [
        ("lagsheet workbook", "Insulation thickness, heat loss and cost for every line of a schedule."),
        (None, None),
        ("What to do", "1. Fill the Lines sheet: one row for each line (a pipe run, a riser, a vessel shell, "
                       "a flat panel or duct side, a sphere)."),
        (None, "2. Check the Conditions and Settings sheets: their values are placeholders; set your "
               "project's own."),
        (None, "3. Run: lagsheet fill this-workbook.xlsx -o filled.xlsx --report report.json"),
        (None, "4. Read the results and the Notes column in the filled workbook."),
        (None, None),
        ("Units", "Every number column has its unit in brackets in its header, e.g. Operating temperature "
                  "[°C]. Type plain numbers in that unit. For other units change the brackets, e.g. [°F] "
                  "or [in]: lagsheet converts them and gives its results in the same unit system. A cell "
                  "may also carry its own unit as text, e.g. 2 in or 60 W/m²."),
        ("Every line needs", "Tag, Shape and Operating temperature; pipes also Size or Outside diameter, "
                             "and Length; flat shapes (wall, top, underside) Surface area; and Insulation, "
                             "unless Fixed thickness is 0."),
        ("Targets", "Give any of Max surface temperature, Max heat loss, Prevent condensation, Economic, "
                    "Min thickness and Code: fill picks the thinnest sold thickness that meets all of them. "
                    "Fixed thickness evaluates a thickness you give instead."),
        ("Dropdowns", "Shape, Condition, Insulation, Outer insulation, Finish, Prevent condensation and "
                      "Economic offer lists. Other entries are allowed (aliases, your own materials, "
                      "several conditions as 'outdoor; summer'): fill checks every cell."),
        ("Example rows", "The rows whose Tag starts with EXAMPLE show lines of an invented plant. Replace "
                         "them with your own lines or delete them; fill marks them as examples in its "
                         "notes."),
        (None, None),
        ("What fill adds", f"To the right of your last column of Lines: {outputs} (then {extra}), each "
                           "with its unit in the header. Cell comments mark the input cells it has doubts "
                           "about. Your own columns and the other sheets are left as they are, and the "
                           "input file is not changed unless --in-place is given (a backup is kept)."),
        (None, None),
        ("Conditions", "One row for each set of design conditions: ambient and surroundings temperature, "
                       "wind speed, relative humidity and operating hours a year. The two rows given are "
                       "lagsheet's built-in placeholders (indoor, outdoor); change them and add your own."),
        ("Materials", "One row for each point of a material's conductivity curve: Name, Mean temperature "
                      "and Conductivity; limits, cost, sold Thicknesses (e.g. 25, 40, 50), Max layer "
                      "and Design factor (1 or more: declared to design conductivity for ageing, moisture "
                      "and installation, ISO 23993; it multiplies k everywhere) on any row of the material. A name here replaces the built-in material of that "
                      "name. Leave the sheet empty to use the built-in library (lagsheet materials lists "
                      "it, with the source of every value)."),
        ("Process limits", "Flowing lines (Flow rate, Fluid, Max temperature drop) get their Outlet "
                           "temperature; steam lines their Condensate for trap sizing; water lines with "
                           "Freeze protection their Time to freeze; vessels with Hold time their Time to "
                           "cool. These columns appear only when a line uses them."),
        ("Codes", "Optional: your own minimum-thickness tables, one row each: Code (the table's name, "
                  "written in the Code column of Lines), Min and Max fluid temperature (min included, max "
                  "not; blank = open), Min and Max size (a nominal size such as NPS 4 or DN 100, or an "
                  "outside diameter with its unit such as 114.3 mm), Thickness, and the Rating "
                  "conductivity and Rating mean temperature the thickness holds for. fill corrects the "
                  "thickness to the line's material: T = r[(1 + t/r)^(K/k) - 1]. A table named like a "
                  "built-in one (ASHRAE 90.1, GEG) replaces it."),
        ("Fluids", "Optional: process fluids that CoolProp does not name (thermal oils, brines): Name, "
                   "Specific heat and Density. Name them in the Fluid column of Lines."),
        ("Heat tracing", "A Maintain temperature on a pipe or riser gives its Tracing duty: the heat per metre "
                         "that holds it there with the chosen insulation at its coldest named condition, times "
                         "1 + Tracing margin (Settings), in the Tracing duty column. The Summary and "
                         "Quantities total it per area."),
        ("Fittings", "Valves, Flanges (pairs) and Supports on a line each lose as much as their Equivalent "
                     "length of the same pipe: insulated (boxes, covers) when the line is insulated, bare "
                     "when it is bare. Built in, all sizes: valve 1.5 m insulated, 1.0 m bare (from a "
                     "published bare-valve loss); flange pair 0.6 m / 0.5 m; support 0.3 m / 0.2 m (these "
                     "from memory, rough). Rows of the optional Fittings sheet (Item, Min size, Max size as "
                     "NPS 2, DN 50 or 60.3 mm, blank for all; Insulated yes/no, blank for both; Equivalent "
                     "length) replace or come before them. Their heat is in Heat loss and shown as "
                     "Fittings heat loss."),
        ("Settings", "Prices, efficiencies and economics. The values given are lagsheet's defaults, "
                     "placeholders to replace; a blank value takes the default. Economic lines also need "
                     "Jacket cost per area, Labour per layer and a Cost per volume for the material."),
        (None, None),
        ("Cautions", "Surface temperature limits for personnel protection depend on contact time and the "
                     "surface material (ASTM C1055, ISO 13732-1). Set Max surface temperature to the "
                     "limit your project requires."),
        (None, "Cold lines need a continuous vapour retarder; this calculation does not cover moisture "
               "getting into the insulation."),
        (None, "Insulation delays freezing but never prevents it: water that may stand longer than "
               "its time to freeze needs heat tracing or to keep flowing."),
        (None, "Results are design estimates. Review them under the owner's specification, local codes "
               "and licensed engineering practice."),
        (None, "Built-in conductivities are generic; for the product you buy, enter the manufacturer's "
               "data in Materials."),
        (None, None),
    ]


def _wrap(text: str) -> list[str]:
    return textwrap.wrap(text, INSTRUCTION_WIDTH, break_long_words=False, break_on_hyphens=False)


def _instructions_sheet() -> Sheet:
    rows: list[list] = []
    bold: set[tuple[int, int]] = set()
    for heading, text in _paragraphs():
        lines = _wrap(text) if text else [None]
        for k, line in enumerate(lines):
            if heading and k == 0:
                bold.add((len(rows), 0))
            rows.append([heading if k == 0 else None, line])
    bold |= {(len(rows), 0), (len(rows), 1)}
    rows.append(["Lines column", "What to enter"])
    for f in schema.LINE_FIELDS:
        for k, line in enumerate(_wrap(_HELP[f.key])):
            rows.append([header(f) if k == 0 else None, line])
    return Sheet("Instructions", rows, [28, INSTRUCTION_WIDTH + 2], bold=bold)


def sheets() -> list[Sheet]:
    """The sheets of both templates, in order."""
    return [_instructions_sheet(), _lines_sheet(), _conditions_sheet(), _materials_sheet(),
            _fluids_sheet(), _codes_sheet(), _fittings_sheet(), _settings_sheet()]


# --------------------------------------------------------------------------------------
# xlsx (openpyxl), made deterministic afterwards
# --------------------------------------------------------------------------------------

HEADER_HEIGHT_PT = 30  # two lines of 11 pt


def _column_letter(i: int) -> str:
    s, i = "", i + 1
    while i:
        i, r = divmod(i - 1, 26)
        s = chr(65 + r) + s
    return s


def _xlsx_list(words) -> str:
    text = ",".join(words)
    if len(text) > 253 or any("," in w or '"' in w for w in words):
        raise ValueError(f"a dropdown list must be under 255 characters and hold no commas: {text!r}")
    return f'"{text}"'


def write_xlsx(path: Path) -> None:
    import openpyxl
    from openpyxl.styles import Alignment, Font
    from openpyxl.worksheet.datavalidation import DataValidation

    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for sh in sheets():
        ws = wb.create_sheet(sh.name)
        for row in sh.rows:
            ws.append(row)
        for i, w in enumerate(sh.widths):
            ws.column_dimensions[_column_letter(i)].width = w
        for r, c in sorted(sh.bold):
            ws.cell(r + 1, c + 1).font = Font(bold=True)
        if sh.header_row is not None:
            for cell in ws[sh.header_row + 1]:
                cell.font = Font(bold=True)
                cell.alignment = Alignment(wrap_text=True, vertical="top")
            ws.row_dimensions[sh.header_row + 1].height = HEADER_HEIGHT_PT
        if sh.freeze:
            ws.freeze_panes = f"{_column_letter(sh.freeze[1])}{sh.freeze[0] + 1}"
        for d in sh.dropdowns:
            if d.source:
                s, a, b = d.source
                formula = f"{s}!$A${a}:$A${b}"
            else:
                formula = _xlsx_list(d.words)
            dv = DataValidation(type="list", formula1=formula, allow_blank=True, showErrorMessage=True,
                                errorStyle="warning", errorTitle=d.title, error=d.message)
            letter = _column_letter(d.col)
            dv.add(f"{letter}{d.first}:{letter}{d.last}")
            ws.add_data_validation(dv)
    wb.active = 0
    p = wb.properties
    p.creator = p.lastModifiedBy = "lagsheet"
    p.title = "lagsheet workbook"
    buf = io.BytesIO()
    wb.save(buf)
    _rezip(buf.getvalue(), path, {"docProps/core.xml": _fix_core, "docProps/app.xml": _fix_app,
                                  "xl/styles.xml": fonts_in_schema_order})


def _fix_app(_xml: bytes) -> bytes:
    """openpyxl names itself and its version here; a fixed text keeps rebuilds equal across versions."""
    return (b'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<Properties xmlns='
            b'"http://schemas.openxmlformats.org/officeDocument/2006/extended-properties">'
            b"<Application>lagsheet</Application></Properties>")


def _fix_core(xml: bytes) -> bytes:
    text = xml.decode("utf-8")
    for tag in ("created", "modified"):
        text = re.sub(rf"(<dcterms:{tag}\b[^>]*>)[^<]*(</dcterms:{tag}>)", rf"\g<1>{STAMP}\g<2>", text)
    return text.encode("utf-8")


def _rezip(data: bytes, path: Path, fix: dict) -> None:
    """Copy a zip package with fixed dates and attributes (and ``fix`` applied to members)."""
    with zipfile.ZipFile(io.BytesIO(data)) as src:
        members = [(i.filename, src.read(i.filename)) for i in src.infolist()]
    _write_zip(path, [(n, fix[n](b) if n in fix else b) for n, b in members])


def _write_zip(path: Path, members: list[tuple[str, bytes]], stored: tuple[str, ...] = ()) -> None:
    with zipfile.ZipFile(path, "w") as zf:
        for name, body in members:
            info = zipfile.ZipInfo(name, date_time=ZIP_DATE)
            info.compress_type = zipfile.ZIP_STORED if name in stored else zipfile.ZIP_DEFLATED
            info.create_system = 3
            info.external_attr = 0o644 << 16
            zf.writestr(info, body, compresslevel=9 if name not in stored else None)


# --------------------------------------------------------------------------------------
# ods: OpenDocument XML written here
# --------------------------------------------------------------------------------------

_NS = {
    "office": "urn:oasis:names:tc:opendocument:xmlns:office:1.0",
    "style": "urn:oasis:names:tc:opendocument:xmlns:style:1.0",
    "text": "urn:oasis:names:tc:opendocument:xmlns:text:1.0",
    "table": "urn:oasis:names:tc:opendocument:xmlns:table:1.0",
    "fo": "urn:oasis:names:tc:opendocument:xmlns:xsl-fo-compatible:1.0",
    "of": "urn:oasis:names:tc:opendocument:xmlns:of:1.2",
    "number": "urn:oasis:names:tc:opendocument:xmlns:datastyle:1.0",
}
_DECL = '<?xml version="1.0" encoding="UTF-8"?>\n'
MIMETYPE = "application/vnd.oasis.opendocument.spreadsheet"


def _ns(*keys: str) -> str:
    return " ".join(f'xmlns:{k}="{_NS[k]}"' for k in keys)


def _cm(chars: float) -> str:
    """A column width in characters (as in xlsx) -> centimetres (about 7 px a character at 96 dpi)."""
    return f"{(chars * 7 + 5) / 96 * 2.54:.3f}cm"


def _cell(value, style: str | None, validation: str | None) -> str:
    attrs = ""
    if style:
        attrs += f' table:style-name="{style}"'
    if validation:
        attrs += f' table:content-validation-name="{validation}"'
    if value is None or value == "":
        return f"<table:table-cell{attrs}/>"
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        v = repr(value)
        return (f'<table:table-cell{attrs} office:value-type="float" office:value="{v}">'
                f"<text:p>{v}</text:p></table:table-cell>")
    text = str(value)
    if text != text.strip() or "  " in text:
        raise ValueError(f"template text must not hold leading, trailing or double spaces: {text!r}")
    return (f'<table:table-cell{attrs} office:value-type="string"><text:p>{escape(text)}</text:p>'
            "</table:table-cell>")


def _row(cells: list[str], style: str | None = None, repeat: int = 1) -> str:
    """A row, with runs of identical empty cells merged and trailing plain empties dropped."""
    while cells and cells[-1] == "<table:table-cell/>":
        cells.pop()
    out: list[str] = []
    i = 0
    while i < len(cells):
        j = i
        while j + 1 < len(cells) and cells[j + 1] == cells[i] and cells[i].endswith("/>"):
            j += 1
        n = j - i + 1
        out.append(cells[i] if n == 1 else cells[i][:-2] + f' table:number-columns-repeated="{n}"/>')
        i = j + 1
    attrs = (f' table:style-name="{style}"' if style else "") + (
        f' table:number-rows-repeated="{repeat}"' if repeat > 1 else "")
    return f"<table:table-row{attrs}>{''.join(out) or '<table:table-cell/>'}</table:table-row>"


def _ods_condition(d: Dropdown) -> str:
    if d.source:
        s, a, b = d.source
        return f"of:cell-content-is-in-list([${s}.$A${a}:.$A${b}])"
    return "of:cell-content-is-in-list(" + ";".join(f'"{w}"' for w in d.words) + ")"


def _content_xml(all_sheets: list[Sheet]) -> str:
    widths = sorted({w for sh in all_sheets for w in sh.widths})
    col_style = {w: f"co{i + 1}" for i, w in enumerate(widths)}
    styles = "".join(
        f'<style:style style:name="{name}" style:family="table-column"><style:table-column-properties '
        f'fo:break-before="auto" style:column-width="{_cm(w)}"/></style:style>'
        for w, name in col_style.items())
    styles += (
        '<style:style style:name="ro1" style:family="table-row"><style:table-row-properties '
        f'style:row-height="{HEADER_HEIGHT_PT / 72 * 2.54:.3f}cm" fo:break-before="auto" '
        'style:use-optimal-row-height="false"/></style:style>'
        '<style:style style:name="ce1" style:family="table-cell" style:parent-style-name="Default">'
        '<style:text-properties fo:font-weight="bold" style:font-weight-asian="bold" '
        'style:font-weight-complex="bold"/></style:style>'
        '<style:style style:name="ce2" style:family="table-cell" style:parent-style-name="Default">'
        '<style:table-cell-properties fo:wrap-option="wrap" style:vertical-align="top"/>'
        '<style:text-properties fo:font-weight="bold" style:font-weight-asian="bold" '
        'style:font-weight-complex="bold"/></style:style>')
    validations = []
    tables = []
    for sh in all_sheets:
        names: dict[int, str] = {}
        for d in sh.dropdowns:
            name = f"val{len(validations) + 1}"
            names[d.col] = name
            validations.append(
                f'<table:content-validation table:name="{name}" '
                f"table:condition={quoteattr(_ods_condition(d))} "
                f'table:allow-empty-cell="true" table:display-list="unsorted" '
                f'table:base-cell-address="{sh.name}.{_column_letter(d.col)}{d.first}">'
                f'<table:error-message table:message-type="warning" table:title={quoteattr(d.title)} '
                f'table:display="true"><text:p>{escape(d.message)}</text:p></table:error-message>'
                "</table:content-validation>")
        rng = {d.col: (d.first, d.last) for d in sh.dropdowns}
        width = len(sh.widths)
        cols = "".join(f'<table:table-column table:style-name="{col_style[w]}" '
                       'table:default-cell-style-name="Default"/>' for w in sh.widths)
        rows = []
        for r, row in enumerate(sh.rows):
            cells = []
            for c in range(max(width, len(row))):
                v = row[c] if c < len(row) else None
                style = "ce2" if r == sh.header_row else ("ce1" if (r, c) in sh.bold else None)
                first, last = rng.get(c, (0, -1))
                cells.append(_cell(v, style, names.get(c) if first <= r + 1 <= last else None))
            rows.append(_row(cells, "ro1" if r == sh.header_row else None))
        if rng:
            start = len(sh.rows) + 1
            last = max(b for _a, b in rng.values())
            if any(a > start or b != last for a, b in rng.values()):
                raise ValueError("every dropdown of a sheet must run from its first empty row to the same last row")
            cells = [_cell(None, None, names.get(c)) for c in range(width)]
            rows.append(_row(cells, repeat=last - start + 1))
        tables.append(f"<table:table table:name={quoteattr(sh.name)}>{cols}{''.join(rows)}</table:table>")
    return (_DECL + f'<office:document-content {_ns("office", "style", "text", "table", "fo", "of", "number")} '
            'office:version="1.3"><office:automatic-styles>' + styles + "</office:automatic-styles>"
            "<office:body><office:spreadsheet><table:content-validations>" + "".join(validations)
            + "</table:content-validations>" + "".join(tables)
            + "</office:spreadsheet></office:body></office:document-content>\n")


def _styles_xml() -> str:
    return (_DECL + f'<office:document-styles {_ns("office", "style", "text", "table", "fo")} '
            'office:version="1.3"><office:styles>'
            '<style:default-style style:family="table-cell"><style:paragraph-properties '
            'style:tab-stop-distance="1.25cm"/></style:default-style>'
            '<style:style style:name="Default" style:family="table-cell"/>'
            "</office:styles><office:automatic-styles>"
            '<style:page-layout style:name="pm1"><style:page-layout-properties '
            'style:writing-mode="lr-tb"/></style:page-layout></office:automatic-styles>'
            '<office:master-styles><style:master-page style:name="Default" style:page-layout-name="pm1"/>'
            "</office:master-styles></office:document-styles>\n")


def _meta_xml() -> str:
    return (_DECL + '<office:document-meta xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
            'xmlns:meta="urn:oasis:names:tc:opendocument:xmlns:meta:1.0" '
            'xmlns:dc="http://purl.org/dc/elements/1.1/" office:version="1.3"><office:meta>'
            "<meta:generator>lagsheet build_templates</meta:generator>"
            "<dc:title>lagsheet workbook</dc:title><meta:initial-creator>lagsheet</meta:initial-creator>"
            f"<meta:creation-date>{STAMP[:-1]}</meta:creation-date><dc:date>{STAMP[:-1]}</dc:date>"
            "</office:meta></office:document-meta>\n")


def _item(name: str, kind: str, value) -> str:
    return f'<config:config-item config:name="{name}" config:type="{kind}">{value}</config:config-item>'


def _settings_xml(all_sheets: list[Sheet]) -> str:
    """View settings: the active sheet and the frozen rows and columns of each sheet."""
    entries = []
    for sh in all_sheets:
        rows, cols = sh.freeze or (0, 0)
        items = [_item("CursorPositionX", "int", cols), _item("CursorPositionY", "int", rows),
                 _item("HorizontalSplitMode", "short", 2 if cols else 0),
                 _item("VerticalSplitMode", "short", 2 if rows else 0),
                 _item("HorizontalSplitPosition", "int", cols),
                 _item("VerticalSplitPosition", "int", rows),
                 _item("ActiveSplitRange", "short", 3 if cols and rows else (2 if rows else 0)),
                 _item("PositionLeft", "int", 0), _item("PositionRight", "int", cols),
                 _item("PositionTop", "int", 0), _item("PositionBottom", "int", rows)]
        entries.append(f"<config:config-item-map-entry config:name={quoteattr(sh.name)}>"
                       + "".join(items) + "</config:config-item-map-entry>")
    view = ("<config:config-item-map-indexed config:name=\"Views\"><config:config-item-map-entry>"
            + _item("ViewId", "string", "view1")
            + '<config:config-item-map-named config:name="Tables">' + "".join(entries)
            + "</config:config-item-map-named>"
            + _item("ActiveTable", "string", escape(all_sheets[0].name))
            + "</config:config-item-map-entry></config:config-item-map-indexed>")
    # the 'ooo:' of 'ooo:view-settings' is a namespace prefix: without its declaration
    # LibreOffice ignores the whole set (and with it the frozen rows)
    return (_DECL + '<office:document-settings xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
            'xmlns:config="urn:oasis:names:tc:opendocument:xmlns:config:1.0" '
            'xmlns:ooo="http://openoffice.org/2004/office" office:version="1.3">'
            '<office:settings><config:config-item-set config:name="ooo:view-settings">' + view
            + "</config:config-item-set></office:settings></office:document-settings>\n")


def _manifest_xml() -> str:
    parts = "".join(f' <manifest:file-entry manifest:full-path="{p}" manifest:media-type="text/xml"/>\n'
                    for p in ("content.xml", "styles.xml", "meta.xml", "settings.xml"))
    return (_DECL + '<manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" '
            'manifest:version="1.3">\n'
            f' <manifest:file-entry manifest:full-path="/" manifest:version="1.3" manifest:media-type="{MIMETYPE}"/>\n'
            + parts + "</manifest:manifest>\n")


def write_ods(path: Path) -> None:
    all_sheets = sheets()
    members = [
        ("mimetype", MIMETYPE.encode("ascii")),  # first and stored, as OpenDocument requires
        ("content.xml", _content_xml(all_sheets).encode("utf-8")),
        ("styles.xml", _styles_xml().encode("utf-8")),
        ("meta.xml", _meta_xml().encode("utf-8")),
        ("settings.xml", _settings_xml(all_sheets).encode("utf-8")),
        ("META-INF/manifest.xml", _manifest_xml().encode("utf-8")),
    ]
    _write_zip(path, members, stored=("mimetype",))


# --------------------------------------------------------------------------------------


def build(out: Path) -> list[Path]:
    """Write ``lagsheet.xlsx`` and ``lagsheet.ods`` into the folder ``out``; their paths."""
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    write_xlsx(out / NAMES[0])
    write_ods(out / NAMES[1])
    return [out / n for n in NAMES]


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description="Build the blank workbooks that 'lagsheet new' copies.")
    ap.add_argument("--out", type=Path, help="write the two files here only (default: sheet_templates/ "
                                              "and the package's templates_data/)")
    args = ap.parse_args(argv)
    if args.out is not None:
        for p in build(args.out):
            print(f"written: {p}")
        return 0
    for p in build(HERE):
        SHIPPED.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(p, SHIPPED / p.name)
        print(f"written: {p} and {SHIPPED / p.name}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
