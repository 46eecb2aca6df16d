"""What is wrong with the input: every column accounted for, and `check` agreeing with `fill`."""

from __future__ import annotations

import json
import tempfile
from pathlib import Path

import pytest
from hypothesis import event, given, settings
from hypothesis import strategies as st

from lagsheet.commands.check import COMPUTED, check
from lagsheet.commands.fill import fill
from lagsheet.errors import WorkbookError
from test_fuzz import FUZZ, workbooks, write

from conftest import pipe, write_book

LINE_HEADERS = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
                "Max surface temperature [°C]"]


def _codes(notes) -> set[tuple[str, str, str]]:
    return {(n["code"], n["sheet"], n["cell"]) for n in notes}


def _check_report(tmp_path, src, cli) -> dict:
    r = cli("check", src, "--report", tmp_path / "check.json")
    assert r.exit_code in (0, 1), r.output
    return json.loads((tmp_path / "check.json").read_text(encoding="utf-8"))


def _fill_notes(tmp_path, src) -> list[dict]:
    rep = fill(src, tmp_path / "out.xlsx", report_path=tmp_path / "fill.json").report
    return rep["notes"] + [n for line in rep["lines"] for n in line["notes"]]


def test_per_line_condition_columns_are_inputs_not_unknown_headers(tmp_path, cli):
    """'Ambient [°C]' and 'Wind [m/s]' on Lines are the per-line condition columns (aliases of
    'Ambient temperature' and 'Wind speed'): no 'not used' warning in check or fill, and each
    column reported as read in its unit (tests/test_line_conditions.py checks what they do)."""
    head = [*LINE_HEADERS, "Ambient [°C]", "Wind [m/s]"]
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Ambient [°C]": -20, "Wind [m/s]": 8})], head)
    rep = _check_report(tmp_path, src, cli)
    assert not [n for n in rep["notes"] if n["cell"] in ("H1", "I1")]
    cols = {c["header"]: c for c in rep["columns"] if c["sheet"] == "Lines"}
    assert cols["Ambient [°C]"]["field"] == "ambient_temperature" and cols["Ambient [°C]"]["status"] == "ok"
    assert cols["Wind [m/s]"]["field"] == "wind_speed" and cols["Wind [m/s]"]["status"] == "ok"
    assert not [n for n in _fill_notes(tmp_path, src) if n["cell"] in ("H1", "I1")]


@pytest.mark.parametrize(("header", "near"), [
    ("Insulaton", "'Insulation'"),
    ("Max surface temp. [°C]", "'Max surface temperature'"),
    ("Painter's remark", "kept as it is"),
])
def test_every_header_lagsheet_does_not_use_is_a_warning_with_the_nearest_field(tmp_path, cli, header, near):
    """A header that is no input and none of our outputs is listed, with the nearest field when one is close."""
    head = [*LINE_HEADERS, header, "Thickness [mm]", "Notes"]
    src = write_book(tmp_path / "in.xlsx", [pipe(**{header: "x"})], head)
    rep = _check_report(tmp_path, src, cli)
    unused = [n for n in rep["notes"] if n["code"] == "unknown-header"]
    assert [n["cell"] for n in unused] == ["H1"]  # not the outputs 'Thickness' and 'Notes'
    assert near in unused[0]["message"] and "not used" in unused[0]["message"]
    assert ("unknown-header", "Lines", "H1") in _codes(_fill_notes(tmp_path, src))


def test_unused_columns_of_the_other_sheets_are_listed(tmp_path, cli):
    """A Conditions column 'Altitude [m]' and a Materials column 'Supplier' are reported on their sheets."""
    src = write_book(tmp_path / "in.xlsx", [pipe()], LINE_HEADERS, sheets={
        "Conditions": [["Name", "Ambient temperature [°C]", "Altitude [m]"], ["indoor", 20, 300]],
        "Materials": [["Name", "Cost per volume [EUR/m³]", "Supplier"], ["mineral wool", 300, "ACME"]]})
    rep = _check_report(tmp_path, src, cli)
    assert {("unknown-header", "Conditions", "C1"), ("unknown-header", "Materials", "C1")} <= _codes(rep["notes"])


@pytest.mark.parametrize(("row", "code", "cell"), [
    ({"Shape": "wall", "Size": None, "Surface area [m²]": 12, "Length [m]": 3, "Max heat loss [W/m]": 50},
     "heat-loss-unit", "H2"),
    ({"Economic": "yes", "Max surface temperature [°C]": None}, "economic-costs", "I2"),
])
def test_check_reports_the_input_errors_fill_reports(tmp_path, cli, row, code, cell):
    """A per-length limit on a wall and 'Economic' without costs are errors in check as in fill."""
    head = [*LINE_HEADERS, "Max heat loss [W/m]", "Economic", "Surface area [m²]"]
    src = write_book(tmp_path / "in.xlsx", [pipe(**row)], head)
    rep = _check_report(tmp_path, src, cli)
    assert (code, "Lines", cell) in _codes(n for n in rep["notes"] if n["level"] == "error")
    assert (code, "Lines", cell) in _codes(n for n in _fill_notes(tmp_path, src) if n["level"] == "error")


def input_errors(notes) -> set[tuple[str, str, str]]:
    return {(n["sheet"], n["cell"], n["code"]) for n in notes
            if n["level"] == "error" and n["code"] not in COMPUTED}


