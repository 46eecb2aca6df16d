"""Summary and Quantities: every total is the sum over the lines, per area, in SI and US units."""

from __future__ import annotations

import numpy as np
import pytest

from lagsheet.commands.fill import fill
from lagsheet.outputs.summary import quantities_table, summary

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
    assert mw[col(q, "Surface area")] == pytest.approx(10)
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


# --------------------------------------------------------------------------- one size, however typed

SIZES = [  # (Size, Outside diameter [mm]) of four lines that are all NPS 2 (ASME B36.10M: 60.3 mm)
    ("NPS 2", None), ('2"', None), ("DN 50", None), (None, 60.3)]


def _two_inch_rows(sizes, extra=()):
    rows = [{"Tag": f"S{k}", "Area": "Yard", "Shape": "pipe", "Size": size, "Outside diameter [mm]": od,
             "Length [m]": 10 + k, "Operating temperature [°C]": 180, "Insulation": "mineral wool",
             "Max surface temperature [°C]": 50} for k, (size, od) in enumerate(sizes)]
    return rows + list(extra)


@pytest.mark.parametrize(
    ("sizes", "label"),
    [
        (SIZES, "DN 50"),  # one each of NPS, inch and DN: a tie, which goes to DN on a millimetre sheet
        ([("NPS 2", None), ("NPS 2", None), ("DN 50", None), (None, 60.3)], "NPS 2"),
        ([('2"', None), ('2"', None), ("NPS 2", None), (None, 60.3)], '2"'),
        ([("DN 50", None), ("DN 50", None), ("NPS 2", None), (None, 60.3)], "DN 50"),
        ([(None, 60.3), (None, 60.3), (None, 60.3), (None, 60.3)], "OD 60.3 mm"),
    ],
)
def test_quantities_give_one_row_per_outside_diameter_labelled_as_the_sheet_does(tmp_path, sizes, label):
    """NPS 2, 2", DN 50 and OD 60.3 mm are one Quantities row, labelled in the style most lines use
    (a tie goes to DN on a millimetre sheet), with the four lines' total length."""
    inputs, res = run(tmp_path, _two_inch_rows(sizes))
    assert all(st != "error" for st in res.status)
    assert len(set(res.chosen.sum(axis=1))) == 1  # one build: the rows differ only by how the size was typed
    q = quantities_table(inputs, res)
    rows = [r for r in q.rows if r and r[0] == "mineral wool"]
    assert len(rows) == 1, rows
    assert rows[0][1] == label
    assert rows[0][col(q, "Lines")] == 4
    assert rows[0][col(q, "Pipe length")] == pytest.approx(10 + 11 + 12 + 13)


def test_an_inch_sheet_with_a_tie_labels_nps(tmp_path):
    """On a sheet in inches, one NPS 2 and one DN 50 make one row labelled NPS 2."""
    head = ["Tag", "Shape", "Size", "Length [ft]", "Operating temperature [°F]", "Insulation",
            "Max surface temperature [°F]"]
    rows = [{"Tag": f"U{k}", "Shape": "pipe", "Size": size, "Length [ft]": 30, "Operating temperature [°F]": 350,
             "Insulation": "mineral wool", "Max surface temperature [°F]": 122} for k, size in enumerate(("DN 50", "NPS 2"))]
    inputs, res = run(tmp_path, rows, head)
    q = quantities_table(inputs, res)
    rows = [r for r in q.rows if r and r[0] == "mineral wool"]
    assert [r[1] for r in rows] == ["NPS 2"] and rows[0][col(q, "Pipe length")] == pytest.approx(60.0)


def test_a_sphere_carries_its_surface_area(tmp_path):
    """A sphere of 2 m outside diameter adds π D² = 12.566 m² to Surface area, not to Pipe length."""
    sphere = {"Tag": "SP", "Area": "Yard", "Shape": "sphere", "Outside diameter [mm]": 2000,
              "Operating temperature [°C]": 150, "Insulation": "mineral wool", "Max surface temperature [°C]": 50}
    inputs, res = run(tmp_path, [sphere])
    assert res.status[0] != "error", res.notes[0]
    q = quantities_table(inputs, res)
    row = next(r for r in q.rows if r and r[0] == "mineral wool")
    assert row[col(q, "Surface area")] == pytest.approx(np.pi * 2.0**2, rel=1e-12)
    assert row[col(q, "Pipe length")] == 0
    assert row[col(q, "Insulation volume")] == pytest.approx(res.quantities.volume[0, 0, 0], rel=1e-12)


