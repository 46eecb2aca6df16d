"""How fast lagsheet sizes a large schedule, against plain baselines measured in the same run.

    python bench/fill_speed.py --lines 50000 [--ods-lines 10000] [--sample 200] [--repeat 3]
                               [--keep DIR] [--profile 25]

1. Writes a deterministic schedule workbook of N lines (the headers of ``lagsheet.commands.demo``).
2. Engine: ``lagsheet.physics.balance.solve`` on all N lines at one thickness, and
   ``lagsheet.design.select.specify`` (the full sizing: every sold thickness of every line), against
   a plain per-line loop on a sample (scipy ``brentq`` on the surface temperature, CoolProp
   ``PropsSI`` air properties at the film temperature on every iteration, the ``ht``
   correlations, k at the mean temperature by ``np.interp``). Checks both agree on the
   sample's heat loss.
3. ``lagsheet.commands.fill.fill`` end to end against openpyxl's bare ``load_workbook`` + ``save``
   of the same workbook, with the peak memory of each in a fresh subprocess.
4. The same for .ods: the schedule of ``--ods-lines`` lines (LibreOffice converts the xlsx
   when it is installed, as the round-trip corpus does; odfpy writes it otherwise), ``fill``
   against odfpy's bare ``load`` + ``save`` of that file and against openpyxl's load + save
   of the xlsx of the same lines. odfpy needs minutes and GiBs at 50,000 lines, hence the
   smaller default (printed with the figures).

Figures and ratios only: nothing here asserts a speed (the machines it runs on are noisy).
Times are the best of ``--repeat`` runs unless said otherwise.
"""

from __future__ import annotations

import argparse
import cProfile
import gc
import math
import os
import platform
import pstats
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

# Targets the figures are read against (printed, never asserted).
TARGET_ENGINE_RATIO = 200.0  # engine lines/s over per-line loop lines/s, at least
TARGET_FILL_RATIO = 0.5  # fill time over bare openpyxl load + save, at most (issue 5)
TARGET_MEMORY_RATIO = 1.0  # peak RSS of fill over that of openpyxl load + save, at most
TARGET_CHECK_RATIO = 3.0  # lagsheet check over python-calamine's bare read, at most (issue 18)
BENCH_THICKNESS = 0.050  # m, the one thickness of the engine-versus-loop comparison
P_ATM = 101325.0

# ---------------------------------------------------------------------------------------
# 1. the schedule
# ---------------------------------------------------------------------------------------

HOT_MATERIALS = (  # (name, lowest, highest operating °C it is given for, weight)
    ("mineral wool", 40, 450, 0.50),
    ("calcium silicate", 150, 450, 0.15),
    ("perlite", 150, 450, 0.05),
    ("cellular glass", 40, 300, 0.15),
    ("polyisocyanurate", 40, 120, 0.10),
    ("elastomeric foam", 40, 90, 0.05),
)
HOT_FINISHES = (("aluminium", 0.50), ("stainless steel", 0.15), ("galvanised steel", 0.15),
                ("painted", 0.10), ("mastic", 0.05), ("none", 0.05))
COLD_FINISHES = (("none", 0.7), ("pvc", 0.3))


@dataclass
class Line:
    """One generated line: what goes into the workbook, and the numbers behind it."""

    tag: str
    area: str
    service: str
    shape: str
    size: str
    od: float  # m
    length: float  # m
    t_op: float  # °C
    condition: str
    insulation: str
    finish: str
    ts_max: float | None
    q_max: float | None
    condensation: str | None
    t_min: float | None  # mm
    fixed: float | None  # mm

    def row(self, headers: list[str]) -> list:
        """The cells under ``headers`` (matched without their units; others left blank)."""
        by_name = {"tag": self.tag, "area": self.area, "service": self.service,
                   "shape": self.shape, "size": self.size, "length": self.length,
                   "operating temperature": self.t_op, "condition": self.condition,
                   "insulation": self.insulation, "finish": self.finish,
                   "max surface temperature": self.ts_max, "max heat loss": self.q_max,
                   "prevent condensation": self.condensation, "min thickness": self.t_min,
                   "fixed thickness": self.fixed}
        return [by_name.get(h.split("[")[0].strip().lower()) for h in headers]


def _pick(rng, options):
    names = [o[0] for o in options]
    w = np.array([o[-1] for o in options], dtype=float)
    return names[rng.choice(len(names), p=w / w.sum())]


def make_lines(n: int, seed: int) -> list[Line]:
    """N lines: NPS ½-24, 40-450 °C hot lines and 5 °C chilled ones, three conditions."""
    from lagsheet.workbook import library

    rng = np.random.default_rng(seed)
    sizes = []  # (nps text, dn, od m), from the built-in table
    for r in library._rows("pipe_sizes.csv"):
        sizes.append((r["nps"], int(r["dn"]), float(r["outside_diameter_mm"]) / 1000))
    size_w = 1.0 / (1.0 + np.arange(len(sizes))) ** 0.6  # small bores are the most common
    size_w /= size_w.sum()
    mats = library.materials()
    areas = ("Boiler house", "Steam distribution", "Process area", "Tank farm", "Utilities",
             "Building services")
    lines = []
    for i in range(n):
        nps, dn, od = sizes[rng.choice(len(sizes), p=size_w)]
        style = rng.random()
        size = (f"NPS {nps}" if style < 0.6 else f"DN {dn}" if style < 0.85 else f'{nps}"')
        shape = "riser" if rng.random() < 0.1 else "pipe"
        length = float(rng.integers(3, 40) if shape == "riser" else rng.integers(5, 400))
        chilled = rng.random() < 0.1
        ts_max = q_max = cond_yes = t_min = fixed = None
        if chilled:
            t_op, material = 5.0, "elastomeric foam"
            condition = "indoor" if rng.random() < 0.5 else "plant room"
            finish = _pick(rng, COLD_FINISHES)
            cond_yes = "yes"
            service = "Chilled water"
        else:
            t_op = float(5 * round(rng.uniform(40, 450) / 5))
            fits = [m for m in HOT_MATERIALS if m[1] <= t_op <= m[2]]
            material = _pick(rng, [(m[0], m[3]) for m in fits])
            c = rng.random()
            condition = "indoor" if c < 0.45 else "outdoor" if c < 0.9 else "plant room"
            finish = _pick(rng, HOT_FINISHES)
            service = "Steam" if t_op >= 120 else "Hot water"
            t = rng.random()
            if t < 0.70:
                ts_max = float(rng.choice((50, 55, 60)))
            if 0.45 <= t < 0.90:
                # a heat-loss limit that about 50 mm of k = 0.05 W/(m·K) would meet, ×0.8-1.6
                r = od / 2
                guide = 2 * math.pi * 0.05 * (t_op - 15) / math.log((r + 0.05) / r)
                q_max = float(round(guide * rng.uniform(0.8, 1.6)))
            if rng.random() < 0.03:
                t_min = float(rng.choice((25, 40, 50)))
        if rng.random() < 0.01:
            fixed = float(round(rng.choice(mats[library.key(material)].thicknesses) * 1000))
        lines.append(Line(f"L-{i + 1:06d}", areas[i % len(areas)], service, shape, size, od,
                          length, t_op, condition, material, finish, ts_max, q_max, cond_yes,
                          t_min, fixed))
    return lines