@st.composite
def near_valid(draw) -> dict:
    """A schedule of mostly sound lines of every shape, with limits, costs and conditions that
    only some shapes or settings allow: the errors that need a line's shape or its materials."""
    head = ["Tag", "Shape", "Size", "Length [m]", "Surface area [m²]", "Operating temperature [°C]",
            "Insulation", "Condition", draw(st.sampled_from(["Max heat loss [W/m]", "Max heat loss [W/m²]"])),
            "Economic", "Max surface temperature [°C]"]
    rows = [head]
    for i in range(draw(st.integers(1, 4))):
        rows.append([draw(st.sampled_from([f"L-{i}", f"L-{i}", "L-0", None])),
                     draw(st.sampled_from(["pipe", "riser", "vessel", "wall", "top", "underside", "sphere"])),
                     draw(st.sampled_from(["NPS 4", "DN 50", None])), draw(st.sampled_from([10, 3, None])),
                     draw(st.sampled_from([12, None])), draw(st.sampled_from([150, 250, 5])),
                     draw(st.sampled_from(["mineral wool", "calcium silicate", "elastomeric foam"])),
                     draw(st.sampled_from(["indoor", "outdoor", "somewhere"])),
                     draw(st.sampled_from([None, 80, "60 W/m²", "60 W/m"])),
                     draw(st.sampled_from([None, "yes", "no"])), draw(st.sampled_from([None, 55]))])
    sheets = {"Lines": rows}
    if draw(st.booleans()):
        sheets["Materials"] = [["Name", "Cost per volume [EUR/m³]"],
                               [draw(st.sampled_from(["mineral wool", "calcium silicate"])), 300]]
    if draw(st.booleans()):
        sheets["Settings"] = [["Setting", "Value", "Unit"], ["Jacket cost per area", 20, "EUR/m²"],
                              ["Labour per layer", draw(st.sampled_from([15, "x"])), "EUR/m²"]]
    return sheets


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
@settings(FUZZ)
@given(st.one_of(workbooks(), near_valid()))
def test_check_and_fill_find_the_same_input_errors_in_random_workbooks(sheets):
    """For any workbook, the input errors (sheet, cell, code) of check equal those of fill's report."""
    with tempfile.TemporaryDirectory() as d:
        src = write(sheets, Path(d) / "in.xlsx")
        found = input_errors(n.as_dict() for n in check(src).notes)
        try:
            rep = fill(src, Path(d) / "out.xlsx").report
        except WorkbookError:  # fill stops (exit 2) on a workbook without a usable Lines table
            event("fill exit 2")
            assert {c for _, _, c in found} & {"no-lines-sheet", "no-header", "missing-column"}
            return
        event("compared")
        assert input_errors(rep["notes"] + [n for line in rep["lines"] for n in line["notes"]]) == found


@pytest.mark.parametrize("column, value", [("Operating hours [h]", 9000), ("Wind speed [m/s]", -3),
                                           ("Relative humidity [%]", 101)])
def test_one_bad_condition_cell_is_one_error_where_it_is(tmp_path, column, value):
    """A condition row with one cell out of range: that cell's error, and lines naming the condition point
    to it; no false 'needs an Ambient temperature', no 'not defined', no built-in set of that name used."""
    head = ["Name", "Ambient temperature [°C]", "Wind speed [m/s]", "Relative humidity [%]", "Operating hours [h]"]
    row = {"Name": "outdoor", "Ambient temperature [°C]": 5, "Wind speed [m/s]": 2, "Relative humidity [%]": 70,
           "Operating hours [h]": 8000, column: value}
    src = write_book(tmp_path / "in.xlsx", [pipe(Condition="outdoor")],
                     sheets={"Conditions": [head, [row[h] for h in head]]})
    notes = check(src).notes
    messages = " | ".join(n.message for n in notes)
    assert "needs an 'Ambient temperature'" not in messages and "is not defined" not in messages
    line = [n for n in notes if n.code == "bad-condition"]
    cell = {"Operating hours [h]": "E2", "Wind speed [m/s]": "C2", "Relative humidity [%]": "D2"}[column]
    assert line and f"Conditions!{cell}" in line[0].message


@pytest.mark.parametrize("rows, warned", [
    # 'Currency' USD, prices in EUR: each EUR price is warned at its unit cell
    ([["Currency", "USD", None], ["Energy price", 0.05, "EUR/kWh"], ["Jacket cost per area", 20, "USD/m²"]],
     {"C3": "'Energy price' is priced in EUR but 'Currency' says USD"}),
    # a symbol and its code are one currency
    ([["Currency", "USD", None], ["Energy price", 0.05, "$/kWh"], ["Jacket cost per area", 20, "usd/m²"]], {}),
    # no 'Currency': the first price's currency is the workbook's (it names the money columns)
    ([["Energy price", 0.05, "€/kWh"], ["Jacket cost per area", 20, "GBP/m²"], ["Labour per layer", 9, "EUR/m²"]],
     {"C3": "'Jacket cost per area' is priced in GBP but 'Energy price' says €; lagsheet converts no currency: "
            "write every price in one currency (or set 'Currency')"}),
])
def test_prices_in_two_currencies_are_warned_at_the_unit(tmp_path, rows, warned):
    """lagsheet converts no currency: a price whose unit names another currency than the workbook's would be
    added up with the others under one name. check and fill say so at the unit cell."""
    src = write_book(tmp_path / "in.xlsx", [pipe()], sheets={"Settings": [["Setting", "Value", "Unit"], *rows]})
    got = {n.cell: n.message for n in check(src).notes if n.code == "currency-clash"}
    assert set(got) == set(warned), got
    for cell, words in warned.items():
        assert words in got[cell] and all(n.sheet == "Settings" for n in check(src).notes
                                          if n.code == "currency-clash")
    rep = fill(src, tmp_path / "out.xlsx").report
    assert {n["cell"] for n in rep["notes"] if n["code"] == "currency-clash"} == set(warned)
