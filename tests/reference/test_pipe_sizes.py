"""Nominal pipe sizes of the built-in table against fluids.piping and ASME B36.10M.

The csv values are ASME B36.10M outside diameters as tabulated in REFERENCES.md; the
outside check is ``fluids.piping.nearest_pipe(NPS=..., schedule=...)``, whose Do is the
same for every schedule of one NPS.
"""

from __future__ import annotations

import csv
from importlib.resources import files

import pytest
from fluids.piping import nearest_pipe

from lagsheet.workbook.library import pipe_outside_diameter, pipe_wall_thickness


def _rows():
    with files("lagsheet.data").joinpath("pipe_sizes.csv").open(encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


ROWS = _rows()


def _nps_value(text):
    whole, _, frac = text.strip().partition(" ")
    if "/" in whole:
        whole, frac = "0", whole
    value = float(whole)
    if frac:
        a, b = frac.split("/")
        value += float(a) / float(b)
    return value


def _fluids_od(nps):
    """Do [m] from fluids.piping.nearest_pipe; schedule 40, or STD where 40 has no such NPS."""
    for schedule in ("40", "STD"):
        try:
            got_nps, _di, do, _t = nearest_pipe(NPS=nps, schedule=schedule)
        except ValueError:
            continue
        if got_nps == nps:
            return do
    raise LookupError(nps)


# ASME B36.10M outside diameters in mm, REFERENCES.md (NPS -> DN in the same order)
B36_10M_MM = {0.5: 21.3, 0.75: 26.7, 1: 33.4, 1.25: 42.2, 1.5: 48.3, 2: 60.3, 2.5: 73.0,
              3: 88.9, 3.5: 101.6, 4: 114.3, 5: 141.3, 6: 168.3, 8: 219.1, 10: 273.0,
              12: 323.8, 14: 355.6, 16: 406.4, 18: 457.0, 20: 508.0, 22: 559.0, 24: 610.0}
DN = [15, 20, 25, 32, 40, 50, 65, 80, 90, 100, 125, 150, 200, 250, 300, 350, 400, 450, 500,
      550, 600]


def test_table_covers_the_published_sizes():
    """The csv lists every NPS of REFERENCES.md with its DN, in order."""
    assert [_nps_value(r["nps"]) for r in ROWS] == list(B36_10M_MM)
    assert [int(r["dn"]) for r in ROWS] == DN


@pytest.mark.parametrize("row", ROWS, ids=[r["nps"] for r in ROWS])
def test_nps_outside_diameter_matches_fluids(row):
    """'NPS x' gives the fluids.piping outside diameter within 0.5 mm and the B36.10M value."""
    nps = _nps_value(row["nps"])
    got = pipe_outside_diameter(f"NPS {row['nps']}")
    assert got is not None
    # fluids.piping.nearest_pipe Do; two tabulations differ in the last digit (REFERENCES.md)
    assert got == pytest.approx(_fluids_od(nps), abs=5e-4)
    assert got == pytest.approx(B36_10M_MM[nps] / 1000, abs=5e-4)  # REFERENCES.md, B36.10M


@pytest.mark.parametrize("row", ROWS, ids=[r["dn"] for r in ROWS])
def test_dn_outside_diameter_matches_fluids(row):
    """'DN n' and 'DNn' give the outside diameter of the corresponding NPS (fluids.piping)."""
    do = _fluids_od(_nps_value(row["nps"]))
    for text in (f"DN {row['dn']}", f"DN{row['dn']}", f"dn {row['dn']}"):
        got = pipe_outside_diameter(text)
        assert got is not None, text
        assert got == pytest.approx(do, abs=5e-4), text


@pytest.mark.parametrize(
    ("text", "nps"),
    [
        ("NPS 1 1/2", 1.5),
        ('1-1/2"', 1.5),
        ('1 1/2"', 1.5),
        ('1½"', 1.5),
        ("NPS 1½", 1.5),
        ('½"', 0.5),
        ('3/4"', 0.75),
        ('2-1/2"', 2.5),
        ('4"', 4),
        ("4 in", 4),
        ("NPS 4", 4),
        ("nps 24", 24),
        ('24"', 24),
        ("DN 100", 4),
        ("DN100", 4),
        ("DN 40", 1.5),
    ],
)
def test_spellings(text, nps):
    """Common spellings of a nominal size give the fluids.piping outside diameter of that NPS."""
    got = pipe_outside_diameter(text)
    assert got is not None, text
    assert got == pytest.approx(_fluids_od(nps), abs=5e-4), text


@pytest.mark.parametrize(("text", "nps"), [("4 inch", 4), ("4 inches", 4), ("1 1/2 inch", 1.5)])
def test_inch_words(text, nps):
    """A size written with the word inch or inches gives the fluids.piping outside diameter of that NPS."""
    got = pipe_outside_diameter(text)
    assert got is not None, text
    assert got == pytest.approx(_fluids_od(nps), abs=5e-4), text


@pytest.mark.parametrize(
    "text",
    ["NPS 7", '7"', "NPS 1/8", '26"', "DN 105", "DN 700", "DN", "NPS", "", "4", "100 mm",
     "abc", 'x"', "NPS 1/0"],
)
def test_unknown_sizes_are_none(text):
    """Text that is not a size in the table gives None."""
    # NPS 7, 1/8, 26 and DN 105, 700 are not rows of the B36.10M table of REFERENCES.md;
    # a bare number is not a nominal size (no NPS, DN or inch mark)
    assert pipe_outside_diameter(text) is None


# --------------------------------------------------------------------------- wall thickness


def _walls():
    with files("lagsheet.data").joinpath("pipe_walls.csv").open(encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


WALLS = _walls()


def test_wall_table_has_four_schedules_of_every_size():
    """40, STD, 80 and XS for every NPS of the size table (22 has no schedule 40 in B36.10M)."""
    have = {(_nps_value(r["nps"]), r["schedule"]) for r in WALLS}
    for nps in B36_10M_MM:
        for sch in ("40", "STD", "80", "XS"):
            assert ((nps, sch) in have) == (not (nps == 22 and sch == "40")), (nps, sch)


@pytest.mark.parametrize("row", WALLS, ids=[f"{r['nps']}-{r['schedule']}" for r in WALLS])
def test_wall_thickness_matches_fluids(row):
    """Each wall thickness (from memory, inches) equals fluids.piping.nearest_pipe's t within 0.01 mm."""
    nps = _nps_value(row["nps"])
    got_nps, di, do, t = nearest_pipe(NPS=nps, schedule=row["schedule"])
    assert got_nps == nps
    assert pipe_wall_thickness(f"NPS {row['nps']}", row["schedule"]) == pytest.approx(t, abs=1e-5)
    # the bore a freeze-time line uses, Do - 2t, is fluids' Di
    assert pipe_outside_diameter(f"NPS {row['nps']}") - 2 * t == pytest.approx(di, abs=6e-4)


@pytest.mark.parametrize(("size", "schedule", "nps", "fluids_schedule"), [
    ("DN 100", "Sch 40", 4, "40"), ('2"', "S80", 2, "80"), ("NPS 12", "std", 12, "STD"),
    ("NPS 12", "schedule 40", 12, "40"), ("DN 250", "XS", 10, "XS"),
])
def test_schedule_spellings(size, schedule, nps, fluids_schedule):
    """Sch 40, S80, std and 'schedule 40' name the schedules of fluids.piping."""
    assert pipe_wall_thickness(size, schedule) == pytest.approx(
        nearest_pipe(NPS=nps, schedule=fluids_schedule)[3], abs=1e-5)


@pytest.mark.parametrize(("size", "schedule"), [("NPS 22", "40"), ("NPS 4", "160"), ("NPS 7", "40"),
                                                ("4", "40"), ("NPS 4", "")])
def test_unknown_walls_are_none(size, schedule):
    """Pairs not in the table (22" has no schedule 40; schedule 160 is not listed) give None."""
    assert pipe_wall_thickness(size, schedule) is None
