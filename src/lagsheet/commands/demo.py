"""The bundled demo: an invented plant of our own, with a few deliberate problems.

Every name and number here is invented for the demonstration; none is a real site.
The plant has steam, process and building-services pipes, a vessel, duct walls, a tank
roof, a duct underside, a chilled sphere, an economic line, a two-material
high-temperature line, lines judged at two conditions, and process limits (steam
condensate, a flowing line's temperature drop, freeze times of standing water and a
hot-hold tank's cool-down), a heating main sized to an energy code's minimum, a steam line on a
sunny pipe rack (its own 'Solar irradiance', sized to the touch check in still air and full sun).
The problems (a diameter typed as an inch size in the
millimetre column, a size that disagrees with its diameter, a chilled line left without
condensation control, a hot line with no surface limit, lines with no target, a water
line with no pipe schedule) produce warnings, not errors; nothing else is warned about.
"""

from __future__ import annotations

import zipfile
from pathlib import Path

from ..io.xlsx import fonts_in_schema_order

HEADERS = ["Tag", "Area", "Service", "Shape", "Size", "Outside diameter [mm]", "Length [m]",
           "Operating temperature [°C]", "Condition", "Insulation", "Finish",
           "Max surface temperature [°C]", "Max heat loss [W/m]", "Prevent condensation",
           "Min thickness [mm]", "Fixed thickness [mm]", "Surface area [m²]", "Outer insulation",
           "Economic"]
# process columns, filled from PROCESS below (tag -> {header: value})
PROCESS_HEADERS = ["Fluid", "Flow rate [kg/s]", "Operating pressure [bar]", "Max temperature drop [K]",
                   "Freeze protection [h]", "Schedule", "Contents volume [m³]", "Hold time [h]",
                   "Min temperature [°C]", "Part of", "Code", "Solar irradiance [W/m²]",
                   "Maintain temperature [°C]", "Valves", "Flanges", "Supports", "Heat loss allowance [%]"]

