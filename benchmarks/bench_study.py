"""Benchmark of the study layer: serial versus 2 local dask workers, start-up included.

Two studies, each run serially in this process and then on a fresh local cluster of worker
processes (127.0.0.1 only), side by side in one run:

1. the bundled sweep (``inputs/sweep_demo.toml``: 12 invented sites x 3 technologies);
2. ``lcoe run`` of the lender demo (``inputs/lender_single_axis.toml``) with 200,000 Monte
   Carlo trials and the project-finance collector on every trial (Sobol off: only the Monte
   Carlo is distributed).

Before a ratio is printed, the two runs are checked to agree bit for bit (same trials, same
outputs). The wall time of the cluster run includes starting and stopping the cluster.

Target: a speed-up of at least 1.6 with 2 workers on a 2-core machine.

    python benchmarks/bench_study.py [--trials 200000] [--workers 2] [--only sweep|run]
"""

from __future__ import annotations

import argparse
import os
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
TARGET_SPEEDUP = 1.6


def _sweep(workers: int):
    from lcoe.sweep import run_sweep
    from lcoe.sweep_plan import load_plan

    plan = load_plan(ROOT / "inputs" / "sweep_demo.toml")
    t0 = time.perf_counter()
    result = run_sweep(plan, workers=workers)
    return time.perf_counter() - t0, result


def _same_sweep(a, b) -> bool:
    return a.trials.keys() == b.trials.keys() and all(
        np.array_equal(t.lcoe_real, b.trials[k].lcoe_real) and np.array_equal(t.X, b.trials[k].X)
        for k, t in a.trials.items()) and a.rows == b.rows


def _run(workers: int, trials: int):
    from lcoe.runner import run_case

    t0 = time.perf_counter()
    result = run_case(ROOT / "inputs" / "lender_single_axis.toml", samples=trials, seed=7,
                      sobol_base=0, workers=workers)
    return time.perf_counter() - t0, result


def _same_run(a, b) -> bool:
    ta, tb = a.extras["uncertainty"].trials, b.extras["uncertainty"].trials
    return np.array_equal(ta.X, tb.X) and all(
        np.array_equal(v, tb.outputs[k], equal_nan=True) for k, v in ta.outputs.items())


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--trials", type=int, default=200_000)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--only", choices=("sweep", "run"))
    args = ap.parse_args()
    print(f"machine: {os.cpu_count()} cores; load average {os.getloadavg()[0]:.2f} at start")
    jobs = []
    if args.only in (None, "sweep"):
        jobs.append(("bundled sweep (12 sites x 3 technologies x 400 trials)",
                     lambda w: _sweep(w), _same_sweep,
                     lambda r: len(r.plan.runs) * r.plan.samples))
    if args.only in (None, "run"):
        jobs.append((f"lcoe run lender demo, {args.trials:,} trials (Sobol off)",
                     lambda w: _run(w, args.trials), _same_run, lambda r: args.trials))
    for title, job, same, n_trials in jobs:
        t_serial, serial = job(1)
        t_par, par = job(args.workers)
        if not same(serial, par):
            raise SystemExit(f"{title}: serial and {args.workers}-worker results differ")
        n = n_trials(serial)
        ratio = t_serial / t_par
        print(f"{title}")
        print(f"  serial            {t_serial:8.1f} s  ({n / t_serial:,.0f} trials/s)")
        print(f"  {args.workers} workers (start-up included) {t_par:8.1f} s  "
              f"({n / t_par:,.0f} trials/s)")
        print(f"  speed-up          {ratio:8.2f}x  (target >= {TARGET_SPEEDUP}x: "
              f"{'met' if ratio >= TARGET_SPEEDUP else 'missed'}); bit-identical: yes")
    print(f"load average {os.getloadavg()[0]:.2f} at end (other work on the machine slows "
          f"the parallel run most)")


if __name__ == "__main__":
    main()
