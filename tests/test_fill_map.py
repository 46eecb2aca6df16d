"""fill --map and check --map: a schedule with its own column names is read as ours, end to end."""

from __future__ import annotations

import json

import openpyxl
import pytest

from conftest import BASE_HEADERS, pipe, write_book

THEIRS = {"Tag": "Line ref", "Insulation": "Insul. mat.", "Operating temperature [°C]": "Design temp",
          "Outside diameter [mm]": "Pipe OD [in]"}


def _their_book(tmp_path, rows):
    """The same lines under the colleague's own headers (OD in inches, temperature without a unit)."""
    heads = [THEIRS.get(h, h) for h in BASE_HEADERS]
    book = []
    for r in rows:
        r = dict(r)
        if r.get("Outside diameter [mm]") is not None:
            r["Outside diameter [mm]"] = r["Outside diameter [mm]"] / 25.4
        book.append({THEIRS.get(h, h): r.get(h) for h in BASE_HEADERS})
    return write_book(tmp_path / "theirs.xlsx", book, heads)


MAPS = ["--map", "Line ref=Tag", "--map", "Insul. mat.=Insulation", "--map", "Design temp=Operating temperature [°C]",
        "--map", "Pipe OD=Outside diameter"]


def test_fill_with_map_gives_the_same_results_as_our_own_headers(tmp_path, cli):
    """Mapped headers (one with its own unit in inches, one given its unit by the map) fill as ours do."""
    rows = [pipe(), pipe("P-2", **{"Size": None, "Outside diameter [mm]": 168.3, "Operating temperature [°C]": 310})]
    ours = write_book(tmp_path / "ours.xlsx", rows)
    assert cli("fill", ours, "-o", tmp_path / "ours-out.xlsx", "--report", tmp_path / "ours.json").exit_code == 0
    r = cli("fill", _their_book(tmp_path, rows), "-o", tmp_path / "theirs-out.xlsx",
            "--report", tmp_path / "theirs.json", *MAPS)
    assert r.exit_code == 0, r.output
    a = json.loads((tmp_path / "ours.json").read_text())["lines"]
    b = json.loads((tmp_path / "theirs.json").read_text())["lines"]
    assert [x["tag"] for x in b] == ["P-1", "P-2"]
    for x, y in zip(a, b, strict=True):
        assert y["results"]["thickness_m"] == x["results"]["thickness_m"]
        assert y["results"]["heat_loss_W"] == pytest.approx(x["results"]["heat_loss_W"], rel=1e-9)
    ws = openpyxl.load_workbook(tmp_path / "theirs-out.xlsx")["Lines"]
    assert ws.cell(1, 1).value == "Line ref"  # their header is kept as they wrote it


def test_without_map_their_sheet_is_refused_naming_the_missing_columns(tmp_path, cli):
    """The same sheet without --map has no Tag header: exit 2, nothing written."""
    r = cli("fill", _their_book(tmp_path, [pipe()]), "-o", tmp_path / "out.xlsx")
    assert r.exit_code == 2 and not (tmp_path / "out.xlsx").exists()


@pytest.mark.parametrize("pair, words", [
    ("Insul. mat.=Colour", "is not a column lagsheet reads"),
    ("Nowhere=Insulation", "not in the header row"),
    ("Insulation", "write it as 'Their header=Insulation'"),
])
def test_a_map_that_cannot_apply_is_one_sentence(tmp_path, cli, pair, words):
    """A map to an unknown field, from a missing column, or without '=': exit 2, one plain sentence."""
    r = cli("fill", _their_book(tmp_path, [pipe()]), "-o", tmp_path / "out.xlsx", *MAPS, "--map", pair)
    assert r.exit_code == 2 and words in r.output and "Traceback" not in r.output
    assert not (tmp_path / "out.xlsx").exists()


def test_check_takes_the_same_map(tmp_path, cli):
    """check --map reads the mapped columns as fill does: no missing-column error, the line's values checked."""
    r = cli("check", _their_book(tmp_path, [pipe()]), *MAPS)
    assert r.exit_code == 0, r.output
    r = cli("check", _their_book(tmp_path, [pipe()]))
    assert r.exit_code != 0