# (tag, area, service, shape, size, od, length, T, condition, insulation, finish, Tsmax, qmax, cond,
#  tmin, fixed[, surface area, outer insulation, economic])
LINES = [
    ("ST-1001", "Boiler house", "HP steam header", "pipe", "NPS 10", None, 24, 250, "indoor", "mineral wool", "aluminium", 55, None, None, None, None),
    ("ST-1002", "Boiler house", "HP steam to turbine", "pipe", "NPS 8", None, 36, 250, "indoor", "calcium silicate", "aluminium", 55, None, None, None, None),
    ("ST-1003", "Boiler house", "Superheated steam", "pipe", "NPS 6", None, 18, 380, "indoor", "calcium silicate", "stainless steel", 60, None, None, None, None),
    ("ST-1004", "Boiler house", "Boiler feed water", "pipe", "NPS 4", None, 40, 140, "indoor", "mineral wool", "aluminium", 50, None, None, None, None),
    ("ST-1005", "Boiler house", "Deaerator vent", "riser", "NPS 2", None, 9, 105, "indoor", "mineral wool", "aluminium", 50, None, None, None, None),
    ("ST-1006", "Boiler house", "Blowdown line", "pipe", "NPS 1 1/2", None, 12, 180, "indoor", "mineral wool", "painted", None, None, None, None, None),
    ("ST-1007", "Boiler house", "Condensate return", "pipe", "NPS 3", None, 55, 95, "indoor", "mineral wool", "aluminium", None, 30, None, None, None),
    ("ST-1008", "Boiler house", "Economiser bypass", "pipe", "NPS 12", None, 8, 220, "indoor", "perlite", "galvanised steel", 60, None, None, None, None),
    ("SD-2001", "Steam distribution", "MP steam main", "pipe", "NPS 8", None, 320, 185, "outdoor", "mineral wool", "aluminium", 60, 95, None, None, None),
    ("SD-2002", "Steam distribution", "MP steam branch", "pipe", "NPS 4", None, 140, 185, "outdoor", "mineral wool", "aluminium", 60, None, None, 50, None),
    ("SD-2003", "Steam distribution", "LP steam main", "pipe", "NPS 6", None, 260, 150, "outdoor", "mineral wool", "aluminium", 60, None, None, None, None),
    ("SD-2004", "Steam distribution", "LP steam branch", "pipe", '2"', None, 85, 150, "outdoor", "mineral wool", "aluminium", 60, None, None, None, None),
    ("SD-2005", "Steam distribution", "Steam riser to rack", "riser", "NPS 6", None, 14, 185, "outdoor", "mineral wool", "aluminium", 60, None, None, None, None),
    ("SD-2006", "Steam distribution", "Condensate header", "pipe", "NPS 3", None, 300, 110, "outdoor", "mineral wool", "aluminium", None, 40, None, None, None),
    ("SD-2007", "Steam distribution", "Tracer supply", "pipe", "DN 25", None, 60, 150, "outdoor", "mineral wool", "aluminium", 60, None, None, None, None),
    ("SD-2008", "Steam distribution", "Flash steam", "pipe", "DN 150", None, 45, 120, "outdoor", "cellular glass", "aluminium", 60, None, None, None, None),
    ("SD-2009", "Steam distribution", "Old MP line (existing lagging)", "pipe", "NPS 4", None, 70, 185, "outdoor", "mineral wool", "aluminium", None, None, None, None, 40),
    ("SD-2010", "Steam distribution", "Uninsulated drip leg", "pipe", "NPS 1", None, 6, 185, "outdoor", None, None, None, None, None, None, 0),
    ("PR-3001", "Process area", "Hot oil supply", "pipe", "NPS 6", None, 120, 290, "indoor", "calcium silicate", "aluminium", 55, None, None, None, None),
    ("PR-3002", "Process area", "Hot oil return", "pipe", "NPS 6", None, 120, 250, "indoor", "calcium silicate", "aluminium", 55, None, None, None, None),
    ("PR-3003", "Process area", "Reactor feed", "riser", "NPS 3", None, 11, 210, "indoor", "mineral wool", "stainless steel", 55, None, None, None, None),
    ("PR-3004", "Process area", "Product rundown", "pipe", "NPS 4", None, 95, 160, "indoor", "mineral wool", "aluminium", None, None, None, None, None),
    ("PR-3005", "Process area", "Solvent recovery", "pipe", None, "2 in", 35, 85, "indoor", "mineral wool", "aluminium", 50, None, None, None, None),
    ("PR-3006", "Process area", "Thermal fluid bypass", "pipe", "NPS 2", 48.3, 14, 270, "indoor", "calcium silicate", "aluminium", 60, None, None, None, None),
    ("PR-3007", "Process area", "Hot water loop", "pipe", "NPS 2 1/2", None, 150, 80, "indoor", "polyisocyanurate", "pvc", None, 20, None, None, None),
    ("PR-3008", "Process area", "Sample line", "pipe", "NPS 1/2", None, 30, 120, "indoor", "mineral wool", "none", None, None, None, None, None),
    ("TF-4001", "Tank farm", "Fuel oil transfer", "pipe", "NPS 4", None, 410, 60, "outdoor", "mineral wool", "aluminium", None, 25, None, None, None),
    ("TF-4002", "Tank farm", "Fuel oil return", "pipe", "NPS 3", None, 410, 55, "outdoor", "mineral wool", "aluminium", None, 25, None, None, None),
    ("TF-4003", "Tank farm", "Heated bitumen", "pipe", "NPS 6", None, 90, 180, "outdoor", "cellular glass", "galvanised steel", 60, None, None, None, None),
    ("TF-4004", "Tank farm", "Tank heater steam", "riser", "NPS 2", None, 12, 150, "outdoor", "mineral wool", "aluminium", 60, None, None, None, None),
    ("HW-5001", "Building services", "LTHW flow", "pipe", "DN 80", None, 210, 80, "plant room", "mineral wool", "none", None, None, None, 40, None),
    ("HW-5002", "Building services", "LTHW return", "pipe", "DN 80", None, 210, 60, "plant room", "mineral wool", "none", None, None, None, 40, None),
    ("HW-5003", "Building services", "DHW flow", "pipe", "DN 40", None, 160, 65, "plant room", "mineral wool", "none", None, 15, None, None, None),
    ("HW-5004", "Building services", "DHW return", "pipe", "DN 25", None, 160, 55, "plant room", "mineral wool", "none", None, 12, None, None, None),
    ("HW-5005", "Building services", "Heating riser", "riser", "DN 65", None, 28, 80, "plant room", "mineral wool", "none", None, 25, None, None, None),
    ("CW-6001", "Building services", "Chilled water flow", "pipe", "DN 150", None, 180, 6, "plant room", "elastomeric foam", "none", None, None, "yes", None, None),
    ("CW-6002", "Building services", "Chilled water return", "pipe", "DN 150", None, 180, 12, "plant room", "elastomeric foam", "none", None, None, "yes", None, None),
    ("CW-6003", "Building services", "Chilled water branch", "pipe", "DN 50", None, 95, 6, "plant room", "elastomeric foam", "none", None, None, "yes", None, None),
    ("CW-6004", "Building services", "Chilled riser", "riser", "DN 100", None, 32, 6, "plant room", "polyisocyanurate", "pvc", None, None, "yes", None, None),
    ("CW-6005", "Building services", "Process cooling (spec'd thin)", "pipe", "DN 80", None, 60, 5, "plant room", "elastomeric foam", "none", None, None, None, None, 9),
    ("CW-6006", "Building services", "Brine line", "pipe", "DN 50", None, 40, -10, "plant room", "cellular glass", "aluminium", None, None, "yes", None, None),
    ("UT-7001", "Utilities", "Compressor discharge", "pipe", "NPS 3", None, 25, 130, "indoor", "mineral wool", "aluminium", 60, None, None, None, None),
    ("UT-7002", "Utilities", "Spare heater line", "pipe", "NPS 2", None, 10, 90, "indoor", "mineral wool", "aluminium", None, None, None, None, None),
    ("ST-1009", "Steam distribution", "HP steam main (economic)", "pipe", "NPS 10", None, 380, 250, "outdoor", "mineral wool", "aluminium", None, None, None, None, None, None, None, "yes"),
    ("ST-1010", "Boiler house", "Superheated steam, two materials", "pipe", "NPS 8", None, 60, 480, "indoor", "mineral wool", "aluminium", 55, None, None, None, None, None, "cellular glass", None),
    ("VS-8001", "Boiler house", "Feed water tank shell", "vessel", None, 2800, 6, 105, "indoor", "mineral wool", "aluminium", 50, None, None, None, None),
    ("DU-8101", "Process area", "Hot air duct, sides", "wall", None, None, 1.8, 180, "outdoor", "mineral wool", "galvanised steel", None, "90 W/m²", None, None, None, 86),
    ("DU-8102", "Process area", "Hot air duct, underside", "underside", None, None, None, 180, "outdoor", "mineral wool", "galvanised steel", None, "90 W/m²", None, None, None, 43),
    ("DU-8103", "Process area", "Hot air duct, top", "top", None, None, None, 180, "outdoor", "mineral wool", "galvanised steel", None, "90 W/m²", None, None, None, 43),
    ("TK-8201", "Tank farm", "Heated tank roof", "top", None, None, None, 70, "outdoor", "mineral wool", "aluminium", None, None, None, 50, None, 310),
    ("SP-8301", "Building services", "Chilled glycol buffer sphere", "sphere", None, 3500, None, -5, "outdoor; summer", "cellular glass", "aluminium", None, None, "yes", None, None),
    ("PR-3009", "Process area", "Hot oil to outdoor cooler", "pipe", "NPS 4", None, 80, 230, "outdoor; summer", "mineral wool", "aluminium", 60, 120, None, None, None),
    ("PR-3010", "Process area", "Hot water to outdoor heaters", "pipe", "NPS 2", None, 260, 90, "outdoor; winter", "mineral wool", "aluminium", 60, None, None, None, None),
    ("FW-9001", "Utilities", "Fire water ring main, outdoor", "pipe", "NPS 4", None, 150, 8, "outdoor; winter", "cellular glass", "aluminium", None, None, None, None, None),
    ("FW-9002", "Utilities", "Make-up water, outdoor", "pipe", "NPS 1", None, 60, 12, "outdoor; winter", "elastomeric foam", "pvc", None, None, None, None, None),
    ("VS-8002", "Process area", "Hot-hold product tank shell", "vessel", None, 2400, 4, 85, "outdoor; winter", "mineral wool", "aluminium", 60, None, None, None, None),
    ("VS-8002-R", "Process area", "Hot-hold product tank roof", "top", None, None, None, 85, "outdoor; winter", "mineral wool", "aluminium", 60, None, None, None, None, 4.5),
    ("HW-5006", "Building services", "LTHW main to the offices (GEG)", "pipe", "DN 100", None, 180, 80, "plant room", "mineral wool", "none", None, None, None, None, None),
    ("SD-2011", "Steam distribution", "MP steam on the sunny pipe rack", "pipe", "NPS 6", None, 120, 185, "outdoor", "mineral wool", "aluminium", 55, None, None, None, None),
    ("TF-4005", "Tank farm", "Traced fuel oil suction", "pipe", "NPS 3", None, 120, 50, "outdoor; winter", "mineral wool", "aluminium", None, 20, None, None, None),
    ("ST-1011", "Boiler house", "Steam valve station", "pipe", "NPS 6", None, 30, 185, "indoor", "mineral wool", "aluminium", 55, None, None, None, None),
]

