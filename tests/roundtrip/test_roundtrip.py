"""Round trip: `lagsheet fill` on every corpus workbook adds its columns and changes nothing else.

Each corpus workbook (see ``corpus.py``) is filled once through the real command, in
parallel; LibreOffice then converts every input and output to CSV in one run. The
checks themselves are in ``checks.py`` and are tested against hand-made good and bad
outputs in ``test_checks_selftest.py``.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
import zipfile
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import pytest

from . import checks, validators
from .corpus import (
    CORPUS,
    LO_CORPUS,
    LO_LOCKED,
    Entry,
    LoEntry,
    build_corpus,
    build_lo_corpus,
    find_soffice,
    read_parts,
    soffice,
)

LAGSHEET = Path(sys.executable).parent / "lagsheet"
XLSX = [e for e in CORPUS if not e.is_ods]
ODS = [e for e in CORPUS if e.is_ods]
WITH_COMMENTS = [e for e in XLSX if e.has("comments")]
WITH_TABLE = [e for e in XLSX if e.has("table")]
ODS_WITH_RANGE = [e for e in ODS if e.has("table")]
# check --annotate runs on these only (CI time): every part kind our notes touch (legacy notes
# beside people's, threaded comments, VML, a macro workbook) and both ods
ANNOTATED = [e for e in CORPUS if e.name in ("plain", "comments", "comments_and_ours", "everything")] + ODS


def _ids(e: Entry) -> str:
    return e.name


@dataclass
class Filled:
    entry: Entry
    src: Path
    out: Path
    returncode: int
    output: str


@pytest.fixture(scope="module")
def work(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("roundtrip")


@pytest.fixture(scope="module")
def filled(work: Path) -> dict[str, Filled]:
    """Build the corpus (ODS entries only where LibreOffice is installed) and fill every workbook."""
    assert LAGSHEET.is_file(), f"no lagsheet command beside the interpreter: {LAGSHEET}"
    names = [e.name for e in XLSX] + ([e.name for e in ODS] if find_soffice() else [])
    files = build_corpus(work / "in", names, profile=work / "lo-profile")
    (work / "out").mkdir()

    def run(name: str) -> Filled:
        e = next(x for x in CORPUS if x.name == name)
        src, out = files[name], work / "out" / f"{name}-filled{e.suffix}"
        r = subprocess.run([str(LAGSHEET), "fill", str(src), "-o", str(out), "-q"],
                           capture_output=True, text=True, timeout=900, stdin=subprocess.DEVNULL)
        return Filled(e, src, out, r.returncode, (r.stdout + r.stderr).strip())

    with ThreadPoolExecutor(max_workers=max(2, os.cpu_count() or 2)) as pool:
        return dict(zip(names, pool.map(run, names), strict=True))


@pytest.fixture(scope="module")
def csv_folder(filled: dict[str, Filled], work: Path) -> Path:
    """LibreOffice's CSV of every sheet of every input and output, from one soffice run."""
    checks.require_soffice()
    folder = work / "csv"
    files = [str(f.src) for f in filled.values()] + [str(f.out) for f in filled.values() if f.out.is_file()]
    r = soffice(["--convert-to", checks.CSV_FILTER, "--outdir", str(folder), *files], work / "lo-profile")
    assert folder.is_dir(), f"LibreOffice wrote nothing: {r.stdout}\n{r.stderr}"
    return folder


def done(filled: dict[str, Filled], entry: Entry) -> Filled:
    """The filled workbook of ``entry``; fails (never skips) when lagsheet wrote none."""
    if entry.is_ods:
        checks.require_soffice()
    f = filled[entry.name]
    if not f.out.is_file():
        pytest.fail(f"lagsheet fill wrote no output (exit {f.returncode}): {f.output}")
    return f


def _csv(folder: Path, book: Path) -> list[list[str]] | None:
    p = folder / f"{book.stem}-Lines.csv"
    return checks.read_csv(p) if p.is_file() else None


@pytest.mark.parametrize("entry", CORPUS, ids=_ids)
def test_fill_exits_0_on_every_corpus_workbook(filled, entry):
    """lagsheet fill accepts every corpus workbook, whose lines are all valid, and exits 0."""
    if entry.is_ods:
        checks.require_soffice()
    f = filled[entry.name]
    assert f.returncode == 0, f.output
    assert f.out.is_file()


@pytest.mark.parametrize("entry", XLSX, ids=_ids)
def test_parts_lagsheet_has_no_reason_to_touch_are_byte_identical(filled, entry):
    """Every zip part but the Lines sheet, its rels, notes, table, styles and content types is byte-identical."""
    f = done(filled, entry)
    assert checks.check_untouched_parts(read_parts(f.src), read_parts(f.out)) == []


@pytest.mark.parametrize("entry", XLSX, ids=_ids)
def test_original_cells_keep_value_formula_cache_and_style(filled, entry):
    """Every original cell of Lines keeps its value, type, formula, cached value and style index."""
    f = done(filled, entry)
    assert checks.check_original_cells(read_parts(f.src), read_parts(f.out)) == []


