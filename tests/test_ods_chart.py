"""The .ods Summary carries its chart as LibreOffice stores one: an embedded chart object that
the ODF 1.3 schema accepts and that LibreOffice draws when it prints the sheet."""

from __future__ import annotations

import re
import subprocess
import zipfile

import pytest

from roundtrip.checks import require_soffice
from roundtrip.corpus import soffice
from roundtrip.validators import new_findings, require_validators
from test_ods import make_ods
from test_print_layout import _require_poppler

HEAD = ["Tag", "Area", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
        "Max surface temperature [°C]"]
ROWS = [["P-1", "North yard", "pipe", "NPS 4", 40, 200, "mineral wool", 55],
        ["P-2", "South yard", "pipe", "NPS 6", 25, 180, "mineral wool", 55],
        ["P-3", "South yard", "pipe", "NPS 2", 60, 150, "mineral wool", 55]]


@pytest.fixture(scope="module")
def filled(tmp_path_factory, cli_module):
    folder = tmp_path_factory.mktemp("odschart")
    src = make_ods(folder / "in.ods", [HEAD, *ROWS])
    r = cli_module("fill", src, "-o", folder / "out.ods")
    assert r.exit_code == 0, r.output
    return src, folder / "out.ods", folder


@pytest.fixture(scope="module")
def cli_module():
    from typer.testing import CliRunner

    from lagsheet.cli import app

    def run(*args):
        return CliRunner().invoke(app, [str(a) for a in args], catch_exceptions=False)

    return run


def _objects(path) -> tuple[list[str], str, str]:
    with zipfile.ZipFile(path) as z:
        content = z.read("content.xml").decode()
        manifest = z.read("META-INF/manifest.xml").decode()
        folders = sorted({n.split("/")[0] for n in z.namelist() if n.startswith("lagsheet chart")})
    return folders, content, manifest


def test_the_summary_links_one_chart_object_listed_in_the_manifest(filled):
    _src, out, _ = filled
    folders, content, manifest = _objects(out)
    assert folders == ["lagsheet chart 1"]
    summary = content[content.index('table:name="Summary"'):]
    assert re.search(r'<draw:object [^>]*xlink:href="\./lagsheet chart 1"', summary)
    assert ('manifest:full-path="lagsheet chart 1/" manifest:version="1.3" '
            'manifest:media-type="application/vnd.oasis.opendocument.chart"') in manifest
    with zipfile.ZipFile(out) as z:
        chart = z.read("lagsheet chart 1/content.xml").decode()
    # its data are the Summary's cells: the areas, the heat loss and the bare heat loss columns
    assert 'chart:categories table:cell-range-address="Summary.A5:Summary.A6"' in chart
    assert 'chart:values-cell-range-address="Summary.E5:Summary.E6"' in chart
    assert 'chart:values-cell-range-address="Summary.G5:Summary.G6"' in chart


def test_the_chart_object_passes_the_odf_schema(filled):
    require_validators()
    src, out, _ = filled
    assert new_findings(src, out) == []


def test_a_refill_replaces_our_chart_and_keeps_one(filled, cli_module, tmp_path):
    _src, out, _ = filled
    again = tmp_path / "again.ods"
    r = cli_module("fill", out, "-o", again)
    assert r.exit_code == 0, r.output
    folders, content, manifest = _objects(again)
    assert folders == ["lagsheet chart 1"]
    assert content.count("<draw:object ") == 1
    assert manifest.count('full-path="lagsheet chart 1/"') == 1


def test_libreoffice_draws_the_chart(filled):
    """Printed by LibreOffice: a page holds the chart's title, its series names and the areas on its axis."""
    require_soffice()
    _require_poppler()
    _src, out, folder = filled
    soffice(["--convert-to", "pdf", "--outdir", str(folder), str(out)], folder / "lo-profile")
    pdf = folder / "out.pdf"
    text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True,
                          timeout=60).stdout
    pages = [" ".join(p.split()) for p in text.split("\f")]
    words = ("Heat loss by area, insulated and bare [kW]", "Heat loss [kW]", "Bare heat loss [kW]", "North yard",
             "South yard")
    # the chart starts a page (a manual break before its row); a sliver of its frame may show on the page before
    assert any(all(w in p for w in words) for p in pages), [p for p in pages if words[0] in p]
