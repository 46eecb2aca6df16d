"""audit: a sheet filled under a wrong assumption is found, and the planted cause is named."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import openpyxl
import pytest

from lagsheet.audit import audit
from lagsheet.inputs import read_inputs
from lagsheet.io import open_book
from lagsheet.physics.balance import solve
from lagsheet.physics.layers import MaterialTable
from lagsheet.physics.sizing import heat_rate
from lagsheet.spec import specify

from conftest import write_book

HEAD = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation", "Finish",
        "Max surface temperature [°C]", "Condition"]
ROWS = [
    {"Tag": "P-1", "Shape": "pipe", "Size": "NPS 4", "Length [m]": 20, "Operating temperature [°C]": 220,
     "Insulation": "mineral wool", "Finish": "painted", "Max surface temperature [°C]": 50},
    {"Tag": "P-2", "Shape": "pipe", "Size": "NPS 1", "Length [m]": 15, "Operating temperature [°C]": 160,
     "Insulation": "mineral wool", "Finish": "painted", "Max surface temperature [°C]": 50},
    {"Tag": "P-3", "Shape": "pipe", "Size": "NPS 12", "Length [m]": 40, "Operating temperature [°C]": 300,
     "Insulation": "calcium silicate", "Finish": "painted", "Max surface temperature [°C]": 55},
]


def planted(res, cause):
    """The engine's results at lagsheet's own thicknesses, with one usual slip switched in."""
    s, table = res.system, res.table
    if cause == "no radiation":
        s = replace(s, emissivity=np.zeros_like(s.emissivity))
    elif cause == "fixed h = 10":
        s = replace(s, h_fixed=np.full(len(s.emissivity), 10.0))
    elif cause == "inches read as mm":
        s = replace(s, r_inner=s.r_inner / 0.0254 * 0.001)
    elif cause == "nominal size as OD":
        s = replace(s, r_inner=np.array([4.0, 1.0, 12.0]) * 0.0254 / 2)
    elif cause == "k at ambient":
        ks = [float(table.conductivity(np.array([m]), np.array([ta]))[0]) for m, ta in zip(s.material[:, 0], s.t_air, strict=True)]
        table = MaterialTable.build({str(k): (np.array([1.0, 4000.0]), np.array([kk, kk])) for k, kk in enumerate(ks)})
        s = replace(s, material=np.arange(len(ks))[:, None])
    sol = solve(s, table)
    rate = heat_rate(s.geometry, sol.q, sol.r_outer)
    return sol.t_surface, rate * np.array([20.0, 15.0, 40.0])


def filled_by_colleague(tmp_path, cause):
    # with a painted finish h_conv + h_rad is close to 10 W/(m²·K) anyway: plant that slip on aluminium
    finish = "aluminium" if cause == "fixed h = 10" else "painted"
    src = write_book(tmp_path / "in.xlsx", [{**r, "Finish": finish} for r in ROWS], HEAD)
    book = open_book(src)
    res = specify(read_inputs(book))
    ts, loss = planted(res, cause)
    wb = openpyxl.load_workbook(src)
    ws = wb["Lines"]
    for k, h in enumerate(["Insulation thk (mm)", "Surface temperature [°C]", "Heat loss [W]"]):
        ws.cell(1, 10 + k, h)
    for i in range(3):
        ws.cell(2 + i, 10, float(res.values["thickness"][i] * 1000))
        ws.cell(2 + i, 11, float(ts[i] - 273.15))
        ws.cell(2 + i, 12, float(loss[i]))
    wb.save(tmp_path / "theirs.xlsx")
    return tmp_path / "theirs.xlsx"


@pytest.mark.parametrize("cause", ["no radiation", "fixed h = 10", "nominal size as OD", "k at ambient",
                                   "inches read as mm"])
def test_each_planted_cause_is_named(tmp_path, cause):
    """A sheet computed by the engine with one slip switched in is flagged, and that slip is its cause."""
    path = filled_by_colleague(tmp_path, cause)
    book = open_book(path)
    inputs = read_inputs(book)
    res = specify(inputs)
    found = audit(inputs, book.sheet("Lines"), res, {"Insulation thk": "Thickness"})
    assert found, "the planted differences were not found"
    assert {f.cause for f in found} == {cause}
    assert all(f.quantity in ("Surface temperature", "Heat loss") for f in found)


def test_a_sheet_filled_by_lagsheet_itself_passes(tmp_path, cli):
    """Auditing lagsheet's own output finds nothing."""
    src = write_book(tmp_path / "in.xlsx", ROWS, HEAD)
    cli("fill", src, "-o", tmp_path / "out.xlsx")
    book = open_book(tmp_path / "out.xlsx")
    inputs = read_inputs(book)
    assert audit(inputs, book.sheet("Lines"), specify(inputs)) == []
