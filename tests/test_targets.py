"""The target registry: every target declares the Lines columns it reads and a distinct tie
order, and a target added to the registry is judged, governs and is reported without any
other change to the selection."""

from __future__ import annotations

import numpy as np
import pytest

from lagsheet.commands.fill import load
from lagsheet.design import targets
from lagsheet.design.select import specify
from lagsheet.workbook.fields import LINE_FIELDS
from lagsheet.workbook.library import materials

from conftest import pipe, write_book

SOLD_MW = materials()["mineral wool"].thicknesses  # m, thinnest first


def test_every_target_reads_known_columns_and_has_its_own_order():
    keys = {f.key for f in LINE_FIELDS}
    for t in (*targets.TARGETS, targets.ECONOMIC):
        assert t.columns and set(t.columns) <= keys, t.name
    orders = [t.order for t in targets.TARGETS]
    assert len(set(orders)) == len(orders)
    assert len({t.name for t in targets.TARGETS}) == len(targets.TARGETS)
    # the tie order the governing word has always followed
    assert targets.GOVERNING_ORDER == ("surface temperature", "condensation", "heat loss", "temperature drop",
                                       "freeze protection", "hold time", "interface", "minimum", "code minimum")


class Floor(targets.Target):
    """A made-up target for the test: a total thickness of at least ``floor`` on every line."""

    name, order, columns = "floor", 8, ("length",)

    def __init__(self, floor: float):
        self.floor = floor

    def given(self, ctx):
        return ctx.ok.copy()

    def meets(self, ctx, given, measure):
        return ctx.total >= self.floor - 1e-9

    def unmet(self, ctx, j, i, last, thick, names):
        return f"floor not reached: {thick} of {names}", ctx.starts[i]


def sized(tmp_path, monkeypatch, floor):
    monkeypatch.setattr(targets, "TARGETS", (*targets.TARGETS, Floor(floor)))
    _, inputs = load(write_book(tmp_path / "in.xlsx", [pipe()]))
    return specify(inputs)


def test_a_registered_target_is_judged_and_governs(tmp_path, monkeypatch):
    plain = specify(load(write_book(tmp_path / "plain.xlsx", [pipe()]))[1])
    needed = float(plain.values["thickness"][0])  # the 55 °C surface limit's own thinnest
    floor = next(x for x in SOLD_MW if x > needed + 0.015)  # a floor well above it
    res = sized(tmp_path, monkeypatch, floor)
    assert res.values["thickness"][0] == pytest.approx(floor, abs=1e-12)
    assert res.values["governing"][0] == "floor"
    assert res.target_thickness[0]["floor"] == pytest.approx(floor, abs=1e-12)
    assert res.target_thickness[0]["surface temperature"] == pytest.approx(needed, abs=1e-12)
    assert res.values["surface_temperature"][0] < plain.values["surface_temperature"][0]


def test_a_registered_target_that_no_system_meets_is_an_error_in_its_own_words(tmp_path, monkeypatch):
    res = sized(tmp_path, monkeypatch, 10.0)  # 10 m: thicker than anything sold
    assert res.status[0] == "error"
    assert res.values["governing"][0] == "floor (not met)"
    words = [n.message for n in res.notes[0] if n.code == "target-not-met"]
    assert words == [f"floor not reached: {SOLD_MW[-1] * 1000:g} mm of mineral wool"]
    assert np.isclose(res.values["thickness"][0], SOLD_MW[-1])