def write_schedule(path: Path, lines: list[Line]) -> None:
    """The workbook, laid out like the demo's: title rows, header row 4, Conditions, Settings."""
    import openpyxl
    from openpyxl.styles import Font

    from lagsheet.commands.demo import CONDITIONS, HEADERS, SETTINGS

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    ws["A1"] = f"Benchmark schedule: {len(lines)} generated lines (invented data)"
    ws["A1"].font = Font(bold=True, size=13)
    ws.append([])
    ws.append([])
    ws.append(HEADERS)
    for cell in ws[4]:
        cell.font = Font(bold=True)
    for line in lines:
        ws.append(line.row(HEADERS))
    ws.freeze_panes = "B5"
    for name, rows in (("Conditions", CONDITIONS), ("Settings", SETTINGS)):
        s = wb.create_sheet(name)
        for r in rows:
            s.append(list(r))
    wb.save(path)


def find_soffice() -> str | None:
    import shutil

    return shutil.which("soffice") or shutil.which("libreoffice")


def write_schedule_ods(path: Path, lines: list[Line], xlsx: Path) -> str:
    """The .ods of the schedule: LibreOffice's conversion of ``xlsx`` when it is installed (a
    file as LibreOffice saves it), else written by odfpy. Returns which of the two made it."""
    soffice = find_soffice()
    if soffice:
        profile = path.parent / "lo-profile"
        subprocess.run([soffice, f"-env:UserInstallation={profile.resolve().as_uri()}", "--headless",
                        "--convert-to", "ods", "--outdir", str(path.parent), str(xlsx)],
                       check=True, capture_output=True, timeout=1800)
        made = path.parent / (xlsx.stem + ".ods")
        if made != path:
            made.replace(path)
        return "LibreOffice (soffice --convert-to ods)"
    from odf.opendocument import OpenDocumentSpreadsheet
    from odf.table import Table, TableCell, TableRow
    from odf.text import P

    from lagsheet.commands.demo import CONDITIONS, HEADERS, SETTINGS

    def row(values):
        tr = TableRow()
        for v in values:
            if v is None:
                tr.addElement(TableCell())
            elif isinstance(v, (int, float)) and not isinstance(v, bool):
                cell = TableCell(valuetype="float", value=v)
                cell.addElement(P(text=repr(v)))
                tr.addElement(cell)
            else:
                cell = TableCell(valuetype="string")
                cell.addElement(P(text=str(v)))
                tr.addElement(cell)
        return tr

    doc = OpenDocumentSpreadsheet()
    t = Table(name="Lines")
    for values in ([f"Benchmark schedule: {len(lines)} generated lines (invented data)"], [None], [None],
                   HEADERS):
        t.addElement(row(values))
    for line in lines:
        t.addElement(row(line.row(HEADERS)))
    doc.spreadsheet.addElement(t)
    for name, rows in (("Conditions", CONDITIONS), ("Settings", SETTINGS)):
        t = Table(name=name)
        for r in rows:
            t.addElement(row(list(r)))
        doc.spreadsheet.addElement(t)
    doc.save(str(path))
    return "odfpy (LibreOffice is not installed)"


# ---------------------------------------------------------------------------------------
# 2. engine against a per-line loop
# ---------------------------------------------------------------------------------------

def _conditions() -> dict[str, tuple[float, float, float]]:
    """name -> (air K, surroundings K, wind m/s), from the demo's Conditions sheet."""
    from lagsheet.commands.demo import CONDITIONS

    return {r[0]: (r[1] + 273.15, r[2] + 273.15, float(r[3])) for r in CONDITIONS[1:]}


def build_system(lines: list[Line], thickness: float):
    """All lines as one engine System at one thickness (one layer of each line's material)."""
    from lagsheet.physics.balance import System
    from lagsheet.physics.layers import CYLINDER, MaterialTable
    from lagsheet.physics.surface import PIPE, RISER
    from lagsheet.workbook import library

    mats = library.materials()
    table = MaterialTable.build({m.name: (np.array(m.mean_temperatures), np.array(m.conductivities))
                                 for m in mats.values()})
    fin = library.finishes()
    cond = _conditions()
    n = len(lines)
    c = np.array([cond[x.condition] for x in lines])
    s = System(
        geometry=np.full(n, CYLINDER),
        shape=np.array([RISER if x.shape == "riser" else PIPE for x in lines]),
        t_operating=np.array([x.t_op + 273.15 for x in lines]),
        t_air=c[:, 0].copy(), t_surroundings=c[:, 1].copy(), wind=c[:, 2].copy(),
        emissivity=np.array([fin[library.key(x.finish)].emissivity for x in lines]),
        r_inner=np.array([x.od / 2 for x in lines]),
        height=np.array([x.length for x in lines]),
        thickness=np.full((n, 1), thickness),
        material=np.array([table.index(x.insulation) for x in lines])[:, None],
    )
    return s, table


