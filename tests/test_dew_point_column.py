"""The `Dew point` column through `fill`: the frost point from RH over water below 0 °C, and the
dew point written only on lines where condensation is asked about or possible."""

from __future__ import annotations

import json

import numpy as np
import openpyxl
import pytest
from CoolProp.HumidAirProp import HAPropsSI

from conftest import pipe, write_book

HEADERS = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Condition", "Insulation",
           "Max surface temperature [°C]", "Prevent condensation", "Fluid", "Operating pressure [bar]"]
CONDITIONS = [["Name", "Ambient temperature [°C]", "Surroundings temperature [°C]", "Wind speed [m/s]",
               "Relative humidity [%]", "Operating hours [h]"],
              ["frost", -20, -20, 0, 70, 4000],
              ["hall", 20, 20, 0, 50, 8000]]
# Alduchov & Eskridge 1996 (J. Appl. Meteor. 35:601) Magnus forms, REFERENCES.md: e in hPa, t in °C
A_W, B_W, C_W = 17.625, 243.04, 6.1094  # over water
A_I, B_I, C_I = 22.587, 273.86, 6.1121  # over ice


def magnus_frost_point(t_c: float, rh_over_water: float) -> float:
    """Frost point [°C]: e = RH·e_w(T) over water, then the temperature where e saturates over ice."""
    e = rh_over_water * C_W * np.exp(A_W * t_c / (B_W + t_c))
    g = np.log(e / C_I)
    return B_I * g / (A_I - g)


def fill(tmp_path, cli, rows):
    src = write_book(tmp_path / "in.xlsx", rows, HEADERS, sheets={"Conditions": CONDITIONS})
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code in (0, 1), r.output
    report = json.loads((tmp_path / "r.json").read_text())
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    head = [c.value for c in ws[1]]
    dew = {ws.cell(row, 1).value: ws.cell(row, head.index("Dew point [°C]") + 1).value
           for row in range(2, ws.max_row + 1)}
    return {x["tag"]: x for x in report["lines"]}, dew


def test_frost_point_takes_the_relative_humidity_over_water(tmp_path, cli):
    """At −20 °C and 70 % RH (over water, as design data give it) a cold line's `Dew point` is the
    frost point of the Magnus forms, −21.6 °C, 2 K above CoolProp's RH-over-ice convention."""
    rows = [pipe("C-1", **{"Operating temperature [°C]": -40, "Condition": "frost", "Insulation": "cellular glass",
                           "Max surface temperature [°C]": None})]
    lines, dew = fill(tmp_path, cli, rows)
    want = magnus_frost_point(-20.0, 0.70)
    assert want == pytest.approx(-21.64, abs=0.01)
    # measured: the engine (Murphy & Koop ratio, CoolProp ice table) differs from the Magnus forms by 0.03 K
    assert dew["C-1"] == pytest.approx(want, abs=0.1)
    assert lines["C-1"]["results"]["dew_point_K"] - 273.15 == pytest.approx(want, abs=0.1)
    over_ice = HAPropsSI("D", "T", 253.15, "P", 101325.0, "R", 0.70) - 273.15  # CoolProp: RH over ice
    assert dew["C-1"] - over_ice == pytest.approx(2.0, abs=0.1)


@pytest.mark.parametrize(
    ("row", "written"),
    [
        # a steam main far above the air's dew point: nothing to write
        ({"Operating temperature [°C]": 250, "Fluid": "steam", "Operating pressure [bar]": 40,
          "Condition": "hall"}, False),
        # a hot water line: no condensation possible
        ({"Operating temperature [°C]": 80, "Condition": "hall"}, False),
        # a chilled line below the dew point (9.3 °C at 20 °C, 50 %, CoolProp): written
        ({"Operating temperature [°C]": 6, "Condition": "hall", "Insulation": "elastomeric foam",
          "Max surface temperature [°C]": None}, True),
        # a cool line above the dew point but with condensation control asked: written
        ({"Operating temperature [°C]": 15, "Condition": "hall", "Insulation": "elastomeric foam",
          "Max surface temperature [°C]": None, "Prevent condensation": "yes"}, True),
    ],
)
def test_dew_point_is_written_only_where_condensation_matters(tmp_path, cli, row, written):
    """`Dew point` is blank in the sheet and null in the report unless condensation is asked about or
    the operating or surface temperature is below the dew point plus margin."""
    lines, dew = fill(tmp_path, cli, [pipe("L-1", **row)])
    reported = lines["L-1"]["results"]["dew_point_K"]
    assert lines["L-1"]["status"] != "error", lines["L-1"]["notes"]
    if written:
        want = HAPropsSI("D", "T", 293.15, "P", 101325.0, "R", 0.5) - 273.15  # CoolProp, above 0 °C
        assert dew["L-1"] == pytest.approx(want, abs=0.05) and reported - 273.15 == pytest.approx(want, abs=0.05)
    else:
        assert dew["L-1"] is None and reported is None
