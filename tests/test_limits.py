"""Process columns: every gap or contradiction is a note naming its cell; results appear only where used."""

from __future__ import annotations

import numpy as np
import openpyxl
import pytest

from lagsheet.commands.fill import load
from lagsheet.design.select import specify

from conftest import pipe, write_book

HEADERS = ["Tag", "Shape", "Size", "Outside diameter [mm]", "Length [m]", "Operating temperature [°C]",
           "Condition", "Insulation", "Max surface temperature [°C]", "Fluid", "Flow rate [kg/s]",
           "Operating pressure [bar]", "Max temperature drop [K]", "Freeze protection [h]",
           "Inside diameter [mm]", "Schedule", "Contents volume [m³]", "Hold time [h]", "Min temperature [°C]",
           "Part of"]
COL = {h.split(" [")[0]: chr(ord("A") + k) for k, h in enumerate(HEADERS)}


def notes_of(tmp_path, row, sheets=None):
    _, inputs = load(write_book(tmp_path / "in.xlsx", [row], HEADERS, sheets=sheets))
    res = specify(inputs)
    return res, {(n.code, n.cell): n for n in res.notes[0]}


@pytest.mark.parametrize(("row", "code", "column", "level", "words"), [
    (pipe(**{"Flow rate [kg/s]": 1}), "no-fluid", "Fluid", "error", "needs its 'Fluid'"),
    (pipe(**{"Fluid": "unobtainium oil", "Flow rate [kg/s]": 1}), "unknown-fluid", "Fluid", "error",
     "Fluids"),
    (pipe(**{"Fluid": "steam", "Max temperature drop [K]": 2}), "steam-drop", "Max temperature drop", "error",
     "does not apply"),
    (pipe(**{"Fluid": "water", "Flow rate [kg/s]": 1}), "water-boils", "Operating pressure", "error",
     "boils at 1 atm"),
    (pipe(**{"Fluid": "water", "Operating temperature [°C]": 60, "Max temperature drop [K]": 2}), "no-flow",
     "Flow rate", "error", "needs the line's 'Flow rate'"),
    (pipe(**{"Fluid": "water", "Operating temperature [°C]": 10, "Freeze protection [h]": 5,
             "Shape": "vessel", "Size": None, "Outside diameter [mm]": 2000}), "freeze-shape",
     "Freeze protection", "error", "pipes and risers"),
    (pipe(**{"Fluid": "air", "Operating temperature [°C]": 10, "Freeze protection [h]": 5}), "freeze-fluid",
     "Fluid", "error", "water only"),
    (pipe(**{"Operating temperature [°C]": 10, "Freeze protection [h]": 5, "Size": None,
             "Outside diameter [mm]": 114.3}), "no-bore", "Inside diameter", "error", "Inside diameter"),
    (pipe(**{"Operating temperature [°C]": 10, "Freeze protection [h]": 5, "Schedule": "160"}),
     "unknown-schedule", "Schedule", "error", "40, STD, 80, XS"),
    (pipe(**{"Operating temperature [°C]": 10, "Freeze protection [h]": 5}), "schedule-assumed", "Schedule",
     "warning", "schedule 40"),
    (pipe(**{"Operating temperature [°C]": 10, "Freeze protection [h]": 5, "Inside diameter [mm]": 120}),
     "bore", "Inside diameter", "error", "less than the outside diameter"),
    (pipe(**{"Shape": "vessel", "Size": None, "Outside diameter [mm]": 2000, "Operating temperature [°C]": 80,
             "Fluid": "water", "Hold time [h]": 10, "Min temperature [°C]": 60}), "no-volume",
     "Contents volume", "error", "Contents volume"),
    (pipe(**{"Shape": "vessel", "Size": None, "Outside diameter [mm]": 2000, "Operating temperature [°C]": 80,
             "Fluid": "water", "Hold time [h]": 10, "Contents volume [m³]": 5}), "no-limit",
     "Min temperature", "error", "Min temperature"),
    (pipe(**{"Shape": "vessel", "Size": None, "Outside diameter [mm]": 2000, "Operating temperature [°C]": 80,
             "Hold time [h]": 10, "Contents volume [m³]": 5, "Min temperature [°C]": 60}), "fluid-assumed",
     "Fluid", "warning", "water"),
    (pipe(**{"Part of": "NO-SUCH-TANK"}), "part-of", "Part of", "warning", "not the Tag"),
])
def test_each_gap_is_a_note_on_its_cell(tmp_path, row, code, column, level, words):
    """The note names the cell of the column to fix, at the right level, in words that say what to do."""
    res, notes = notes_of(tmp_path, row)
    note = notes.get((code, f"{COL[column]}2"))
    assert note is not None, [(n.code, n.cell, n.message) for n in res.notes[0]]
    assert note.level == level and words in note.message
    assert (res.status[0] == "error") == (level == "error")


