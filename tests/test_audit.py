"""audit: a sheet filled under a wrong assumption is found, and the planted cause is named."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from lagsheet.commands.audit import audit
from lagsheet.design.select import specify
from lagsheet.io import open_book
from lagsheet.physics.balance import solve
from lagsheet.physics.candidates import heat_rate
from lagsheet.physics.layers import MaterialTable
from lagsheet.workbook.inputs import read_inputs

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
    if cause is None:
        pass
    elif cause == "no radiation":
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
    found = audit(inputs, book.sheet("Lines"), res, {"Insulation thk": "Thickness"}).findings
    assert found, "the planted differences were not found"
    assert {f.cause for f in found} == {cause}
    assert all(f.quantity in ("Surface temperature", "Heat loss") for f in found)


def test_a_sheet_filled_by_lagsheet_itself_passes(tmp_path, cli):
    """Auditing lagsheet's own output finds nothing."""
    src = write_book(tmp_path / "in.xlsx", ROWS, HEAD)
    cli("fill", src, "-o", tmp_path / "out.xlsx")
    book = open_book(tmp_path / "out.xlsx")
    inputs = read_inputs(book)
    done = audit(inputs, book.sheet("Lines"), specify(inputs))
    assert done.findings == [] and done.lines_compared == 3 and len(done.columns) == 4


# --- an audit never gives a false all-clear; values in their own units; the unit slip named ---

def _filled(tmp_path, cli):
    src = write_book(tmp_path / "in.xlsx", ROWS, HEAD)
    cli("fill", src, "-o", tmp_path / "out.xlsx")
    return tmp_path / "out.xlsx"


def _their_sheet(tmp_path, header: str, values) -> Path:
    """The three lines with one result column of the colleague's, named ``header``."""
    src = write_book(tmp_path / "in.xlsx", ROWS, HEAD)
    wb = openpyxl.load_workbook(src)
    ws = wb["Lines"]
    ws.cell(1, 10, header)
    for i, v in enumerate(values):
        ws.cell(2 + i, 10, v)
    wb.save(tmp_path / "theirs.xlsx")
    return tmp_path / "theirs.xlsx"


def test_an_audit_of_a_sheet_with_none_of_the_columns_exits_2_naming_them_and_map(tmp_path, cli):
    """A colleague's sheet with its own column names is not 'all agrees': exit 2, the columns looked for, --map."""
    r = cli("audit", _their_sheet(tmp_path, "Insul. thk", [50, 25, 80]))
    assert r.exit_code == 2
    assert "none of the columns audit compares" in r.output and "'Thickness'" in r.output
    assert "--map" in r.output and "agrees" not in r.output


def test_an_audit_of_an_unfilled_sheet_exits_2(tmp_path, cli):
    """Result columns that hold nothing compare nothing: exit 2, not an all-clear."""
    r = cli("audit", _their_sheet(tmp_path, "Thickness [mm]", [None, None, None]))
    assert r.exit_code == 2 and "hold no value" in r.output and "agrees" not in r.output


def test_an_audit_says_how_many_lines_and_columns_it_compared(tmp_path, cli):
    """The closing line counts the lines and names the columns compared."""
    r = cli("audit", _filled(tmp_path, cli))
    assert r.exit_code == 0
    assert "compared 3 lines on 4 columns" in r.output and "every audited result agrees" in r.output
    assert "'Thickness [mm]' as Thickness" in r.output


def test_their_values_are_shown_in_their_own_unit(tmp_path, cli):
    """A thickness written in inches is shown in inches ('theirs 4 in'), not converted into a false 'mm'."""
    r = cli("audit", _their_sheet(tmp_path, "Thickness [in]", [4, 4, 4]))
    assert r.exit_code == 1
    assert "theirs 4 in, lagsheet" in r.output


def test_an_inch_size_and_its_metric_twin_agree(tmp_path, cli):
    """2 in against 50 mm is the same sold size in the other unit system, not a difference."""
    out = _filled(tmp_path, cli)
    book = open_book(out)
    inputs = read_inputs(book)
    ours_mm = specify(inputs).values["thickness"] * 1000
    r = cli("audit", _their_sheet(tmp_path, "Thickness [in]", [float(t) / 25.4 * 1.015 for t in ours_mm]))
    assert r.exit_code == 0, r.output