@pytest.mark.parametrize("entry", XLSX, ids=_ids)
def test_elements_outside_sheet_data_survive(filled, entry):
    """Views, columns, merges, conditional formats, validations, drawings, tables and extLst survive."""
    f = done(filled, entry)
    assert checks.check_sheet_elements(read_parts(f.src), read_parts(f.out)) == []


@pytest.mark.parametrize("entry", XLSX, ids=_ids)
def test_styles_only_grow(filled, entry):
    """styles.xml keeps every original font, fill, border, number format, xf and dxf at its index."""
    f = done(filled, entry)
    assert checks.check_styles_grow_only(read_parts(f.src), read_parts(f.out)) == []


@pytest.mark.parametrize("entry", XLSX, ids=_ids)
def test_only_the_output_columns_are_added(filled, entry):
    """New cells appear only in the output columns of the header row and the lines, headers in order."""
    f = done(filled, entry)
    assert checks.check_only_output_cells_added(read_parts(f.src), read_parts(f.out)) == []


@pytest.mark.parametrize("entry", WITH_COMMENTS, ids=_ids)
def test_comments_by_people_are_unchanged(filled, entry):
    """Legacy notes and threaded comments written by people come back unchanged."""
    f = done(filled, entry)
    assert checks.check_people_comments(read_parts(f.src), read_parts(f.out)) == []


@pytest.mark.parametrize("entry", WITH_TABLE, ids=_ids)
def test_the_lines_table_covers_the_new_columns(filled, entry):
    """The Excel table named Lines grows over the output columns, named as their headers."""
    f = done(filled, entry)
    assert checks.check_table(read_parts(f.src), read_parts(f.out)) == []


@pytest.mark.parametrize("entry", CORPUS, ids=_ids)
def test_libreoffice_opens_the_output_and_shows_the_results(filled, csv_folder, entry):
    """LibreOffice opens the output and shows the original cells, formula values and results in place."""
    f = done(filled, entry)
    if entry.is_ods:
        with zipfile.ZipFile(f.src) as z:
            formulas = checks.ods_formula_cells(z.read("content.xml"))
    else:
        formulas = checks.xlsx_formula_cells(read_parts(f.src))
    assert checks.check_csv(_csv(csv_folder, f.src), _csv(csv_folder, f.out), formulas) == []


@pytest.mark.parametrize("entry", ODS, ids=_ids)
def test_ods_parts_but_content_are_byte_identical(filled, entry):
    """Every ODS part but content.xml, manifest.xml and meta.xml is byte-identical; mimetype comes first."""
    f = done(filled, entry)
    assert checks.check_ods_parts(f.src, f.out) == []


@pytest.mark.parametrize("entry", ODS, ids=_ids)
def test_ods_original_cells_are_unchanged(filled, entry):
    """In content.xml every original cell, row, column, style, validation and other sheet is unchanged."""
    f = done(filled, entry)
    with zipfile.ZipFile(f.src) as zi, zipfile.ZipFile(f.out) as zo:
        assert checks.check_ods_cells(zi.read("content.xml"), zo.read("content.xml")) == []


@pytest.mark.parametrize("entry", ODS, ids=_ids)
def test_ods_results_are_added_in_the_output_columns(filled, entry):
    """The ODS output holds the output headers in order and numbers in every line's result cells."""
    f = done(filled, entry)
    with zipfile.ZipFile(f.src) as zi, zipfile.ZipFile(f.out) as zo:
        assert checks.check_ods_additions(zi.read("content.xml"), zo.read("content.xml")) == []


@pytest.mark.parametrize("entry", ODS_WITH_RANGE, ids=_ids)
def test_ods_database_range_lines_covers_the_new_columns(filled, entry):
    """The ODS database range named Lines grows over the output columns."""
    f = done(filled, entry)
    with zipfile.ZipFile(f.src) as zi, zipfile.ZipFile(f.out) as zo:
        assert checks.check_ods_database_range(zi.read("content.xml"), zo.read("content.xml")) == []


# --------------------------------------------------------------------------- made by LibreOffice

LO_FILES = [(e, fmt) for e in LO_CORPUS for fmt in e.formats]


def _lo_id(item: tuple[LoEntry, str]) -> str:
    return f"{item[0].name}.{item[1]}"


@pytest.fixture(scope="module")
def lo_filled(work: Path) -> dict[str, Filled]:
    """Make the LibreOffice corpus through Python-UNO (one soffice for all) and fill every file."""
    checks.require_soffice()
    checks.require_uno()
    files = build_lo_corpus(work / "lo-in", [*LO_CORPUS, LO_LOCKED])
    (work / "lo-out").mkdir()

    def run(name: str) -> Filled:
        src = files[name]
        out = work / "lo-out" / name
        r = subprocess.run([str(LAGSHEET), "fill", str(src), "-o", str(out), "-q", "--report",
                            str(out) + ".json"], capture_output=True, text=True, timeout=900,
                           stdin=subprocess.DEVNULL)
        return Filled(Entry(name, src.suffix, ()), src, out, r.returncode, (r.stdout + r.stderr).strip())

    with ThreadPoolExecutor(max_workers=max(2, os.cpu_count() or 2)) as pool:
        return dict(zip(files, pool.map(run, files), strict=True))


