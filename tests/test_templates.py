"""The blank workbooks of ``lagsheet new``: rebuilt reproducibly, shipped, read by lagsheet and by LibreOffice.

The expected headers, dropdown lists and defaults are taken from ``schema``, ``library``
and ``inputs`` here, not from the build script, so that a slip in the script shows.
"""

from __future__ import annotations

import csv
import importlib.util
import json
import math
import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path
from xml.etree import ElementTree as ET

import openpyxl
import pytest

from lagsheet.commands.template import TEMPLATES, template_bytes
from lagsheet.io import open_book
from lagsheet.workbook import fields as schema
from lagsheet.workbook import library
from lagsheet.workbook.inputs import BUILTIN_CONDITIONS, read_inputs
from lagsheet.workbook.tables import read_table

ROOT = Path(__file__).resolve().parents[1]
SOURCE = ROOT / "sheet_templates"
SUFFIXES = (".xlsx", ".ods")
TIMESTAMPED = {".xlsx": "docProps/core.xml", ".ods": "meta.xml"}  # members that carry a date

LINE_HEADERS = [
    "Tag", "Area", "Service", "Shape", "Size", "Outside diameter [mm]", "Length [m]", "Surface area [m²]",
    "Width [m]", "Operating temperature [°C]", "Condition", "Insulation", "Outer insulation", "Finish",
    "Surface emissivity [1]", "Max surface temperature [°C]", "Max heat loss [W/m]", "Prevent condensation",
    "Economic", "Min thickness [mm]", "Fixed thickness [mm]",
    # process limits
    "Flow rate [kg/s]", "Fluid", "Operating pressure [bar]", "Inside diameter [mm]", "Schedule",
    "Max temperature drop [K]", "Freeze protection [h]", "Contents volume [m³]", "Hold time [h]",
    "Min temperature [°C]", "Part of",
    "Code",  # energy-code minimums
    # per-line conditions and the sun
    "Ambient temperature [°C]", "Wind speed [m/s]", "Relative humidity [%]", "Surroundings temperature [°C]",
    "Solar irradiance [W/m²]", "Solar absorptance [1]",
    # heat tracing and fittings
    "Maintain temperature [°C]", "Valves", "Flanges", "Supports", "Heat loss allowance [%]",
]
MATERIAL_HEADERS = ["Name", "Mean temperature [°C]", "Conductivity [W/(m·K)]", "Max temperature [°C]",
                    "Min temperature [°C]", "Cost per volume [EUR/m³]", "Thicknesses [mm]", "Max layer [mm]",
                    "Design factor [1]"]
SHEETS = ["Instructions", "Lines", "Conditions", "Materials", "Fluids", "Codes", "Fittings", "Settings"]


def _letter(header: str) -> str:
    return openpyxl.utils.get_column_letter(LINE_HEADERS.index(header) + 1)


def _list(words) -> str:
    return '"' + ",".join(words) + '"'


# column letter -> the list a dropdown there offers (as an xlsx formula)
DROPDOWNS = {
    _letter("Shape"): _list(schema.SHAPE_WORDS),
    _letter("Condition"): "Conditions!$A$2:$A$50",
    _letter("Insulation"): _list(m.name for m in library.materials().values()),
    _letter("Outer insulation"): _list(m.name for m in library.materials().values()),
    _letter("Finish"): _list(f.name for f in library.finishes().values()),
    _letter("Prevent condensation"): '"yes,no"',
    _letter("Economic"): '"yes,no"',
    _letter("Code"): '"ASHRAE 90.1,GEG"',
}


def template(suffix: str) -> Path:
    return SOURCE / TEMPLATES[suffix]


@pytest.fixture(scope="module")
def rebuilt(tmp_path_factory) -> Path:
    """The templates built afresh by sheet_templates/build_templates.py into a temporary folder."""
    spec = importlib.util.spec_from_file_location("build_templates", SOURCE / "build_templates.py")
    builder = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = builder  # its dataclasses look their module up while it loads
    spec.loader.exec_module(builder)
    out = tmp_path_factory.mktemp("rebuilt")
    written = builder.build(out)
    assert sorted(p.name for p in written) == sorted(TEMPLATES.values())
    return out


