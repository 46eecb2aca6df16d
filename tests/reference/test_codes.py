"""Energy-code minimums ('Code' column) against the published tables worked by hand in the test.

Sources of the numbers written here (not read from lagsheet):

- ASHRAE/IES 90.1-2016 minimum pipe insulation (heating and cooling tables): thickness in
  inches by fluid temperature range and nominal size, each row with its range of rating
  conductivity [Btu·in/(h·ft²·°F)] and its rating mean temperature; the correction for a
  conductivity outside the range T = r[(1 + t/r)^(K/k) − 1], k the range's upper end
  (the standard's footnote, from memory).
- GEG 2024 Anlage 8: by inside diameter, λ 0.035 W/(m·K) at 40 °C; up to 22 mm: 20 mm; over
  35 to 100 mm: equal to the inside diameter; over 100 mm: 100 mm; 200 % in outdoor air;
  cold rows 9 mm up to 22 mm (trade press report; verify).
- Pipe dimensions: fluids.piping.nearest_pipe (ASME B36.10M).
- 1 Btu·in/(h·ft²·°F) = 0.1442279 W/(m·K), 1 in = 25.4 mm (NIST SP 811).

Each line is written into a workbook, filled with ``lagsheet fill`` and read back from the
JSON report and the filled sheet, in xlsx and ods, in SI and US units.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import openpyxl
import pytest
import python_calamine
from fluids.piping import nearest_pipe

# the sold series only (data, not a computation)
from lagsheet.workbook.library import materials, series

from conftest import write_ods

BTU_IN = 0.1442279  # W/(m·K) per Btu·in/(h·ft²·°F), NIST SP 811
IN = 0.0254
SOLD = [0.020, 0.030, 0.040, 0.050, 0.060, 0.080, 0.100, 0.120, 0.140, 0.160, 0.180, 0.200, 0.250, 0.300]


def T(t: float, r: float, K: float, k: float) -> float:
    """The published correction, written out here."""
    return r * ((1 + t / r) ** (K / k) - 1)


def first_sold(x: float, sold=SOLD) -> float:
    return next(s for s in sold if s >= x - 1e-9)


_, BORE2, OD2, _ = nearest_pipe(NPS=2, schedule="40")  # 52.48 mm (to 0.01 mm), 60.3 mm


def k40(t_c: float) -> float:
    """Material 'k40' of the test's Materials sheet: 0.040 W/(m·K) at 0 °C to 0.080 at 400 °C, straight."""
    return 0.040 + 0.040 * t_c / 400


def k41(t_c: float) -> float:
    """Material 'k41': 0.041 at 0 °C to 0.061 at 400 °C."""
    return 0.041 + 0.020 * t_c / 400


F250, F75 = (250 - 32) / 1.8, (75 - 32) / 1.8  # the ASHRAE rows' rating mean temperatures, °C

