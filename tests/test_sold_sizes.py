"""Sold sizes only, and an honest Governing: what the estimator is handed is what can be bought."""

from __future__ import annotations

import json
import re

import pytest

from lagsheet.library import materials
from lagsheet.pipeline import fill

from conftest import pipe, write_book

THINNEST_MW = materials()["mineral wool"].thicknesses[0]  # m


def run(tmp_path, rows, name="in.xlsx", **kw):
    src = write_book(tmp_path / name, rows, **kw)
    fill(src, tmp_path / ("out-" + name), report_path=tmp_path / (name + ".json"))
    return src, json.loads((tmp_path / (name + ".json")).read_text())["lines"]


@pytest.mark.parametrize(("row", "word"), [
    (pipe(**{"Operating temperature [°C]": 180, "Condition": "outdoor"}), "thinnest sold"),
    (pipe(**{"Operating temperature [°C]": 60, "Max surface temperature [°C]": None,
             "Min thickness [mm]": 20}), "thinnest sold"),
    (pipe(**{"Operating temperature [°C]": 60, "Max surface temperature [°C]": None,
             "Min thickness [mm]": 25}), "minimum"),
    (pipe(**{"Min thickness [mm]": 20}), "surface temperature"),
    (pipe(**{"Max surface temperature [°C]": None, "Fixed thickness [mm]": 20}), "fixed"),
])
def test_governing_says_thinnest_sold_when_no_target_binds(tmp_path, row, word):
    """Governing names a target only when it lifts the thickness above the thinnest sold one."""
    _, (line,) = run(tmp_path, [row])
    r = line["results"]
    assert r["governing"] == word
    if word == "thinnest sold":
        assert r["thickness_m"] == pytest.approx(THINNEST_MW)
    else:
        assert r["thickness_m"] > THINNEST_MW or word == "fixed"


def test_explain_shows_each_targets_own_thickness_and_margin(tmp_path, cli):
    """explain prints the surface target's own thinnest thickness and its margin, limit minus reported surface."""
    src, (line,) = run(tmp_path, [pipe(**{"Operating temperature [°C]": 180, "Condition": "outdoor"})])
    out = cli("explain", src, "P-1").output
    m = re.search(r"surface temperature: (\d+) mm; margin \+(\d+\.\d) K", out)
    assert m, out
    assert float(m.group(1)) == pytest.approx(THINNEST_MW * 1000)
    margin = 55.0 - (line["results"]["surface_temperature_K"] - 273.15)
    assert float(m.group(2)) == pytest.approx(margin, abs=0.051)
    assert margin > 20
    assert "governing: thinnest sold" in out
