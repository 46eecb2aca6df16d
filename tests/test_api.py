"""``lagsheet.size``: the Python API gives what ``fill`` writes, takes lists of dicts and DataFrames,
and raises an error that names the row and the column."""

from __future__ import annotations

import math

import pytest

from lagsheet.api import SizeError, size
from lagsheet.commands import demo
from lagsheet.commands.fill import fill
from lagsheet.io.xlsx import XlsxBook


def table(rows) -> list[dict]:
    """A demo sheet (header row, then rows) as a list of dicts."""
    head, *body = rows
    return [dict(zip(head, r, strict=False)) for r in body]


def demo_lines() -> list[dict]:
    out = []
    for row in demo.LINES:
        d = dict(zip(demo.HEADERS, list(row) + [None] * (len(demo.HEADERS) - len(row)), strict=True))
        d.update(demo.PROCESS.get(row[0], {}))
        out.append(d)
    return out


def demo_size(**kw):
    return size(demo_lines(), table(demo.CONDITIONS), table(demo.MATERIALS), table(demo.SETTINGS),
                sheets={"Fluids": table(demo.FLUIDS)}, **kw)


@pytest.fixture(scope="module")
def filled(tmp_path_factory) -> dict[str, dict]:
    """The demo filled by ``fill``: every line's output cells by Tag, by header."""
    folder = tmp_path_factory.mktemp("demo")
    src, out = folder / "demo-plant.xlsx", folder / "filled.xlsx"
    demo.write_demo(src)
    fill(src, out)
    grid = XlsxBook.open(out).sheet("Lines").grid
    hr = next(i for i, row in enumerate(grid) if "Tag" in row)
    head = grid[hr]
    first_out = head.index("Thickness [mm]")
    return {row[0]: {h: row[c] for c, h in enumerate(head) if c >= first_out and h}
            for row in grid[hr + 1:] if row and row[0]}


def test_size_on_the_demo_gives_every_value_fill_writes(filled):
    """Every output cell of every demo line: the API and the filled workbook agree within 1e-9
    (numbers) or exactly (text); no output column is missing on either side."""
    api = {r["Tag"]: r for r in demo_size()}
    assert set(api) == set(filled) and len(api) == len(demo.LINES)
    compared = 0
    for tag, cells in filled.items():
        for header, theirs in cells.items():
            ours = api[tag][header]
            if isinstance(theirs, float):
                assert isinstance(ours, float) and abs(ours - theirs) <= 1e-9, (tag, header, ours, theirs)
            else:
                assert (ours if ours is not None else "") == theirs, (tag, header, ours, theirs)
            compared += 1
    outputs = {h for r in api.values() for h in r} - set(demo.HEADERS) - set(demo.PROCESS_HEADERS)
    assert outputs == set(next(iter(filled.values()))) | {"Status"}
    assert compared == len(filled) * len(next(iter(filled.values())))


def test_status_follows_the_notes():
    """'Status' is 'warning' for a line with a warning in its Notes, 'ok' for one with none."""
    by_tag = {r["Tag"]: r for r in demo_size()}
    assert by_tag["ST-1001"]["Status"] == "ok" and by_tag["ST-1001"]["Notes"] is None
    warned = [r for r in by_tag.values() if r["Status"] == "warning"]
    assert warned and all("warning:" in r["Notes"] for r in warned)


def test_an_input_error_names_the_row_and_the_column():
    """A unit that does not fit its column raises SizeError with the row label and the header."""
    rows = [{"Tag": "P-1", "Shape": "pipe", "Size": "NPS 4", "Length [m]": 10,
             "Operating temperature [°C]": 200, "Insulation": "mineral wool", "Max surface temperature [°C]": 55},
            {"Tag": "P-2", "Shape": "pipe", "Size": "NPS 4", "Length [m]": 10,
             "Operating temperature [°C]": 200, "Insulation": "no such wool", "Max surface temperature [°C]": 55}]
    with pytest.raises(SizeError, match=r"no such wool.*row 1, column 'Insulation'") as err:
        size(rows)
    assert (err.value.sheet, err.value.row, err.value.column) == ("Lines", 1, "Insulation")
    assert isinstance(err.value, ValueError)
    report = size(rows, errors="report")
    assert [r["Status"] for r in report] == ["ok", "error"]
    assert "no such wool" in report[1]["Notes"]


def test_a_missing_required_column_raises():
    """No 'Shape' column: nothing can be sized, whatever ``errors`` says."""
    with pytest.raises(SizeError, match="needs a column 'Shape'"):
        size([{"Tag": "P-1", "Operating temperature [°C]": 200}], errors="report")


@pytest.mark.parametrize("bad", ["P-1", {"Tag": "P-1"}, [("Tag", "P-1")]])
def test_tables_of_the_wrong_kind_are_type_errors(bad):
    """A string, a dict or a list of tuples is not a table of rows."""
    with pytest.raises(TypeError, match="list of dicts"):
        size(bad)


def test_settings_as_a_dict_with_units():
    """A setting given as (value, unit) is read as on the Settings sheet: a dearer energy price
    raises the annual cost in proportion."""
    line = [{"Tag": "P-1", "Shape": "pipe", "Size": "NPS 4", "Length [m]": 10,
             "Operating temperature [°C]": 200, "Insulation": "mineral wool", "Fixed thickness [mm]": 50}]
    cheap = size(line, settings={"Energy price": (0.05, "EUR/kWh")})[0]
    dear = size(line, settings={"Energy price": (0.10, "EUR/kWh")})[0]
    assert dear["Annual cost [EUR]"] == pytest.approx(2 * cheap["Annual cost [EUR]"], rel=1e-6)


def test_a_dataframe_in_gives_a_dataframe_out():
    """Same index, the input columns kept, the outputs as in the list-of-dicts path."""
    pd = pytest.importorskip("pandas")
    frame = pd.DataFrame(demo_lines()[:6], index=[f"r{k}" for k in range(6)])
    out = size(frame, table(demo.CONDITIONS), table(demo.MATERIALS), table(demo.SETTINGS),
               sheets={"Fluids": pd.DataFrame(table(demo.FLUIDS))})
    assert isinstance(out, pd.DataFrame) and list(out.index) == list(frame.index)
    as_list = demo_size()[:6]
    for k, row in enumerate(as_list):
        for header in ("Thickness [mm]", "Heat loss [W]", "Governing", "Status"):
            a, b = out.iloc[k][header], row[header]
            assert a == b or (b is None and (a is None or (isinstance(a, float) and math.isnan(a))))


def test_a_row_holding_no_line_keeps_its_place():
    """An empty row stays in the result, in its place, with no results and Status None."""
    line = {"Tag": "P-1", "Shape": "pipe", "Size": "NPS 4", "Length [m]": 25, "Operating temperature [°C]": 180,
            "Insulation": "mineral wool", "Max surface temperature [°C]": 55}
    out = size([line, {}, {**line, "Tag": "P-2"}])
    assert [(r.get("Tag"), r["Status"]) for r in out] == [("P-1", "ok"), (None, None), ("P-2", "ok")]
    assert out[1]["Thickness [mm]"] is None and out[0]["Thickness [mm]"] == out[2]["Thickness [mm]"] > 0
