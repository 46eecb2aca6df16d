"""Economics: the capital recovery factor against published annuity factors, and the
economic thickness of a whole run against a brute force over the sold thicknesses.

Published factors: 0.0578 at 4 %/30 years and 0.0726 at 6 %/30 years (a European
insulation-industry report on economic thickness following VDI 2055, REFERENCES.md).
The annualised cost is capital recovery factor x installed cost + annual energy cost
(REFERENCES.md, Economics).
"""

from __future__ import annotations

import json

import numpy as np
import openpyxl
import pytest

from lagsheet.commands.fill import fill
from lagsheet.design.economics import capital_recovery_factor
from lagsheet.workbook import library

# ---------------------------------------------------------------- capital recovery factor


@pytest.mark.parametrize("rate, years, published", [
    (0.04, 30, 0.0578),  # European insulation-industry report following VDI 2055 (REFERENCES.md)
    (0.06, 30, 0.0726),  # same source
])
def test_crf_matches_published_annuity_factors(rate, years, published):
    """capital_recovery_factor rounds to the published annuity factor at 4 decimals."""
    assert round(float(capital_recovery_factor(rate, years)), 4) == published


@pytest.mark.parametrize("rate", [0.01, 0.03, 0.05, 0.08, 0.12, 0.25])
@pytest.mark.parametrize("years", [1, 5, 10, 20, 40])
def test_crf_repays_the_capital_over_the_service_life(rate, years):
    """n equal yearly payments of the factor, discounted at the rate, are worth exactly 1 today."""
    a = float(capital_recovery_factor(rate, years))
    # present value of an annuity: sum of a / (1 + i)^t over t = 1..n (definition of the
    # annuity factor); closed form i (1+i)^n / ((1+i)^n - 1) (REFERENCES.md)
    present = sum(a / (1 + rate) ** t for t in range(1, years + 1))
    assert present == pytest.approx(1.0, rel=1e-12)
    closed = rate * (1 + rate) ** years / ((1 + rate) ** years - 1)
    assert a == pytest.approx(closed, rel=1e-12)


@pytest.mark.parametrize("years", [1, 10, 20, 30])
def test_crf_at_zero_rate_is_one_over_n(years):
    """At a zero rate the factor is 1/n (undiscounted repayment), and it is the limit of small rates."""
    assert float(capital_recovery_factor(0.0, years)) == pytest.approx(1.0 / years, rel=1e-15)
    assert float(capital_recovery_factor(1e-7, years)) == pytest.approx(1.0 / years, rel=1e-5)


def test_crf_array_equals_scalar_calls():
    """An array of rates gives the scalar results element by element, zero included, with no warning."""
    rates = np.array([0.0, 0.02, 0.06, 0.1])
    arr = capital_recovery_factor(rates, 20)
    for i, r in enumerate(rates):
        assert float(capital_recovery_factor(float(r), 20)) == arr[i]
    assert arr[0] == pytest.approx(1 / 20)


# ---------------------------------------------------------------- economic thickness end to end

LINE_HEADERS = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
                "Economic", "Fixed thickness [mm]"]
DISCOUNT, LIFE = 0.06, 20  # as in the Settings sheet below
SETTINGS = [["Setting", "Value", "Unit"],
            ["Jacket cost per area", 30, "EUR/m²"],
            ["Labour per layer", 20, "EUR/m²"],
            ["Discount rate", 6, "%"],
            ["Service life", 20, "yr"],
            ["Energy price", 0.06, "EUR/kWh"]]
MATERIALS = [["Name", "Cost per volume [EUR/m³]"], ["mineral wool", 1200]]


def _book(path, rows, *, materials=MATERIALS, settings=SETTINGS):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    ws.append(LINE_HEADERS)
    for r in rows:
        ws.append([r.get(h) for h in LINE_HEADERS])
    for name, data in (("Materials", materials), ("Settings", settings)):
        if data is not None:
            s = wb.create_sheet(name)
            for row in data:
                s.append(row)
    wb.save(path)
    return path


