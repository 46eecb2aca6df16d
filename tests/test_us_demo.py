"""A US-customary copy of the demo: the same physics within 0.1 %, results in US units, check and audit clean."""

from __future__ import annotations

import json

import openpyxl
import pytest

from lagsheet.commands import demo
from lagsheet.workbook import library

# exact definitions (NIST SP 811): 1 in = 25.4 mm, 1 ft = 0.3048 m; Btu/(h·ft) = 0.9615194 W/m
US_HEADERS = {
    "Outside diameter [mm]": ("Outside diameter [in]", lambda v: v / 25.4),
    "Length [m]": ("Length [ft]", lambda v: v / 0.3048),
    "Operating temperature [°C]": ("Operating temperature [°F]", lambda v: v * 9 / 5 + 32),
    "Max surface temperature [°C]": ("Max surface temperature [°F]", lambda v: v * 9 / 5 + 32),
    "Max heat loss [W/m]": ("Max heat loss [Btu/(h·ft)]", lambda v: v / 0.9615194),
    "Min thickness [mm]": ("Min thickness [in]", lambda v: v / 25.4),
    "Fixed thickness [mm]": ("Fixed thickness [in]", lambda v: v / 25.4),
    "Surface area [m²]": ("Surface area [ft²]", lambda v: v / 0.3048**2),
    # 1 lb = 0.45359237 kg, 1 psi = 6894.757 Pa (NIST SP 811); a kelvin difference is 1.8 °F
    "Flow rate [kg/s]": ("Flow rate [lb/h]", lambda v: v / 0.45359237 * 3600),
    "Operating pressure [bar]": ("Operating pressure [psi]", lambda v: v * 1e5 / 6894.757),
    "Max temperature drop [K]": ("Max temperature drop [°F]", lambda v: v * 1.8),
    "Contents volume [m³]": ("Contents volume [ft³]", lambda v: v / 0.3048**3),
    "Min temperature [°C]": ("Min temperature [°F]", lambda v: v * 9 / 5 + 32),
    "Solar irradiance [W/m²]": ("Solar irradiance [Btu/(h·ft²)]", lambda v: v / 3.15459075),
    "Maintain temperature [°C]": ("Maintain temperature [°F]", lambda v: v * 9 / 5 + 32),
}
HEADERS = demo.HEADERS + demo.PROCESS_HEADERS


def _row(row):
    """A demo line with its process cells, in the order of HEADERS."""
    extra = demo.PROCESS.get(row[0], {})
    return list(row) + [None] * (len(demo.HEADERS) - len(row)) + [extra.get(h) for h in demo.PROCESS_HEADERS]


