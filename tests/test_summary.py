"""Summary and Quantities: every total is the sum over the lines, per area, in SI and US units."""

from __future__ import annotations

import numpy as np
import pytest

from lagsheet.pipeline import fill
from lagsheet.summary import quantities_table, summary

from conftest import write_book

HEAD = ["Tag", "Area", "Shape", "Size", "Outside diameter [mm]", "Length [m]", "Surface area [m²]",
        "Operating temperature [°C]", "Insulation", "Outer insulation", "Max surface temperature [°C]",
        "Prevent condensation", "Min thickness [mm]"]
ROWS = [
    {"Tag": "A1", "Area": "North", "Shape": "pipe", "Size": "NPS 4", "Length [m]": 30, "Operating temperature [°C]": 180,
     "Insulation": "mineral wool", "Max surface temperature [°C]": 50},
    {"Tag": "A2", "Area": "North", "Shape": "pipe", "Size": "NPS 4", "Length [m]": 12, "Operating temperature [°C]": 180,
     "Insulation": "mineral wool", "Max surface temperature [°C]": 50},
    {"Tag": "A3", "Area": "North", "Shape": "wall", "Length [m]": 2, "Surface area [m²]": 10,
     "Operating temperature [°C]": 150, "Insulation": "mineral wool", "Max surface temperature [°C]": 50},
    {"Tag": "B1", "Area": "South", "Shape": "pipe", "Size": "NPS 2", "Length [m]": 40, "Operating temperature [°C]": 6,
     "Insulation": "elastomeric foam", "Prevent condensation": "yes"},
    {"Tag": "B2", "Area": "South", "Shape": "pipe", "Size": "NPS 8", "Length [m]": 20, "Operating temperature [°C]": 480,
     "Insulation": "mineral wool", "Outer insulation": "cellular glass", "Max surface temperature [°C]": 55},
    {"Tag": "B3", "Area": "South", "Shape": "pipe", "Size": "NPS 3", "Length [m]": 5, "Operating temperature [°C]": 200,
     "Insulation": "unobtainium", "Max surface temperature [°C]": 50},
]


def run(tmp_path, rows=ROWS, headers=HEAD, name="in.xlsx"):
    src = write_book(tmp_path / name, rows, headers)
    out = fill(src, tmp_path / ("out-" + name))
    return out.inputs, out.results


def col(table, header):
    heads = next(r for r in table.rows if r and r[0] in ("Area", "Material"))
    return heads.index(next(h for h in heads if h.startswith(header)))


def test_summary_totals_are_the_sums_over_the_lines_per_area(tmp_path):
    """Heat loss, gain, bare loss, energy, cost, saving and CO2 per area and in total equal the line sums."""
    inputs, res = run(tmp_path)
    s = summary(inputs, res)
    v = res.values
    areas = {"North": [0, 1, 2], "South": [3, 4, 5]}
    by_name = {r[0]: r for r in s.rows if r and r[0] in ("North", "South", "Total")}
    for name, idx in {**areas, "Total": list(range(6))}.items():
        row = by_name[name]
        ok = [i for i in idx if np.isfinite(v["heat_loss"][i])]
        loss = np.array([v["heat_loss"][i] for i in ok])
        assert row[col(s, "Lines")] == len(idx)
        assert row[col(s, "Errors")] == sum(res.status[i] == "error" for i in idx)
        assert row[col(s, "Heat loss")] == pytest.approx(loss[loss > 0].sum() / 1000, rel=1e-12)
        assert row[col(s, "Heat gain")] == pytest.approx(-loss[loss < 0].sum() / 1000, rel=1e-12, abs=1e-15)
        assert row[col(s, "Bare heat loss")] == pytest.approx(sum(abs(v["bare_heat_loss"][i]) for i in ok) / 1000, rel=1e-12)
        assert row[col(s, "Annual energy")] == pytest.approx(sum(abs(v["annual_energy"][i]) for i in ok) / 1000, rel=1e-12)
        assert row[col(s, "Annual cost")] == pytest.approx(sum(v["annual_cost"][i] for i in ok), rel=1e-12)
        assert row[col(s, "Annual saving")] == pytest.approx(sum(v["annual_saving"][i] for i in ok), rel=1e-12)
        assert row[col(s, "CO2")] == pytest.approx(sum(v["co2"][i] for i in ok) / 1000, rel=1e-12)


