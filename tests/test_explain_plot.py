"""explain prints each dimensionless group beside the length it is based on; plots show both curves and
the sign of the heat flow."""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
from ht.conv_free_immersed import Nu_horizontal_cylinder_Churchill_Chu, Nu_vertical_plate_Churchill

from lagsheet.commands.fill import fill
from lagsheet.outputs.plot import figure

from conftest import BASE_HEADERS, pipe, write_book

HEAD = BASE_HEADERS + ["Surface area [m²]"]
ROWS = [pipe("R-1", **{"Shape": "riser", "Length [m]": 6}), pipe("P-1"),
        pipe("W-1", **{"Shape": "wall", "Size": None, "Length [m]": 3, "Surface area [m²]": 12}),
        pipe("C-1", **{"Operating temperature [°C]": -40, "Insulation": "cellular glass",
                       "Max surface temperature [°C]": None, "Prevent condensation": "yes"})]
FREE = re.compile(r"free convection: .*?, on the (.+?) L = ([\d.e+-]+) m: Ra = ([\d.e+-]+), Nu = ([\d.e+-]+)")
PR = re.compile(r"Pr = ([\d.]+)")


@pytest.fixture
def book(tmp_path):
    src = write_book(tmp_path / "in.xlsx", ROWS, HEAD)
    out = fill(src, tmp_path / "out.xlsx", report_path=tmp_path / "r.json")
    return src, out, {x["tag"]: x for x in json.loads((tmp_path / "r.json").read_text())["lines"]}


@pytest.mark.parametrize(("tag", "where", "oracle"), [
    ("R-1", "height", Nu_vertical_plate_Churchill),
    ("W-1", "height", Nu_vertical_plate_Churchill),
    ("P-1", "outer diameter", Nu_horizontal_cylinder_Churchill_Chu),
])
def test_explain_prints_ra_and_nu_on_one_named_length(book, cli, tag, where, oracle):
    """The printed free-convection Nu is the correlation's value at the printed Ra (ht, Gr = Ra/Pr), on the
    printed length: the height of a riser or wall, the insulated outer diameter of a pipe."""
    src, _, lines = book
    out = cli("explain", src, tag).output
    m = FREE.search(out)
    assert m, out
    name, length, ra, nu = m.group(1), float(m.group(2)), float(m.group(3)), float(m.group(4))
    pr = float(PR.search(out).group(1))
    assert name == where
    assert nu == pytest.approx(oracle(pr, ra / pr), rel=1e-3)
    if tag == "P-1":
        assert length == pytest.approx(0.1143 + 2 * lines[tag]["results"]["thickness_m"], abs=1e-4)
    else:
        assert length == pytest.approx(ROWS[[r["Tag"] for r in ROWS].index(tag)]["Length [m]"])


@pytest.mark.parametrize("tag", ["C-1", "P-1"])
def test_the_plot_shows_signed_heat_flow_and_two_distinct_curves(book, tag):
    """Gains plot below zero with a label that says so; the two curves differ in axis, style and marker;
    the heat-flow curve passes through the reported value at the chosen thickness."""
    _, out, lines = book
    i = [t for t in out.results.tags].index(tag)
    fig = figure(out.inputs, out.results, i)
    ax1, ax2 = fig.axes
    (q_line,) = [x for x in ax1.get_lines() if x.get_marker() == "o"]
    (t_line,) = [x for x in ax2.get_lines() if x.get_marker() == "s"]
    assert q_line.get_linestyle() != t_line.get_linestyle() and q_line.get_color() != t_line.get_color()
    x, q = q_line.get_xdata(), q_line.get_ydata()
    r = lines[tag]["results"]
    cold = tag == "C-1"
    assert (np.all(q < 0) and "heat gained" in q_line.get_label()) if cold else np.all(q > 0)
    assert np.interp(r["thickness_m"] * 1000, x, q) == pytest.approx(r["heat_loss_per_length_W_m"], rel=0.01)


def test_explain_plot_writes_a_png(book, cli, tmp_path):
    """explain --plot on a cold line writes a PNG file."""
    src, _, _ = book
    r = cli("explain", src, "C-1", "--plot", tmp_path / "c.png")
    assert r.exit_code == 0 and (tmp_path / "c.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_the_plot_of_an_inch_sheet_is_in_btu(tmp_path):
    """On a sheet in °F and inches the heat-flow curve is in Btu/(h·ft): the report's W/m ÷ 0.9615194 (NIST SP 811)."""
    head = ["Tag", "Shape", "Size", "Length [ft]", "Operating temperature [°F]", "Insulation",
            "Max surface temperature [°F]"]
    row = {"Tag": "U-1", "Shape": "pipe", "Size": "NPS 4", "Length [ft]": 30, "Operating temperature [°F]": 392,
           "Insulation": "mineral wool", "Max surface temperature [°F]": 131}
    src = write_book(tmp_path / "us.xlsx", [row], head)
    out = fill(src, tmp_path / "out.xlsx", report_path=tmp_path / "r.json")
    r = json.loads((tmp_path / "r.json").read_text())["lines"][0]["results"]
    fig = figure(out.inputs, out.results, 0)
    (q_line,) = [x for x in fig.axes[0].get_lines() if x.get_marker() == "o"]
    assert "Btu/(h·ft)" in q_line.get_label() and "[in]" in fig.axes[1].get_xlabel()
    at = np.interp(r["thickness_m"] / 0.0254, q_line.get_xdata(), q_line.get_ydata())
    assert at == pytest.approx(r["heat_loss_per_length_W_m"] / 0.9615194, rel=0.01)
