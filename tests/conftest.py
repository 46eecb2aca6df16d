"""Shared helpers: workbooks built in the tests, and the real CLI."""

from __future__ import annotations

import hashlib
from pathlib import Path

import openpyxl
import pytest
from odf.opendocument import OpenDocumentSpreadsheet
from odf.table import Table, TableCell, TableRow
from odf.text import P
from typer.testing import CliRunner

from lagsheet.cli import app

BASE_HEADERS = ["Tag", "Shape", "Size", "Outside diameter [mm]", "Length [m]",
                "Operating temperature [°C]", "Condition", "Insulation", "Finish",
                "Max surface temperature [°C]", "Max heat loss [W/m]", "Min thickness [mm]",
                "Fixed thickness [mm]", "Prevent condensation"]


def write_book(path: Path, rows: list[dict], headers: list[str] | None = None, *,
               title_rows: int = 0, sheets: dict[str, list[list]] | None = None,
               units_row: list | None = None) -> Path:
    """A workbook with a Lines sheet of ``rows`` (dicts by header) and optional other sheets."""
    headers = headers or BASE_HEADERS
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    for i in range(title_rows):
        ws.append([f"title row {i + 1}"])
    ws.append(headers)
    if units_row is not None:
        ws.append(units_row)
    for r in rows:
        ws.append([r.get(h) for h in headers])
    for name, data in (sheets or {}).items():
        s = wb.create_sheet(name)
        for r in data:
            s.append(r)
    wb.save(path)
    return path


def write_ods(path: Path, sheets: dict[str, list[list]]) -> Path:
    """An .ods (odfpy) with one table per sheet name: numbers as floats, text as strings, None empty."""
    doc = OpenDocumentSpreadsheet()
    for name, rows in sheets.items():
        table = Table(name=name)
        for r in rows:
            tr = TableRow()
            for v in r:
                if v is None:
                    tr.addElement(TableCell())
                    continue
                num = isinstance(v, (int, float))
                c = TableCell(valuetype="float", value=v) if num else TableCell(valuetype="string")
                c.addElement(P(text=str(v)))
                tr.addElement(c)
            table.addElement(tr)
        doc.spreadsheet.addElement(table)
    doc.save(str(path))
    return path


def pipe(tag="P-1", **kw) -> dict:
    """One indoor 4-inch mineral-wool line at 200 °C with a 55 °C surface limit, overridable."""
    row = {"Tag": tag, "Shape": "pipe", "Size": "NPS 4", "Length [m]": 10,
           "Operating temperature [°C]": 200, "Insulation": "mineral wool",
           "Max surface temperature [°C]": 55}
    row.update(kw)
    return row


def sha256(path: Path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


@pytest.fixture
def cli():
    runner = CliRunner()

    def run(*args):
        return runner.invoke(app, [str(a) for a in args], catch_exceptions=False)

    return run


def assert_same_results(got, want) -> None:
    """Two sizings of the same lines (lagsheet.design.select.Results) agree exactly: status, every note,
    the chosen systems, every value, each target's thinnest thickness and margin."""
    import numpy as np

    assert got.status == want.status
    assert [[n.message for n in ns] for ns in got.notes] == [[n.message for n in ns] for ns in want.notes]
    np.testing.assert_array_equal(got.chosen, want.chosen)
    for key, a in want.values.items():
        b = got.values[key]
        if a.dtype == object:
            assert list(b) == list(a), key
        else:
            np.testing.assert_array_equal(b, a, err_msg=key)
    assert got.target_thickness == want.target_thickness
    assert repr(got.target_margin) == repr(want.target_margin)  # repr: exact, and NaN equals NaN


def _register_fuzz_profile() -> None:
    """The hypothesis profile of tests/test_fuzz.py: 500 derandomized examples, LAGSHEET_FUZZ_EXAMPLES for more."""
    import os

    from hypothesis import HealthCheck, settings

    settings.register_profile(
        "lagsheet-fuzz", max_examples=int(os.environ.get("LAGSHEET_FUZZ_EXAMPLES", "500")),
        derandomize=True, database=None, deadline=None,
        suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


_register_fuzz_profile()