# --------------------------------------------------------------------------- totals that leave lines out

COSTED = {"Materials": [["Name", "Cost per volume [EUR/m³]"], ["mineral wool", 400]],
          "Settings": [["Setting", "Value", "Unit"], ["Jacket cost per area", 20, "EUR/m²"],
                       ["Labour per layer", 15, "EUR/m²"]]}


def test_installed_cost_totals_say_how_many_lines_they_cover(tmp_path):
    """Six costed mineral-wool lines and four elastomeric ones without a cost in one area: Installed cost
    is the sum of the six exactly, and 'Totals cover' says '6 of 10 lines' for it and for payback; an
    area whose lines all have costs says nothing."""
    rows = [{"Tag": f"M{k}", "Area": "East", "Shape": "pipe", "Size": "NPS 4", "Length [m]": 5 + k,
             "Operating temperature [°C]": 150, "Insulation": "mineral wool", "Max surface temperature [°C]": 50}
            for k in range(6)]
    rows += [{"Tag": f"E{k}", "Area": "East", "Shape": "pipe", "Size": "NPS 2", "Length [m]": 8,
              "Operating temperature [°C]": 8, "Insulation": "elastomeric foam", "Prevent condensation": "yes"}
             for k in range(4)]
    rows += [{"Tag": f"W{k}", "Area": "West", "Shape": "pipe", "Size": "NPS 3", "Length [m]": 12,
              "Operating temperature [°C]": 150, "Insulation": "mineral wool", "Max surface temperature [°C]": 50}
             for k in range(2)]
    src = write_book(tmp_path / "c.xlsx", rows, HEAD, sheets=COSTED)
    out = fill(src, tmp_path / "c-out.xlsx")
    inputs, res = out.inputs, out.results
    v = res.values
    assert np.isfinite(v["installed_cost"][:6]).all() and np.isnan(v["installed_cost"][6:10]).all()
    s = summary(inputs, res)
    for name, costed, n in (("East", list(range(6)), 10), ("Total", list(range(6)) + [10, 11], 12)):
        row = next(r for r in s.rows if r and r[0] == name)
        assert row[col(s, "Installed cost")] == pytest.approx(v["installed_cost"][costed].sum(), rel=1e-12)
        assert row[col(s, "Payback")] == pytest.approx(
            v["installed_cost"][costed].sum() / v["annual_saving"][costed].sum(), rel=1e-12)
        assert row[col(s, "Totals cover")] == f"Installed cost, Payback: {len(costed)} of {n} lines"
    west = next(r for r in s.rows if r and r[0] == "West")
    assert west[col(s, "Totals cover")] is None
    assert west[col(s, "Installed cost")] == pytest.approx(v["installed_cost"][10:].sum(), rel=1e-12)
    # the written Summary sheet carries the same words
    import openpyxl

    ws = openpyxl.load_workbook(tmp_path / "c-out.xlsx")["Summary"]
    values = [[c.value for c in r] for r in ws.iter_rows()]
    head = next(r for r in values if r and r[0] == "Area")
    total = next(r for r in values if r and r[0] == "Total")
    assert total[head.index("Totals cover")] == "Installed cost, Payback: 8 of 12 lines"


def test_an_error_line_is_counted_out_of_the_totals_and_said_so(tmp_path):
    """A line with an error (no results) is left out of the heat flows, energy, cost and CO2 of its area,
    and 'Totals cover' says 2 of 3; lines without a material cost are out of Installed cost and Payback."""
    inputs, res = run(tmp_path)
    s = summary(inputs, res)
    north = next(r for r in s.rows if r and r[0] == "North")
    south = next(r for r in s.rows if r and r[0] == "South")  # B3 is an error: unknown material
    assert res.status[5] == "error"
    assert "Heat loss, Heat gain, Bare heat loss, Annual energy, Annual cost, Annual saving, CO2: 2 of 3 lines" \
        in south[col(s, "Totals cover")]
    assert "Installed cost, Payback: 0 of 3 lines" in north[col(s, "Totals cover")]