def test_quantities_equal_the_sums_over_the_lines(tmp_path):
    """Pipe length, flat area, volume and jacket area per material add up to the chosen systems."""
    inputs, res = run(tmp_path)
    q = quantities_table(inputs, res)
    totals = {r[0][:-len(" total")]: r for r in q.rows if r and isinstance(r[0], str) and r[0].endswith(" total")}
    assert set(totals) == {"mineral wool", "elastomeric foam", "cellular glass"}
    mw = totals["mineral wool"]
    assert mw[col(q, "Lines")] == 4  # A1, A2, A3 and the inner layer of B2
    assert mw[col(q, "Pipe length")] == pytest.approx(30 + 12 + 20)
    assert mw[col(q, "Flat area")] == pytest.approx(10)
    vol = sum(res.quantities.volume[i, 0, 0] for i in (0, 1, 2, 4))
    assert mw[col(q, "Insulation volume")] == pytest.approx(vol, rel=1e-12)
    # the jacket goes on the outer material only
    assert mw[col(q, "Jacket area")] == pytest.approx(sum(res.quantities.jacket_area[i, 0] for i in (0, 1, 2)), rel=1e-12)
    cg = totals["cellular glass"]
    assert cg[col(q, "Jacket area")] == pytest.approx(res.quantities.jacket_area[4, 0], rel=1e-12)
    # the two NPS 4 lines of equal build are one row
    rows = [r for r in q.rows if r and r[0] == "mineral wool" and r[1] == "NPS 4"]
    assert len(rows) == 1 and rows[0][col(q, "Lines")] == 2


def test_the_same_schedule_in_us_units_gives_the_same_totals(tmp_path):
    """Summary in MBtu/h and MMBtu equals the SI summary converted (NIST SP 811: 1 Btu/h = 0.29307107 W)."""
    si_rows = [{"Tag": "P1", "Area": "X", "Shape": "pipe", "Outside diameter [mm]": 168.3, "Length [m]": 30.48,
                "Operating temperature [°C]": 180, "Insulation": "mineral wool", "Fixed thickness [mm]": 76.2}]
    us_head = ["Tag", "Area", "Shape", "Outside diameter [in]", "Length [ft]", "Operating temperature [°F]",
               "Insulation", "Fixed thickness [in]"]
    us_rows = [{"Tag": "P1", "Area": "X", "Shape": "pipe", "Outside diameter [in]": 168.3 / 25.4, "Length [ft]": 100,
                "Operating temperature [°F]": 356, "Insulation": "mineral wool", "Fixed thickness [in]": 3}]
    a_in, a_res = run(tmp_path, si_rows, HEAD + ["Fixed thickness [mm]"], name="si.xlsx")
    b_in, b_res = run(tmp_path, us_rows, us_head, name="us.xlsx")
    sa, sb = summary(a_in, a_res), summary(b_in, b_res)
    ra = next(r for r in sa.rows if r and r[0] == "Total")
    rb = next(r for r in sb.rows if r and r[0] == "Total")
    assert "[MBtu/h]" in sb.rows[3][4] and "[MMBtu]" in sb.rows[3][7]
    assert rb[4] * 1000 * 0.29307107 == pytest.approx(ra[4] * 1000, rel=1e-3)
    assert rb[7] * 293.07107 == pytest.approx(ra[7] * 1000, rel=1e-3)  # 1 MMBtu = 293.07107 kWh
    qb = quantities_table(b_in, b_res)
    row = next(r for r in qb.rows if r and r[0] == "mineral wool total")
    assert row[4] == pytest.approx(100.0, rel=1e-9)  # feet of pipe


def _soffice():
    import os
    import shutil

    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None:
        if os.environ.get("CI", "").lower() in ("true", "1", "yes"):
            pytest.fail("LibreOffice (soffice) is needed under CI; .ci/run installs it")
        pytest.skip("LibreOffice (soffice) is not installed here")
    return exe


def test_the_filled_demo_opens_in_libreoffice_and_its_summary_has_the_same_totals(tmp_path, cli):
    """LibreOffice converts the filled demo's Summary to CSV; its Total row equals the report's totals."""
    import csv
    import json
    import subprocess

    exe = _soffice()
    assert cli("demo", tmp_path).exit_code == 0
    rep = json.loads((tmp_path / "demo-plant-report.json").read_text())
    subprocess.run([exe, "--headless", f"-env:UserInstallation=file://{tmp_path}/lo-profile", "--convert-to",
                    "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,-1",
                    "--outdir", str(tmp_path / "csv"), str(tmp_path / "demo-plant-filled.xlsx")],
                   check=True, capture_output=True, timeout=240)
    with (tmp_path / "csv" / "demo-plant-filled-Summary.csv").open(encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    head = next(r for r in rows if r and r[0] == "Area")
    total = next(r for r in rows if r and r[0] == "Total")
    value = dict(zip(head, total, strict=False))
    assert int(value["Lines"]) == rep["summary"]["lines"]
    assert float(value["Heat loss [kW]"]) == pytest.approx(
        sum(x["results"]["heat_loss_W"] for x in rep["lines"] if (x["results"]["heat_loss_W"] or 0) > 0) / 1000, rel=1e-6)
    assert float(value["Annual cost [EUR]"]) == pytest.approx(rep["summary"]["annual_cost"], rel=1e-6)
    assert float(value["Annual saving [EUR]"]) == pytest.approx(rep["summary"]["annual_saving"], rel=1e-6)