# tag -> (Lines row in SI, the expected code thickness [m] worked by hand)
CASES = {
    # 200 °C = 392 °F: the 'above 350 °F' row; OD 60.3 mm lies in the 1½–<4 column: 5 in at k 0.32–0.34
    # at 250 °F; K = k40(250 °F) = 0.0521 W/(m·K) = 0.361 Btu·in is above the range: corrected with 0.34
    "A-200": (dict(od=60.3, t=200, mat="k40", code="ASHRAE 90.1"), T(5 * IN, 0.03015, k40(F250), 0.34 * BTU_IN)),
    # the same with 'Design factor' 1.3 on the material
    "A-aged": (dict(od=60.3, t=200, mat="k40 aged", code="ASHRAE 90.1"),
               T(5 * IN, 0.03015, 1.3 * k40(F250), 0.34 * BTU_IN)),
    # K = k41(250 °F) = 0.0471 W/(m·K) = 0.326 Btu·in, inside 0.32–0.34: the table as it is
    "A-in": (dict(od=60.3, t=200, mat="k41", code="ashrae 90.1"), 5 * IN),
    # mineral wool, ASTM C547 as the library holds it (0.29 at 200 °F, 0.34 at 300 °F): K(250 °F) = 0.315,
    # below 0.32; NPS 4 (OD 114.3 mm) at 400 °F: the 'above 350 °F' row, column 4–<8: 5 in
    "A-mw": (dict(size="NPS 4", t=(400 - 32) / 1.8, mat="mineral wool", code="ASHRAE 90.1"),
             T(5 * IN, 0.05715, 0.315, 0.34)),
    # 5 °C = 41 °F: cooling 40–60 °F (k 0.21–0.27 at 75 °F); OD 33.4 mm: column 1–<1½: ½ in; K = 0.294 Btu·in
    "A-cold": (dict(od=33.4, t=5, mat="k40", code="ASHRAE 90.1"), T(0.5 * IN, 0.0167, k40(F75), 0.27 * BTU_IN)),
    # GEG: NPS 2 schedule 40, 70 °C, indoors: thickness = inside diameter at λ 0.035, 40 °C
    "G-2": (dict(size="NPS 2", sch="40", t=70, mat="k40", code="GEG"), T(BORE2, OD2 / 2, k40(40), 0.035)),
    # the same outdoors (the built-in 'outdoor' condition has wind): 200 %
    "G-out": (dict(size="NPS 2", sch="40", t=70, mat="k40", code="GEG", cond="outdoor"),
              T(2 * BORE2, OD2 / 2, k40(40), 0.035)),
    # inside diameter given, up to 22 mm: 20 mm
    "G-20": (dict(od=26.7, bore=20.0, t=60, mat="k40", code="GEG"), T(0.020, 0.01335, k40(40), 0.035)),
    # over 100 mm: 100 mm
    "G-150": (dict(od=168.3, bore=154.1, t=60, mat="k40", code="GEG"), T(0.100, 0.08415, k40(40), 0.035)),
    # a cold line (10 °C) up to 22 mm: 9 mm (trade press report)
    "G-cold": (dict(od=26.7, bore=20.0, t=10, mat="k40", code="GEG"), T(0.009, 0.01335, k40(40), 0.035)),
    # the user's table on the Codes sheet: 100–300 °C, from NPS 2 up: 80 mm at 0.045 W/(m·K), 100 °C
    "U-3": (dict(size="NPS 3", t=180, mat="k40", code="Plant std"), T(0.080, 0.0889 / 2, k40(100), 0.045)),
}
# fluids gives the inside diameter to 0.01 mm: the GEG lines sized on it agree to that
TOLERANCE = {"G-2": 2e-4, "G-out": 2e-4}

_LIST = ", ".join(f"{s * 1000:g}" for s in SOLD)
MATERIALS = [["Name", "Mean temperature [°C]", "Conductivity [W/(m·K)]", "Thicknesses [mm]", "Design factor [1]"],
             ["k40", 0, 0.040, _LIST, None], ["k40", 400, 0.080, None, None],
             ["k40 aged", 0, 0.040, _LIST, 1.3], ["k40 aged", 400, 0.080, None, None],
             ["k41", 0, 0.041, _LIST, None], ["k41", 400, 0.061, None, None]]
CODES = [["Code", "Min fluid temperature [°C]", "Max fluid temperature [°C]", "Min size", "Max size", "Thickness [mm]",
          "Rating conductivity [W/(m·K)]", "Rating mean temperature [°C]"],
         ["Plant std", 100, 300, "NPS 2", None, 80, 0.045, 100]]
HEAD = ["Tag", "Shape", "Size", "Outside diameter [mm]", "Inside diameter [mm]", "Schedule", "Length [m]",
        "Operating temperature [°C]", "Condition", "Insulation", "Code"]