# --- built, committed and shipped: the same --------------------------------------------


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_rebuild_equals_the_committed_template(rebuilt, suffix):
    name = TEMPLATES[suffix]
    with zipfile.ZipFile(rebuilt / name) as new, zipfile.ZipFile(template(suffix)) as old:
        assert new.namelist() == old.namelist()
        assert TIMESTAMPED[suffix] in old.namelist()
        differ = [m for m in old.namelist() if m != TIMESTAMPED[suffix] and new.read(m) != old.read(m)]
    assert differ == [], (f"{name}: members {differ} differ from a rebuild; run "
                          "python sheet_templates/build_templates.py and commit the result")


def test_ods_package_starts_with_a_stored_mimetype():
    with zipfile.ZipFile(template(".ods")) as z:
        first = z.infolist()[0]
        assert first.filename == "mimetype" and first.compress_type == zipfile.ZIP_STORED
        assert z.read("mimetype") == b"application/vnd.oasis.opendocument.spreadsheet"


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_shipped_copy_equals_sheet_templates(suffix):
    assert template_bytes(suffix) == template(suffix).read_bytes(), (
        "the package's templates_data differs from sheet_templates/; run "
        "python sheet_templates/build_templates.py")


# --- lagsheet new ------------------------------------------------------------------------


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_new_writes_the_template(cli, tmp_path, suffix):
    out = tmp_path / f"plant{suffix}"
    r = cli("new", out)
    assert r.exit_code == 0, r.output
    assert out.read_bytes() == template(suffix).read_bytes()


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_new_refuses_to_overwrite_unless_forced(cli, tmp_path, suffix):
    out = tmp_path / f"plant{suffix}"
    out.write_bytes(b"someone's work")
    r = cli("new", out)
    assert r.exit_code == 2
    assert "already exists" in r.output and "--force" in r.output
    assert len(r.output.strip().splitlines()) == 1, r.output
    assert out.read_bytes() == b"someone's work"
    r = cli("new", out, "--force")
    assert r.exit_code == 0, r.output
    assert out.read_bytes() == template(suffix).read_bytes()


@pytest.mark.parametrize("name", ["plant.csv", "plant.xlsm", "plant.xls", "plant"])
def test_new_refuses_a_suffix_it_has_no_template_for(cli, tmp_path, name):
    r = cli("new", tmp_path / name)
    assert r.exit_code == 2
    lines = r.output.strip().splitlines()
    assert len(lines) == 1 and ".xlsx or .ods" in lines[0] and "Traceback" not in r.output
    assert list(tmp_path.iterdir()) == []


def test_new_refuses_a_missing_folder(cli, tmp_path):
    r = cli("new", tmp_path / "nowhere" / "plant.xlsx")
    assert r.exit_code == 2 and "does not exist" in r.output
    assert list(tmp_path.iterdir()) == []


# --- new, then fill, through the real CLI ----------------------------------------------


def _fill_untouched(cli, tmp_path: Path, suffix: str) -> tuple[dict, Path]:
    src, out, rep = tmp_path / f"plant{suffix}", tmp_path / f"plant-filled{suffix}", tmp_path / "plant.json"
    r = cli("new", src)
    assert r.exit_code == 0, r.output
    r = cli("fill", src, "-o", out, "--report", rep)
    # exit 0: the untouched template has no errors, only warnings (its example rows) and a caution
    # (the cold example line needs a vapour retarder); 1 would mean the template itself is wrong
    assert r.exit_code == 0, r.output
    assert src.read_bytes() == template(suffix).read_bytes()  # the input is never written
    return json.loads(rep.read_text(encoding="utf-8")), out


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_fill_on_the_untouched_template_computes_the_example_rows(cli, tmp_path, suffix):
    report, out = _fill_untouched(cli, tmp_path, suffix)
    assert [c for c in report["columns"] if c["status"] != "ok"] == []
    lines = {line["tag"]: line for line in report["lines"]}
    assert sorted(lines) == ["EXAMPLE-1", "EXAMPLE-2"]
    assert report["summary"]["errors"] == 0
    for tag, line in lines.items():
        res = line["results"]
        assert line["status"] != "error", (tag, line["notes"])
        assert res["thickness_m"] > 0 and res["governing"] not in (None, "", "none"), (tag, res)
        assert math.isfinite(res["surface_temperature_K"]) and math.isfinite(res["heat_loss_per_length_W_m"])
        assert abs(res["heat_loss_W"]) < abs(res["bare_heat_loss_W"]), (tag, res)
    # the hot line's surface stays under its limit; the cold line's above its dew point
    hot, cold = lines["EXAMPLE-1"]["results"], lines["EXAMPLE-2"]["results"]
    assert hot["surface_temperature_K"] <= 55 + 273.15 and hot["heat_loss_per_length_W_m"] <= 100
    assert cold["heat_loss_W"] < 0 and cold["surface_temperature_K"] >= cold["dew_point_K"] + 1.0
    # and the results are in the filled workbook, beside the template's columns
    grid = open_book(out).sheet("Lines").grid
    head = [str(v) for v in grid[0]]
    assert head[:len(LINE_HEADERS)] == LINE_HEADERS
    col = head.index("Thickness [mm]")
    assert [grid[1][col], grid[2][col]] == pytest.approx(
        [hot["thickness_m"] * 1000, cold["thickness_m"] * 1000])


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_fill_notes_each_example_row_as_an_example(cli, tmp_path, suffix):
    report, _out = _fill_untouched(cli, tmp_path, suffix)
    for line in report["lines"]:
        assert line["tag"].startswith("EXAMPLE")
        codes = [n["code"] for n in line["notes"]]
        assert "example-row" in codes, (line["tag"], codes)


