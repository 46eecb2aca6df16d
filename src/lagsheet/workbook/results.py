"""The one registry of results: every quantity lagsheet reports, by one name from the
selection to the sheet, the JSON report and the totals.

An entry says where its quantity goes: a column of the Lines sheet (``header``, units in SI
and US customary, number format), a key of the JSON report (``json``: always SI, the unit in
the name), and how the totals add it up (``total``). Adding a result is one entry here and
the line of the selection that computes it.
"""

from __future__ import annotations

from dataclasses import dataclass

MONEY = "currency"  # the unit of a money column: the workbook's 'Currency' setting


@dataclass(frozen=True)
class Result:
    key: str  # its one name: the selection's values[key], the sheet column's and the totals' key
    header: str | None  # its Lines column header without the unit (None: in the report only)
    si: str = ""  # unit written on an SI sheet ('' for text and plain numbers; MONEY for money)
    us: str = ""  # unit written on a US-customary sheet
    json: str | None = None  # its key in the JSON report's results (None: not there)
    fmt: str = "0.0"  # number format of its cells
    optional: bool = False  # a column only when some line has a value (or the column is already there)
    text: bool = False  # words, not a number
    total: bool = False  # the JSON summary adds it up over the lines (signed; blanks left out)
    counted: bool = False  # the JSON summary says how many lines its total covers

    @property
    def column(self) -> bool:
        return self.header is not None

    def unit(self, us: bool, currency: str = "") -> str:
        unit = self.us if us else self.si
        return currency if unit == MONEY else unit


def _si_base(unit: str) -> str:
    """The SI unit a result is held in, for the unit it is written in."""
    return {"mm": "m", "in": "m", "°C": "K", "°F": "K", "W/m²": "W/m**2", "Btu/(h·ft²)": "W/m**2",
            "Btu/(h·ft)": "W/m", "Btu/h": "W", "MMBtu": "kWh", "kg/h": "kg/s", "lb/h": "kg/s",
            "h": "s"}.get(unit, unit)


R = Result
RESULTS: tuple[Result, ...] = (
    # the contract's columns, in its order
    R("thickness", "Thickness", "mm", "in", "thickness_m"),
    R("layers", "Layers", json="layers", fmt="@", text=True),
    R("governing", "Governing", json="governing", fmt="@", text=True),
    R("surface_temperature", "Surface temperature", "°C", "°F", "surface_temperature_K"),
    R("heat_flux", "Heat flux", "W/m²", "Btu/(h·ft²)", "heat_flux_W_m2"),
    R("heat_loss_per_length", "Heat loss per length", "W/m", "Btu/(h·ft)", "heat_loss_per_length_W_m"),
    R("heat_loss", "Heat loss", "W", "Btu/h", "heat_loss_W", "#,##0", total=True, counted=True),
    R("bare_heat_loss", "Bare heat loss", "W", "Btu/h", "bare_heat_loss_W", "#,##0", total=True, counted=True),
    R("annual_energy", "Annual energy", "kWh", "MMBtu", "annual_energy_kWh", "#,##0"),
    R("annual_cost", "Annual cost", MONEY, MONEY, "annual_cost", "#,##0", total=True, counted=True),
    R("annual_saving", "Annual saving", MONEY, MONEY, "annual_saving", "#,##0", total=True, counted=True),
    R("co2", "CO2", "kg/yr", "kg/yr", "co2_kg_per_year", "#,##0"),
    R("critical_radius", "Critical radius", "mm", "in", "critical_radius_m"),
    R("dew_point", "Dew point", "°C", "°F", "dew_point_K"),
    R("notes", "Notes", fmt="@", text=True),  # the report carries each note whole, with its cell
    # extensions of the contract, after its columns
    R("governing_condition", "Governing condition", json="governing_condition", fmt="@", text=True),
    R("installed_cost", "Installed cost", MONEY, MONEY, "installed_cost", "#,##0"),
    R("payback", "Payback", "yr", "yr", "payback_years"),
    R("interface_temperature", None, json="interface_temperature_K"),  # in the Layers text on the sheet
    R("outlet_temperature", "Outlet temperature", "°C", "°F", "outlet_temperature_K", optional=True),
    R("condensate", "Condensate", "kg/h", "lb/h", "condensate_kg_per_s", "0.00", optional=True, total=True),
    R("time_to_freeze", "Time to freeze", "h", "h", "time_to_freeze_s", optional=True),
    R("time_to_cool", "Time to cool", "h", "h", "time_to_cool_s", optional=True),
    # the 'Code' column's minimum corrected to the line's material, before rounding up to a sold size
    R("code_thickness", "Code thickness", "mm", "in", "code_thickness_m", optional=True),
    R("tracing_duty", "Tracing duty", "W/m", "Btu/(h·ft)", "tracing_duty_W_m", optional=True),
    R("fittings_heat_loss", "Fittings heat loss", "W", "Btu/h", "fittings_heat_loss_W", "#,##0", optional=True,
      total=True),
)
del R

BY_KEY = {r.key: r for r in RESULTS}
COLUMNS = tuple(r for r in RESULTS if r.column)  # what fill writes on the Lines sheet, in order
NUMBERS = tuple(r.key for r in RESULTS if not r.text)  # the selection's numeric values (NaN where none)
WORDS = tuple(r.key for r in RESULTS if r.text and r.key != "notes")  # its text values (None where none)


def si_unit(result: Result) -> str:
    """The SI unit ``result`` is held in (what its US and SI sheet units convert from)."""
    return _si_base(result.si)
