"""Benchmark of the study layer: serial versus 2 local dask workers, start-up included.

Two studies, each run serially in this process and then on a fresh local cluster of worker
processes (127.0.0.1 only), side by side in one run:

1. the bundled sweep (``inputs/sweep_demo.toml``: 12 invented sites x 3 technologies);
2. ``lcoe run`` of the lender demo (``inputs/lender_single_axis.toml``) with 200,000 Monte
   Carlo trials and the project-finance collector on every trial (Sobol off: only the Monte
   Carlo is distributed).

Each run is timed in a fresh interpreter started for it (so neither finds the other's imports,
prepared sites or caches), from the call into the study to its result. Before a ratio is
printed, the two runs are checked to agree bit for bit (same trials, same outputs). The wall
time of the cluster run includes starting and stopping the cluster.

Target: a speed-up of at least 1.6 with 2 workers on a 2-core machine. Wall times on a
machine shared with other work depend on what else runs at that moment, so each pair is
printed with the load average before, between and after, and with its CPU times: the
"CPU-time bound" is the speed-up the same work would give if each process had a core of its
own (serial CPU over the command's CPU plus the workers' CPU shared evenly).

    python benchmarks/bench_study.py [--trials 200000] [--workers 2] [--only sweep|run]
                                     [--repeat 2]

Measured on this 2-core machine, 2026-12-03 (target missed):

- quiet moment (load average 0.8-1.05), workers from a fork server (the start used since the
  plain fork of the command's process hung twice in the test suite): sweep serial 5.5 s,
  2 workers 4.9 s (1.14x); lender 200,000 trials serial 11.4 s, 2 workers 10.0 s (1.14x;
  3.8 s of CPU stay in the command: break-even searches and statistics);
- the figures below were measured with workers forked from the command's process (an upper
  bound for today's start):
- quiet moment (load average 0.6-0.9), final code: sweep serial 5.5 s, 2 workers 4.2 s
  (1.32x); lender 200,000 trials serial 11.1 s, 2 workers 7.7 s (1.45x); CPU-time bounds
  1.34x and 1.40x;
- load average 2.3-2.8: sweep serial 5.6 s, 2 workers 7.2 s (0.78x; CPU-time bound 1.27x);
  lender 200,000 trials serial 12.8 s (CPU 19.1 s), 2 workers 13.6 s (0.95x; bound 1.46x);
- load average 2.7-3.3, IRR grid product on one BLAS thread: lender serial 16.1 s (CPU
  11.3 s), 2 workers 20.4 s (0.79x; bound 1.30x, limited by the command's serial 3.7 s);
- load average 4.5-5.5, before the factored engine landed: sweep 13.4 s vs 18.3 s (bound
  1.20x); lender 47.0 s vs 35.8 s (1.31x; bound 1.76x).

The kernel schedules by session (sched_autogroup), so a command's workers share one
session's CPU share while others are busy; see DEVELOPERS.md, "Benchmarks".
"""

from __future__ import annotations

import argparse
import contextlib
import os
import pickle
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
TARGET_SPEEDUP = 1.6


def _sweep(workers: int):
    from lcoe.study.plan import load_plan
    from lcoe.study.sweep import run_sweep

    plan = load_plan(ROOT / "inputs" / "sweep_demo.toml")
    with _clock() as took:
        result = run_sweep(plan, workers=workers)
    return took, result


def _run(workers: int, trials: int):
    from lcoe.study.run import run_case

    with _clock() as took:
        result = run_case(ROOT / "inputs" / "lender_single_axis.toml", samples=trials, seed=7,
                          sobol_base=0, workers=workers)
    return took, result


def _cpu_s(who) -> float:
    r = resource.getrusage(who)
    return r.ru_utime + r.ru_stime