def _line(tag: str, c: dict) -> list:
    return [tag, "pipe", c.get("size"), c.get("od"), c.get("bore"), c.get("sch"), 10, c["t"], c.get("cond"),
            c["mat"], c["code"]]


def sheets_si(cases=CASES) -> dict[str, list[list]]:
    return {"Lines": [list(HEAD)] + [_line(tag, c) for tag, (c, _) in cases.items()], "Materials": MATERIALS,
            "Codes": CODES}


def sheets_us() -> dict[str, list[list]]:
    """The same lines in °F and inches (materials and the Codes sheet in theirs)."""
    head = [h.replace("[°C]", "[°F]").replace("[mm]", "[in]") for h in HEAD]
    rows = []
    for tag, (c, _) in CASES.items():
        row = _line(tag, c)
        row[3] = None if row[3] is None else row[3] / 25.4
        row[4] = None if row[4] is None else row[4] / 25.4
        row[7] = row[7] * 1.8 + 32
        rows.append(row)
    codes = [[h.replace("[°C]", "[°F]").replace("[mm]", "[in]") for h in CODES[0]],
             ["Plant std", 212, 572, "NPS 2", None, 80 / 25.4, 0.045, 212]]
    return {"Lines": [head] + rows, "Materials": MATERIALS, "Codes": codes}


def write_xlsx(path: Path, sheets: dict[str, list[list]]) -> Path:
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for name, rows in sheets.items():
        ws = wb.create_sheet(name)
        for r in rows:
            ws.append(r)
    wb.save(path)
    return path


def fill(cli, tmp_path: Path, sheets, ext: str) -> tuple[dict, list[list]]:
    src = (write_xlsx if ext == "xlsx" else write_ods)(tmp_path / f"in.{ext}", sheets)
    out = tmp_path / f"out.{ext}"
    r = cli("fill", src, "-o", out, "--report", tmp_path / "r.json")
    assert r.exit_code == 0, r.output
    rep = json.loads((tmp_path / "r.json").read_text())
    grid = python_calamine.CalamineWorkbook.from_path(str(out)).get_sheet_by_name("Lines").to_python()
    return {x["tag"]: x for x in rep["lines"]}, grid


@pytest.mark.parametrize("ext", ["xlsx", "ods"])
@pytest.mark.parametrize("units", ["SI", "US"])
def test_code_thickness_is_the_table_corrected_by_hand_and_the_floor_of_the_sold_size(tmp_path, cli, ext, units):
    lines, grid = fill(cli, tmp_path, sheets_si() if units == "SI" else sheets_us(), ext)
    head = [str(h) for h in grid[0]]
    col = head.index("Code thickness [mm]" if units == "SI" else "Code thickness [in]")
    tags = [row[0] for row in grid]
    for tag, (_, expected) in CASES.items():
        res = lines[tag]["results"]
        assert lines[tag]["status"] == "ok", (tag, lines[tag]["notes"])
        assert res["code_thickness_m"] == pytest.approx(expected, rel=TOLERANCE.get(tag, 1e-6)), tag
        sold = SOLD if CASES[tag][0]["mat"] != "mineral wool" else series(materials()["mineral wool"], units == "US")[0]
        assert res["thickness_m"] == pytest.approx(first_sold(expected, sold), abs=1e-9), tag
        # a code thinner than the thinnest sold is met by it: 'thinnest sold' (WORKBOOK.md section 4)
        assert res["governing"] == ("thinnest sold" if first_sold(expected, sold) == sold[0] else "code minimum"), tag
        shown = float(grid[tags.index(tag)][col])
        assert shown == pytest.approx(expected * (1000 if units == "SI" else 1 / IN), rel=TOLERANCE.get(tag, 1e-6)), tag


