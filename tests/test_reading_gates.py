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