@contextlib.contextmanager
def _clock():
    """Wall time and CPU times (this process, its finished children) of the block: a list
    filled on exit with ``wall_s, (own_cpu_s, children_cpu_s)``."""
    took: list = []
    own, kids = _cpu_s(resource.RUSAGE_SELF), _cpu_s(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    yield took
    took += [time.perf_counter() - t0, (_cpu_s(resource.RUSAGE_SELF) - own,
                                        _cpu_s(resource.RUSAGE_CHILDREN) - kids)]


def _child(kind: str, workers: int, trials: int, out: str) -> None:
    """One measurement in a fresh interpreter (nothing prepared or imported beforehand)."""
    (t, cpu), result = _sweep(workers) if kind == "sweep" else _run(workers, trials)
    with open(out, "wb") as fh:
        pickle.dump((t, cpu, _digest(kind, result), _count(kind, result, trials)), fh)


def _digest(kind: str, result) -> dict:
    """Everything the two runs must agree on, bit for bit."""
    if kind == "sweep":
        out = {f"{k}/lcoe": t.lcoe_real for k, t in result.trials.items()}
        out.update({f"{k}/X": t.X for k, t in result.trials.items()})
        out["rows"] = result.rows
        return out
    t = result.extras["uncertainty"].trials
    return {"X": t.X, **t.outputs}


def _count(kind: str, result, trials: int) -> int:
    return len(result.plan.runs) * result.plan.samples if kind == "sweep" else trials


def _same(a: dict, b: dict) -> bool:
    def equal(x, y):
        if isinstance(x, np.ndarray):
            return np.array_equal(x, y, equal_nan=x.dtype.kind == "f")
        return x == y
    return a.keys() == b.keys() and all(equal(a[k], b[k]) for k in a)


def _measure(kind: str, workers: int, trials: int) -> tuple[float, tuple, dict, int]:
    """Wall time of one study in a fresh interpreter started for it (start-up excluded)."""
    with tempfile.TemporaryDirectory() as tmp:
        out = os.path.join(tmp, "result.pkl")
        env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH",
                                                                                   ""))
        subprocess.run([sys.executable, __file__, "--child", kind, "--workers", str(workers),
                        "--trials", str(trials), "--out", out], check=True, env=env)
        with open(out, "rb") as fh:
            return pickle.load(fh)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--trials", type=int, default=200_000)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--only", choices=("sweep", "run"))
    ap.add_argument("--repeat", type=int, default=1, help="serial/parallel pairs per study")
    ap.add_argument("--child", choices=("sweep", "run"), help=argparse.SUPPRESS)
    ap.add_argument("--out", help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        _child(args.child, args.workers, args.trials, args.out)
        return
    print(f"machine: {os.cpu_count()} cores; load average {os.getloadavg()[0]:.2f} at start")
    jobs = []
    if args.only in (None, "sweep"):
        jobs.append(("sweep", "bundled sweep (12 sites x 3 technologies x 400 trials)"))
    if args.only in (None, "run"):
        jobs.append(("run", f"lcoe run lender demo, {args.trials:,} trials (Sobol off)"))
    for kind, title in jobs:
        print(f"{title}")
        for rep in range(args.repeat):
            load0 = os.getloadavg()[0]
            t_serial, cpu_serial, serial, n = _measure(kind, 1, args.trials)
            load1 = os.getloadavg()[0]
            t_par, (own, kids), par, _ = _measure(kind, args.workers, args.trials)
            load2 = os.getloadavg()[0]
            if not _same(serial, par):
                raise SystemExit(f"{title}: serial and {args.workers}-worker results differ")
            ratio = t_serial / t_par
            # with a core for each process: the command's own work plus one worker's share
            # workers started by a fork server are not this process's children: their CPU
            # is not seen by getrusage, so no bound is printed then
            cpu_ratio = sum(cpu_serial) / (own + kids / args.workers) if kids > 0.05 else None
            print(f"  run {rep + 1}: load average {load0:.2f} / {load1:.2f} / {load2:.2f} "
                  f"(before, between, after)")
            print(f"    serial            {t_serial:8.1f} s  ({n / t_serial:,.0f} trials/s; "
                  f"CPU {sum(cpu_serial):.1f} s)")
            print(f"    {args.workers} workers (start-up included) {t_par:8.1f} s  "
                  f"({n / t_par:,.0f} trials/s; CPU {own:.1f} s in the command + "
                  f"{kids:.1f} s in the workers)")
            print(f"    speed-up          {ratio:8.2f}x  (target >= {TARGET_SPEEDUP}x: "
                  f"{'met' if ratio >= TARGET_SPEEDUP else 'missed'}); bit-identical: yes")
            if cpu_ratio is None:
                print("    CPU-time bound    not measured (the workers start from a fork server, "
                      "whose children's CPU this process cannot see)")
            else:
                print(f"    CPU-time bound    {cpu_ratio:8.2f}x  (serial CPU / (command CPU + "
                      f"worker CPU / {args.workers}): the speed-up if each process had a core)")
    print(f"load average {os.getloadavg()[0]:.2f} at end (other work on the machine slows "
          f"the parallel run most)")


if __name__ == "__main__":
    main()
