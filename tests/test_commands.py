"""check, explain and audit through the real CLI: messages, files written, exit codes."""

from __future__ import annotations

import json

import openpyxl
import pytest
from typer.testing import CliRunner

from conftest import pipe, sha256, write_book


def test_check_lists_problems_with_cells_and_writes_nothing(tmp_path, cli):
    """A spoiled sheet: unknown header with a suggestion, wrong dimension, duplicate tag; exit 1; input unchanged."""
    head = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulaton", "Max surface temperature [K/m]"]
    rows = [dict(zip(head, ("P-1", "pipe", "NPS 4", 10, 200, "mineral wool", 55), strict=True)),
            dict(zip(head, ("P-1", "pipe", "NPS 2", 10, 200, "mineral wool", 55), strict=True))]
    src = write_book(tmp_path / "in.xlsx", rows, head)
    before = sha256(src)
    r = cli("check", src, "--report", tmp_path / "r.json")
    assert r.exit_code == 1
    rep = json.loads((tmp_path / "r.json").read_text())
    codes = {(n["code"], n["cell"]) for n in rep["notes"]}
    assert ("unknown-header", "F1") in codes and ("wrong-dimension", "G1") in codes and ("duplicate-tag", "A3") in codes
    msg = next(n["message"] for n in rep["notes"] if n["code"] == "unknown-header")
    assert "did you mean 'Insulation'" in msg
    assert sha256(src) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["in.xlsx", "r.json"]


def test_check_annotate_saves_a_commented_copy(tmp_path, cli):
    """--annotate OUT puts a lagsheet comment on each offending cell of a copy."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Insulation": "unobtainium"})])
    r = cli("check", src, "--annotate", tmp_path / "notes.xlsx")
    assert r.exit_code == 1
    ws = openpyxl.load_workbook(tmp_path / "notes.xlsx")["Lines"]
    assert ws["H2"].comment is not None and "unobtainium" in ws["H2"].comment.text


def test_check_of_a_clean_sheet_exits_0(tmp_path, cli):
    """No errors: exit 0 and a count line."""
    r = cli("check", write_book(tmp_path / "in.xlsx", [pipe()]))
    assert r.exit_code == 0 and "0 errors" in r.output


def test_explain_prints_the_calculation_and_draws_the_plot(tmp_path, cli):
    """explain shows layers with k, correlations, the balance residual and the governing target; --plot writes a PNG."""
    src = write_book(tmp_path / "in.xlsx", [pipe("P-7")])
    r = cli("explain", src, "p-7", "--plot", tmp_path / "p.png")
    assert r.exit_code == 0, r.output
    for words in ("Layers, inner first", "k = ", "Churchill-Chu horizontal cylinder", "balance residual",
                  "governing: surface temperature"):
        assert words in r.output
    assert (tmp_path / "p.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_explain_of_an_unknown_tag_exits_2(tmp_path, cli):
    """A tag not in the sheet is one clear line and exit 2."""
    r = cli("explain", write_book(tmp_path / "in.xlsx", [pipe()]), "NOPE")
    assert r.exit_code == 2 and "no line with Tag 'NOPE'" in r.output


def test_audit_agrees_with_lagsheet_and_flags_an_edited_result(tmp_path, cli):
    """Our own output audits clean (exit 0); a surface temperature edited by 10 K is found (exit 1)."""
    src = write_book(tmp_path / "in.xlsx", [pipe(), pipe("P-2", **{"Size": "NPS 8"})])
    cli("fill", src, "-o", tmp_path / "out.xlsx")
    assert cli("audit", tmp_path / "out.xlsx").exit_code == 0
    wb = openpyxl.load_workbook(tmp_path / "out.xlsx")
    ws = wb["Lines"]
    col = [c.value for c in ws[1]].index("Surface temperature [°C]") + 1
    ws.cell(3, col).value = ws.cell(3, col).value + 10
    wb.save(tmp_path / "edited.xlsx")
    r = cli("audit", tmp_path / "edited.xlsx")
    assert r.exit_code == 1 and "P-2: Surface temperature" in r.output


def test_audit_map_must_name_a_result(tmp_path, cli):
    """--map with an unknown result or without '=' is exit 2 with the fix."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    assert cli("audit", src, "--map", "Thk").exit_code == 2
    r = cli("audit", src, "--map", "Thk=Colour")
    assert r.exit_code == 2 and "is not a result lagsheet audits" in r.output


def test_fill_quiet_still_prints_line_errors(tmp_path, cli):
    """--quiet means errors only, not nothing: a line in error is named on stderr."""
    src = write_book(tmp_path / "in.xlsx", [pipe(), pipe("P-2", Insulation="unobtainium")])
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "-q")
    assert r.exit_code == 1
    assert "error: P-2:" in r.output and "unobtainium" in r.output


@pytest.mark.parametrize("command", ["fill", "check", "audit", "explain", "new", "demo", "materials"])
def test_help_shows_words_not_python_types(command):
    """--help names what to type (OUT, NAME, 'THEIRS=OURS'), never '<bool>' or 'list[str]'."""
    from lagsheet.cli import _name_metavars, app

    _name_metavars()
    out = CliRunner().invoke(app, [command, "--help"], terminal_width=100).output
    assert "Usage:" in out and "Show this message and exit" in out
    for python in ("<bool>", "list["):
        assert python not in out, (python, out)
    options = [ln for ln in out.splitlines() if ln.lstrip().startswith("-")]
    assert options and not [ln for ln in options if "<" in ln], out