def _extend_linearly(t_pts, k_pts):
    """Points carried on linearly from the end segments to 1 K and 4000 K, each end k held
    within a quarter and four times its last given value (the engine's convention)."""
    t, k = np.asarray(t_pts, dtype=float), np.asarray(k_pts, dtype=float)
    lo_s = (k[1] - k[0]) / (t[1] - t[0]) if len(t) > 1 else 0.0
    hi_s = (k[-1] - k[-2]) / (t[-1] - t[-2]) if len(t) > 1 else 0.0
    k_lo = np.clip(k[0] + lo_s * (1.0 - t[0]), 0.25 * k[0], 4 * k[0])
    k_hi = np.clip(k[-1] + hi_s * (4000.0 - t[-1]), 0.25 * k[-1], 4 * k[-1])
    return np.concatenate(([1.0], t, [4000.0])), np.concatenate(([k_lo], k, [k_hi]))


def _k_integral_mean(t_pts, k_pts, t1, t2):
    """Mean of the piecewise-linear k(T) over [t2, t1] (np.interp between the points)."""
    if abs(t1 - t2) < 1e-9:
        return float(np.interp(t1, t_pts, k_pts))
    lo, hi = min(t1, t2), max(t1, t2)
    knots = np.concatenate(([lo], t_pts[(t_pts > lo) & (t_pts < hi)], [hi]))
    return float(np.trapezoid(np.interp(knots, t_pts, k_pts), knots) / (hi - lo))


def loop_line(line: Line, thickness: float, air_cond, eps: float, t_pts, k_pts,
              k_mode: str = "mean"):
    """One line, the plain way: brentq on the surface temperature; returns (W/m, Ts K).

    ``k_mode`` "mean": k at the layer's mean temperature (the timed baseline); "integral":
    the mean of k(T) over the two face temperatures, the points carried on past their ends,
    as the engine takes it (a check of the agreement only, untimed).
    """
    from CoolProp.CoolProp import PropsSI
    from ht.conv_external import Nu_cylinder_Churchill_Bernstein
    from ht.conv_free_immersed import (
        Nu_horizontal_cylinder_Churchill_Chu,
        Nu_vertical_plate_Churchill,
    )
    from scipy.constants import Stefan_Boltzmann as SIGMA
    from scipy.constants import g as G
    from scipy.optimize import brentq

    ti = line.t_op + 273.15
    ta, tsur, wind = air_cond
    ri = line.od / 2
    ro = ri + thickness
    d = 2 * ro
    glen = ro * math.log(ro / ri)  # conduction: q_outer = k (Ti - Ts) / glen
    riser = line.shape == "riser"

    def q_surface(ts):
        tf = 0.5 * (ts + ta)
        mu = PropsSI("V", "T", tf, "P", P_ATM, "Air")
        k = PropsSI("L", "T", tf, "P", P_ATM, "Air")
        cp = PropsSI("C", "T", tf, "P", P_ATM, "Air")
        rho = PropsSI("D", "T", tf, "P", P_ATM, "Air")
        nu, pr = mu / rho, cp * mu / k
        length = line.length if riser else d
        gr = G * (1.0 / tf) * abs(ts - ta) * length**3 / (nu * nu)
        if riser:  # vertical plate on the height, brought to the diameter
            n_free = Nu_vertical_plate_Churchill(pr, gr) * d / line.length
        else:
            n_free = Nu_horizontal_cylinder_Churchill_Chu(pr, gr)
        n_forced = Nu_cylinder_Churchill_Bernstein(wind * d / nu, pr) if wind > 0 else 0.0
        h = (n_forced**3 + n_free**3) ** (1.0 / 3.0) * k / d
        return h * (ts - ta) + eps * SIGMA * (ts**4 - tsur**4)

    def balance(ts):
        if k_mode == "mean":
            k_ins = float(np.interp(0.5 * (ti + ts), t_pts, k_pts))
        else:
            k_ins = _k_integral_mean(t_pts, k_pts, ti, ts)
        return k_ins * (ti - ts) / glen - q_surface(ts)

    lo, hi = min(ti, ta, tsur), max(ti, ta, tsur)
    ts = brentq(balance, lo, hi)
    return q_surface(ts) * 2 * math.pi * ro, ts


def run_loop(lines: list[Line], idx: np.ndarray, thickness: float, k_mode: str = "mean"):
    from lagsheet.workbook import library

    mats = library.materials()
    fin = library.finishes()
    cond = _conditions()
    q = np.empty(len(idx))
    ts = np.empty(len(idx))
    for j, i in enumerate(idx):
        x = lines[i]
        m = mats[library.key(x.insulation)]
        t_pts, k_pts = np.array(m.mean_temperatures), np.array(m.conductivities)
        if k_mode == "integral":
            t_pts, k_pts = _extend_linearly(t_pts, k_pts)
        q[j], ts[j] = loop_line(x, thickness, cond[x.condition], fin[library.key(x.finish)].emissivity,
                                t_pts, k_pts, k_mode)
    return q, ts


def _sub(s, idx):
    """The lines ``idx`` of a System (fields left None stay None)."""
    from dataclasses import fields

    return type(s)(**{f.name: None if getattr(s, f.name) is None else getattr(s, f.name)[idx]
                      for f in fields(s)})


# ---------------------------------------------------------------------------------------
# timing, memory, profile
# ---------------------------------------------------------------------------------------

def best(fn, repeat: int):
    """(best seconds, median seconds, last result) of ``repeat`` calls."""
    times, out = [], None
    for _ in range(max(1, repeat)):
        gc.collect()
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), float(np.median(times)), out


