"""The JSON report: always SI, keys carry their unit; null where a result does not apply."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np

from .. import __version__
from ..design.select import Results
from ..workbook.inputs import Inputs
from ..workbook.results import RESULTS
from .cautions import CAUTIONS
from .totals import covered, total

REPORTED = tuple(r for r in RESULTS if r.json)  # a line's results in the report, in this order



def _clean(v):
    if isinstance(v, float):
        return None if not math.isfinite(v) else v
    return v


def _column(values, text: bool) -> list:
    """One result of every line, as the report writes it: a number as a float, None where it
    is not finite (or not given)."""
    if text:
        return [_clean(v) for v in np.asarray(values, dtype=object).tolist()]
    arr = np.asarray(values, dtype=float)
    out = arr.tolist()
    for i in np.flatnonzero(~np.isfinite(arr)).tolist():
        out[i] = None
    return out


def build(inputs: Inputs, res: Results, input_path: Path, output_path: Path | None) -> dict:
    t = inputs.lines
    keys = [r.json for r in REPORTED]
    # column by column (no numpy element read per line and result), then zipped line by line
    rows = zip(*(_column(res.values[r.key], r.text) for r in REPORTED), strict=False) if keys else iter(())
    lines = []
    for i, row in zip(range(res.n), rows, strict=False):
        lines.append({
            "sheet": t.sheet, "row": t.rows[i] + 1, "tag": res.tags[i], "status": res.status[i],
            "results": dict(zip(keys, row, strict=True)), "notes": [n.as_dict() for n in res.notes[i]],
        })
    return {
        "lagsheet": __version__,
        "input": str(input_path),
        "output": str(output_path) if output_path else None,
        "currency": inputs.settings.get("currency"),
        "columns": inputs.columns,
        "notes": [n.as_dict() for n in inputs.notes],
        "lines": lines,
        "summary": {
            "lines": res.n,
            "errors": sum(s == "error" for s in res.status),
            "warnings": sum(s == "warning" for s in res.status),
            **{r.json: total(res.values[r.key]) for r in RESULTS if r.total},
            # the installed tracing duty: Σ tracing duty × length over the traced lines [W]
            "tracing_duty_W": total(res.values["tracing_duty"] * [L.length for L in res.lines] if res.lines
                                    else res.values["tracing_duty"]),
            # how many lines each total adds up (fewer than "lines" where some have no value)
            "lines_in_totals": {r.json: covered(res.values[r.key]) for r in RESULTS if r.counted},
        },
        "cautions": list(CAUTIONS),
    }


def write_json(data: dict, path: Path, *, inputs=()) -> None:
    """Any JSON document lagsheet writes, through the one safe save (never onto one of ``inputs``)."""
    write(data, path, inputs=inputs)


def dumps(report: dict) -> str:
    """The text of a JSON document as lagsheet writes it (to a file, or with ``--report -`` to stdout)."""
    return json.dumps(report, indent=1, ensure_ascii=False)


def write(report: dict, path: Path, *, inputs=()) -> None:
    from ..io.save import atomic_write

    def w(tmp):
        Path(tmp).write_text(dumps(report), encoding="utf-8")

    atomic_write(path, w, inputs=inputs, what="report")