def test_a_users_table_of_a_built_in_name_replaces_it_and_says_so(tmp_path, cli):
    sheets = sheets_si({"G-2": CASES["G-2"]})
    sheets["Codes"] = CODES[:1] + [["GEG", None, None, None, None, 50, 0.040, 40]]
    r = cli("fill", write_xlsx(tmp_path / "in.xlsx", sheets), "-o", tmp_path / "o.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code == 0, r.output
    rep = json.loads((tmp_path / "r.json").read_text())
    # the user's row, by outside diameter (every size), not the built-in's inside diameter
    assert rep["lines"][0]["results"]["code_thickness_m"] == pytest.approx(T(0.050, OD2 / 2, k40(40), 0.040), rel=1e-6)
    assert any(n["code"] == "code-override" and "replaces the built-in" in n["message"] for n in rep["notes"])


def test_lines_outside_every_row_warn_and_other_shapes_get_a_note(tmp_path, cli):
    cases = {"A-80F": (dict(od=60.3, t=(80 - 32) / 1.8, mat="k40", code="ASHRAE 90.1"), None),  # 60–105 °F: no row
             "U-small": (dict(size="NPS 1", t=180, mat="k40", code="Plant std"), None),  # below NPS 2
             "G-od": (dict(od=60.3, t=70, mat="k40", code="GEG"), None)}  # no inside diameter, no size
    sheets = sheets_si(cases)
    sheets["Lines"].append(["W-1", "vessel", None, 2000, None, None, 3, 70, None, "k40", "GEG"])
    r = cli("fill", write_xlsx(tmp_path / "in.xlsx", sheets), "-o", tmp_path / "o.xlsx", "--report", tmp_path / "r.json")
    lines = {x["tag"]: x for x in json.loads((tmp_path / "r.json").read_text())["lines"]}
    assert r.exit_code == 0, r.output  # warnings only
    for tag, code in (("A-80F", "code-no-row"), ("U-small", "code-no-row"), ("G-od", "code-no-bore")):
        assert lines[tag]["status"] == "warning", tag
        notes = [n for n in lines[tag]["notes"] if n["code"] == code]
        assert len(notes) == 1 and "no code minimum applied" in notes[0]["message"], tag
        assert lines[tag]["results"]["code_thickness_m"] is None
    vessel = [n for n in lines["W-1"]["notes"] if n["code"] == "code-shape"]
    assert vessel and vessel[0]["level"] == "info" and "no code minimum for a vessel" in vessel[0]["message"]


@pytest.mark.parametrize("row, cell, words", [
    (["Plant std", 100, 300, "NPS 2", None, None, 0.045, 100], "F2", "'Thickness' is blank"),
    (["Plant std", 300, 100, "NPS 2", None, 80, 0.045, 100], "C2", "'Min fluid temperature' must be below"),
    (["Plant std", 100, 300, "two inch", None, 80, 0.045, 100], "D2", "'Min size' 'two inch' is not a size"),
    (["Plant std", 100, 300, 60, None, 80, 0.045, 100], "D2", "'Min size' '60' has no unit"),
    (["Plant std", 100, 300, "NPS 4", "NPS 2", 80, 0.045, 100], "E2", "'Min size' must be smaller"),
    (["Plant std", 100, 300, "NPS 2", None, 80, -1, 100], "G2", "'Rating conductivity' must be"),
])
def test_check_names_the_codes_cell_and_the_fix_and_lines_naming_that_code_point_there(tmp_path, cli, row, cell, words):
    sheets = sheets_si({"U-3": CASES["U-3"]})
    sheets["Codes"] = [CODES[0], row]
    notes = checked(cli, tmp_path, sheets)
    codes_notes = [n for n in notes if n["sheet"] == "Codes" and n["level"] == "error"]
    assert len(codes_notes) == 1 and codes_notes[0]["cell"] == cell and words in codes_notes[0]["message"]
    assert any(n["code"] == "bad-code" and n["cell"] == "K2" and f"Codes!{cell}" in n["message"] for n in notes)


def checked(cli, tmp_path: Path, sheets) -> list[dict]:
    r = cli("check", write_xlsx(tmp_path / "in.xlsx", sheets), "--report", tmp_path / "c.json")
    assert r.exit_code == 1, r.output
    return json.loads((tmp_path / "c.json").read_text())["notes"]


def test_an_unknown_code_is_an_error_on_its_cell_listing_the_known_ones(tmp_path, cli):
    sheets = sheets_si({"U-3": (dict(CASES["U-3"][0], code="ASHRAE 90.2"), None)})
    bad = [n for n in checked(cli, tmp_path, sheets) if n["code"] == "unknown-code"]
    assert len(bad) == 1 and bad[0]["cell"] == "K2"
    assert "ASHRAE 90.1, GEG, Plant std" in bad[0]["message"]


def test_a_code_minimum_under_a_warmer_target_does_not_govern(tmp_path, cli):
    """The floor only raises: a 55 °C surface limit that needs more than the code keeps governing."""
    sheets = sheets_si({"G-20": CASES["G-20"]})
    sheets["Lines"][0].append("Max surface temperature [°C]")
    sheets["Lines"][1][7] = 400  # a hot small line: the surface limit needs far more than 20 mm
    sheets["Lines"][1].append(55)
    lines, _ = fill(cli, tmp_path, sheets, "xlsx")
    res = lines["G-20"]["results"]
    assert res["governing"] == "surface temperature"
    assert res["thickness_m"] > res["code_thickness_m"] + 0.01
    assert math.isfinite(res["code_thickness_m"])


def test_explain_prints_the_row_the_line_k_and_the_corrected_thickness(tmp_path, cli):
    src = write_xlsx(tmp_path / "in.xlsx", sheets_si({"A-200": CASES["A-200"]}))
    r = cli("explain", src, "A-200")
    assert r.exit_code == 0, r.output
    line = next(x for x in r.output.splitlines() if x.strip().startswith("code ASHRAE 90.1"))
    assert "heating above 350 °F" in line and "127 mm at k 0.0462 to 0.0490 W/(m·K), 121.1 °C" in line
    assert f"design k there {k40(F250):.4f}" in line
    assert line.endswith(f"{CASES['A-200'][1] * 1000:.1f} mm")


def test_a_bare_line_naming_a_code_is_warned_not_passed(tmp_path, cli):
    sheets = sheets_si({"G-20": CASES["G-20"]})
    sheets["Lines"][0].append("Fixed thickness [mm]")
    sheets["Lines"][1][9] = None  # no insulation
    sheets["Lines"][1].append(0)
    lines, _ = fill(cli, tmp_path, sheets, "xlsx")
    notes = [n for n in lines["G-20"]["notes"] if n["code"] == "code-bare"]
    assert lines["G-20"]["status"] == "warning" and len(notes) == 1
    assert "asks for 20 mm at its rating conductivity (GEG Anlage 8)" in notes[0]["message"]


@pytest.mark.parametrize("deg_f, row", [(140.0, "heating 105–140 °F"), (140.5, "heating 141–200 °F"),
                                        (105.0, "heating 105–140 °F"), (350.0, "heating 251–350 °F"),
                                        (350.5, "heating above 350 °F"), (60.0, "cooling 40–60 °F"),
                                        (40.0, "cooling 40–60 °F"), (39.9, "cooling below 40 °F"),
                                        (80.0, None), (104.9, None)])
def test_the_ashrae_rows_meet_at_the_published_whole_degrees(deg_f, row):
    """'105–140', '141–200', ..., 'above 350', '40–60', 'below 40' °F: each published value in its row,
    nothing between 60 and 105 °F."""
    from lagsheet.design.codes import find_row
    from lagsheet.workbook.codes import builtin

    found = find_row(builtin()["ashrae 90.1"], (deg_f - 32) / 1.8 + 273.15, 0.0603)
    assert (found.where.split(", ")[1] if found else None) == row