# --- what lagsheet reads in the template -------------------------------------------------


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_every_lines_header_is_recognised_with_its_unit(suffix):
    book = open_book(template(suffix))
    assert book.sheet_names() == SHEETS
    t = read_table(book.sheet("Lines"), schema.LINE_FIELDS, "Tag")
    assert t is not None and t.header_row == 0 and t.units_row is None
    assert t.notes == []
    assert [c.header for c in sorted(t.columns.values(), key=lambda c: c.col)] == LINE_HEADERS
    assert set(t.columns) == {f.key for f in schema.LINE_FIELDS}
    for c in t.columns.values():
        assert c.status == "ok", (c.header, c.message)
        if c.field.kind in (schema.NUMBER, schema.TEMPERATURE, schema.DIFFERENCE) and not c.field.count:
            assert c.unit_text and c.unit is not None, c.header  # counts (Valves ...) have no unit
    assert [t.get("tag")[i] for i in range(len(t.rows))] == ["EXAMPLE-1", "EXAMPLE-2"]
    assert not t.bad.any() and t.cell_notes == {}


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_conditions_and_materials_headers_are_recognised(suffix):
    book = open_book(template(suffix))
    cond = read_table(book.sheet("Conditions"), schema.CONDITION_FIELDS, "Name")
    assert cond.notes == [] and set(cond.columns) == {f.key for f in schema.CONDITION_FIELDS}
    assert all(c.status == "ok" for c in cond.columns.values())
    mat = read_table(book.sheet("Materials"), schema.MATERIAL_FIELDS, "Name")
    assert mat.notes == [] and set(mat.columns) == {f.key for f in schema.MATERIAL_FIELDS}
    assert [str(v) for v in book.sheet("Materials").grid[0]][:len(MATERIAL_HEADERS)] == MATERIAL_HEADERS
    assert mat.rows == []


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_template_reads_as_the_built_in_defaults(suffix):
    inputs = read_inputs(open_book(template(suffix)))
    assert [n for n in inputs.notes if n.level in ("error", "warning")] == []
    for key, (_name, _dim, _si, default, _kind) in schema.SETTINGS.items():
        got = inputs.settings[key]
        if isinstance(default, float) and math.isnan(default):
            assert isinstance(got, float) and math.isnan(got), key  # blank: no default, as built in
        elif isinstance(default, str):
            assert got == default, key
        else:
            assert got == pytest.approx(default, rel=1e-12), key
    assert inputs.settings["_given"] == {k for k, v in schema.SETTINGS.items()
                                         if not (isinstance(v[3], float) and math.isnan(v[3]))}
    for name, c in BUILTIN_CONDITIONS.items():
        got = inputs.conditions[name]
        assert (got.t_air, got.t_surroundings, got.wind, got.rh, got.hours) == pytest.approx(
            (c.t_air, c.t_surroundings, c.wind, c.rh, c.hours), rel=1e-12)
        assert got.source.startswith("Conditions!")
    assert inputs.materials == library.materials()  # an empty Materials sheet overrides nothing


def test_settings_sheet_lists_every_setting_with_a_unit():
    ws = openpyxl.load_workbook(template(".xlsx"))["Settings"]
    rows = list(ws.iter_rows(values_only=True))
    assert rows[0][:3] == ("Setting", "Value", "Unit")
    assert [r[0] for r in rows[1:]] == [v[0] for v in schema.SETTINGS.values()]
    for r, (name, _dim, _si, _default, kind) in zip(rows[1:], schema.SETTINGS.values(), strict=True):
        assert (r[2] is None) == (kind in (schema.TEXT, schema.YESNO)), name