def write_us_demo(path, metric_series=False):
    """The demo in US units; ``metric_series`` lists every material's metric thicknesses (in mm) on Materials."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    heads = [US_HEADERS.get(h, (h, None))[0] for h in HEADERS]
    ws.append(heads)
    for row in demo.LINES:
        out = []
        for h, v in zip(HEADERS, _row(row), strict=True):
            conv = US_HEADERS.get(h, (h, None))[1]
            if conv is not None and isinstance(v, (int, float)):
                v = conv(v)
            elif isinstance(v, str) and v.endswith("W/m²"):
                v = f"{float(v.split()[0]) / 3.15459075:.6f} Btu/(h·ft²)"  # 1 Btu/(h·ft²) = 3.15459075 W/m²
            elif h == "Outside diameter [mm]" and isinstance(v, str):
                v = library.pipe_outside_diameter(v) / 0.0254  # '2 in' among millimetres is read as NPS 2
            out.append(v)
        ws.append(out)
    c = wb.create_sheet("Conditions")
    c.append(["Name", "Ambient temperature [°F]", "Surroundings temperature [°F]", "Wind speed [mph]",
              "Relative humidity [%]", "Operating hours [h]"])
    for r in demo.CONDITIONS[1:]:
        c.append([r[0], r[1] * 9 / 5 + 32, r[2] * 9 / 5 + 32, r[3] / 0.44704, r[4], r[5]])
    materials = demo.MATERIALS
    if metric_series:  # every built-in material sold in its metric series, the unit written in the cell
        named = {r[0] for r in demo.MATERIALS[1:]}
        materials = [(*demo.MATERIALS[0], "Thicknesses")] + [
            (*r, ", ".join(f"{t * 1000:g}" for t in m.thicknesses) + " mm") for r in demo.MATERIALS[1:]
            for m in [library.materials()[library.key(r[0])]]] + [
            (m.name, None, ", ".join(f"{t * 1000:g}" for t in m.thicknesses) + " mm")
            for m in library.materials().values() if m.name not in named]
    for name, rows in (("Materials", materials), ("Fluids", demo.FLUIDS), ("Settings", demo.SETTINGS)):
        s = wb.create_sheet(name)
        for r in rows:
            s.append(list(r))
    wb.save(path)
    return path


def test_the_us_copy_of_the_demo_gives_the_same_physics_in_us_units(tmp_path, cli):
    """Sold in the same (metric) series, every line's heat loss and surface temperature equal the SI demo's
    within 0.1 %; outputs are in °F, in, Btu/h."""
    assert cli("demo", tmp_path / "si").exit_code == 0
    si = json.loads((tmp_path / "si" / "demo-plant-report.json").read_text())["lines"]
    src = write_us_demo(tmp_path / "us.xlsx", metric_series=True)
    r = cli("fill", src, "-o", tmp_path / "us-out.xlsx", "--report", tmp_path / "us.json")
    assert r.exit_code == 0, r.output
    us = json.loads((tmp_path / "us.json").read_text())["lines"]
    assert [x["tag"] for x in us] == [x["tag"] for x in si]
    for a, b in zip(si, us, strict=True):
        assert b["results"]["thickness_m"] == pytest.approx(a["results"]["thickness_m"], rel=1e-9), a["tag"]
        for key in ("heat_loss_W", "surface_temperature_K", "bare_heat_loss_W", "outlet_temperature_K",
                    "condensate_kg_per_s", "time_to_freeze_s", "time_to_cool_s"):
            if a["results"][key] is None:
                assert b["results"][key] is None, (a["tag"], key)
            else:
                assert b["results"][key] == pytest.approx(a["results"][key], rel=1e-3), (a["tag"], key)
    heads = [c.value for c in openpyxl.load_workbook(tmp_path / "us-out.xlsx")["Lines"][1]]
    for h in ("Thickness [in]", "Surface temperature [°F]", "Heat loss [Btu/h]", "Heat loss per length [Btu/(h·ft)]",
              "Outlet temperature [°F]", "Condensate [lb/h]", "Time to freeze [h]", "Time to cool [h]"):
        assert h in heads
    # the Summary's settings and conditions in the workbook's own units (1 in = 25.4 mm; 1 K = 1.8 °F;
    # 1 mph = 0.44704 m/s, NIST SP 811), the SI demo's in SI
    for path, want in ((tmp_path / "us-out.xlsx", {"Thickness step": (0.394, "in"), "Max thickness": (11.811, "in"),
                                                   "Condensation margin": (1.8, "°F")}),
                       (next((tmp_path / "si").glob("*-filled.xlsx")),
                        {"Thickness step": (10.0, "mm"), "Max thickness": (300.0, "mm"),
                         "Condensation margin": (1.0, "K")})):
        rows = {r[0]: r[1:] for r in openpyxl.load_workbook(path)["Summary"].iter_rows(values_only=True) if r[0]}
        for name, (value, unit) in want.items():
            assert rows[name][:2] == (pytest.approx(value, abs=5e-4), unit), (path.name, name, rows[name])
        us = path.name == "us-out.xlsx"
        assert rows["Conditions used"][2] == ("Wind [mph]" if us else "Wind [m/s]")
        winter = next(r for r in demo.CONDITIONS if r[0] == "winter")
        assert rows["winter"][2] == pytest.approx(winter[3] / (0.44704 if us else 1.0), abs=0.005)
        assert not any(str(v).startswith("-0 ") for r in rows.values() for v in r)  # no '-0 °F'


def test_check_explain_and_audit_work_on_the_us_copy(tmp_path, cli):
    """check finds no error, explain prints °F, and audit of the filled US copy agrees with itself."""
    src = write_us_demo(tmp_path / "us.xlsx")
    assert cli("check", src).exit_code == 0
    r = cli("explain", src, "ST-1001")
    assert r.exit_code == 0 and "°F" in r.output
    cli("fill", src, "-o", tmp_path / "out.xlsx")
    r = cli("audit", tmp_path / "out.xlsx")
    assert r.exit_code == 0 and "every audited result agrees" in r.output