def _lo_done(lo_filled: dict[str, Filled], item: tuple[LoEntry, str]) -> Filled:
    f = lo_filled[_lo_id(item)]
    if f.returncode != 0 or not f.out.is_file():
        pytest.fail(f"lagsheet fill wrote no output (exit {f.returncode}): {f.output}")
    return f


@pytest.mark.parametrize("item", LO_FILES, ids=_lo_id)
def test_libreoffice_made_files_are_filled_with_every_result_on_its_lines_row(lo_filled, item):
    """Grouped, hidden, filtered, merged, gapped or far-down schedules saved by LibreOffice: every
    result on its line's Tag row, as the report says, and none on another row."""
    f = _lo_done(lo_filled, item)
    report = json.loads(Path(str(f.out) + ".json").read_text(encoding="utf-8"))
    assert checks.check_results_on_line_rows(f.out, report, item[0].tags()) == []


@pytest.mark.parametrize("item", LO_FILES, ids=_lo_id)
def test_libreoffice_made_files_lose_nothing(lo_filled, item):
    """Every original part, cell, row and column attribute, merge, group and filter of the LibreOffice file stays."""
    f = _lo_done(lo_filled, item)
    if item[1] == "ods":
        assert checks.check_ods_parts(f.src, f.out) == []
        with zipfile.ZipFile(f.src) as zi, zipfile.ZipFile(f.out) as zo:
            assert checks.check_ods_cells(zi.read("content.xml"), zo.read("content.xml")) == []
            assert checks.check_ods_additions(zi.read("content.xml"), zo.read("content.xml")) == []
    else:
        inp, out = read_parts(f.src), read_parts(f.out)
        assert checks.check_untouched_parts(inp, out) == []
        assert checks.check_original_cells(inp, out) == []
        assert checks.check_sheet_elements(inp, out) == []
        assert checks.check_only_output_cells_added(inp, out) == []


def test_an_ods_saved_with_a_password_by_libreoffice_is_refused_in_one_plain_sentence(lo_filled):
    """LibreOffice's encrypted .ods: exit 2, nothing written, a sentence saying to save it without a password."""
    f = lo_filled[f"{LO_LOCKED.name}.ods"]
    assert f.returncode == 2, f.output
    assert not f.out.exists()
    assert f.output.count("\n") == 0 and "saved with a password" in f.output and "Save As" in f.output
    assert not re.search(r"\w+Error|Traceback|codec|\bb'", f.output), f.output


@pytest.fixture(scope="module")
def annotated(filled: dict[str, Filled], work: Path) -> dict[str, tuple[Path, Path, str]]:
    """`lagsheet check --annotate` on a subset of the corpus (the inputs fill used): name -> (input, output, text)."""
    names = [e.name for e in ANNOTATED if e.name in filled]
    files = {name: filled[name].src for name in names}
    (work / "annotated").mkdir()

    def run(name: str):
        e = next(x for x in CORPUS if x.name == name)
        src, out = files[name], work / "annotated" / f"{name}-annotated{e.suffix}"
        r = subprocess.run([str(LAGSHEET), "check", str(src), "--annotate", str(out), "-q"],
                           capture_output=True, text=True, timeout=900, stdin=subprocess.DEVNULL)
        return name, (src, out, (r.stdout + r.stderr).strip())

    with ThreadPoolExecutor(max_workers=max(2, os.cpu_count() or 2)) as pool:
        return dict(pool.map(run, names))


@pytest.mark.parametrize("entry", CORPUS, ids=_ids)
def test_fill_output_adds_no_validator_finding(filled, entry):
    """The filled workbook has no Open XML (Office 2016) or ODF 1.3 RELAX NG error the input lacks."""
    validators.require_validators()
    f = done(filled, entry)
    assert validators.new_findings(f.src, f.out) == []


@pytest.mark.parametrize("entry", ANNOTATED, ids=_ids)
def test_annotated_copy_adds_no_validator_finding(annotated, entry):
    """check --annotate's copy has no Open XML (Office 2016) or ODF 1.3 RELAX NG error the input lacks."""
    validators.require_validators()
    if entry.is_ods:
        checks.require_soffice()
    src, out, text = annotated[entry.name]
    assert out.is_file(), text
    assert validators.new_findings(src, out) == []


@pytest.mark.parametrize("item", LO_FILES, ids=_lo_id)
def test_libreoffice_made_file_filled_adds_no_validator_finding(lo_filled, item):
    """Each LibreOffice-made workbook, filled, has no Open XML or ODF 1.3 RELAX NG error its input lacks."""
    validators.require_validators()
    f = _lo_done(lo_filled, item)
    assert validators.new_findings(f.src, f.out) == []