def bare_openpyxl(src: Path, out: Path) -> None:
    import openpyxl

    wb = openpyxl.load_workbook(src)
    wb.save(out)


def bare_odfpy(src: Path, out: Path) -> None:
    from odf.opendocument import load

    load(str(src)).save(str(out))


def run_fill(src: Path, out: Path):
    from lagsheet.commands.fill import fill

    return fill(src, out)


_WRAP = ("import resource, subprocess, sys\n"
         "subprocess.run(sys.argv[1:], check=True)\n"
         "print('maxrss_kib', resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)\n")


def peak_memory(job: str, src: Path, out: Path) -> tuple[float, float, float, float]:
    """(peak RSS MiB, seconds of the work, seconds of the whole process, CPU seconds of the
    work) of ``job``, fresh.

    A small wrapper process starts the job and reads ``getrusage(RUSAGE_CHILDREN).ru_maxrss``
    after it ends: the peak resident set of that one child (imports included), KiB on Linux.
    """
    cmd = [sys.executable, "-c", _WRAP, sys.executable, str(Path(__file__).resolve()),
           "--_job", job, str(src), str(out)]
    t0 = time.perf_counter()
    p = subprocess.run(cmd, check=True, capture_output=True, text=True)
    wall = time.perf_counter() - t0
    got = dict(line.split() for line in p.stdout.splitlines() if line.split()[:1] and
               line.split()[0] in ("maxrss_kib", "seconds", "cpu"))
    return (float(got["maxrss_kib"]) / 1024, float(got.get("seconds", "nan")), wall,
            float(got.get("cpu", "nan")))


def _job(job: str, src: Path, out: Path) -> None:
    if job == "small":  # the start-up floor: whatever fill imports and builds on first use
        import lagsheet.commands.fill  # noqa: F401
        t0, c0 = time.perf_counter(), time.process_time()
        run_fill(src, out)
    elif job == "openpyxl":
        import openpyxl  # noqa: F401
        t0, c0 = time.perf_counter(), time.process_time()
        bare_openpyxl(src, out)
    elif job == "odfpy":
        import odf.opendocument  # noqa: F401
        t0, c0 = time.perf_counter(), time.process_time()
        bare_odfpy(src, out)
    elif job == "stages":
        _stage_job(src, out)
        return
    elif job == "fill":
        import lagsheet.commands.fill  # noqa: F401
        t0, c0 = time.perf_counter(), time.process_time()
        run_fill(src, out)
    else:
        raise SystemExit(f"unknown job {job!r}")
    print("seconds", time.perf_counter() - t0)
    print("cpu", time.process_time() - c0)


def _label(filename: str, func: str) -> str:
    for marker in ("site-packages/", "/src/", "/lib/python"):
        if marker in filename:
            tail = filename.split(marker, 1)[1]
            if marker == "/lib/python":
                tail = "stdlib:" + tail.split("/", 1)[-1]
            return f"{tail}:{func}"
    return f"{filename}:{func}" if filename != "~" else func


def _group(filename: str, func: str) -> str:
    if "site-packages/" in filename:
        return filename.split("site-packages/", 1)[1].split("/", 1)[0]
    if "/src/lagsheet/" in filename:
        return "lagsheet." + filename.split("/src/lagsheet/", 1)[1].removesuffix(".py").replace("/", ".")
    if "/lib/python" in filename:
        return "stdlib:" + filename.split("/lib/python", 1)[1].split("/", 2)[1].removesuffix(".py")
    return "builtins (C, called from the above)" if filename == "~" else filename


def profile_fill(src: Path, out: Path, top: int) -> None:
    prof = cProfile.Profile()
    prof.enable()
    run_fill(src, out)
    prof.disable()
    st = pstats.Stats(prof)
    rows = [(ct, tt, nc, _label(f, fn)) for (f, _, fn), (_, nc, tt, ct, _) in st.stats.items()]
    total = st.total_tt
    print(f"\ncProfile of fill (total {total:.2f} s under the profiler; pure-Python code is "
          "slowed more than C code)")
    print(f"  top {top} by cumulative time:")
    print(f"  {'cum s':>8} {'self s':>8} {'calls':>10}  function")
    for ct, tt, nc, lab in sorted(rows, reverse=True)[:top]:
        print(f"  {ct:8.2f} {tt:8.2f} {nc:10d}  {lab}")
    groups: dict[str, float] = {}
    for (f, _, fn), (_, _, tt, _, _) in st.stats.items():
        groups[_group(f, fn)] = groups.get(_group(f, fn), 0.0) + tt
    print("  self time by package/module:")
    for g, tt in sorted(groups.items(), key=lambda kv: -kv[1])[:12]:
        print(f"  {tt:8.2f} s {100 * tt / total:5.1f} %  {g}")


# ---------------------------------------------------------------------------------------
# main
# ---------------------------------------------------------------------------------------

def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--lines", type=_int_list, default=[2000],
                    help="lines in the schedule, or a comma list of sizes each measured in turn "
                         "(default 2000; e.g. 10000,50000,200000)")
    ap.add_argument("--parts", type=lambda s: s.split(","), default=list(PARTS),
                    help=f"comma list of the parts to run (default all: {','.join(PARTS)})")
    ap.add_argument("--ods-lines", type=int, default=None,
                    help="lines in the .ods schedule (default min(--lines, 10000): odfpy, the "
                         "baseline, takes minutes and GiBs at 50,000); 0 skips the .ods part")
    ap.add_argument("--sample", type=int, default=200,
                    help="lines in the per-line baseline sample (default 200)")
    ap.add_argument("--repeat", type=int, default=3,
                    help="runs of each in-process timing, best kept (default 3; fill and its "
                         "baseline run max(1, repeat // 2) times)")
    ap.add_argument("--seed", type=int, default=20240601, help="numpy default_rng seed")
    ap.add_argument("--keep", type=Path, default=None, help="write the workbooks here and keep them")
    ap.add_argument("--profile", type=int, default=0, metavar="TOP",
                    help="also profile one fill with cProfile and print the TOP entries")
    ap.add_argument("--_job", nargs=3, metavar=("JOB", "SRC", "OUT"), help=argparse.SUPPRESS)
    a = ap.parse_args(argv)
    if a._job:
        _job(a._job[0], Path(a._job[1]), Path(a._job[2]))
        return 0
    if a.keep is not None:
        a.keep.mkdir(parents=True, exist_ok=True)
        return _bench(a, a.keep)
    with tempfile.TemporaryDirectory(prefix="lagsheet-bench-") as tmp:
        return _bench(a, Path(tmp))


