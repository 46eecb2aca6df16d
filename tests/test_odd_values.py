"""Odd values in every numeric field of every sheet: a message and exit 0, 1 or 2, never a crash.

Each workbook puts a list of odd values (0, negative, subnormal, 1e308, inf, nan,
huge text, a wrong unit) into one field, one value per line (or per Conditions,
Materials, Fluids or Settings row, each used by a line), and runs ``fill`` and
``check`` through the CLI. Hypothesis varies the values and the header's unit; the
explicit example gives every field the whole list.
"""

from __future__ import annotations

import math
import tempfile
from pathlib import Path

import openpyxl
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from lagsheet.cli import app
from lagsheet.workbook import fields as schema

ODD = [0, -4, 1e-320, 5e-324, 1e308, -1e308, math.inf, -math.inf, math.nan, "1e308", "1e-320", "x" * 5000,
       "5 furlongs", "0.85", "-4", "1e400", ""]
WRONG_UNITS = ["kg", "°C", "W", "%", "in", "furlong"]

LINE_BASE = {"Tag": None, "Shape": "pipe", "Size": "NPS 4", "Length [m]": 10, "Operating temperature [°C]": 80,
             "Insulation": "mineral wool", "Condition": "indoor", "Fluid": "water",
             "Max surface temperature [°C]": 55}
NUMERIC = (schema.NUMBER, schema.TEMPERATURE, schema.DIFFERENCE)
FIELDS = ([("Lines", f) for f in schema.LINE_FIELDS if f.kind in NUMERIC]
          + [("Conditions", f) for f in schema.CONDITION_FIELDS if f.kind in NUMERIC]
          + [("Materials", f) for f in schema.MATERIAL_FIELDS if f.kind in NUMERIC or f.key == "thicknesses"]
          + [("Fluids", f) for f in schema.FLUID_FIELDS if f.kind in NUMERIC]
          + [("Settings", key) for key, s in schema.SETTINGS.items() if s[4] != schema.TEXT])


def _id(p) -> str:
    sheet, f = p
    return f"{sheet}:{f if isinstance(f, str) else f.key}"


def _header(f: schema.Field, unit: str | None) -> str:
    return f.header if unit is None else f"{f.header} [{unit}]"


def workbook(sheet: str, f, values: list, unit: str | None, path: Path) -> Path:
    """A sound schedule whose ``sheet`` carries ``values`` in the field ``f``, one per line or row."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    heads = list(LINE_BASE)
    if sheet == "Lines":
        heads = [h for h in heads if h.split(" [")[0].lower() != f.header.lower()] + [_header(f, unit)]
    if sheet == "Fluids":
        heads.remove("Fluid")
        heads.append("Fluid")
    ws.append(heads)
    for i, v in enumerate(values):
        row = dict(LINE_BASE, Tag=f"P-{i}")
        if sheet == "Lines":
            row[heads[-1]] = v
        elif sheet == "Conditions":
            row["Condition"] = f"c{i}"
        elif sheet == "Materials":
            row["Insulation"] = f"m{i}"
        elif sheet == "Fluids":
            row.update({"Fluid": f"oil{i}", "Flow rate [kg/s]": 1})
        ws.append([row.get(h) for h in heads])
    if sheet == "Fluids":
        ws.cell(1, len(heads) + 1, "Flow rate [kg/s]")
        for r in range(len(values)):
            ws.cell(r + 2, len(heads) + 1, 1)
    if sheet == "Conditions":
        s = wb.create_sheet("Conditions")
        s.append(["Name", "Ambient temperature [°C]"] + ([] if f.key == "ambient_temperature" else [_header(f, unit)]))
        for i, v in enumerate(values):
            s.append([f"c{i}", v] if f.key == "ambient_temperature" else [f"c{i}", 20, v])
    if sheet == "Materials":
        s = wb.create_sheet("Materials")
        own = f.key in ("mean_temperature", "conductivity")
        s.append(["Name", "Mean temperature [°C]", "Conductivity [W/(m·K)]"] + ([] if own else [_header(f, unit)]))
        for i, v in enumerate(values):
            cells = [f"m{i}", v if f.key == "mean_temperature" else 50, v if f.key == "conductivity" else 0.04]
            s.append(cells + ([] if own else [v]))
    if sheet == "Fluids":
        s = wb.create_sheet("Fluids")
        s.append(["Name", "Specific heat [kJ/(kg·K)]", "Density [kg/m³]"])
        for i, v in enumerate(values):
            s.append([f"oil{i}", v if f.key == "specific_heat" else 2.0, v if f.key == "density" else 800])
    if sheet == "Settings":
        s = wb.create_sheet("Settings")
        s.append(["Setting", "Value", "Unit"])
        name, dim = schema.SETTINGS[f][0], schema.SETTINGS[f][1]
        for v in values:
            s.append([name, v, dim if unit is None else unit])
    wb.save(path)
    return path


odd_values = st.one_of(st.sampled_from(ODD), st.floats(), st.integers(-10**30, 10**30),
                       st.text(st.characters(codec="utf-8", exclude_categories=("Cs", "Cc")), max_size=30)
                       .filter(lambda t: not t.startswith("=")))


@pytest.mark.filterwarnings("ignore::RuntimeWarning")  # numpy's overflow notices are no exception for a user
@pytest.mark.parametrize("where", FIELDS, ids=_id)
@settings(max_examples=3, derandomize=True, database=None, deadline=None)
@given(values=st.lists(odd_values, min_size=1, max_size=5), unit=st.one_of(st.none(), st.sampled_from(WRONG_UNITS)))
@example(values=ODD, unit=None)
def test_odd_values_in_any_numeric_field_end_with_a_message_never_a_crash(where, values, unit):
    """fill and check end with exit 0, 1 or 2 and a message; when check finds no error, fill does not stop (exit 2)."""
    sheet, f = where
    if isinstance(f, schema.Field) and unit is None:
        unit = f.unit or None
    runner = CliRunner()
    with tempfile.TemporaryDirectory() as d:
        src = workbook(sheet, f, values, unit, Path(d) / "in.xlsx")
        codes = []
        for args in (["check", src], ["fill", src, "-o", Path(d) / "out.xlsx"]):
            r = runner.invoke(app, [str(a) for a in args], catch_exceptions=False)
            assert r.exit_code in (0, 1, 2), r.output
            assert r.output.strip(), "no message"
            assert "Traceback" not in r.output and "internal error" not in r.output, r.output
            codes.append(r.exit_code)
        assert not (codes[0] == 0 and codes[1] == 2), "check found nothing, yet fill stopped"