def test_a_volume_flow_without_density_is_an_error(tmp_path):
    """m³/h of a Fluids-sheet fluid with no Density cannot become a mass flow."""
    sheets = {"Fluids": [["Name", "Specific heat [kJ/(kg·K)]"], ["oil x", 2.1]]}
    res, notes = notes_of(tmp_path, pipe(**{"Fluid": "oil x", "Flow rate [kg/s]": "5 m³/h"}), sheets)
    assert ("no-density", f"{COL['Flow rate']}2") in notes and res.status[0] == "error"


def test_a_fluids_row_without_specific_heat_is_a_workbook_error(tmp_path):
    """A Fluids row needs its Specific heat; the note names the cell."""
    sheets = {"Fluids": [["Name", "Specific heat [kJ/(kg·K)]", "Density [kg/m³]"], ["oil y", None, 800]]}
    _, inputs = load(write_book(tmp_path / "in.xlsx", [pipe()], HEADERS, sheets=sheets))
    bad = [n for n in inputs.notes if n.code == "bad-fluid"]
    assert bad and bad[0].sheet == "Fluids" and bad[0].cell == "B2"


def test_no_process_column_is_written_when_no_line_uses_one(tmp_path, cli):
    """A plain schedule gets no empty Outlet temperature / Condensate / Time columns."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    assert cli("fill", src, "-o", tmp_path / "out.xlsx").exit_code == 0
    heads = [c.value for c in openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"][1]]
    assert not any(str(h).startswith(("Outlet temperature", "Condensate", "Time to")) for h in heads)


def test_process_columns_are_written_where_used_in_the_sheets_units(tmp_path, cli):
    """A steam line gets 'Condensate [kg/h]' = the report's kg/s × 3600; other process columns stay out."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Fluid": "steam"})], HEADERS)
    assert cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json").exit_code == 0
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    heads = [c.value for c in ws[1]]
    assert "Condensate [kg/h]" in heads and "Outlet temperature [°C]" not in heads
    import json

    rep = json.loads((tmp_path / "r.json").read_text())
    kg_s = rep["lines"][0]["results"]["condensate_kg_per_s"]
    assert ws.cell(2, heads.index("Condensate [kg/h]") + 1).value == pytest.approx(kg_s * 3600, rel=1e-6)
    assert rep["summary"]["condensate_kg_per_s"] == pytest.approx(kg_s)
    assert np.isfinite(kg_s) and kg_s > 0


def test_explain_shows_the_process_results(tmp_path, cli):
    """explain prints the condensate with its latent heat (CoolProp h_fg at 10 bar(a): 2014.6 kJ/kg, IF97)."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Fluid": "steam", "Operating pressure [bar]": 10,
                                                   "Operating temperature [°C]": 180})], HEADERS)
    r = cli("explain", src, "P-1")
    assert r.exit_code == 0, r.output
    assert "Process:" in r.output and "h_fg 2014.6 kJ/kg" in r.output and "kg/h" in r.output


def test_check_prints_units_in_brackets(tmp_path, cli):
    """A message that quotes a header with its unit, 'Length [m]', is printed with the brackets."""
    row = pipe()
    row["Length"] = row.pop("Length [m]")
    src = write_book(tmp_path / "in.xlsx", [row], [h if h != "Length [m]" else "Length" for h in HEADERS])
    r = cli("check", src)
    assert "'Length [m]'" in r.output, r.output


def test_a_steam_flow_is_not_needed_and_not_an_error(tmp_path):
    """A steam line's condensate comes from its heat loss: a flow in m³/h is accepted and not used."""
    res, notes = notes_of(tmp_path, pipe(**{"Fluid": "steam", "Flow rate [kg/s]": "500 m³/h"}))
    assert res.status[0] == "ok", [n.message for n in res.notes[0]]
    assert res.values["condensate"][0] > 0 and np.isnan(res.values["outlet_temperature"][0])