def test_a_thickness_typed_in_the_other_unit_is_named_as_the_slip(tmp_path, cli):
    """Inch numbers in a millimetre column are found, and the cause named is the other unit system."""
    out = _filled(tmp_path, cli)
    book = open_book(out)
    ours_mm = specify(read_inputs(book)).values["thickness"] * 1000
    theirs = [round(float(t) / 25.4, 1) for t in ours_mm]  # 50 mm typed as 2.0 (inches) in a [mm] column
    r = cli("audit", _their_sheet(tmp_path, "Thickness [mm]", theirs))
    assert r.exit_code == 1
    assert r.output.count("likely cause: the thickness typed in the other unit system") == 3, r.output
    assert f"theirs {theirs[0]:g} mm" in r.output


def test_surface_and_loss_from_a_thickness_in_the_other_unit_name_that_slip(tmp_path):
    """Their results at their own inch thickness, the thickness typed as inches under [mm]: that slip is named."""
    src = write_book(tmp_path / "in.xlsx", [{**r, "Finish": "painted"} for r in ROWS], HEAD)
    book = open_book(src)
    res = specify(read_inputs(book))
    inches = np.array([3.0, 2.5, 5.0])  # their own choice, not lagsheet's
    thick = np.zeros_like(res.system.thickness)
    thick[:, 0] = inches * 0.0254
    s = replace(res.system, thickness=thick)
    sol = solve(s, res.table)
    loss = heat_rate(s.geometry, sol.q, sol.r_outer) * np.array([20.0, 15.0, 40.0])
    wb = openpyxl.load_workbook(src)
    ws = wb["Lines"]
    for k, h in enumerate(["Thickness [mm]", "Surface temperature [°C]", "Heat loss [W]"]):
        ws.cell(1, 10 + k, h)
    for i in range(3):
        ws.cell(2 + i, 10, float(inches[i]))
        ws.cell(2 + i, 11, float(sol.t_surface[i] - 273.15))
        ws.cell(2 + i, 12, float(loss[i]))
    wb.save(tmp_path / "theirs.xlsx")
    book = open_book(tmp_path / "theirs.xlsx")
    inputs = read_inputs(book)
    done = audit(inputs, book.sheet("Lines"), specify(inputs))
    assert {f.quantity for f in done.findings} >= {"Surface temperature", "Heat loss"}
    assert {f.cause for f in done.findings if f.quantity != "Thickness"} == {"thickness in the other unit"}


@pytest.mark.parametrize("args, words", [
    (["--map", "Thickness [mm]=Heat loss"], "cannot be a Heat loss"),
    (["--map", "Nowhere=Thickness"], "there is no column 'Nowhere'"),
    (["--surface-tolerance", "nan"], "--surface-tolerance must be"),
    (["--surface-tolerance", "-1"], "--surface-tolerance must be"),
    (["--loss-tolerance", "nan"], "--loss-tolerance must be"),
])
def test_options_that_cannot_apply_are_one_plain_sentence(tmp_path, cli, args, words):
    """A --map of the wrong dimension or to a missing column, or a NaN tolerance: exit 2, no traceback."""
    r = cli("audit", _filled(tmp_path, cli), *args)
    assert r.exit_code == 2 and words in r.output
    assert "Traceback" not in r.output and "Error" not in r.output


def test_a_column_mapped_onto_text_is_not_counted_as_compared(tmp_path, cli):
    """--map 'Tag=Thickness' compares no thickness: the summary says so instead of counting the column."""
    r = cli("audit", _their_sheet(tmp_path, "Heat loss [W]", [1000, 500, 2000]), "--map", "Tag=Thickness")
    assert "nothing compared in 'Tag' (read as Thickness" in r.output
    assert "on 1 column" in r.output and "'Tag' as Thickness" not in r.output


def test_a_mapped_column_that_clashes_with_another_is_one_sentence(tmp_path, cli):
    """Mapping a column onto a result the sheet already has a column for is exit 2, naming both."""
    r = cli("audit", _filled(tmp_path, cli), "--map", "Heat loss [W]=Heat loss per length")
    assert r.exit_code == 2 and "two columns would be read as Heat loss per length" in r.output
