"""The filled workbook prints on few landscape pages: our sheets fit the page width, the chart fits one page.

Printed by LibreOffice (``soffice --convert-to pdf``) and measured with poppler's
``pdfinfo``/``pdftotext``. A sheet whose owner chose a page setup keeps it.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import zipfile
from pathlib import Path

import openpyxl
import pytest

from roundtrip.checks import require_soffice
from roundtrip.corpus import soffice

from conftest import pipe, write_book


def _require_poppler() -> None:
    if shutil.which("pdfinfo") and shutil.which("pdftotext"):
        return
    if os.environ.get("CI", "").strip().lower() in ("true", "1", "yes"):
        pytest.fail("poppler-utils (pdfinfo, pdftotext) are required on CI")
    pytest.skip("poppler-utils are not installed here; CI runs this check")


@pytest.fixture(scope="module")
def demo_pdf(tmp_path_factory) -> tuple[list[tuple[float, float]], list[str]]:
    """The demo's filled workbook printed to PDF: each page's (width, height) in pt and its text."""
    require_soffice()
    _require_poppler()
    from typer.testing import CliRunner

    from lagsheet.cli import app

    folder = tmp_path_factory.mktemp("print")
    r = CliRunner().invoke(app, ["demo", str(folder / "demo"), "-q"], catch_exceptions=False)
    assert r.exit_code in (0, 1), r.output
    soffice(["--convert-to", "pdf", "--outdir", str(folder), str(folder / "demo" / "demo-plant-filled.xlsx")],
            folder / "lo-profile")
    pdf = folder / "demo-plant-filled.pdf"
    assert pdf.is_file()
    info = subprocess.run(["pdfinfo", "-f", "1", "-l", "999", str(pdf)], capture_output=True, text=True,
                          timeout=60).stdout
    sizes = [(float(w), float(h)) for w, h in re.findall(r"Page\s+\d+ size:\s+([\d.]+) x ([\d.]+)", info)]
    texts = [subprocess.run(["pdftotext", "-layout", "-f", str(k), "-l", str(k), str(pdf), "-"],
                            capture_output=True, text=True, timeout=60).stdout for k in range(1, len(sizes) + 1)]
    return sizes, texts


def test_demo_prints_on_few_pages(demo_pdf):
    """The filled demo prints on at most 14 pages (45 before its sheets had a page setup)."""
    sizes, _texts = demo_pdf
    assert 0 < len(sizes) <= 14, len(sizes)


def _pages(texts: list[str], first_words: str, until: str | None) -> list[int]:
    """The pages from the one that starts with ``first_words`` up to (not including) the one with ``until``."""
    start = next(k for k, t in enumerate(texts) if t.lstrip().startswith(first_words))
    end = next((k for k in range(start + 1, len(texts)) if until and until in texts[k]), len(texts))
    return list(range(start, end))


@pytest.mark.parametrize("sheet, first, until", [
    ("Lines", "Demo plant", "Ambient"),
    ("Summary", "lagsheet summary", "lagsheet quantities"),
    ("Quantities", "lagsheet quantities", None),
])
def test_result_sheets_print_landscape_and_few_pages_wide(demo_pdf, sheet, first, until):
    """Lines, Summary and Quantities print in landscape on at most 4 pages each."""
    sizes, texts = demo_pdf
    pages = _pages(texts, first, until)
    assert 0 < len(pages) <= 5, (sheet, pages)  # the demo's Lines: 5 pages wide since the round-2 inputs
    assert all(sizes[k][0] > sizes[k][1] for k in pages), (sheet, [sizes[k] for k in pages])


def test_chart_prints_whole_on_one_page(demo_pdf):
    """The Summary chart's title, value axis and legend are on one single page (no part of it on another)."""
    _sizes, texts = demo_pdf
    with_title = [k for k, t in enumerate(texts) if "Heat loss by area" in t]
    assert len(with_title) == 1, with_title  # the title is printed once: the chart is not cut
    page = texts[with_title[0]]
    ticks = re.findall(r"^\s*([\d,]+)\s*$", page, re.M)  # the value axis labels, one per line
    assert "0" in ticks and len(ticks) >= 4, ticks
    assert "Bare heat loss [kW]" in page and "Boiler house" in page


def test_text_result_columns_are_not_cut(demo_pdf):
    """The Layers and Governing cells print their whole text (columns as wide as what they hold)."""
    _sizes, texts = demo_pdf
    lines = "".join(texts[k] for k in _pages(texts, "Demo plant", "Ambient"))
    assert "60 mm mineral wool" in lines
    assert "surface temperature" in lines


def _lines_sheet_xml(path: Path) -> str:
    with zipfile.ZipFile(path) as z:
        return z.read("xl/worksheets/sheet1.xml").decode("utf-8")


def test_a_page_setup_of_the_user_is_kept(cli, tmp_path):
    """A Lines sheet with its own page setup (portrait, A4) keeps it byte for byte; one without gets landscape."""
    own = write_book(tmp_path / "own.xlsx", [pipe("P-1"), pipe("P-2")])
    wb = openpyxl.load_workbook(own)
    wb["Lines"].page_setup.orientation = "portrait"
    wb["Lines"].page_setup.paperSize = 9
    wb.save(own)
    bare = write_book(tmp_path / "bare.xlsx", [pipe("P-1"), pipe("P-2")])
    for src in (own, bare):
        r = cli("fill", src, "-o", tmp_path / f"{src.stem}-out.xlsx", "-q")
        assert r.exit_code == 0, r.output
    setup = re.compile(r"<pageSetup\b[^>]*/>")
    before = setup.findall(_lines_sheet_xml(own))
    assert before and setup.findall(_lines_sheet_xml(tmp_path / "own-out.xlsx")) == before
    assert "fitToPage" not in _lines_sheet_xml(tmp_path / "own-out.xlsx")
    got = setup.findall(_lines_sheet_xml(tmp_path / "bare-out.xlsx"))
    assert len(got) == 1 and 'orientation="landscape"' in got[0] and 'fitToHeight="0"' in got[0], got
    assert 1 <= int(re.search(r'fitToWidth="(\d+)"', got[0]).group(1)) <= 3, got
    assert '<pageSetUpPr fitToPage="1"/>' in _lines_sheet_xml(tmp_path / "bare-out.xlsx")