def test_instructions_say_what_to_fill_and_the_cautions():
    ws = openpyxl.load_workbook(template(".xlsx"))["Instructions"]
    text = " ".join(str(v) for row in ws.iter_rows(values_only=True) for v in row if v is not None)
    for words in ("Lines", "brackets", "lagsheet fill", "EXAMPLE", "ASTM C1055", "ISO 13732-1",
                  "contact time", "vapour retarder", "design estimates", "owner's specification",
                  "local codes", "licensed"):
        assert words in text, words
    for o in schema.OUTPUTS:  # what fill adds
        assert o.header in text, o.header
    for header in LINE_HEADERS:  # every column explained
        assert header in text, header


# --- layout and dropdowns ------------------------------------------------------------------


def _validations(ws) -> dict[str, tuple]:
    """Column letter -> (formula, first row, last row, error style) of each list validation."""
    out = {}
    for dv in ws.data_validations.dataValidation:
        assert dv.type == "list"
        for rng in dv.sqref.ranges:
            (c1, r1, c2, r2) = rng.bounds
            assert c1 == c2, str(rng)
            out[openpyxl.utils.get_column_letter(c1)] = (dv.formula1, r1, r2, dv.errorStyle)
    return out


def _check_dropdowns(ws, min_last_row: int):
    got = _validations(ws)
    assert {k: v[0] for k, v in got.items()} == DROPDOWNS
    for letter, (_f, first, last, style) in got.items():
        assert first == 2 and last >= min_last_row, letter
        assert style == "warning", letter  # other entries stay possible: fill checks them


def test_xlsx_layout_and_dropdowns():
    wb = openpyxl.load_workbook(template(".xlsx"))
    assert wb.sheetnames == SHEETS and wb.active.title == "Instructions"
    ws = wb["Lines"]
    assert [c.value for c in ws[1]] == LINE_HEADERS
    assert all(c.font.bold for c in ws[1])
    assert ws.freeze_panes == "B2"  # the header row and the Tag column stay in view
    for i in range(1, len(LINE_HEADERS) + 1):
        assert ws.column_dimensions[openpyxl.utils.get_column_letter(i)].width >= 9
    for name in ("Conditions", "Materials", "Settings"):
        assert wb[name].freeze_panes == "A2", name
    _check_dropdowns(ws, 5000)
    conds = [r[0] for r in wb["Conditions"].iter_rows(min_row=2, values_only=True)]
    assert conds == list(BUILTIN_CONDITIONS)


_T = "{urn:oasis:names:tc:opendocument:xmlns:table:1.0}"
_C = "{urn:oasis:names:tc:opendocument:xmlns:config:1.0}"


def _ods_cells(table) -> list[list[dict]]:
    """Rows of cell attributes, repeats expanded (only up to the validated rows, so bounded)."""
    rows = []
    for row in table.iter(f"{_T}table-row"):
        cells = []
        for cell in row.iter(f"{_T}table-cell"):
            cells.extend([dict(cell.attrib)] * int(cell.get(f"{_T}number-columns-repeated", 1)))
        rows.extend([cells] * int(row.get(f"{_T}number-rows-repeated", 1)))
    return rows