def test_fill_closing_table_and_report_say_how_many_lines_the_totals_cover(tmp_path, cli):
    """With one line of six in error, the report gives 5 lines in each total and fill's closing table
    prints '(5 of 6 lines)' beside the heat loss, cost and saving."""
    import json

    src = write_book(tmp_path / "in.xlsx", ROWS, HEAD)
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    rep = json.loads((tmp_path / "r.json").read_text())
    assert rep["summary"]["errors"] == 1
    assert rep["summary"]["lines_in_totals"] == {"heat_loss_W": 5, "bare_heat_loss_W": 5, "annual_cost": 5,
                                                 "annual_saving": 5}
    assert r.output.count("(5 of 6 lines)") >= 4, r.output


# --------------------------------------------------------------------------- one material in both slots

SAME_HEAD = ["Tag", "Shape", "Size", "Length [m]", "Surface area [m²]", "Operating temperature [°C]", "Insulation",
             "Outer insulation", "Min thickness [mm]", "Fixed thickness [mm]"]
SAME_ROWS = [  # Q-1 mineral wool in both slots, Q-2 plain mineral wool, Q-3 calcium silicate under mineral wool
    {"Tag": "Q-1", "Shape": "pipe", "Size": "DN 50", "Length [m]": 10, "Operating temperature [°C]": 60,
     "Insulation": "mineral wool", "Outer insulation": "mineral wool", "Min thickness [mm]": 40},
    {"Tag": "Q-2", "Shape": "pipe", "Size": "DN 50", "Length [m]": 10, "Operating temperature [°C]": 60,
     "Insulation": "mineral wool", "Fixed thickness [mm]": 20},
    {"Tag": "Q-3", "Shape": "pipe", "Size": "DN 50", "Length [m]": 10, "Operating temperature [°C]": 60,
     "Insulation": "calcium silicate", "Outer insulation": "mineral wool", "Min thickness [mm]": 80},
]


def _sheet_rows(path, name="Quantities"):
    import openpyxl

    ws = openpyxl.load_workbook(path)[name]
    return [[c.value for c in r] for r in ws.iter_rows()]


def test_a_line_with_one_material_in_both_slots_is_counted_once(tmp_path):
    """Q-1 (mineral wool 20 + 20 mm) is one line of 10 m in its own row '20 + 20 mm' of the written
    Quantities sheet; the '20 mm' row holds Q-2 alone and the mineral-wool total is 3 lines and 30 m,
    with the volume of all four mineral-wool slots and the jacket of all three lines."""
    src = write_book(tmp_path / "same.xlsx", SAME_ROWS, SAME_HEAD)
    out = fill(src, tmp_path / "same-out.xlsx")
    res = out.results
    assert res.status == ["ok"] * 3, res.notes
    # the thinnest sold builds that meet each floor: the thicknesses the rows are labelled by
    np.testing.assert_allclose(res.chosen, [[0.02, 0.02], [0.02, 0.0], [0.04, 0.04]], rtol=0, atol=1e-12)
    rows = _sheet_rows(tmp_path / "same-out.xlsx")
    head = next(r for r in rows if r and r[0] == "Material")
    c = {h: head.index(h) for h in head}
    mw = {r[2]: r for r in rows if r and r[0] == "mineral wool"}
    assert list(mw) == ["20 mm", "20 + 20 mm", "40 mm"]  # thin to thick
    assert [mw[b][c["Lines"]] for b in mw] == [1, 1, 1]
    assert [mw[b][c["Pipe length [m]"]] for b in mw] == [10, 10, 10]
    assert all(r[c["Size"]] == "DN 50" for r in mw.values())
    vol, jacket = res.quantities.volume[:, 0, :], res.quantities.jacket_area[:, 0]
    assert mw["20 + 20 mm"][c["Insulation volume [m³]"]] == pytest.approx(vol[0, 0] + vol[0, 1], rel=1e-12)
    assert mw["20 + 20 mm"][c["Jacket area [m²]"]] == pytest.approx(jacket[0], rel=1e-12)
    total = next(r for r in rows if r and r[0] == "mineral wool total")
    assert total[c["Lines"]] == 3 and total[c["Pipe length [m]"]] == 30
    assert total[c["Insulation volume [m³]"]] == pytest.approx(vol[0, 0] + vol[0, 1] + vol[1, 0] + vol[2, 1], rel=1e-12)
    assert total[c["Jacket area [m²]"]] == pytest.approx(jacket.sum(), rel=1e-12)
    cs = next(r for r in rows if r and r[0] == "calcium silicate total")
    assert (cs[c["Lines"]], cs[c["Pipe length [m]"]], cs[c["Jacket area [m²]"]]) == (1, 10, 0)
    assert cs[c["Insulation volume [m³]"]] == pytest.approx(vol[2, 0], rel=1e-12)


