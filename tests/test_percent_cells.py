"""Cells formatted as a percentage: a typed '80%' is stored as 0.8 and read as 80 % in a % column or setting.

The workbooks are saved by LibreOffice (xlsx and ods) from an openpyxl book whose cells carry
the number format '0%', so the percentage is marked the way spreadsheet programs mark it.
"""

from __future__ import annotations

import json
import zipfile
from pathlib import Path

import openpyxl
import pytest

from conftest import pipe

HEADERS = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
           "Max surface temperature [°C]", "Prevent condensation", "Condition"]
HOT = pipe("P-2")
COLD = pipe(**{"Size": "NPS 2", "Operating temperature [°C]": 10, "Insulation": "elastomeric foam",
               "Max surface temperature [°C]": None, "Prevent condensation": "yes", "Condition": "humid"})


def _book(path: Path, rh, rh_format: str | None, efficiency=None, eff_format: str | None = None) -> Path:
    """A cold line with condensation control under a 'humid' condition (20 °C, RH ``rh``) and a hot line."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    ws.append(HEADERS)
    ws.append([COLD.get(h) for h in HEADERS])
    ws.append([HOT.get(h) for h in HEADERS])
    cond = wb.create_sheet("Conditions")
    cond.append(["Name", "Ambient temperature [°C]", "Relative humidity [%]"])
    cond.append(["humid", 20, rh])
    if rh_format:
        cond["C2"].number_format = rh_format
    if efficiency is not None:
        st = wb.create_sheet("Settings")
        st.append(["Setting", "Value", "Unit"])
        st.append(["Heating efficiency", efficiency, "%"])
        if eff_format:
            st["B2"].number_format = eff_format
    wb.save(path)
    return path


def _saved_by_libreoffice(src: Path, ext: str, work: Path) -> Path:
    """``src`` opened and saved as ``ext`` by LibreOffice."""
    from roundtrip.checks import require_soffice
    from roundtrip.corpus import soffice

    require_soffice()
    out = work / ext
    out.mkdir(exist_ok=True)
    r = soffice(["--convert-to", ext, "--outdir", str(out), str(src)], work / "profile")
    made = out / f"{src.stem}.{ext}"
    assert made.is_file(), r.stdout + r.stderr
    return made


def _fill(cli, src: Path, work: Path) -> tuple[int, dict]:
    rep = work / f"{src.stem}-{src.suffix[1:]}.json"
    r = cli("fill", src, "-o", work / f"{src.stem}-out{src.suffix}", "--report", rep)
    assert "Traceback" not in r.output, r.output
    return r.exit_code, json.loads(rep.read_text(encoding="utf-8"))


def _notes(report) -> list[dict]:
    return report["notes"] + [n for line in report["lines"] for n in line["notes"]]


@pytest.mark.parametrize("ext", ["xlsx", "ods"])
def test_a_percentage_formatted_humidity_sizes_the_cold_line_as_the_typed_number(tmp_path, cli, ext):
    """RH shown as '80%' (stored 0.8) sizes the cold line as 80 typed in the % column does: same thickness and dew point."""
    typed = _saved_by_libreoffice(_book(tmp_path / "typed.xlsx", 80, None), ext, tmp_path)
    shown = _saved_by_libreoffice(_book(tmp_path / "shown.xlsx", 0.8, "0%"), ext, tmp_path)
    e_typed, r_typed = _fill(cli, typed, tmp_path)
    e_shown, r_shown = _fill(cli, shown, tmp_path)
    assert e_typed == 0 and e_shown == 0, _notes(r_typed) + _notes(r_shown)
    a, b = r_typed["lines"][0]["results"], r_shown["lines"][0]["results"]
    assert a["dew_point_K"] == pytest.approx(b["dew_point_K"], abs=1e-9)
    assert a["dew_point_K"] - 273.15 == pytest.approx(16.4, abs=0.1)  # 20 °C, 80 % RH: 16.4 °C (Magnus form, from memory)
    assert a["thickness_m"] == b["thickness_m"]
    notes = _notes(r_shown)
    assert not any(n["code"] == "likely-mislabelled" for n in notes)
    pct = [n for n in notes if n["code"] == "percent-cell"]
    assert len(pct) == 1 and pct[0]["level"] == "info" and pct[0]["cell"] == "C2" and "80 %" in pct[0]["message"]


@pytest.mark.parametrize("ext", ["xlsx", "ods"])
def test_a_percentage_formatted_efficiency_setting_is_used_as_shown(tmp_path, cli, ext):
    """'Heating efficiency' shown as '88%' (stored 0.88) with Unit % costs the hot line as 88 typed does, not the default."""
    typed = _saved_by_libreoffice(_book(tmp_path / "typed.xlsx", 80, None, 88, None), ext, tmp_path)
    shown = _saved_by_libreoffice(_book(tmp_path / "shown.xlsx", 80, None, 0.88, "0%"), ext, tmp_path)
    e_typed, r_typed = _fill(cli, typed, tmp_path)
    e_shown, r_shown = _fill(cli, shown, tmp_path)
    assert e_typed == 0 and e_shown == 0
    notes = _notes(r_shown)
    assert not any(n["code"] == "bad-setting" for n in notes), notes
    pct = [n for n in notes if n["code"] == "percent-cell"]
    assert len(pct) == 1 and pct[0]["cell"] == "B2" and "88 %" in pct[0]["message"]
    hot_typed, hot_shown = r_typed["lines"][1]["results"], r_shown["lines"][1]["results"]
    assert hot_typed["annual_cost"] > 0
    assert hot_shown["annual_cost"] == pytest.approx(hot_typed["annual_cost"], rel=1e-12)


@pytest.mark.parametrize(("code", "percent"), [
    ("0%", True), ("0.00%", True), ("#,##0.0%;[Red]-#,##0.0%", True), ("[$-409]0%", True),
    ('0.0" %"', False), ("0.0\\%", False), ("0.0_%", False), ("General", False), ("[>=100]0;0.0", False),
])
def test_a_number_format_is_a_percentage_only_when_it_scales_by_100(code, percent):
    """'0%' and '0.0%;[Red]-0.0%' scale the value by 100; a quoted, escaped or padding '%' is only text."""
    from lagsheet.io.xlsx import is_percent_format

    assert is_percent_format(code) is percent


@pytest.mark.parametrize(("unit", "value", "fmt", "want", "code"), [
    ("%", 0.8, True, 0.8, "percent-cell"), ("%", 80, False, 0.8, None), ("1", 0.8, True, 0.8, "percent-cell"),
    ("1", 0.8, False, 0.8, None), ("%", 0.8, False, float("nan"), "percent-as-fraction"),
])
def test_a_percentage_cell_is_read_as_the_fraction_it_holds_in_any_dimensionless_unit(unit, value, fmt, want, code):
    """A percentage-formatted 0.8 is 80 % in a % column and 0.8 in a column of fractions; a plain 0.8 in % is an error."""
    from lagsheet.io.table import RawSheet
    from lagsheet.workbook import fields as schema
    from lagsheet.workbook.tables import read_table

    raw = RawSheet("Conditions", [["Name", "Ambient temperature [°C]", f"Relative humidity [{unit}]"],
                                  ["humid", 20, value]], percent={(1, 2)} if fmt else set())
    t = read_table(raw, schema.CONDITION_FIELDS, "Name")
    assert t.get("relative_humidity")[0] == pytest.approx(want, rel=1e-12, nan_ok=True)
    assert [n.code for n in t.cell_notes.get(0, [])] == ([code] if code else [])


def test_a_percentage_format_on_a_temperature_changes_nothing():
    """A temperature cell that happens to be formatted as a percentage is read as the number it holds."""
    from lagsheet.io.table import RawSheet
    from lagsheet.workbook import fields as schema
    from lagsheet.workbook.tables import read_table

    raw = RawSheet("Conditions", [["Name", "Ambient temperature [°C]"], ["humid", 20]], percent={(1, 1)})
    t = read_table(raw, schema.CONDITION_FIELDS, "Name")
    assert t.get("ambient_temperature")[0] == pytest.approx(293.15, abs=1e-9)
    assert not t.cell_notes.get(0)


@pytest.mark.parametrize("ext", ["xlsx", "ods"])
def test_a_plain_fraction_in_a_percent_humidity_column_is_an_error_never_sized(tmp_path, cli, ext):
    """RH 0.8 typed (no percentage format) in a % column: an error on the cell saying to type 80, the cold line not sized."""
    src = _saved_by_libreoffice(_book(tmp_path / "plain.xlsx", 0.8, None), ext, tmp_path)
    code, rep = _fill(cli, src, tmp_path)
    assert code == 1
    errors = [n for n in _notes(rep) if n["level"] == "error"]
    cell = next(n for n in errors if n["code"] == "percent-as-fraction")
    assert (cell["sheet"], cell["cell"]) == ("Conditions", "C2") and cell["message"].endswith("; type 80")
    cond = next(n for n in errors if n["code"] == "bad-condition")
    assert "C2" in cond["message"] and "Ambient temperature" not in cond["message"]
    cold = rep["lines"][0]
    assert cold["status"] == "error" and cold["results"]["thickness_m"] is None


def test_the_built_in_and_custom_percentage_formats_mark_their_cells(tmp_path):
    """Built-in '0%' and '0.00%' (numFmtId 9, 10) and a custom '0.0%' mark their cells; '0.0" %"' and General do not."""
    from lagsheet.io import open_book

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Conditions"
    formats = ["0%", "0.00%", "0.0%", '0.0" %"', "General"]
    for col, fmt in enumerate(formats, start=1):
        ws.cell(row=2, column=col, value=0.5).number_format = fmt
    wb.save(tmp_path / "formats.xlsx")
    with zipfile.ZipFile(tmp_path / "formats.xlsx") as z:
        styles = z.read("xl/styles.xml").decode()
    assert 'numFmtId="9"' in styles and 'numFmtId="10"' in styles  # written as the built-in formats
    assert open_book(tmp_path / "formats.xlsx").sheet("Conditions").percent == {(1, 0), (1, 1), (1, 2)}


@pytest.mark.parametrize("unit", ["%", None, "1"])
def test_a_percentage_formatted_setting_is_its_fraction_whatever_the_unit_cell_says(unit):
    """'Heating efficiency' shown as '88%' is 0.88 with Unit %, no unit, or the unit 1, with one note and no error."""
    from lagsheet.io.table import RawSheet
    from lagsheet.workbook.inputs import _settings

    class OneSheet:
        def __init__(self, raw):
            self.raw = raw

        def sheet_names(self):
            return [self.raw.name]

        def sheet(self, name):
            return self.raw

    raw = RawSheet("Settings", [["Setting", "Value", "Unit"], ["Heating efficiency", 0.88, unit]], percent={(1, 1)})
    notes = []
    values = _settings(OneSheet(raw), notes)
    assert values["heating_efficiency"] == pytest.approx(0.88, rel=1e-12)
    assert [(n.code, n.cell) for n in notes] == [("percent-cell", "B2")]
