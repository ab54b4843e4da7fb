"""Time the exporters on a run of 10,000 Monte Carlo trials (prints seconds and file sizes).

Usage: ``python benchmarks/bench_export.py [--samples N] [--sobol N] [--case PATH]``.
The study itself is timed separately; the figures of interest are the workbook (at most
10,000 trials listed on its Distribution sheet), the pictures, report.html and trials.csv.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from lcoe.export.plots import render_figures
from lcoe.export.report import write_report
from lcoe.export.summary import summary_json
from lcoe.export.trials import write_trials_csv
from lcoe.export.workbook import write_workbook
from lcoe.runner import run_case

DEMO = Path(__file__).resolve().parent.parent / "inputs" / "demo_fixed_tilt.toml"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=10_000)
    ap.add_argument("--sobol", type=int, default=64)
    ap.add_argument("--case", default=str(DEMO), help="case file (default: the demo)")
    args = ap.parse_args()
    t0 = time.perf_counter()
    result = run_case(args.case, samples=args.samples, sobol_base=args.sobol)
    print(f"study ({args.samples} trials, Sobol N={args.sobol}): "
          f"{time.perf_counter() - t0:6.2f} s (not part of the export)")
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp)
        figures = {}

        def figs(path):
            figures.update(render_figures(result))

        steps = (
            ("summary.json", lambda p: p.write_text(summary_json(result), encoding="utf-8")),
            ("workbook.xlsx", lambda p: write_workbook(result, p)),
            ("trials.csv", lambda p: write_trials_csv(result, p)),
            ("pictures (PNG)", figs),
            ("report.html", lambda p: write_report(result, p, figures)),
        )
        total = 0.0
        for name, step in steps:
            path = out / name
            t = time.perf_counter()
            step(path)
            dt = time.perf_counter() - t
            total += dt
            size = path.stat().st_size if path.exists() else sum(len(b) for b in
                                                                  figures.values())
            print(f"{name:<16} {dt:6.2f} s  {size / 1e6:7.2f} MB")
        print(f"{'export total':<16} {total:6.2f} s")


if __name__ == "__main__":
    main()
