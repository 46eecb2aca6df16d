"""Likely mislabelled units: each rule fires on a sheet built with that mistake, and never on clean sheets."""

from __future__ import annotations

import pytest

from lagsheet.io import open_book
from lagsheet.workbook.inputs import read_inputs

from conftest import write_book


def notes_of(tmp_path, rows, headers, sheets=None):
    src = write_book(tmp_path / "in.xlsx", rows, headers, sheets=sheets)
    inputs = read_inputs(open_book(src))
    cell = [n for t_notes in inputs.lines.cell_notes.values() for n in t_notes]
    return inputs.notes, cell


def codes(notes):
    return [n.code for n in notes]


def lines(head, *values):
    return [dict(zip(head, v, strict=True)) for v in values]


@pytest.mark.parametrize(("header", "values", "hint"), [
    ("Outside diameter [in]", (114.3, 168.3, 60.3), "mm: the values are pipe outside diameters in millimetres"),
    ("Outside diameter [mm]", (4, 6, 2.375), "in: the values are nominal sizes or outside diameters in inches"),
    ("Operating temperature [°C]", (1400, 1500, 1300), "°F:"),
])
def test_line_columns_whose_values_suggest_another_unit_are_warned(tmp_path, header, values, hint):
    """A diameter or temperature column labelled in the wrong unit gets a warning naming the likely unit."""
    head = ["Tag", "Shape", header]
    notes, _ = notes_of(tmp_path, lines(head, *[(f"P{i}", "pipe", v) for i, v in enumerate(values)]), head)
    warned = [n for n in notes if n.code == "likely-mislabelled"]
    assert len(warned) == 1 and hint in warned[0].message and warned[0].cell.endswith("1")


@pytest.mark.parametrize(("header", "values", "hint"), [
    ("Ambient temperature [°C]", (68, 77, 86), "°F:"),
    ("Relative humidity [%]", (0.6, 0.75, 0.5), "a fraction"),
])
def test_condition_columns_whose_values_suggest_another_unit_are_warned(tmp_path, header, values, hint):
    """An ambient in °F labelled °C, or humidity as fractions in a % column, is warned on the Conditions sheet."""
    cond = [["Name", header if "Ambient" in header else "Ambient temperature [°C]",
             *([] if "Ambient" in header else [header])]]
    for k, v in enumerate(values):
        cond.append([f"c{k}", v] if "Ambient" in header else [f"c{k}", 20, v])
    head = ["Tag", "Shape"]
    notes, _ = notes_of(tmp_path, lines(head, ("P1", "pipe")), head, sheets={"Conditions": cond})
    warned = [n for n in notes if n.code == "likely-mislabelled"]
    assert len(warned) == 1 and hint in warned[0].message and warned[0].sheet == "Conditions"


@pytest.mark.parametrize(("header", "values", "hint"), [
    ("Conductivity [W/(m·K)]", (0.25, 0.30, 0.36), "Btu·in/(h·ft²·°F)"),
    ("Conductivity [Btu·in/(h·ft²·°F)]", (0.035, 0.040, 0.048), "W/(m·K)"),
])
def test_conductivity_in_the_wrong_system_is_warned(tmp_path, header, values, hint):
    """Conductivities typical of the other unit system get a warning naming it."""
    mats = [["Name", "Mean temperature [°C]", header]] + [["board", t, k] for t, k in zip((20, 100, 200), values, strict=True)]
    head = ["Tag", "Shape"]
    notes, _ = notes_of(tmp_path, lines(head, ("P1", "pipe")), head, sheets={"Materials": mats})
    warned = [n for n in notes if n.code == "likely-mislabelled"]
    assert len(warned) == 1 and hint in warned[0].message


@pytest.mark.parametrize(("name", "warned"), [("foam board", True), ("aerogel blanket", False)])
def test_a_conductivity_below_still_air_is_warned_unless_aerogel_or_vacuum(tmp_path, name, warned):
    """0.015 W/(m·K) at 25 °C is below still air (0.026, CoolProp): warned for a foam, not for an aerogel."""
    mats = [["Name", "Mean temperature [°C]", "Conductivity [W/(m·K)]"], [name, 25, 0.015], [name, 100, 0.018]]
    head = ["Tag", "Shape"]
    notes, _ = notes_of(tmp_path, lines(head, ("P1", "pipe")), head, sheets={"Materials": mats})
    assert ("below-still-air" in codes(notes)) is warned


def test_values_outside_the_plausible_range_are_warned_on_their_cells(tmp_path):
    """A 120 m/s wind is a cell warning on the Conditions sheet; a 2,000 m run length one on its Lines cell."""
    head = ["Tag", "Shape", "Length [m]"]
    cond = [["Name", "Ambient temperature [°C]", "Wind speed [m/s]"], ["gale", 10, 39.5], ["typo", 10, 120]]
    notes, cell = notes_of(tmp_path, lines(head, ("P1", "pipe", 12000)), head, sheets={"Conditions": cond})
    assert [n.cell for n in cell if n.code == "implausible"] == ["C2"]
    assert any(n.code == "out-of-range" or n.code == "implausible" for n in notes if n.sheet == "Conditions")


def test_the_demo_raises_no_mislabelling_alarm(tmp_path, cli):
    """The bundled demo is clean: no likely-mislabelled, implausible or below-still-air note."""
    import json

    cli("demo", tmp_path)
    rep = json.loads((tmp_path / "demo-plant-report.json").read_text())
    all_codes = [n["code"] for n in rep["notes"]] + [n["code"] for line in rep["lines"] for n in line["notes"]]
    assert not {"likely-mislabelled", "implausible", "below-still-air"} & set(all_codes)
