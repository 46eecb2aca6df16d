"""Build workbooks with LibreOffice itself, driven through its Python-UNO bridge.

Run by the system Python that has ``import uno`` (Debian's ``python3-uno``), not by the
project's venv:

    /usr/bin/python3 lo_build.py SPEC.json OUTDIR

SPEC.json is a list of workbooks, each ``{"name", "formats": ["ods", "xlsx"], "sheet",
"cells": [[row, col, value], ...], "merges": [[c1, r1, c2, r2], ...], "row_groups" and
"col_groups": [[first, last, collapsed], ...], "hidden_rows": [row, ...], "filter": {"range":
[c1, r1, c2, r2], "field": k, "operator": "GREATER_EQUAL", "value": x} or null, "password":
text or null}`` (0-based
rows and columns). One headless soffice is started for the whole run, with its own profile
folder, listening on a named pipe (a local socket: nothing on the network); every
workbook is made in Calc through the API and stored by Calc's own filters, so the files
are LibreOffice's, not a library's imitation of them. The script prints one line per file
written and exits non-zero if any could not be made.

Python-UNO, rather than ``soffice --convert-to`` of a prepared source, because row and
column outline groups, an applied standard filter (rows hidden by the filter) and merges
made in Calc are what a user's file holds; a converted openpyxl file carries openpyxl's
idea of them instead.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import uno  # noqa: F401  (registers the com.sun.star import hook)
from com.sun.star.beans import PropertyValue
from com.sun.star.connection import NoConnectException
from com.sun.star.table import CellRangeAddress

FILTERS = {"ods": "calc8", "xlsx": "Calc Office Open XML"}


def _prop(name, value):
    p = PropertyValue()
    p.Name, p.Value = name, value
    return p


def _start(profile: Path):
    pipe = f"lagsheet-lo-{os.getpid()}-{int(time.time() * 1000)}"
    proc = subprocess.Popen(
        ["soffice", f"-env:UserInstallation={profile.resolve().as_uri()}", "--headless", "--invisible",
         "--nologo", "--norestore", "--nodefault", "--nolockcheck",
         f"--accept=pipe,name={pipe};urp;StarOffice.ComponentContext"],
        stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    local = uno.getComponentContext()
    resolver = local.ServiceManager.createInstanceWithContext("com.sun.star.bridge.UnoUrlResolver", local)
    deadline = time.monotonic() + 120
    while True:
        try:
            ctx = resolver.resolve(f"uno:pipe,name={pipe};urp;StarOffice.ComponentContext")
            break
        except NoConnectException:
            if proc.poll() is not None or time.monotonic() > deadline:
                proc.kill()
                raise SystemExit(f"soffice did not start (exit {proc.poll()})") from None
            time.sleep(0.25)
    desktop = ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", ctx)
    return proc, desktop


def _range(sheet_index: int, c1: int, r1: int, c2: int, r2: int) -> CellRangeAddress:
    a = CellRangeAddress()
    a.Sheet, a.StartColumn, a.StartRow, a.EndColumn, a.EndRow = sheet_index, c1, r1, c2, r2
    return a


def _build(desktop, spec: dict, out: Path) -> list[Path]:
    doc = desktop.loadComponentFromURL("private:factory/scalc", "_blank", 0, (_prop("Hidden", True),))
    try:
        sheets = doc.Sheets
        sheet = sheets.getByIndex(0)
        sheet.Name = spec.get("sheet", "Lines")
        for r, c, v in spec["cells"]:
            cell = sheet.getCellByPosition(c, r)
            if isinstance(v, (int, float)) and not isinstance(v, bool):
                cell.setValue(float(v))
            else:
                cell.setString(str(v))
        for c1, r1, c2, r2 in spec.get("merges", []):
            sheet.getCellRangeByPosition(c1, r1, c2, r2).merge(True)
        rows_enum = uno.Enum("com.sun.star.table.TableOrientation", "ROWS")
        cols_enum = uno.Enum("com.sun.star.table.TableOrientation", "COLUMNS")
        for first, last, _ in spec.get("row_groups", []):
            sheet.group(_range(0, 0, first, 0, last), rows_enum)
        for first, last, _ in spec.get("col_groups", []):
            sheet.group(_range(0, first, 0, last, 0), cols_enum)
        for r in spec.get("hidden_rows", []):
            sheet.getRows().getByIndex(r).IsVisible = False
        f = spec.get("filter")
        if f:
            c1, r1, c2, r2 = f["range"]
            ranges = doc.DatabaseRanges
            ranges.addNewByName("ScheduleFilter", _range(0, c1, r1, c2, r2))
            db = ranges.getByName("ScheduleFilter")
            db.AutoFilter = True
            desc = db.getFilterDescriptor()
            field = uno.createUnoStruct("com.sun.star.sheet.TableFilterField")
            field.Field = f["field"]
            field.IsNumeric = True
            field.NumericValue = float(f["value"])
            field.Operator = uno.Enum("com.sun.star.sheet.FilterOperator", f["operator"])
            desc.setFilterFields((field,))
            desc.ContainsHeader = True
            db.refresh()
        for first, last, collapsed in spec.get("row_groups", []):
            if collapsed:
                sheet.hideDetail(_range(0, 0, first, 0, last))
        for first, last, collapsed in spec.get("col_groups", []):
            if collapsed:
                sheet.hideDetail(_range(0, first, 0, last, 0))
        written = []
        for fmt in spec["formats"]:
            path = out / f"{spec['name']}.{fmt}"
            props = [_prop("FilterName", FILTERS[fmt])]
            if spec.get("password"):
                props.append(_prop("Password", spec["password"]))
            doc.storeToURL(path.resolve().as_uri(), tuple(props))
            written.append(path)
        return written
    finally:
        doc.close(True)


def main() -> int:
    spec_path, out = Path(sys.argv[1]), Path(sys.argv[2])
    specs = json.loads(spec_path.read_text(encoding="utf-8"))
    out.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory(prefix="lagsheet-lo-profile-") as profile:
        proc, desktop = _start(Path(profile))
        failed = 0
        try:
            for spec in specs:
                try:
                    for p in _build(desktop, spec, out):
                        print(f"wrote {p.name}", flush=True)
                except Exception as exc:  # one bad entry: say which, go on with the others
                    failed += 1
                    print(f"FAILED {spec['name']}: {type(exc).__name__}: {exc}", flush=True)
        finally:
            try:
                desktop.terminate()
            except Exception:  # the bridge goes down with soffice: nothing left to close
                pass
            try:
                proc.wait(timeout=60)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