def _line(tag, **kw):
    row = {"Tag": tag, "Shape": "pipe", "Size": "NPS 4", "Length [m]": 100,
           "Operating temperature [°C]": 250, "Insulation": "mineral wool"}
    row.update(kw)
    return row


def _run(tmp_path, rows, **kw):
    src = _book(tmp_path / "in.xlsx", rows, **kw)
    fill(src, tmp_path / "out.xlsx", report_path=tmp_path / "report.json")
    rep = json.loads((tmp_path / "report.json").read_text(encoding="utf-8"))
    # every setting given was read (a value the reader rejects falls back to its default)
    assert not [n for n in rep["notes"] if n["code"] in ("bad-setting", "unknown-setting")], rep["notes"]
    return {line["tag"]: line for line in rep["lines"]}


def test_economic_thickness_is_the_brute_force_minimum_of_annualised_cost(tmp_path):
    """The Economic line's thickness is the argmin over every sold thickness of CRF x installed + annual cost."""
    sold = library.materials()["mineral wool"].thicknesses  # m
    rows = [_line("ECON", Economic="yes")]
    rows += [_line(f"F{round(t * 1000)}", **{"Fixed thickness [mm]": round(t * 1000, 6)}) for t in sold]
    lines = _run(tmp_path, rows)
    crf = DISCOUNT * (1 + DISCOUNT) ** LIFE / ((1 + DISCOUNT) ** LIFE - 1)  # closed form, REFERENCES.md
    annualised = []
    for t in sold:
        r = lines[f"F{round(t * 1000)}"]
        assert r["status"] != "error", r["notes"]
        res = r["results"]
        assert res["thickness_m"] == pytest.approx(t, abs=1e-9)
        assert res["installed_cost"] > 0 and res["annual_cost"] > 0
        annualised.append(crf * res["installed_cost"] + res["annual_cost"])
    best = int(np.argmin(annualised))
    econ = lines["ECON"]
    assert econ["status"] != "error", econ["notes"]
    assert econ["results"]["thickness_m"] == pytest.approx(sold[best], abs=1e-9)
    # the optimum is interior, so the comparison is not decided by an end of the list
    assert 0 < best < len(sold) - 1, annualised
    # and it is a real minimum: both neighbours cost more per year
    assert annualised[best] < annualised[best - 1] and annualised[best] < annualised[best + 1]
    # the economic line reports the same costs as the fixed line at that thickness
    same = lines[f"F{round(sold[best] * 1000)}"]["results"]
    assert econ["results"]["installed_cost"] == pytest.approx(same["installed_cost"], rel=1e-9)
    assert econ["results"]["annual_cost"] == pytest.approx(same["annual_cost"], rel=1e-9)


@pytest.mark.parametrize("materials, settings, missing", [
    (None, SETTINGS, ("Cost per volume", "mineral wool")),
    (MATERIALS, [r for r in SETTINGS if r[0] != "Jacket cost per area"], ("Jacket cost per area",)),
    (MATERIALS, [r for r in SETTINGS if r[0] != "Labour per layer"], ("Labour per layer",)),
])
def test_economic_without_costs_is_a_line_error_naming_the_missing_item(tmp_path, materials, settings,
                                                                       missing):
    """'Economic' yes without a cost gives the line an 'economic-costs' error that names what is missing."""
    lines = _run(tmp_path, [_line("ECON", Economic="yes")], materials=materials, settings=settings)
    line = lines["ECON"]
    assert line["status"] == "error"
    notes = [n for n in line["notes"] if n["code"] == "economic-costs"]
    assert len(notes) == 1
    assert notes[0]["level"] == "error"
    for word in missing:
        assert word in notes[0]["message"]
    assert line["results"]["thickness_m"] is None
