"""Fields of the workbook: headers, aliases, dimension, default unit, plausible range.

This is the contract of ``WORKBOOK.md`` as data. Matching is case-insensitive and
ignores surrounding spaces; aliases keep old or common headers working.
"""

from __future__ import annotations

from dataclasses import dataclass

from .results import COLUMNS

TEXT, NUMBER, TEMPERATURE, DIFFERENCE, YESNO = "text", "number", "temperature", "difference", "yes/no"

# the largest solar irradiance accepted [W/m²]: the solar constant is about 1361 W/m² above the
# atmosphere (from memory); no surface on the ground receives more than that from the sun alone
SOLAR_MAX = 1400.0


@dataclass(frozen=True)
class Field:
    key: str
    header: str
    kind: str = TEXT
    unit: str = ""  # default unit text (also the dimension); '' for text
    si: str = ""  # SI unit text the values are converted to
    aliases: tuple[str, ...] = ()
    minimum: float | None = None  # SI, exclusive lower bound of a valid value
    maximum: float | None = None  # SI, inclusive upper bound
    alt_units: tuple[tuple[str, str], ...] = ()  # other accepted (dimension unit, si) pairs
    count: bool = False  # a number of items: no unit to write in its header


LINE_FIELDS = (
    Field("tag", "Tag", aliases=("line", "line no", "line no.", "line number", "line nr", "line #", "id")),
    Field("area", "Area", aliases=("system", "plant area")),
    Field("service", "Service", aliases=("fluid service", "description")),
    Field("shape", "Shape", aliases=("type", "geometry")),
    Field("size", "Size", aliases=("nominal size", "nps", "dn", "pipe size")),
    Field("outside_diameter", "Outside diameter", NUMBER, "mm", "m",
          ("od", "outer diameter", "pipe od", "diameter"), 1e-3, 20.0),
    Field("length", "Length", NUMBER, "m", "m", ("run length", "height"), 1e-3, 1e5),
    Field("surface_area", "Surface area", NUMBER, "m²", "m**2", ("area m2", "bare area"), 1e-4, 1e6),
    Field("width", "Width", NUMBER, "m", "m", ("plate width", "flat width"), 1e-3, 1e4),
    Field("operating_temperature", "Operating temperature", TEMPERATURE, "°C", "K",
          ("temperature", "operating temp", "fluid temperature", "design temperature"), 0.0, 2000.0),
    Field("condition", "Condition", aliases=("conditions", "location", "design condition")),
    Field("insulation", "Insulation", aliases=("material", "insulation material")),
    Field("outer_insulation", "Outer insulation", aliases=("outer material", "second insulation")),
    Field("finish", "Finish", aliases=("jacket", "cladding", "jacketing")),
    Field("surface_emissivity", "Surface emissivity", NUMBER, "1", "dimensionless",
          ("emissivity",), -1e-12, 1.0),
    Field("max_surface_temperature", "Max surface temperature", TEMPERATURE, "°C", "K",
          ("maximum surface temperature", "max surface temp", "surface temperature limit"), 0.0, 2000.0),
    Field("max_heat_loss", "Max heat loss", NUMBER, "W/m", "W/m",
          ("maximum heat loss", "heat loss limit"), 0.0, 1e7, alt_units=(("W/m**2", "W/m**2"),)),
    Field("prevent_condensation", "Prevent condensation", YESNO, aliases=("condensation control", "anti-condensation")),
    Field("economic", "Economic", YESNO, aliases=("economic thickness",)),
    Field("min_thickness", "Min thickness", NUMBER, "mm", "m",
          ("minimum thickness",), -1e-12, 2.0),  # 'Code thickness' is an output (the Code column's)
    Field("fixed_thickness", "Fixed thickness", NUMBER, "mm", "m",
          ("thickness given", "existing thickness"), -1e-12, 2.0),
    # process limits (extensions of the contract): flowing lines, steam, freezing, hold time
    Field("flow_rate", "Flow rate", NUMBER, "kg/s", "kg/s", ("mass flow", "mass flow rate", "flow"),
          0.0, 1e5, alt_units=(("m**3/h", "m**3/s"),)),
    Field("fluid", "Fluid", aliases=("medium", "process fluid")),
    Field("operating_pressure", "Operating pressure", NUMBER, "bar", "Pa",
          ("pressure", "absolute pressure", "steam pressure"), 100.0, 1e8),
    Field("inside_diameter", "Inside diameter", NUMBER, "mm", "m", ("bore", "inner diameter", "internal diameter"), 1e-3, 20.0),
    Field("schedule", "Schedule", aliases=("sch", "pipe schedule")),
    Field("max_temperature_drop", "Max temperature drop", DIFFERENCE, "K", "K",
          ("max temperature change", "allowed temperature drop"), 0.0, 2000.0),
    Field("freeze_protection", "Freeze protection", NUMBER, "h", "s",
          ("freeze protection time", "hours to freeze"), 0.0, 1e9),
    Field("contents_volume", "Contents volume", NUMBER, "m³", "m**3", ("liquid volume", "contents"), 1e-6, 1e6),
    Field("hold_time", "Hold time", NUMBER, "h", "s", ("holding time", "cool-down time"), 0.0, 1e9),
    Field("min_temperature", "Min temperature", TEMPERATURE, "°C", "K",
          ("minimum temperature", "hold temperature", "limit temperature"), 0.0, 2000.0),
    Field("part_of", "Part of", aliases=("vessel tag", "parent")),
    Field("code", "Code", aliases=("energy code", "code table", "minimum thickness table")),
    # per-line conditions (WORKBOOK.md section 4): override that field of every condition the line names
    Field("ambient_temperature", "Ambient temperature", TEMPERATURE, "°C", "K",
          ("ambient", "air temperature", "ambient temp"), 0.0, 400.0),
    Field("wind_speed", "Wind speed", NUMBER, "m/s", "m/s", ("wind", "air velocity"), -1e-12, 60.0),
    Field("relative_humidity", "Relative humidity", NUMBER, "%", "dimensionless", ("rh", "humidity"), -1e-12, 1.0),
    Field("surroundings_temperature", "Surroundings temperature", TEMPERATURE, "°C", "K",
          ("surroundings", "radiant temperature", "mean radiant temperature"), 0.0, 600.0),
    Field("solar_irradiance", "Solar irradiance", NUMBER, "W/m²", "W/m**2",
          ("solar", "irradiance", "solar radiation"), -1e-12, SOLAR_MAX),
    Field("solar_absorptance", "Solar absorptance", NUMBER, "1", "dimensionless",
          ("absorptance", "absorptivity", "solar absorptivity"), -1e-12, 1.0),
    # heat tracing and fittings (WORKBOOK.md section 4; README, "Heat tracing", "Fittings")
    Field("maintain_temperature", "Maintain temperature", TEMPERATURE, "°C", "K",
          ("maintain temp", "tracing temperature", "maintenance temperature"), 0.0, 2000.0),
    Field("valves", "Valves", NUMBER, "1", "dimensionless", ("valve count", "number of valves"), -1e-12, 1e5,
          count=True),
    Field("flanges", "Flanges", NUMBER, "1", "dimensionless",
          ("flange pairs", "flanged joints", "number of flanges"), -1e-12, 1e5, count=True),
    Field("supports", "Supports", NUMBER, "1", "dimensionless", ("pipe supports", "number of supports"),
          -1e-12, 1e6, count=True),
    Field("heat_loss_allowance", "Heat loss allowance", NUMBER, "%", "dimensionless",
          ("thermal bridge allowance", "thermal bridges"), -1e-12, 1.0),
)

