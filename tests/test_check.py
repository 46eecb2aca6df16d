"""Checking: headers to fields, units per column, values per cell, each doubt a note."""

from __future__ import annotations

import numpy as np
import pytest

from lagsheet.io.table import RawSheet
from lagsheet.workbook import fields as schema
from lagsheet.workbook.tables import read_table, split_header


def sheet(rows, uncached=()):
    return RawSheet("Lines", [list(r) for r in rows], set(uncached))


def codes(t, i=None):
    notes = t.notes if i is None else t.cell_notes.get(i, [])
    return [n.code for n in notes]


@pytest.mark.parametrize(("text", "name", "unit"), [
    ("Operating temperature [°C]", "Operating temperature", "°C"),
    ("Operating temperature (degF)", "Operating temperature", "degF"),
    ("Max heat loss [Btu/(h·ft)]", "Max heat loss", "Btu/(h·ft)"),
    ("  Tag  ", "Tag", None),
    ("Outside diameter", "Outside diameter", None),
])
def test_headers_split_into_name_and_unit(text, name, unit):
    """A header gives its name and the unit in brackets or parentheses."""
    assert split_header(text) == (name, unit)


def test_header_row_is_found_below_title_rows_and_matched_case_insensitively():
    """The first row holding 'Tag' is the header row; headers match ignoring case and spaces."""
    t = read_table(sheet([["Plant X schedule"], [], ["TAG", " outside DIAMETER [in] ", "Shape"],
                          ["P1", 4.5, "pipe"]]), schema.LINE_FIELDS, "Tag")
    assert t.header_row == 2 and t.rows == [3]
    assert t.get("outside_diameter")[0] == pytest.approx(4.5 * 0.0254)


def test_units_row_below_the_headers_is_recognised():
    """A row of units under bare headers gives each column its unit."""
    t = read_table(sheet([["Tag", "Outside diameter", "Operating temperature"],
                          [None, "in", "°F"], ["P1", 4.5, 212]]), schema.LINE_FIELDS, "Tag")
    assert t.units_row == 1 and t.rows == [2]
    assert t.get("operating_temperature")[0] == pytest.approx(373.15)
    assert t.columns["outside_diameter"].status == "ok"


def test_a_column_without_unit_takes_the_default_with_a_warning():
    """'Length' with no unit is read in metres and the column carries a warning."""
    t = read_table(sheet([["Tag", "Length"], ["P1", 12]]), schema.LINE_FIELDS, "Tag")
    assert t.get("length")[0] == 12.0
    assert t.columns["length"].status == "warning"
    assert codes(t) == ["no-unit"]


def test_a_unit_of_the_wrong_dimension_is_an_error_for_that_column_only():
    """A diameter in °C is a column error; its lines are in error, the other columns are read."""
    t = read_table(sheet([["Tag", "Outside diameter [°C]", "Length [m]"], ["P1", 60, 5], ["P2", None, 6]]),
                   schema.LINE_FIELDS, "Tag")
    col = t.columns["outside_diameter"]
    assert col.status == "error" and "is not a length" in col.message
    assert list(t.bad) == [True, False]
    assert list(t.get("length")) == [5.0, 6.0]


def test_a_unit_that_does_not_parse_is_an_error():
    """An unknown unit text is a column error naming the header and the fix."""
    t = read_table(sheet([["Tag", "Length [bananas]"], ["P1", 3]]), schema.LINE_FIELDS, "Tag")
    assert codes(t) == ["bad-unit"]
    assert "write it like 'Length [m]'" in t.notes[0].message


def test_a_quantity_typed_as_text_is_converted_and_noted():
    """'2 in' in a mm thickness column is read as 50.8 mm and noted on its cell (a diameter would be NPS 2)."""
    t = read_table(sheet([["Tag", "Min thickness [mm]"], ["P1", "2 in"]]), schema.LINE_FIELDS, "Tag")
    assert t.get("min_thickness")[0] == pytest.approx(0.0508)
    note = t.cell_notes[0][0]
    assert (note.code, note.cell, note.level) == ("text-quantity", "B2", "info")
    assert "50.8 mm" in note.message


def test_text_that_is_no_number_is_an_error_on_its_cell():
    """'hot' in a temperature column is an error naming the cell."""
    t = read_table(sheet([["Tag", "Operating temperature [°C]"], ["P1", "hot"]]), schema.LINE_FIELDS, "Tag")
    assert codes(t, 0) == ["not-a-number"] and t.cell_notes[0][0].cell == "B2"
    assert np.isnan(t.get("operating_temperature")[0])


def test_values_outside_the_field_range_are_errors():
    """A negative diameter and a temperature below absolute zero are cell errors."""
    t = read_table(sheet([["Tag", "Outside diameter [mm]", "Operating temperature [°C]"],
                          ["P1", -5, 20], ["P2", 60, -300]]), schema.LINE_FIELDS, "Tag")
    assert codes(t, 0) == ["out-of-range"] and codes(t, 1) == ["out-of-range"]
    assert "'Outside diameter' must be > 0" in t.cell_notes[0][0].message
    assert "above absolute zero" in t.cell_notes[1][0].message


def test_a_formula_without_a_cached_value_is_an_error_with_the_fix():
    """An uncached formula cell is an error telling the user to recalculate and save."""
    t = read_table(sheet([["Tag", "Length [m]"], ["P1", ""]], uncached=[(1, 1)]), schema.LINE_FIELDS, "Tag")
    note = t.cell_notes[0][0]
    assert note.code == "formula-not-cached" and note.cell == "B2"
    assert "recalculate and save" in note.message


def test_temperature_difference_settings_convert_without_offset():
    """A difference field in °F converts as a difference (used for margins)."""
    f = schema.Field("margin", "Margin", schema.DIFFERENCE, "K", "K")
    t = read_table(sheet([["Tag", "Margin [°F]"], ["P1", 9]]), (schema.LINE_FIELDS[0], f), "Tag")
    assert t.get("margin")[0] == pytest.approx(5.0)


def test_unknown_headers_are_left_alone():
    """Columns lagsheet does not know are the user's own and are not fields."""
    t = read_table(sheet([["Tag", "Painter's remark", "Length [m]"], ["P1", "blue", 3]]),
                   schema.LINE_FIELDS, "Tag")
    assert set(t.columns) == {"tag", "length"}
    assert t.last_col == 3


def test_an_alias_of_tag_marks_the_header_row():
    """A header row whose first column says 'Line no' (an alias of Tag) is found and read."""
    t = read_table(sheet([["Schedule"], ["Line no", "Shape"], ["P1", "pipe"]]), schema.LINE_FIELDS, "Tag")
    assert t.header_row == 1 and list(t.get("tag")) == ["P1"]
