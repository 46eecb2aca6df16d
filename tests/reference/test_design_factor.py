"""'Design factor' on the Materials sheet: declared -> design conductivity (ISO 23993:2008 separates
the declared value from the design value by factors for ageing, moisture and installation;
VDI 2055-1 §4.1.2 the operating conductivity). It multiplies k everywhere.

The engine is checked against the closed form of conduction through a cylinder with k linear
in temperature: q′ = 2π k(T_mean) (T_in − T_out) / ln(r₂/r₁) (the integral mean of a linear
k is its value at the mean of the face temperatures; ASTM C680's approach), with the design
k = factor × declared.
"""

from __future__ import annotations

import json
import math

import pytest

from conftest import write_book

HEAD = ["Tag", "Shape", "Outside diameter [mm]", "Length [m]", "Operating temperature [°C]", "Insulation",
        "Fixed thickness [mm]"]
MATERIALS = [["Name", "Mean temperature [°C]", "Conductivity [W/(m·K)]", "Design factor [1]"],
             ["declared", 0, 0.040, None], ["declared", 400, 0.080, None],
             ["aged", 0, 0.040, 1.25], ["aged", 400, 0.080, None]]


def declared_k(t_c: float) -> float:
    return 0.040 + 0.040 * t_c / 400


def book(tmp_path, materials=MATERIALS):
    rows = [{"Tag": tag, "Shape": "pipe", "Outside diameter [mm]": 114.3, "Length [m]": 10,
             "Operating temperature [°C]": 250, "Insulation": mat, "Fixed thickness [mm]": 50}
            for tag, mat in (("D", "declared"), ("A", "aged"))]
    return write_book(tmp_path / "in.xlsx", rows, HEAD, sheets={"Materials": materials})


@pytest.mark.parametrize("tag, factor", [("D", 1.0), ("A", 1.25)])
def test_the_engine_conducts_with_the_design_k(tmp_path, cli, tag, factor):
    r = cli("fill", book(tmp_path), "-o", tmp_path / "o.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code == 0, r.output
    res = {x["tag"]: x["results"] for x in json.loads((tmp_path / "r.json").read_text())["lines"]}[tag]
    t_s = res["surface_temperature_K"] - 273.15
    r1, r2 = 0.05715, 0.05715 + 0.050
    q = 2 * math.pi * factor * declared_k(0.5 * (250 + t_s)) * (250 - t_s) / math.log(r2 / r1)
    assert res["heat_loss_per_length_W_m"] == pytest.approx(q, rel=1e-6)


def test_explain_shows_the_declared_and_the_design_k(tmp_path, cli):
    r = cli("explain", book(tmp_path), "A")
    assert r.exit_code == 0, r.output
    layer = next(x for x in r.output.splitlines() if "mm aged:" in x)
    k = float(layer.split("k = ")[1].split()[0])
    declared = float(layer.split("declared ")[1].split()[0])
    assert "'Design factor' 1.25" in layer and declared == pytest.approx(k / 1.25, abs=1e-4)
    plain = next(x for x in cli("explain", book(tmp_path), "D").output.splitlines() if "mm declared:" in x)
    assert "Design factor" not in plain


@pytest.mark.parametrize("value", [0.9, 0, 6])
def test_check_refuses_a_factor_below_1_or_implausibly_large_naming_the_cell(tmp_path, cli, value):
    mats = [list(r) for r in MATERIALS]
    mats[3][3] = value
    r = cli("check", book(tmp_path, mats), "--report", tmp_path / "c.json")
    assert r.exit_code == 1
    notes = json.loads((tmp_path / "c.json").read_text())["notes"]
    bad = [n for n in notes if n["sheet"] == "Materials" and n["level"] == "error" and n["cell"] == "D4"]
    assert bad and "'Design factor' must be >= 1 and <= 5" in bad[0]["message"]
    line = [n for n in notes if n["sheet"] == "Lines" and n["code"] == "bad-material"]
    assert line and "Materials!A4" in line[0]["message"]  # the line naming it points to the material's row


def test_the_calculation_package_lists_the_design_k_and_says_so(tmp_path, cli):
    from test_calcs import _require_poppler, pages

    _require_poppler()
    assert cli("fill", book(tmp_path), "-o", tmp_path / "o.xlsx").exit_code == 0
    r = cli("calcs", tmp_path / "o.xlsx", "-o", tmp_path / "c.pdf", "--all")
    assert r.exit_code == 0, r.output
    text = "\n".join(pages(tmp_path / "c.pdf"))
    block = text[text.index("\naged"):][:1500]  # the material's block: its words and its k(T) table
    assert "design value: declared × 'Design factor' 1.25" in " ".join(block.split())
    assert "0.0500" in block and "0.1000" in block  # 0.040 and 0.080 declared, × 1.25
