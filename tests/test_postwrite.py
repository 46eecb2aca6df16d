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