PARTS = ("engine", "fill", "ods", "stages", "check")


def _int_list(text: str) -> list[int]:
    return [int(x) for x in text.replace("_", "").split(",") if x.strip()]


def _odfpy_version() -> str:
    from importlib.metadata import version

    return version("odfpy")


def _bench(a, folder: Path) -> int:
    import CoolProp
    import openpyxl
    import scipy

    say = print
    parts = set(a.parts)
    say(f"lagsheet fill benchmark: {', '.join(map(str, a.lines))} lines, sample {a.sample}, repeat "
        f"{a.repeat}, seed {a.seed}, parts {', '.join(sorted(parts))}")
    say(f"python {platform.python_version()}, numpy {np.__version__}, scipy {scipy.__version__}, "
        f"openpyxl {openpyxl.__version__}, odfpy {_odfpy_version()}, CoolProp {CoolProp.__version__}; "
        f"{os.cpu_count()} CPUs, load average {os.getloadavg()[0]:.2f} at start")
    warm = folder / "warm-up.xlsx"
    write_schedule(warm, make_lines(50, a.seed + 1))
    run_fill(warm, folder / "warm-up-filled.xlsx")  # imports, tables, unit registry, dew points
    runs, stages, checks = [], {}, {}
    for n in a.lines:
        say(f"\n--- {n} lines ---")
        src = _schedule(n, a.seed, folder, say)
        if parts & {"engine", "fill"}:
            lines = make_lines(n, a.seed) if "engine" in parts else None
            eng = _engine_part(a, lines, src, say) if "engine" in parts else None
            # nothing of part 2 stays alive: a heap full of live objects slows the garbage
            # collector, and with it every allocation-heavy step of part 3
            del lines
            gc.collect()
            io = _fill_part(a, src, warm, folder, say) if "fill" in parts else None
            runs.append((n, eng, io))
        if "stages" in parts:
            stages[("xlsx", n)] = _stages_part(src, folder, say)
        if "check" in parts:
            checks[n] = _check_part(a, src, say)
    m = min(max(a.lines), 10000) if a.ods_lines is None else a.ods_lines
    ods = None
    if m > 0 and "ods" in parts:
        xlsx_m = folder / f"schedule-{m}.xlsx"
        ods = _ods_part(a, m, xlsx_m if m in a.lines else None, runs[-1][2] if runs else None, folder, say)
        if "stages" in parts:
            stages[("ods", m)] = _stages_part(folder / f"schedule-{m}.ods", folder, say)
    for n, eng, io in runs:
        _table(n, eng, io, ods if ods is not None and ods["m"] == n or len(runs) == 1 else None)
    _stage_table(stages, checks)
    if a.profile:
        n = max(a.lines)
        profile_fill(folder / f"schedule-{n}.xlsx", folder / f"schedule-{n}-profiled.xlsx", a.profile)
    if a.keep is not None:
        print(f"files kept in {a.keep}")
    return 0


def _schedule(n: int, seed: int, folder: Path, say) -> Path:
    """1. the workbook of ``n`` lines (kept and reused within the run)."""
    src = folder / f"schedule-{n}.xlsx"
    if not src.exists():
        t0 = time.perf_counter()
        write_schedule(src, make_lines(n, seed))
        say(f"[1] wrote {src.name} ({src.stat().st_size / 1e6:.1f} MB) in {time.perf_counter() - t0:.1f} s")
    return src


# the stages of one fill, timed in a fresh process: (name, module, attribute) of each wrapped
# function; 'save' holds the writer and the post-write check, the writer is the difference
STAGES = (("reading", "lagsheet.commands.fill", "load"),
          ("sizing", "lagsheet.commands.fill", "specify"),
          ("edits", "lagsheet.commands.fill", "lines_edits"),
          ("report", "lagsheet.outputs.report", "build"),
          ("Summary", "lagsheet.commands.fill", "summary"),
          ("Quantities", "lagsheet.commands.fill", "quantities_table"),
          ("check", "lagsheet.io.xlsx", "post_write_check"),
          ("check", "lagsheet.io.ods", "post_write_check"),
          ("save", "lagsheet.io.xlsx", "XlsxBook.save"),
          ("save", "lagsheet.io.ods", "OdsBook.save"))


def _status_mib(field: str) -> float:
    with open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith(field):
                return int(line.split()[1]) / 1024
    return float("nan")


def _rss_mib() -> float:
    return _status_mib("VmRSS:")


def _stage_job(src: Path, out: Path) -> None:
    """Run one fill with every stage wrapped: prints 'stage NAME CPU_S WALL_S RSS_AFTER_MIB'."""
    import importlib

    import lagsheet.commands.fill  # noqa: F401

    def wrap(name, fn):
        def timed(*args, **kw):
            c0, w0 = time.process_time(), time.perf_counter()
            try:
                return fn(*args, **kw)
            finally:
                print("stage", name, time.process_time() - c0, time.perf_counter() - w0, _rss_mib())
        return timed

    for name, module, attr in STAGES:
        owner = importlib.import_module(module)
        if "." in attr:
            cls, attr = attr.split(".")
            owner = getattr(owner, cls)
        setattr(owner, attr, wrap(name, getattr(owner, attr)))
    print("stage start 0 0", _rss_mib())
    c0, w0 = time.process_time(), time.perf_counter()
    run_fill(src, out)
    print("stage fill", time.process_time() - c0, time.perf_counter() - w0, _rss_mib())
    # VmHWM, not ru_maxrss: a child's ru_maxrss starts from the forking parent's (here the
    # benchmark, with its own big fill behind it); VmHWM starts afresh at exec
    print("peak", _status_mib("VmHWM:"))