def test_a_linked_part_with_errors_is_left_out_and_said(tmp_path):
    """A roof linked to a vessel but in error is not counted (not as bare either); the vessel says so."""
    headers = HEADERS + ["Surface area [m²]"]
    vessel = pipe("T-1", **{"Shape": "vessel", "Size": None, "Outside diameter [mm]": 2000, "Length [m]": 3,
                            "Operating temperature [°C]": 80, "Fluid": "water", "Contents volume [m³]": 8,
                            "Hold time [h]": 1, "Min temperature [°C]": 60, "Max surface temperature [°C]": None})
    roof = pipe("T-1R", **{"Shape": "top", "Size": None, "Surface area [m²]": 3.1, "Length [m]": None,
                           "Operating temperature [°C]": 80, "Part of": "T-1", "Insulation": "unobtainium"})
    _, inputs = load(write_book(tmp_path / "a.xlsx", [vessel, roof], headers))
    res = specify(inputs)
    _, inputs = load(write_book(tmp_path / "b.xlsx", [vessel], headers))
    alone = specify(inputs)
    assert res.status[1] == "error"
    assert res.values["time_to_cool"][0] == pytest.approx(alone.values["time_to_cool"][0], rel=1e-12)
    assert any(n.code == "part-of" and "T-1R" in n.message for n in res.notes[0])


def test_a_temperature_difference_typed_with_its_unit_is_a_difference(tmp_path):
    """'9 °F' in a 'Max temperature drop [K]' column is 5 K (a difference, NIST SP 811: 1 °F = 5/9 K);
    in a '[°F]' column '150 °F' stays 150 °F. The fuzzer found the second raising a pint error."""
    for header, cell, expected in (("Max temperature drop [K]", "9 °F", 5.0),
                                   ("Max temperature drop [°F]", "150 °F", 150 * 5 / 9)):
        heads = [h if not h.startswith("Max temperature drop") else header for h in HEADERS]
        row = pipe(**{"Fluid": "water", "Flow rate [kg/s]": 1, "Operating temperature [°C]": 60, header: cell})
        _, inputs = load(write_book(tmp_path / "in.xlsx", [row], heads))
        assert inputs.lines.get("max_temperature_drop")[0] == pytest.approx(expected)


def test_fill_prints_the_total_steam_condensate(tmp_path, cli):
    """The closing table adds the condensate of every steam line, in kg/h (the report's kg/s × 3600)."""
    src = write_book(tmp_path / "in.xlsx", [pipe("S-1", Fluid="steam"), pipe("S-2", Fluid="steam")], HEADERS)
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    import json

    total = json.loads((tmp_path / "r.json").read_text())["summary"]["condensate_kg_per_s"] * 3600
    assert "steam condensate" in r.output and f"{total:,.1f} kg/h" in r.output


@pytest.mark.parametrize("row", [
    pipe(**{"Fluid": "water", "Operating temperature [°C]": 10, "Freeze protection [h]": 5000, "Schedule": "40",
            "Condition": "outdoor; winter", "Max surface temperature [°C]": None}),
    pipe(**{"Shape": "vessel", "Size": None, "Outside diameter [mm]": 2000, "Length [m]": 3, "Fluid": "water",
            "Operating temperature [°C]": 80, "Contents volume [m³]": 5, "Hold time [h]": 5000,
            "Min temperature [°C]": 60, "Condition": "outdoor; winter", "Max surface temperature [°C]": None}),
])
def test_an_unmet_freeze_or_hold_time_names_the_coldest_condition(tmp_path, row):
    """No sold thickness keeps water 5000 h: the line is judged at its coldest named condition
    ('winter', named second), and that is the condition the results name as governing."""
    from lagsheet.commands.demo import CONDITIONS  # 'outdoor' 5 °C and 'winter' -15 °C among them

    res, _ = notes_of(tmp_path, row, sheets={"Conditions": [list(r) for r in CONDITIONS]})
    assert res.values["governing"][0] in ("freeze protection (not met)", "hold time (not met)"), res.notes[0]
    assert res.values["governing_condition"][0] == "winter"
