"""``explain`` sizes only the line asked for (and the lines linked to it by 'Part of'), and
prints what sizing the whole sheet gives that line: every line of the demo and of a random
schedule (linked roofs, duplicate and wrong inputs) is explained both ways."""

from __future__ import annotations

import numpy as np
import pytest

from lagsheet.commands.demo import write_demo
from lagsheet.commands.explain import explain, find_line, one_line
from lagsheet.design.select import specify
from lagsheet.io import open_book
from lagsheet.workbook.inputs import read_inputs
from test_search import _schedule


def _both_ways(book, inputs, tags):
    whole = specify(inputs)
    raw = book.sheet(inputs.lines.sheet)
    for tag in tags:
        cut, i = one_line(inputs, tag)
        assert len(cut.lines.rows) < len(inputs.lines.rows)
        alone = specify(cut)
        assert explain(cut, raw, alone, i) == explain(inputs, raw, whole, find_line(whole, tag)), tag


def test_every_demo_line_is_explained_as_the_whole_sheet_sizes_it(tmp_path):
    path = tmp_path / "demo.xlsx"
    write_demo(path)
    book = open_book(path)
    inputs = read_inputs(book)
    _both_ways(book, inputs, [t for t in inputs.lines.get("tag") if t])


def test_random_lines_with_links_are_explained_as_the_whole_sheet_sizes_them(tmp_path):
    inputs = _schedule(tmp_path / "random.xlsx", 150, seed=5)
    book = open_book(tmp_path / "random.xlsx")
    tags = [t for t in inputs.lines.get("tag") if t]
    linked = [t for t, p in zip(inputs.lines.get("tag"), inputs.lines.get("part_of"), strict=True) if p]
    assert linked
    _both_ways(book, inputs, tags)


@pytest.mark.parametrize("tag", ["VS-8002", "VS-8002-R", "vs-8002-r ", "ST-1001"])
def test_the_cut_holds_the_line_and_its_links(tmp_path, tag):
    path = tmp_path / "demo.xlsx"
    write_demo(path)
    inputs = read_inputs(open_book(path))
    cut, i = one_line(inputs, tag)
    got = sorted(str(t) for t in cut.lines.get("tag"))
    assert got == (["ST-1001"] if tag == "ST-1001" else ["VS-8002", "VS-8002-R"])
    assert cut.lines.get("tag")[i].lower() == tag.strip().lower()
    assert np.array_equal(cut.lines.rows, sorted(cut.lines.rows))


def test_no_line_of_that_tag(tmp_path):
    path = tmp_path / "demo.xlsx"
    write_demo(path)
    assert one_line(read_inputs(open_book(path)), "NO-SUCH") is None
