"""Passes over a sheet's XML that reading skips when they cannot find anything: the look for
formulas without a cached result runs whenever the sheet may hold a formula element, and not
for an 'autoFilter' (its 'filterColumn' elements start with '<f' too)."""

from __future__ import annotations

import pytest

from lagsheet.io.xlsx import _has_formula, _uncached_formulas

FORMULAS = [b'<row r="1"><c r="A1"><f>1+1</f></c></row>', b'<x:row r="1"><x:c r="A1"><x:f>1</x:f></x:c></x:row>',
            b'<row r="1"><c r="A1"><f/></c></row>', b'<row r="1"><c r="A1"><f t="shared" si="0"/></c></row>',
            b'<row r="1"><c r="A1"><f\n>1</f></c></row>', b'<row r="1"><c r="A1"><:f>1</:f></c></row>']


@pytest.mark.parametrize("body", FORMULAS)
def test_every_formula_element_makes_the_pass_run(body):
    data = b'<worksheet xmlns:x="x"><sheetData>' + body + b"</sheetData></worksheet>"
    assert _uncached_formulas(data) == {(0, 0)}
    assert _has_formula(data)


def test_an_autofilter_alone_needs_no_pass():
    data = (b'<worksheet><sheetData><row r="1"><c r="A1"><v>1</v></c></row></sheetData>'
            b'<autoFilter ref="A1:C3"><filterColumn colId="0"><filters><filter val="x"/></filters>'
            b"</filterColumn></autoFilter></worksheet>")
    assert _uncached_formulas(data) == set()
    assert not _has_formula(data)


# -- the numpy reading of a plain sheet finds the same uncached formulas -----------------------

from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from lagsheet.io.sheetrows import uncached_formulas  # noqa: E402
from lagsheet.io.table import column_letter  # noqa: E402

CELLS = {"cached": '<c r="{}"><f>1+1</f><v>2</v></c>', "uncached": '<c r="{}"><f>1+1</f></c>',
         "empty v": '<c r="{}"><f>A1</f><v></v></c>', "v/": '<c r="{}" t="n"><f>A1</f><v/></c>',
         "shared": '<c r="{}" s="2"><f t="shared" si="0"/></c>', "number": '<c r="{}" t="n"><v>1.5</v></c>',
         "text": '<c r="{}" t="inlineStr"><is><t>12" pipe &amp; f</t></is></c>', "empty": '<c r="{}" s="1"/>',
         "space v": '<c r="{}"><f>1</f><v> </v></c>', "two v": '<c r="{}"><v></v><f>1</f><v>3</v></c>'}
HEAD = '<worksheet xmlns="m"><dimension ref="A1:C3"/><sheetData>'


def _sheet(rows) -> bytes:
    body = "".join(f'<row r="{r}">' + "".join(CELLS[k].format(f"{column_letter(c - 1)}{r}") for c, k in cells)
                   + "</row>" for r, cells in rows)
    return (HEAD + body + "</sheetData><autoFilter ref=\"A1:B2\"/></worksheet>").encode()


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.integers(1, 1_048_576),
                          st.lists(st.tuples(st.integers(1, 16_384), st.sampled_from(sorted(CELLS))), max_size=5)),
                max_size=6))
def test_plain_sheets_give_the_same_uncached_formulas_both_ways(rows):
    data = _sheet(rows)
    assert uncached_formulas(data) == _uncached_formulas(data)


ODD_SHEETS = {
    "a cell inside a cell": HEAD + '<row r="1"><c r="A1"><f>1</f><c r="B1"><v>1</v></c></c></row></sheetData></worksheet>',
    "an empty cell inside a cell": HEAD + '<row r="1"><c r="A1"><f>1</f><c r="B1"/></c></row></sheetData></worksheet>',
    "a '>' in an attribute": HEAD + '<row r="1"><c r="A1" x="a>b"><f>1</f></c></row></sheetData></worksheet>',
    "single quotes": HEAD + "<row r='1'><c r=\"A1\" t='n'><f>1</f></c></row></sheetData></worksheet>",
    "a v with a child": HEAD + '<row r="1"><c r="A1"><f>1</f><v><x/></v></c></row></sheetData></worksheet>',
    "a v with attributes": HEAD + '<row r="1"><c r="A1"><f>1</f><v a="1">2</v></c></row></sheetData></worksheet>',
    "prefixed cells": HEAD + '<row r="1"><x:c r="A1" xmlns:x="m"><x:f>1</x:f></x:c></row></sheetData></worksheet>',
    "a cell after the rows": HEAD + '<row r="1"/></sheetData><c r="A1"><f>1</f></c></worksheet>',
    "rows inside a v": '<worksheet><v>' + HEAD[11:] + '<row r="1"><c r="A1"><f>1</f></c></row></sheetData></v></worksheet>',
    "a reference with a dollar": HEAD + '<row r="1"><c r="$A$1"><f>1</f></c></row></sheetData></worksheet>',
    "a comment in a cell": HEAD + '<row r="1"><c r="A1"><f>1</f><!-- x --></c></row></sheetData></worksheet>',
}


@pytest.mark.parametrize("case", ODD_SHEETS)
def test_other_forms_are_left_to_the_element_pass(case):
    assert uncached_formulas(ODD_SHEETS[case].encode()) is None