CONDITION_FIELDS = (
    Field("name", "Name", aliases=("condition",)),
    Field("ambient_temperature", "Ambient temperature", TEMPERATURE, "°C", "K",
          ("ambient", "air temperature", "ambient temp"), 0.0, 400.0),
    Field("surroundings_temperature", "Surroundings temperature", TEMPERATURE, "°C", "K",
          ("surroundings", "radiant temperature", "mean radiant temperature"), 0.0, 600.0),
    Field("wind_speed", "Wind speed", NUMBER, "m/s", "m/s", ("wind", "air velocity"), -1e-12, 60.0),
    Field("relative_humidity", "Relative humidity", NUMBER, "%", "dimensionless",
          ("rh", "humidity"), -1e-12, 1.0),
    Field("operating_hours", "Operating hours", NUMBER, "h", "hour",
          ("hours", "hours per year", "annual hours"), -1e-12, 8784.0),
    Field("solar_irradiance", "Solar irradiance", NUMBER, "W/m²", "W/m**2",
          ("solar", "irradiance", "solar radiation"), -1e-12, SOLAR_MAX),
)

MATERIAL_FIELDS = (
    Field("name", "Name", aliases=("material",)),
    Field("mean_temperature", "Mean temperature", TEMPERATURE, "°C", "K", ("mean temp",), 0.0, 2000.0),
    Field("conductivity", "Conductivity", NUMBER, "W/(m·K)", "W/(m*K)",
          ("thermal conductivity", "k", "lambda"), 1e-4, 5.0),
    Field("max_temperature", "Max temperature", TEMPERATURE, "°C", "K",
          ("maximum temperature", "max service temperature"), 0.0, 2500.0),
    Field("min_temperature", "Min temperature", TEMPERATURE, "°C", "K",
          ("minimum temperature", "min service temperature"), 0.0, 2500.0),
    Field("cost_per_volume", "Cost per volume", NUMBER, "1/m³", "1/m**3", ("cost", "installed cost"), -1e-12, 1e12),
    Field("thicknesses", "Thicknesses", TEXT, "mm", "m", ("sizes", "available thicknesses")),
    Field("max_layer", "Max layer", NUMBER, "mm", "m", ("max layer thickness",), 1e-3, 2.0),
    # declared -> design conductivity (ISO 23993, VDI 2055-1): at least 1; 5 bounds typing slips
    Field("design_factor", "Design factor", NUMBER, "1", "dimensionless",
          ("conductivity factor", "k factor"), 1.0 - 1e-9, 5.0),
)

