"""How long ``lagsheet calcs --all`` takes for a schedule of N lines (one calculation sheet each).

    python bench/calcs_speed.py [--lines 500] [--seed 7] [--keep DIR]

Writes a deterministic schedule of N lines (``bench/fill_speed.py``'s generator: NPS ½-24
pipes and risers, hot and chilled, three conditions), then times the steps of the package:
reading and sizing (what ``fill`` does too), gathering every line's numbers (balance,
correlations, curves), drawing the pages and writing the PDF. Prints the figures; asserts
nothing (the machines it runs on are noisy). The issue's aim: 500 sheets in under a minute.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from fill_speed import make_lines, write_schedule  # noqa: E402


def run(n: int, seed: int, folder: Path) -> dict[str, float]:
    from lagsheet.commands.calcs import choose
    from lagsheet.commands.calcs_sheet import gather
    from lagsheet.commands.fill import load
    from lagsheet.design.select import specify
    from lagsheet.outputs.calcs import package

    src = folder / f"schedule-{n}.xlsx"
    write_schedule(src, make_lines(n, seed))
    out = folder / f"schedule-{n}-calcs.pdf"
    t = {"start": time.perf_counter()}
    book, inputs = load(src)
    res = specify(inputs)
    t["read and size"] = time.perf_counter()
    idx, scope = choose(inputs, res, [], [], True)
    sheets, _ = gather(inputs, book.sheet(inputs.lines.sheet), res, idx)
    t["gather the numbers"] = time.perf_counter()
    index = [(s.tag, "", res.values["governing"][i] or "", res.status[i]) for s, i in zip(sheets, idx, strict=True)]
    pdf = package.build(inputs, res, sheets, workbook=src.name, scope=scope, index=index,
                        date=__import__("datetime").date.today())
    t["draw the pages"] = time.perf_counter()
    pdf.output(str(out))
    t["write the PDF"] = time.perf_counter()
    steps = list(t)
    figures = {b: t[b] - t[a] for a, b in zip(steps, steps[1:], strict=False)}
    figures["pages"] = pdf.pages_count
    figures["size_MB"] = out.stat().st_size / 1e6
    return figures


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--lines", type=int, default=500)
    p.add_argument("--seed", type=int, default=7)
    p.add_argument("--keep", type=Path, help="keep the schedule and the PDF in this folder")
    a = p.parse_args(argv)
    if a.keep:
        a.keep.mkdir(parents=True, exist_ok=True)
        f = run(a.lines, a.seed, a.keep)
    else:
        with tempfile.TemporaryDirectory() as tmp:
            f = run(a.lines, a.seed, Path(tmp))
    pages, size = f.pop("pages"), f.pop("size_MB")
    for name, sec in f.items():
        print(f"{name:>20}: {sec:6.1f} s")
    package_s = sum(v for k, v in f.items() if k != "read and size")
    print(f"{a.lines} line sheets: {package_s:.1f} s for the package after sizing "
          f"({sum(f.values()):.1f} s with reading and sizing); {pages} pages, {size:.1f} MB")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