def _stages_part(src: Path, folder: Path, say) -> dict:
    """5. the stages of one fill of ``src`` in a fresh process: CPU and wall seconds, RSS after each."""
    out = folder / f"stages-{src.stem}-filled{src.suffix}"
    p = subprocess.run([sys.executable, str(Path(__file__).resolve()), "--_job", "stages", str(src), str(out)],
                       check=True, capture_output=True, text=True)
    got: dict = {"cpu": {}, "wall": {}, "rss": {}}
    for line in p.stdout.splitlines():
        w = line.split()
        if w[:1] == ["stage"]:
            got["cpu"][w[1]], got["wall"][w[1]], got["rss"][w[1]] = float(w[2]), float(w[3]), float(w[4])
        elif w[:1] == ["peak"]:
            got["peak"] = float(w[1])
    cpu = got["cpu"]
    cpu["writer"] = cpu.get("save", 0.0) - cpu.get("check", 0.0)
    cpu["rest"] = cpu["fill"] - cpu["sizing"]
    say(f"[5] stages of fill of {src.name} (CPU s): " + ", ".join(
        f"{k} {cpu[k]:.2f}" for k in (*_STAGE_ORDER, "fill") if k in cpu) + f"; peak RSS {got['peak']:.0f} MiB")
    return got


_STAGE_ORDER = ("reading", "sizing", "edits", "report", "Summary", "Quantities", "writer", "check", "rest")


def bare_calamine(src: Path) -> None:
    """python-calamine's bare read: open the workbook, every sheet's values as Python lists."""
    import python_calamine

    wb = python_calamine.CalamineWorkbook.from_path(str(src))
    for name in wb.sheet_names:
        wb.get_sheet_by_name(name).to_python(skip_empty_area=False)


