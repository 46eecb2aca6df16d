"""The post-write check: a written file that lost a part or changed an original cell is refused."""

from __future__ import annotations

import zipfile

import pytest

from lagsheet.errors import WorkbookError
from lagsheet.io.table import RawSheet, kept, post_write_check


def test_kept_names_the_original_cells_that_changed():
    """Cells lagsheet wrote may change; any other original cell that changed is named."""
    before = RawSheet("Lines", [["Tag", "Size"], ["P1", "NPS 4"], ["P2", 2.5]])
    after = [["Tag", "Size", "Thickness [mm]"], ["P1", "NPS 6", 50.0], ["P2", 2.5, 40.0]]
    assert kept(before, after, {(0, 2), (1, 2), (2, 2)}) == ["B2"]
    assert kept(before, [r[:] for r in before.grid], set()) == []


def test_a_written_file_missing_a_part_is_refused(tmp_path):
    """The check compares the part list of the output with the input's."""
    out = tmp_path / "out.xlsx"
    with zipfile.ZipFile(out, "w") as z:
        z.writestr("[Content_Types].xml", "<Types/>")
    with pytest.raises(WorkbookError, match="lacks parts of the input"):
        post_write_check(out, {}, {}, {"[Content_Types].xml", "xl/media/image1.png"})


def test_fill_output_passes_its_own_post_write_check(tmp_path, cli):
    """A normal fill writes, and its Summary and Quantities sheets come with it."""
    import openpyxl

    from conftest import pipe, write_book

    src = write_book(tmp_path / "in.xlsx", [pipe(), pipe("P-2", **{"Size": "NPS 8"})])
    r = cli("fill", src, "-o", tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    wb = openpyxl.load_workbook(tmp_path / "out.xlsx")
    assert wb.sheetnames == ["Lines", "Summary", "Quantities"]
    assert wb["Summary"]["A1"].value == "lagsheet summary"
    # a second run replaces our sheets rather than adding more
    r = cli("fill", tmp_path / "out.xlsx", "-o", tmp_path / "again.xlsx")
    assert openpyxl.load_workbook(tmp_path / "again.xlsx").sheetnames == ["Lines", "Summary", "Quantities"]


def test_an_xlsx_result_written_on_the_wrong_row_stops_the_save(tmp_path, cli, monkeypatch):
    """The post-write check reads the results back in .xlsx too: a writer that puts the line above's
    results in a row (cell references and all, so every original cell is kept) writes nothing, exit 2."""
    import re

    from lagsheet.io import xlsx

    from conftest import pipe, write_book

    real = xlsx._Run.joined

    def slipped(self, r):
        if r - 1 not in self.index:
            return real(self, r)
        return re.sub(r'( r="[A-Z]+)\d+"', lambda m: f'{m.group(1)}{r + 1}"', real(self, r - 1))

    src = write_book(tmp_path / "in.xlsx", [pipe("P-1"), pipe("P-2", **{"Size": "NPS 8"}), pipe("P-3")])
    monkeypatch.setattr(xlsx._Run, "joined", slipped)
    out = tmp_path / "out.xlsx"
    r = cli("fill", src, "-o", out, "-q")
    assert r.exit_code == 2, r.output
    assert not out.exists()
    assert "where they belong (Lines!" in r.output and "nothing was written" in r.output
    monkeypatch.setattr(xlsx._Run, "joined", real)
    assert cli("fill", src, "-o", out, "-q").exit_code == 0  # the same fill, unslipped, writes