# invented process data: steam mains (condensate), a flowing hot-water line with a drop limit,
# hot oil by volume flow (a fluid of the Fluids sheet), stagnant outdoor water (freeze time),
# a hot-hold tank whose roof is linked to its shell (cool-down time), a traced line and fittings
PROCESS = {
    "ST-1001": {"Fluid": "steam"},
    "SD-2001": {"Fluid": "steam", "Operating pressure [bar]": 11.2},
    "SD-2003": {"Fluid": "steam", "Operating pressure [bar]": 4.8},
    "PR-3001": {"Fluid": "thermal oil", "Flow rate [kg/s]": "14 m³/h"},
    "PR-3010": {"Fluid": "water", "Flow rate [kg/s]": 0.35, "Max temperature drop [K]": 3},
    "FW-9001": {"Fluid": "water", "Freeze protection [h]": 18, "Schedule": "40"},
    "FW-9002": {"Freeze protection [h]": 8},
    "VS-8002": {"Fluid": "water", "Contents volume [m³]": 16, "Hold time [h]": 90, "Min temperature [°C]": 65},
    "VS-8002-R": {"Part of": "VS-8002"},
    "HW-5006": {"Schedule": "40", "Code": "GEG"},  # sized to a code minimum (the 'Code' column)
    "SD-2011": {"Solar irradiance [W/m²]": 1000},  # full sun on the rack: sized to the touch check in still air
    # heat tracing holds the oil at 40 °C in winter; a valve station with its fittings and 10 % for the rest
    "TF-4005": {"Maintain temperature [°C]": 40},
    "ST-1011": {"Valves": 6, "Flanges": 8, "Supports": 10, "Heat loss allowance [%]": 10},
}

