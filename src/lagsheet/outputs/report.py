"""The JSON report: always SI, keys carry their unit; null where a result does not apply."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np

from .. import __version__
from ..design.select import Results
from ..workbook.inputs import Inputs

_KEYS = {
    "thickness": "thickness_m", "layers": "layers", "governing": "governing",
    "t_surface": "surface_temperature_K", "heat_flux": "heat_flux_W_m2",
    "heat_loss_per_length": "heat_loss_per_length_W_m", "heat_loss": "heat_loss_W",
    "bare_heat_loss": "bare_heat_loss_W", "annual_energy": "annual_energy_kWh",
    "annual_cost": "annual_cost", "annual_saving": "annual_saving",
    "co2": "co2_kg_per_year", "critical_radius": "critical_radius_m", "dew_point": "dew_point_K",
}
# extensions of the contract's results
_EXTRA = {"governing_condition": "governing_condition", "installed_cost": "installed_cost",
          "payback": "payback_years", "t_interface": "interface_temperature_K",
          "outlet_temperature": "outlet_temperature_K", "condensate": "condensate_kg_per_s",
          "time_to_freeze": "time_to_freeze_s", "time_to_cool": "time_to_cool_s"}

CAUTIONS = (
    "Surface-temperature limits for personnel protection depend on contact time and surface "
    "material (ASTM C1055, ISO 13732-1; 5 s contact is the usual industrial basis).",
    "Cold lines need a continuous vapour retarder; moisture ingress is not calculated.",
    "Insulation delays freezing but never prevents it: water that may stand longer than its time "
    "to freeze needs heat tracing or to keep flowing.",
    "Results are design estimates: review them under the owner's specification, local codes "
    "and licensed engineering practice.",
)


def _clean(v):
    if isinstance(v, float):
        return None if not math.isfinite(v) else v
    return v


def build(inputs: Inputs, res: Results, input_path: Path, output_path: Path | None) -> dict:
    t = inputs.lines
    lines = []
    for i in range(res.n):
        names = _KEYS | _EXTRA
        results = {names[k]: _clean(float(res.values[k][i]) if res.values[k].dtype != object
                                    else res.values[k][i]) for k in _KEYS | _EXTRA}
        lines.append({
            "sheet": t.sheet, "row": t.rows[i] + 1, "tag": res.tags[i], "status": res.status[i],
            "results": results, "notes": [n.as_dict() for n in res.notes[i]],
        })

    def total(key):
        s = 0.0
        for i in range(res.n):
            v = float(res.values[key][i])
            if math.isfinite(v):
                s += v
        return s

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
            "heat_loss_W": total("heat_loss"),
            "bare_heat_loss_W": total("bare_heat_loss"),
            "annual_cost": total("annual_cost"),
            "annual_saving": total("annual_saving"),
            "condensate_kg_per_s": total("condensate"),
            # how many lines each total adds up (fewer than "lines" where some have no value)
            "lines_in_totals": {name: int(np.isfinite(res.values[key]).sum()) for key, name in (
                ("heat_loss", "heat_loss_W"), ("bare_heat_loss", "bare_heat_loss_W"),
                ("annual_cost", "annual_cost"), ("annual_saving", "annual_saving"))},
        },
        "cautions": list(CAUTIONS),
    }


def write_json(data: dict, path: Path, *, inputs=()) -> None:
    """Any JSON document lagsheet writes, through the one safe save (never onto one of ``inputs``)."""
    write(data, path, inputs=inputs)


def write(report: dict, path: Path, *, inputs=()) -> None:
    from ..io.save import atomic_write

    def w(tmp):
        Path(tmp).write_text(json.dumps(report, indent=1, ensure_ascii=False), encoding="utf-8")

    atomic_write(path, w, inputs=inputs, what="report")