def _check_part(a, src: Path, say) -> dict:
    """6. ``lagsheet check`` of the schedule against python-calamine's bare read of it."""
    from lagsheet.commands.check import check

    def cpu(fn) -> float:  # CPU seconds: the shared machine's other load barely counts
        gc.collect()
        c0 = time.process_time()
        fn()
        return time.process_time() - c0

    k = max(1, a.repeat // 2)
    tc, tb = [], []
    for _ in range(k):
        tb.append(cpu(lambda: bare_calamine(src)))
        tc.append(cpu(lambda: check(src)))
    say(f"[6] check {min(tc):.2f} CPU s; python-calamine bare read {min(tb):.2f} CPU s; ratio "
        f"{min(tc) / min(tb):.2f}x (target <= {TARGET_CHECK_RATIO:.0f}x)")
    return {"t_check": min(tc), "t_calamine": min(tb)}


def _stage_table(stages: dict, checks: dict) -> None:
    """5 and 6: the stages of fill by size (CPU seconds, and per 1000 lines: flat when linear), RSS."""
    if stages:
        keys = sorted(stages, key=lambda k: (k[0] != "xlsx", k[1]))
        heads = [f"{kind} {n}" for kind, n in keys]
        w = 22
        print("\nstages of fill, CPU seconds in a fresh process (per 1000 lines in brackets: "
              "flat across sizes when the stage is linear)")
        print(f"{'stage':<{w}}" + "".join(f"{h:>22}" for h in heads))
        for st in (*_STAGE_ORDER, "fill"):
            vals = []
            for kind, n in keys:
                c = stages[(kind, n)]["cpu"].get(st)
                vals.append("" if c is None else f"{c:.2f} ({1000 * c / n:.3f})")
            print(f"{st:<{w}}" + "".join(f"{v:>22}" for v in vals))
        walls = [f"{stages[k]['wall']['fill']:.2f}" for k in keys]
        print(f"{'fill, wall s':<{w}}" + "".join(f"{v:>22}" for v in walls))
        for st in ("start", "reading", "sizing", "edits", "report", "save"):
            vals = [stages[k]["rss"].get(st) for k in keys]
            print(f"{'RSS after ' + st + ', MiB':<{w}}" + "".join(
                f"{'' if v is None else f'{v:.0f}':>22}" for v in vals))
        peaks = [stages[k]["peak"] for k in keys]
        print(f"{'peak RSS, MiB':<{w}}" + "".join(f"{p:>22.0f}" for p in peaks))
    for n, c in sorted(checks.items()):
        print(f"check of {n} lines {c['t_check']:.2f} CPU s / python-calamine bare read {c['t_calamine']:.2f} s = "
              f"{c['t_check'] / c['t_calamine']:.2f}x (target <= {TARGET_CHECK_RATIO:.0f}x)")


def _engine_part(a, lines: list[Line], src: Path, say) -> dict:
    """2. engine solve and specify against the per-line loop; figures only are returned."""
    from lagsheet.design.select import specify
    from lagsheet.io import open_book
    from lagsheet.physics.balance import solve
    from lagsheet.physics.candidates import heat_rate
    from lagsheet.workbook.inputs import read_inputs

    n = len(lines)
    system, table = build_system(lines, BENCH_THICKNESS)
    solve(_sub(system, np.arange(min(n, 50))), table)  # warm
    t_solve, t_solve_med, sol = best(lambda: solve(system, table), a.repeat)
    q_engine = heat_rate(system.geometry, sol.q, sol.r_outer)
    say(f"[2] engine solve, {n} lines at {BENCH_THICKNESS * 1000:.0f} mm: best {t_solve:.3f} s, "
        f"median {t_solve_med:.3f} s; converged {int(sol.converged.sum())}/{n}")

    rng = np.random.default_rng(a.seed + 2)
    idx = np.sort(rng.choice(n, size=min(a.sample, n), replace=False))
    t_loop, t_loop_med, (q_loop, ts_loop) = best(
        lambda: run_loop(lines, idx, BENCH_THICKNESS), a.repeat)
    say(f"    per-line loop (brentq + PropsSI + ht), {len(idx)} lines: best {t_loop:.3f} s, "
        f"median {t_loop_med:.3f} s")
    sub = _sub(system, idx)
    t_small, _, _ = best(lambda: solve(sub, table), a.repeat)
    rel = np.abs(q_loop - q_engine[idx]) / np.abs(q_engine[idx])
    dts = np.abs(ts_loop - sol.t_surface[idx])
    w = lines[idx[int(np.argmax(rel))]]
    say(f"    agreement on the sample: heat loss max rel. diff {rel.max():.2e} (median "
        f"{np.median(rel):.2e}), surface temperature max diff {dts.max():.3f} K; worst "
        f"{w.tag} ({w.shape}, {w.insulation}, {w.t_op:g} °C, {w.condition})")
    # the same loop, untimed, with k averaged over the face temperatures as the engine does:
    # what is left is the air-property table and the correlations themselves
    q_loop_i, ts_loop_i = run_loop(lines, idx, BENCH_THICKNESS, k_mode="integral")
    rel_i = np.abs(q_loop_i - q_engine[idx]) / np.abs(q_engine[idx])
    dts_i = np.abs(ts_loop_i - sol.t_surface[idx])
    say(f"    same loop with k averaged over the faces (untimed): heat loss max rel. diff "
        f"{rel_i.max():.2e} (median {np.median(rel_i):.2e}), surface temperature max diff "
        f"{dts_i.max():.3f} K")

    inputs = read_inputs(open_book(src))
    t_spec, t_spec_med, res = best(lambda: specify(inputs), a.repeat)
    status = {s: res.status.count(s) for s in ("ok", "warning", "error")}
    say(f"    specify (full sizing, every sold thickness), {n} lines: best {t_spec:.3f} s, median "
        f"{t_spec_med:.3f} s; status {status}")
    return {"n": n, "sample": len(idx), "t_solve": t_solve, "t_loop": t_loop, "t_small": t_small,
            "t_spec": t_spec, "rel": rel.max(), "dts": dts.max(), "rel_i": rel_i.max(),
            "dts_i": dts_i.max()}


def _fill_part(a, src: Path, warm: Path, folder: Path, say) -> dict:
    """3. fill against bare openpyxl in this process, then each in a fresh one."""
    n = int(src.stem.split("-")[1])
    out_fill = folder / f"schedule-{n}-filled.xlsx"
    out_bare = folder / f"schedule-{n}-openpyxl.xlsx"
    k = max(1, a.repeat // 2)
    tf, tb = [], []
    for _ in range(k):  # interleaved, so that a noisy spell hits both
        tb.append(best(lambda: bare_openpyxl(src, out_bare), 1)[0])
        tf.append(best(lambda: run_fill(src, out_fill), 1)[0])
    say(f"[3] fill {min(tf):.2f} s (runs {', '.join(f'{x:.2f}' for x in tf)}); openpyxl load + save "
        f"{min(tb):.2f} s (runs {', '.join(f'{x:.2f}' for x in tb)}); output "
        f"{out_fill.stat().st_size / 1e6:.1f} MB against {out_bare.stat().st_size / 1e6:.1f} MB")
    mem = {job: peak_memory(job, warm if job == "small" else src, folder / f"mem-{job}.xlsx")
           for job in ("small", "openpyxl", "fill")}
    say("    fresh processes (peak RSS by getrusage(RUSAGE_CHILDREN).ru_maxrss in a wrapper, "
        "imports included; work time after imports; whole process wall time):")
    for j, (m, s_work, wall, cpu) in mem.items():
        say(f"      {j:<9} {m:7.0f} MiB  work {s_work:7.2f} s (CPU {cpu:7.2f} s)  process {wall:7.2f} s")
    return {"t_fill": min(tf), "t_bare": min(tb), "mem": mem}


def _ods_part(a, m: int, xlsx_n: Path | None, io: dict, folder: Path, say) -> dict:
    """4. fill of the .ods against odfpy's load + save of it and openpyxl's of its xlsx."""
    t0 = time.perf_counter()
    xlsx = xlsx_n
    if xlsx is None:
        xlsx = folder / f"schedule-{m}.xlsx"
        write_schedule(xlsx, make_lines(m, a.seed))
    src = folder / f"schedule-{m}.ods"
    how = write_schedule_ods(src, make_lines(m, a.seed), xlsx)
    say(f"[4] wrote {src.name} ({src.stat().st_size / 1e6:.1f} MB) by {how} in "
        f"{time.perf_counter() - t0:.1f} s")
    out_fill = folder / f"schedule-{m}-filled.ods"
    out_odf = folder / f"schedule-{m}-odfpy.ods"
    out_bare = folder / f"schedule-{m}-openpyxl.xlsx"
    k = max(1, a.repeat // 2)
    tf, to, tb = [], [], []
    for _ in range(k):
        to.append(best(lambda: bare_odfpy(src, out_odf), 1)[0])
        tf.append(best(lambda: run_fill(src, out_fill), 1)[0])
        if xlsx_n is None or io is None:
            tb.append(best(lambda: bare_openpyxl(xlsx, out_bare), 1)[0])
    t_bare = min(tb) if tb else io["t_bare"]
    say(f"    {m} lines: fill .ods {min(tf):.2f} s (runs {', '.join(f'{x:.2f}' for x in tf)}); odfpy load + "
        f"save {min(to):.2f} s (runs {', '.join(f'{x:.2f}' for x in to)}); openpyxl load + save of the "
        f"xlsx {t_bare:.2f} s")
    mem = {job: peak_memory(job, src, folder / f"mem-{job}.ods") for job in ("odfpy", "fill")}
    say("    fresh processes, as in [3]:")
    for j, (mm, s_work, wall, cpu) in mem.items():
        say(f"      {j:<9} {mm:7.0f} MiB  work {s_work:7.2f} s (CPU {cpu:7.2f} s)  process {wall:7.2f} s")
    return {"m": m, "how": how, "t_fill": min(tf), "t_odf": min(to), "t_bare": t_bare, "mem": mem}


def _table(n: int, e: dict | None, io: dict | None, ods: dict | None = None) -> None:
    """4. the figures, one table (parts 2 and 3 both run)."""
    if e is None or io is None:
        return
    mem = io["mem"]
    e_rate, l_rate, s_rate = n / e["t_solve"], e["sample"] / e["t_loop"], n / e["t_spec"]
    r_eng, r_spec, r_fill = e_rate / l_rate, s_rate / l_rate, io["t_fill"] / io["t_bare"]
    rows = [
        ("lines in the schedule", f"{n}"),
        (f"engine solve, one thickness ({n} lines)", f"{e_rate:,.0f} lines/s"),
        (f"engine solve, the sample only ({e['sample']} lines)",
         f"{e['sample'] / e['t_small']:,.0f} lines/s"),
        (f"per-line loop brentq+PropsSI+ht ({e['sample']} lines)", f"{l_rate:,.1f} lines/s"),
        (f"ratio engine / loop (target >= {TARGET_ENGINE_RATIO:.0f}x)", f"{r_eng:,.0f}x"),
        ("specify, every sold thickness", f"{s_rate:,.0f} lines/s"),
        ("ratio specify / one-thickness loop", f"{r_spec:,.0f}x"),
        ("heat loss, loop vs engine: max rel. diff", f"{e['rel']:.2e}"),
        ("surface temperature, loop vs engine: max diff", f"{e['dts']:.3f} K"),
        ("  same, loop with face-averaged k: heat loss", f"{e['rel_i']:.2e}"),
        ("  same, loop with face-averaged k: surface temp.", f"{e['dts_i']:.3f} K"),
        ("fill end to end", f"{io['t_fill']:.2f} s ({n / io['t_fill']:,.0f} lines/s)"),
        ("openpyxl load_workbook + save, same workbook", f"{io['t_bare']:.2f} s"),
        (f"ratio fill / openpyxl (target <= {TARGET_FILL_RATIO:.2f}x)", f"{r_fill:.2f}x"),
        ("  same ratio, fresh processes (work after imports)",
         f"{mem['fill'][1] / mem['openpyxl'][1]:.2f}x"),
        ("  same ratio, CPU seconds of that work (least noisy)",
         f"{mem['fill'][3] / mem['openpyxl'][3]:.2f}x"),
        ("fill, fresh process, wall (CLI-like: start, imports)", f"{mem['fill'][2]:.2f} s"),
        ("openpyxl load + save, fresh process, wall", f"{mem['openpyxl'][2]:.2f} s"),
        ("fill of the 50-line warm-up workbook, fresh, wall", f"{mem['small'][2]:.2f} s"),
        ("peak RSS fill (fresh process, ru_maxrss)", f"{mem['fill'][0]:.0f} MiB"),
        ("peak RSS openpyxl load + save (same way)", f"{mem['openpyxl'][0]:.0f} MiB"),
        ("peak RSS fill of the 50-line workbook (floor)", f"{mem['small'][0]:.0f} MiB"),
        (f"ratio peak RSS fill / openpyxl (target <= {TARGET_MEMORY_RATIO:.1f}x)",
         f"{mem['fill'][0] / mem['openpyxl'][0]:.2f}x"),
    ]
    if ods is not None:
        m, om = ods["m"], ods["mem"]
        rows += [
            (f".ods: lines ({'the same' if m == n else 'fewer than the xlsx: see --ods-lines'})", f"{m}"),
            (".ods: fill end to end", f"{ods['t_fill']:.2f} s"),
            (".ods: odfpy load + save, same file", f"{ods['t_odf']:.2f} s"),
            (f".ods: ratio fill / odfpy (target <= {TARGET_FILL_RATIO:.2f}x)",
             f"{ods['t_fill'] / ods['t_odf']:.2f}x"),
            (".ods: same ratio, CPU seconds in fresh processes", f"{om['fill'][3] / om['odfpy'][3]:.2f}x"),
            (f".ods: ratio fill / openpyxl of the xlsx, {m} lines", f"{ods['t_fill'] / ods['t_bare']:.2f}x"),
            (".ods: peak RSS fill / odfpy (fresh processes)",
             f"{om['fill'][0]:.0f} / {om['odfpy'][0]:.0f} MiB"),
        ]
    rows.append(("load average at the end (1 min)", f"{os.getloadavg()[0]:.2f}"))
    w = 58
    print("\n" + "=" * (w + 22))
    print(f"{'figure':<{w}}{'value':>22}")
    print("-" * (w + 22))
    for name, val in rows:
        print(f"{name:<{w}}{val:>22}")
    print("=" * (w + 22))
    r_mem = mem["fill"][0] / mem["openpyxl"][0]
    print("targets are read, not asserted: " +
          f"engine/loop {'meets' if r_eng >= TARGET_ENGINE_RATIO else 'misses'} {TARGET_ENGINE_RATIO:.0f}x; "
          f"fill/openpyxl {'meets' if r_fill <= TARGET_FILL_RATIO else 'misses'} {TARGET_FILL_RATIO:.2f}x; "
          f"peak RSS fill/openpyxl {'meets' if r_mem <= TARGET_MEMORY_RATIO else 'misses'} "
          f"{TARGET_MEMORY_RATIO:.1f}x" + ("" if ods is None else
          f"; .ods fill/odfpy {'meets' if ods['t_fill'] / ods['t_odf'] <= TARGET_FILL_RATIO else 'misses'} "
          f"{TARGET_FILL_RATIO:.2f}x ({ods['m']} lines)"))


if __name__ == "__main__":
    sys.exit(main())