CONDITIONS = [
    ("Name", "Ambient temperature [°C]", "Surroundings temperature [°C]", "Wind speed [m/s]",
     "Relative humidity [%]", "Operating hours [h]"),
    ("indoor", 25, 25, 0, 55, 8000),
    ("outdoor", 5, 0, 4, 80, 8400),
    ("plant room", 28, 28, 0, 70, 6000),
    ("summer", 34, 34, 0, 60, 8400),
    ("winter", -15, -18, 6, 85, 2000),
]

MATERIALS = [
    ("Name", "Cost per volume [EUR/m³]"),
    ("mineral wool", 380),
]

FLUIDS = [
    ("Name", "Specific heat [kJ/(kg·K)]", "Density [kg/m³]"),
    ("thermal oil", 2.6, 760),
]

SETTINGS = [
    ("Setting", "Value", "Unit"),
    ("Currency", "EUR", None),
    ("Energy price", 0.045, "EUR/kWh"),
    ("Heating efficiency", 88, "%"),
    ("Cooling COP", 3.5, None),
    ("Emission factor", 0.20, "kg/kWh"),
    ("Jacket cost per area", 28, "EUR/m²"),
    ("Labour per layer", 18, "EUR/m²"),
    ("Discount rate", 6, "%"),
    ("Service life", 20, "yr"),
]