@pytest.mark.parametrize("floors", [(40, 40, 40), (60, 40, 40), (80, 80, 60), (100, 80, 80)])
def test_quantities_of_shared_materials_are_the_sums_over_the_lines(tmp_path, floors):
    """With mineral wool in both slots of two pipes and a wall, every row and every material total
    counts each line once (lines, pipe length, wall area, jacket) and adds every slot's volume."""
    q1, q3, wall = floors  # Min thickness of and W-1; Q-4 is Q-1 at 40 mm
    rows = [dict(SAME_ROWS[0], **{"Min thickness [mm]": q1}), SAME_ROWS[1],
            dict(SAME_ROWS[2], **{"Min thickness [mm]": q3}), dict(SAME_ROWS[0], Tag="Q-4"),
            {"Tag": "W-1", "Shape": "wall", "Length [m]": 2, "Surface area [m²]": 12, "Operating temperature [°C]": 60,
             "Insulation": "mineral wool", "Outer insulation": "mineral wool", "Min thickness [mm]": wall}]
    inputs, res = run(tmp_path, rows, SAME_HEAD)
    assert res.status == ["ok"] * 5, res.notes
    q = quantities_table(inputs, res)
    vol, jacket = res.quantities.volume[:, 0, :], res.quantities.jacket_area[:, 0]
    expect: dict[tuple, dict] = {}  # (material, size, its slots' thicknesses [mm]) -> the lines' sums
    for i, L in enumerate(res.lines):
        slots = [j for j in range(len(L.materials)) if res.chosen[i, j] > 0]
        for name in {L.materials[j].name for j in slots}:
            mine = [j for j in slots if L.materials[j].name == name]
            key = (name, "DN 50" if L.word == "pipe" else L.word, tuple(round(res.chosen[i, j] * 1000, 6) for j in mine))
            e = expect.setdefault(key, {"lines": 0, "length": 0.0, "area": 0.0, "volume": 0.0, "jacket": 0.0})
            e["lines"] += 1
            e["length" if L.word == "pipe" else "area"] += L.length if L.word == "pipe" else L.area
            e["volume"] += float(vol[i, mine].sum())
            e["jacket"] += float(jacket[i]) if slots[-1] in mine else 0.0
    got = [r for r in q.rows if r and r[0] in ("mineral wool", "calcium silicate")]
    assert len(got) == len(expect)
    by_material: dict[str, dict] = {}
    for r in got:
        parts = [x.split("×") for x in r[2].replace(" mm", "").split("+")]  # '2 × 40 + 20': slots of 80 and 20
        slot_mm = tuple(round(float(x[0]) * float(x[1]) if len(x) == 2 else float(x[0]), 6) for x in parts)
        e = expect[(r[0], r[1], slot_mm)]
        assert (r[col(q, "Lines")], r[col(q, "Pipe length")], r[col(q, "Surface area")]) == \
            (e["lines"], e["length"], e["area"])
        assert r[col(q, "Insulation volume")] == pytest.approx(e["volume"], rel=1e-12)
        assert r[col(q, "Jacket area")] == pytest.approx(e["jacket"], rel=1e-12)
        t = by_material.setdefault(r[0], {k: 0.0 for k in e})
        for k in e:
            t[k] += e[k]
    for name, t in by_material.items():
        row = next(r for r in q.rows if r and r[0] == f"{name} total")
        assert (row[col(q, "Lines")], row[col(q, "Pipe length")], row[col(q, "Surface area")]) == \
            (t["lines"], t["length"], t["area"])
        assert row[col(q, "Insulation volume")] == pytest.approx(t["volume"], rel=1e-12)
        assert row[col(q, "Jacket area")] == pytest.approx(t["jacket"], rel=1e-12)
    mw = next(r for r in q.rows if r and r[0] == "mineral wool total")
    assert (mw[col(q, "Lines")], mw[col(q, "Pipe length")], mw[col(q, "Surface area")]) == (5, 40, 12)