def test_ods_dropdowns_and_frozen_rows_in_the_package():
    with zipfile.ZipFile(template(".ods")) as z:
        content = ET.fromstring(z.read("content.xml"))
        settings_xml = z.read("settings.xml")
    conditions = {v.get(f"{_T}name"): v.get(f"{_T}condition")
                  for v in content.iter(f"{_T}content-validation")}
    tables = {t.get(f"{_T}name"): t for t in content.iter(f"{_T}table")}
    assert list(tables) == SHEETS
    rows = _ods_cells(tables["Lines"])
    assert len(rows) == 5000
    for letter, formula in DROPDOWNS.items():
        col = openpyxl.utils.column_index_from_string(letter) - 1
        names = {rows[r][col].get(f"{_T}content-validation-name") for r in range(1, 5000)}
        assert len(names) == 1 and None not in names, letter
        cond = conditions[names.pop()]
        if formula.startswith('"'):
            words = formula.strip('"').split(",")
            assert cond == "of:cell-content-is-in-list(" + ";".join(f'"{w}"' for w in words) + ")"
        else:
            assert cond == "of:cell-content-is-in-list([$Conditions.$A$2:.$A$50])"
        assert f"{_T}content-validation-name" not in rows[0][col]  # not on the header
    # frozen rows: LibreOffice reads them only when the 'ooo' prefix is declared
    assert b'xmlns:ooo="http://openoffice.org/2004/office"' in settings_xml
    frozen = {}
    for entry in ET.fromstring(settings_xml).iter(f"{_C}config-item-map-entry"):
        items = {i.get(f"{_C}name"): i.text for i in entry.findall(f"{_C}config-item")}
        if entry.get(f"{_C}name") in SHEETS:
            frozen[entry.get(f"{_C}name")] = (items["VerticalSplitMode"], items["VerticalSplitPosition"],
                                              items["HorizontalSplitPosition"])
    assert frozen == {"Instructions": ("0", "0", "0"), "Lines": ("2", "1", "1"), "Conditions": ("2", "1", "0"),
                      "Materials": ("2", "1", "0"), "Fluids": ("2", "1", "0"), "Codes": ("2", "1", "0"),
                      "Fittings": ("2", "1", "0"),
                      "Settings": ("2", "1", "0")}


# --- LibreOffice -----------------------------------------------------------------------------


def _soffice() -> str:
    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None and Path("/usr/bin/soffice").exists():
        exe = "/usr/bin/soffice"
    if exe is None:
        if os.environ.get("CI", "").lower() in ("true", "1", "yes"):
            pytest.fail("LibreOffice (soffice) is needed for the template tests under CI; install it")
        pytest.skip("LibreOffice (soffice) is not installed; the template tests that need it did not run")
    return exe


def _convert(tmp: Path, to: str, files: list[Path]) -> Path:
    """Convert ``files`` with LibreOffice (its own profile in ``tmp``); the output folder."""
    out = tmp / "out"
    out.mkdir(exist_ok=True)
    cmd = [_soffice(), f"-env:UserInstallation={(tmp / 'profile').as_uri()}", "--headless",
           "--convert-to", to, "--outdir", str(out), *map(str, files)]
    p = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
    assert p.returncode == 0, p.stdout + p.stderr
    return out


# sheet -1: every sheet to its own file NAME-SHEET.csv (UTF-8, comma, double quotes)
CSV_ALL_SHEETS = "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,-1"


def _csv(path: Path) -> list[list[str]]:
    with path.open(encoding="utf-8", newline="") as fh:
        return list(csv.reader(fh))


def test_libreoffice_opens_both_templates(tmp_path):
    files = []
    for suffix in SUFFIXES:
        files.append(tmp_path / f"from_{suffix[1:]}{suffix}")
        shutil.copyfile(template(suffix), files[-1])
    out = _convert(tmp_path, CSV_ALL_SHEETS, files)
    for f in files:
        sheets = {s: _csv(out / f"{f.stem}-{s}.csv") for s in SHEETS}
        lines = sheets["Lines"]
        assert lines[0] == LINE_HEADERS, f.name
        assert [r[0] for r in lines[1:] if any(r)] == ["EXAMPLE-1", "EXAMPLE-2"], f.name
        assert lines[1][LINE_HEADERS.index("Operating temperature [°C]")] == "180"
        assert [r[0] for r in sheets["Settings"][1:]] == [v[0] for v in schema.SETTINGS.values()], f.name
        assert [r[0] for r in sheets["Conditions"][1:]] == list(BUILTIN_CONDITIONS), f.name
        assert sheets["Materials"][0] == MATERIAL_HEADERS and len(sheets["Materials"]) == 1, f.name
        assert any("ASTM C1055" in cell for row in sheets["Instructions"] for cell in row), f.name
    # both formats show the same cells
    for s in SHEETS:
        assert _csv(out / f"from_xlsx-{s}.csv") == _csv(out / f"from_ods-{s}.csv"), s


def test_libreoffice_reads_the_ods_dropdowns(tmp_path):
    src = tmp_path / "template.ods"
    shutil.copyfile(template(".ods"), src)
    out = _convert(tmp_path, "xlsx", [src])
    wb = openpyxl.load_workbook(out / "template.xlsx")
    assert wb.sheetnames == SHEETS
    # LibreOffice's xlsx export trims a validation to about a thousand rows past the data: the
    # lists, the columns and the first row are what is checked here (the .ods holds 5000 rows)
    _check_dropdowns(wb["Lines"], 1000)