def write_demo(path: Path) -> None:
    """Write the demo schedule workbook (Lines, Conditions, Materials, Settings) to ``path``."""
    import openpyxl
    from openpyxl.styles import Font
    from openpyxl.worksheet.datavalidation import DataValidation
    from openpyxl.worksheet.properties import PageSetupProperties

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    ws["A1"] = "Demo plant: steam, process and building-services lines (invented example data)"
    ws["A1"].font = Font(bold=True, size=13)
    ws["A2"] = "Fill with: lagsheet fill demo-plant.xlsx -o demo-plant-filled.xlsx"
    ws.append([])
    ws.append(HEADERS + PROCESS_HEADERS)
    for cell in ws[4]:
        cell.font = Font(bold=True)
    for row in LINES:
        extra = PROCESS.get(row[0], {})
        ws.append(list(row) + [None] * (len(HEADERS) - len(row)) + [extra.get(h) for h in PROCESS_HEADERS])
    ws.freeze_panes = "B5"
    for col, width in zip("ABCDEFGHIJKLMNOPQRS", (10, 18, 28, 8, 10, 12, 8, 14, 15, 17, 15, 13, 12, 12,
                                                   11, 12, 11, 15, 9), strict=True):
        ws.column_dimensions[col].width = width
    for k in range(len(PROCESS_HEADERS)):
        ws.column_dimensions[openpyxl.utils.get_column_letter(len(HEADERS) + 1 + k)].width = 12
    dv = DataValidation(type="list", formula1='"pipe,riser,vessel,wall,top,underside,sphere"',
                        allow_blank=True)
    ws.add_data_validation(dv)
    dv.add(f"D5:D{4 + len(LINES)}")
    for name, rows in (("Conditions", CONDITIONS), ("Materials", MATERIALS), ("Fluids", FLUIDS),
                       ("Settings", SETTINGS)):
        s = wb.create_sheet(name)
        for r in rows:
            s.append(list(r))
        for cell in s[1]:
            cell.font = Font(bold=True)
        for k, head in enumerate(rows[0]):  # each column as wide as its header, so the sheet reads and prints
            width = max(len(str(head)), *(len(str(r[k])) for r in rows[1:] if k < len(r) and r[k] is not None))
            s.column_dimensions[openpyxl.utils.get_column_letter(k + 1)].width = min(width + 2, 60)
        s.page_setup.orientation = "landscape"
        s.sheet_properties.pageSetUpPr = PageSetupProperties(fitToPage=True)
        s.page_setup.fitToWidth, s.page_setup.fitToHeight = 1, 0
    from ..io.save import atomic_write

    def write(tmp: str) -> None:
        wb.save(tmp)
        with zipfile.ZipFile(tmp) as src:
            members = [(i, src.read(i.filename)) for i in src.infolist()]
        with zipfile.ZipFile(tmp, "w", zipfile.ZIP_DEFLATED) as dst:
            for info, data in members:  # the fonts as the schema orders them, or validators object
                dst.writestr(info, fonts_in_schema_order(data) if info.filename == "xl/styles.xml" else data)

    atomic_write(path, write, what="demo schedule")  # the one safe save: no link, lock or special file