# Process fluids the user defines (thermal oils, brines): used where 'Fluid' names them.
FLUID_FIELDS = (
    Field("name", "Name", aliases=("fluid",)),
    Field("specific_heat", "Specific heat", NUMBER, "kJ/(kg·K)", "J/(kg*K)", ("cp", "heat capacity"), 50.0, 1e5),
    Field("density", "Density", NUMBER, "kg/m³", "kg/m**3", ("rho",), 1e-2, 3e4),
)

# One row of a minimum-thickness table (the Codes sheet; lagsheet.workbook.codes): ranges
# include their min and exclude their max; sizes are nominal sizes or outside diameters with a unit.
CODE_FIELDS = (
    Field("code", "Code", aliases=("code name", "table")),
    Field("min_fluid_temperature", "Min fluid temperature", TEMPERATURE, "°C", "K",
          ("from fluid temperature", "min temperature"), 0.0, 2000.0),
    Field("max_fluid_temperature", "Max fluid temperature", TEMPERATURE, "°C", "K",
          ("to fluid temperature", "max temperature"), 0.0, 2000.0),
    Field("min_size", "Min size", aliases=("from size",)),
    Field("max_size", "Max size", aliases=("to size",)),
    Field("thickness", "Thickness", NUMBER, "mm", "m", ("min thickness", "minimum thickness"), -1e-12, 2.0),
    Field("rating_conductivity", "Rating conductivity", NUMBER, "W/(m·K)", "W/(m*K)",
          ("reference conductivity", "rating k"), 1e-4, 5.0),
    Field("rating_mean_temperature", "Rating mean temperature", TEMPERATURE, "°C", "K",
          ("reference mean temperature", "rating temperature"), 0.0, 2000.0),
)


def code_header(key: str) -> str:
    return next(f.header for f in CODE_FIELDS if f.key == key)


# The Fittings sheet: equivalent lengths of pipe per valve, flange pair and support (over the built-in rows)
FITTING_FIELDS = (
    Field("item", "Item", aliases=("fitting",)),
    Field("min_size", "Min size", aliases=("minimum size", "from size")),
    Field("max_size", "Max size", aliases=("maximum size", "to size")),
    Field("insulated", "Insulated", YESNO, aliases=("covered",)),
    Field("equivalent_length", "Equivalent length", NUMBER, "m", "m", ("equivalent pipe length", "l eq"),
          -1e-12, 1e3),
)

