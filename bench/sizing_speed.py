"""Sizing speed: the search against the full scan and a scalar per-line sizing script.

Prints, for schedules of 10,000 and 50,000 generated lines (``--lines``), the lines sized
per second by ``lagsheet``'s selection with the search (:mod:`lagsheet.design.search`) and
with the full scan (every sold thickness of every line), and by a plain per-line sizing
script on a sample: per line, from the thinnest sold thickness up, ``scipy.optimize.brentq``
on the surface balance (CoolProp air properties, the ``ht`` correlations; the per-line loop
of ``bench/fill_speed.py``) until the line's targets are met. Then the time of ``explain``
of one line of the demo workbook, in this process and as a command. Ratios come from one
run; nothing is asserted (timings on a shared machine are too noisy for tests).

    .venv/bin/python bench/sizing_speed.py                    # 10k and 50k lines, a few minutes
    .venv/bin/python bench/sizing_speed.py --lines 2000 --profile 25
"""

from __future__ import annotations

import argparse
import cProfile
import pstats
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from fill_speed import _conditions, loop_line, make_lines, write_schedule
from fill_speed import best as fill_best  # noqa: E402 (the schedule of the fill benchmark)

TARGET_RATIO = 1000.0  # sizing lines/s over the scalar script's, at least (issue 18)


def best(fn, repeat: int):
    """(best seconds, last result) of ``repeat`` calls (the fill benchmark's timer)."""
    seconds, _, out = fill_best(fn, repeat)
    return seconds, out


def specify_timed(inputs, full: bool, repeat: int):
    from lagsheet.design import search
    from lagsheet.design.select import specify

    old = search.FULL_SCAN
    search.FULL_SCAN = full
    try:
        return best(lambda: specify(inputs), repeat)
    finally:
        search.FULL_SCAN = old


def scalar_sizing(lines, idx, settings) -> tuple[np.ndarray, int]:
    """The plain way, line by line: each sold thickness from the thinnest up until the line's
    targets are met (surface limit, heat loss per metre, surface above the dew point + 2 K,
    minimum thickness). The sold thicknesses are lagsheet's list (data, not calculation).
    Returns the chosen thickness per line [m] and the balances solved."""
    from CoolProp.HumidAirProp import HAPropsSI

    from lagsheet.commands.demo import CONDITIONS
    from lagsheet.design.lines import sold
    from lagsheet.workbook import library

    mats, fin, cond = library.materials(), library.finishes(), _conditions()
    rh = {r[0]: r[4] / 100 for r in CONDITIONS[1:]}
    out, solves = np.full(len(idx), np.nan), 0
    for j, i in enumerate(idx):
        x = lines[i]
        m = mats[library.key(x.insulation)]
        t_pts, k_pts = np.array(m.mean_temperatures), np.array(m.conductivities)
        eps = fin[library.key(x.finish)].emissivity
        air = cond[x.condition]
        dew = HAPropsSI("D", "T", air[0], "P", 101325.0, "R", rh[x.condition]) if x.condensation else None
        if x.fixed is not None:
            out[j] = x.fixed / 1000
            continue
        for th in sold(m, settings):
            q, ts = loop_line(x, th, air, eps, t_pts, k_pts)
            solves += 1
            if ((x.ts_max is None or ts <= x.ts_max + 273.15) and (x.q_max is None or abs(q) <= x.q_max)
                    and (dew is None or ts >= dew + 2.0) and (x.t_min is None or th >= x.t_min / 1000 - 1e-9)):
                out[j] = th
                break
    return out, solves


def explain_timed(folder: Path, repeat: int, tag: str) -> tuple[float, float]:
    """(in-process seconds, command seconds) of ``explain`` of the demo line ``tag``."""
    from typer.testing import CliRunner

    from lagsheet.cli import app
    from lagsheet.commands.demo import write_demo

    demo = folder / "demo.xlsx"
    write_demo(demo)
    runner = CliRunner()
    t_in, res = best(lambda: runner.invoke(app, ["explain", str(demo), tag]), repeat)
    assert res.exit_code in (0, 1), res.output
    exe = Path(sys.executable).with_name("lagsheet")
    t0 = time.perf_counter()
    subprocess.run([str(exe), "explain", str(demo), tag], capture_output=True, check=False)
    return t_in, time.perf_counter() - t0


def part(n: int, a, folder: Path) -> dict:
    from lagsheet.io import open_book
    from lagsheet.workbook.inputs import read_inputs

    lines = make_lines(n, a.seed)
    src = folder / f"schedule-{n}.xlsx"
    write_schedule(src, lines)
    inputs = read_inputs(open_book(src))
    t_full, full = specify_timed(inputs, True, a.repeat)
    t_fast, fast = specify_timed(inputs, False, a.repeat)
    same = np.array_equal(np.nan_to_num(full.chosen, nan=-1), np.nan_to_num(fast.chosen, nan=-1))
    rng = np.random.default_rng(a.seed + 3)
    idx = np.sort(rng.choice(n, size=min(a.sample, n), replace=False))
    scalar_sizing(lines, idx[:2], inputs.settings)  # warm: CoolProp's import and first calls
    t0 = time.perf_counter()
    th, solves = scalar_sizing(lines, idx, inputs.settings)
    t_scalar = time.perf_counter() - t0
    agree = np.isclose(th, fast.values["thickness"][idx], atol=1e-9) | (np.isnan(th) & ~np.isfinite(
        fast.values["thickness"][idx]))
    print(f"{n:>7} lines: full scan {t_full:6.2f} s ({n / t_full:8.0f} lines/s), search {t_fast:6.2f} s "
          f"({n / t_fast:8.0f} lines/s), {t_full / t_fast:4.1f}x; same chosen systems: {same}")
    print(f"         scalar script, {len(idx)} lines: {t_scalar:.2f} s ({len(idx) / t_scalar:.1f} lines/s, "
          f"{solves / len(idx):.1f} balances a line); search / scalar {n / t_fast / (len(idx) / t_scalar):,.0f}x, "
          f"full scan / scalar {n / t_full / (len(idx) / t_scalar):,.0f}x (target {TARGET_RATIO:,.0f}x); "
          f"same thickness as lagsheet on {int(agree.sum())}/{len(idx)}")
    if a.profile:
        from lagsheet.design import search
        from lagsheet.design.select import specify

        search.FULL_SCAN = False
        prof = cProfile.Profile()
        prof.runcall(specify, inputs)
        pstats.Stats(prof).sort_stats("cumulative").print_stats(a.profile)
    return {"n": n, "full": t_full, "search": t_fast}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--lines", type=int, nargs="+", default=[10000, 50000])
    ap.add_argument("--sample", type=int, default=40, help="lines sized by the scalar script (default 40)")
    ap.add_argument("--repeat", type=int, default=3, help="runs of each timing, best kept (default 3)")
    ap.add_argument("--seed", type=int, default=20240601)
    ap.add_argument("--profile", type=int, default=0, metavar="TOP", help="profile the search's sizing")
    a = ap.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="lagsheet-sizing-") as tmp:
        folder = Path(tmp)
        for n in a.lines:
            part(n, a, folder)
        # a steam main; a pipe with a flow (marched along); a vessel whose time to cool counts its roof
        for tag in ("ST-1001", "PR-3010", "VS-8002"):
            t_in, t_cmd = explain_timed(folder, a.repeat, tag)
            print(f"explain {tag} of the demo: {t_in:.2f} s in this process, {t_cmd:.2f} s as a command "
                  "(start-up and imports included)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