# Settings: key -> (name, dimension unit, SI unit, default in SI, kind)
SETTINGS = {
    "currency": ("Currency", "", "", "EUR", TEXT),
    "energy_price": ("Energy price", "1/kWh", "1/kWh", 0.05, NUMBER),
    "heating_efficiency": ("Heating efficiency", "%", "dimensionless", 0.85, NUMBER),
    # a whole chilled-water plant (chillers, pumps, cooling towers) at about 1 kW of electricity
    # per ton of refrigeration, i.e. 3.5 kW of cooling per kW (common practice)
    "cooling_cop": ("Cooling COP", "1", "dimensionless", 3.5, NUMBER),
    "emission_factor": ("Emission factor", "kg/kWh", "kg/kWh", 0.20, NUMBER),
    "discount_rate": ("Discount rate", "%", "dimensionless", 0.05, NUMBER),
    "service_life": ("Service life", "year", "year", 20.0, NUMBER),
    "jacket_cost_per_area": ("Jacket cost per area", "1/m²", "1/m**2", float("nan"), NUMBER),
    "labour_per_layer": ("Labour per layer", "1/m²", "1/m**2", float("nan"), NUMBER),
    "condensation_margin": ("Condensation margin", "K", "K", 1.0, DIFFERENCE),
    "thickness_step": ("Thickness step", "mm", "m", 0.010, NUMBER),
    "max_thickness": ("Max thickness", "mm", "m", 0.300, NUMBER),
    "bare_emissivity": ("Bare emissivity", "1", "dimensionless", 0.80, NUMBER),
    "freeze_fraction": ("Freeze fraction", "%", "dimensionless", 0.25, NUMBER),
    # 'Max surface temperature' also judged with no wind and full sun (a person touches a line on a calm day)
    "touch_still_air": ("Touch check in still air", "", "", True, YESNO),
    # a tracing duty's margin over the loss at the maintain temperature: 10-25 % is usual in
    # IEEE 515 / IEC/IEEE 60079-30-2 designs (common practice); 20 % taken here
    "tracing_margin": ("Tracing margin", "%", "dimensionless", 0.20, NUMBER),
    # thermal bridges not counted as fittings, as a share of the line's loss (ISO 12241, VDI 2055)
    "heat_loss_allowance": ("Heat loss allowance", "%", "dimensionless", 0.0, NUMBER),
}
# Settings' valid ranges in SI: key -> (lowest, lowest allowed itself?, highest).
SETTING_RANGES = {
    "energy_price": (0.0, True, 1e6),
    "heating_efficiency": (0.0, False, 1.0),  # a fraction of the fuel's heat: (0, 100 %]
    "cooling_cop": (0.0, False, 30.0),
    "emission_factor": (0.0, True, 10.0),
    "discount_rate": (0.0, True, 1.0),
    "service_life": (0.0, False, 200.0),
    "jacket_cost_per_area": (0.0, True, 1e9),
    "labour_per_layer": (0.0, True, 1e9),
    "condensation_margin": (0.0, True, 50.0),
    "thickness_step": (1e-3, True, 0.5),
    "max_thickness": (1e-3, True, 2.0),
    "bare_emissivity": (0.0, True, 1.0),
    "freeze_fraction": (0.0, False, 1.0),
    "tracing_margin": (0.0, True, 2.0),
    "heat_loss_allowance": (0.0, True, 1.0),
}
SETTING_ALIASES = {"heating efficiency": "heating_efficiency", "boiler efficiency": "heating_efficiency",
                   "cop": "cooling_cop", "co2 factor": "emission_factor", "interest rate": "discount_rate"}

# Words for Shape (our own) and their aliases -> the word.
SHAPES = {
    "pipe": "pipe", "horizontal pipe": "pipe", "pipe horizontal": "pipe", "horizontal": "pipe",
    "riser": "riser", "vertical pipe": "riser", "pipe vertical": "riser", "vertical": "riser",
    "vessel": "vessel", "tank": "vessel", "vertical vessel": "vessel", "column": "vessel", "shell": "vessel",
    "wall": "wall", "duct side": "wall", "vertical flat": "wall", "panel": "wall",
    "top": "top", "roof": "top", "duct top": "top", "horizontal flat up": "top",
    "underside": "underside", "bottom": "underside", "duct bottom": "underside", "soffit": "underside",
    "sphere": "sphere", "spherical vessel": "sphere", "ball": "sphere",
}
SHAPE_WORDS = ("pipe", "riser", "vessel", "wall", "top", "underside", "sphere")

YES = {"yes", "y", "true", "1", "x", "ja", "oui", "si", "sí"}
NO = {"no", "n", "false", "0", "", "nein", "non"}


# the Lines columns fill writes: the registry's entries that have a column
OUTPUTS = COLUMNS


def match(fields, name: str):
    """The field whose header or alias equals ``name`` (already folded), or None."""
    for f in fields:
        if name == f.header.lower() or name in f.aliases:
            return f
    return None
