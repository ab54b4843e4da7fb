"""Export against compute, and the end-to-end cost per trial, this tree against an earlier commit.

Usage (from the repository root)::

    python benchmarks/bench_export.py [--ref COMMIT] [--repeat 3] [--samples 10000]
                                      [--trials 0,10000,20000] [--skip-demo] [--skip-inside]

Parts:

1. **Inside one process, this tree**: the study of ``--samples`` trials of the demo (Sobol off
   unless ``--sobol N``), then each exporter timed alone (summary.json, workbook, trials.csv,
   pictures, report): export total against compute.
2. **Side by side, this tree and ``--ref``** (checked out into a temporary ``git worktree``;
   every command runs alternately on both trees, so a loaded machine slows both alike; medians
   of ``--repeat``):

   - ``lcoe run`` of the demo with ``--sobol 0`` at each of ``--trials`` (trials file, workbook
     and pictures included): wall time of the command line, and the same run split into
     start-up + imports / compute / export. Per-trial cost of the end-to-end run:
     ``(T(20,000) - T(0)) / 20,000`` (the issue's measure: it also carries what a run with a
     study has and a deterministic run has not, e.g. the histogram picture, the tornado and
     the Distribution sheet) and the marginal ``(T(20,000) - T(10,000)) / 10,000``.
   - ``lcoe demo`` (its defaults: 2,000 trials, Sobol N = 1,024) split the same way (by the
     driver on both trees: the earlier commit has no ``python -m lcoe``).

   The split comes from a driver that first imports every module the same run imports
   (listed by one untimed run of that tree), then times ``run_case`` and ``write_outputs``.

Agreement before any ratio: at each trial count both trees' ``trials.csv`` hold the same
trials (every column present in both, relative 1e-9) and the summaries' LCOE statistics agree
(1e-9); this tree's workbook lists exactly the first trials of its ``trials.csv``.
"""

from __future__ import annotations

import argparse
import csv
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "inputs" / "demo_fixed_tilt.toml"
#: The commit before the export work (trial list cell by cell, pictures drawn twice).
BASELINE_REF = "8e27501"
REL = 1e-9


# --------------------------------------------------------------------------------------------
# part 1: inside one process
# --------------------------------------------------------------------------------------------
def inside(samples: int, sobol: int, case: str) -> None:
    from lcoe.export.plots import render_figures
    from lcoe.export.report import write_report
    from lcoe.export.summary import summary_json
    from lcoe.export.trials_csv import write_trials_csv
    from lcoe.export.workbook.book import write_workbook
    from lcoe.study.run import run_case

    warm = run_case(case, samples=16, sobol_base=0)  # caches and lazy imports
    with tempfile.TemporaryDirectory() as tmp:
        write_workbook(warm, Path(tmp) / "w.xlsx")
    render_figures(warm)
    t0 = time.perf_counter()
    result = run_case(case, samples=samples, sobol_base=sobol)
    compute = time.perf_counter() - t0
    print(f"study ({samples:,} trials, Sobol N={sobol}): {compute:6.2f} s")
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp)
        figures = {}
        steps = (
            ("summary.json", lambda p: p.write_text(summary_json(result), encoding="utf-8")),
            ("workbook.xlsx", lambda p: write_workbook(result, p)),
            ("trials.csv", lambda p: write_trials_csv(result, p)),
            ("pictures (PNG)", lambda p: figures.update(render_figures(result))),
            ("report.html", lambda p: write_report(result, p, figures)),
        )
        total = 0.0
        for name, step in steps:
            path = out / name
            t = time.perf_counter()
            step(path)
            dt = time.perf_counter() - t
            total += dt
            size = path.stat().st_size if path.exists() else sum(map(len, figures.values()))
            print(f"  {name:<16} {dt:6.2f} s  {size / 1e6:7.2f} MB")
        print(f"  {'export total':<16} {total:6.2f} s  = {total / compute:.2f} x the compute")


# --------------------------------------------------------------------------------------------
# part 2: side by side
# --------------------------------------------------------------------------------------------
DRIVER = r"""
import importlib, json, sys, time
t0 = time.perf_counter()
case, samples, sobol, out, listing = sys.argv[1:6]
sobol = int(sobol)
if listing != "-":
    for name in json.load(open(listing)):
        try:
            importlib.import_module(name)
        except Exception:
            pass
t1 = time.perf_counter()
from lcoe.case.errors import collect_warnings
from lcoe.study.run import read_case, run_case, write_outputs
with collect_warnings():
    result = run_case(read_case(case), samples=None if samples == "default" else int(samples),
                      sobol_base=sobol)
t2 = time.perf_counter()
write_outputs(result, out, force=True)
t3 = time.perf_counter()
if listing == "-":
    json.dump([m for m in sys.modules if not m.startswith("__")], sys.stderr)
print(json.dumps({"imports": t1 - t0, "compute": t2 - t1, "export": t3 - t2}))
"""


def _env(tree: Path) -> dict:
    return {**os.environ, "PYTHONPATH": str(tree)}


def _cli(tree: Path, args: list[str], cwd: Path) -> float:
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "lcoe.cli", *args], check=True, env=_env(tree),
                   cwd=cwd, stdout=subprocess.DEVNULL)
    return time.perf_counter() - t0


def _driver(tree: Path, samples: str, sobol: int, out: Path, listing: str) -> dict:
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, "-c", DRIVER, str(DEMO), samples, str(sobol), str(out),
                        listing], check=True, env=_env(tree), cwd=out.parent,
                       capture_output=True, text=True)
    wall = time.perf_counter() - t0
    split = json.loads(r.stdout.strip().splitlines()[-1])
    split["start-up + imports"] = wall - split["compute"] - split["export"]
    split["wall"] = wall
    return split | {"_stderr": r.stderr}


def _listing(tree: Path, sobol: int, tmp: Path, tag: str) -> str:
    """Modules a run with a study imports, in import order (one small untimed run)."""
    split = _driver(tree, "64", sobol, tmp / f"list_{tag}", "-")
    path = tmp / f"modules_{tag}.json"
    path.write_text(split["_stderr"].strip().splitlines()[-1])
    return str(path)


def _read_trials(path: Path) -> dict:
    import numpy as np

    with open(path, newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    values = np.array(rows[1:], dtype=float)
    return {h: values[:, j] for j, h in enumerate(rows[0])}


def _agree(out_a: Path, out_b: Path, n: int) -> str:
    """Both trees computed the same trials; this tree's workbook lists its trials."""
    import numpy as np
    import openpyxl

    sa = json.loads((out_a / "summary.json").read_text())
    sb = json.loads((out_b / "summary.json").read_text())
    for key in ("real_per_kwh", "nominal_per_kwh"):
        a, b = sa["lcoe"][key], sb["lcoe"][key]
        assert abs(a - b) <= REL * abs(b), (key, a, b)
    if n == 0:
        return "deterministic LCOE agrees"
    ta, tb = _read_trials(out_a / "trials.csv"), _read_trials(out_b / "trials.csv")
    common = [h for h in ta if h in tb]
    assert "lcoe_real_per_kwh" in common and len(ta["trial"]) == len(tb["trial"]) == n
    for h in common:
        assert np.allclose(ta[h], tb[h], rtol=REL, atol=0, equal_nan=True), h
    for key, stat in sb["uncertainty"]["lcoe_real_per_kwh"].items():
        if isinstance(stat, float):
            other = sa["uncertainty"]["lcoe_real_per_kwh"][key]
            assert abs(other - stat) <= REL * abs(stat) + 1e-15, (key, other, stat)
    ws = openpyxl.load_workbook(out_a / "workbook.xlsx", read_only=True)["Distribution"]
    listed = np.array([r[0] for r in ws.iter_rows(min_row=2, min_col=11, max_col=11,
                                                  values_only=True) if r[0] is not None])
    m = min(n, 10_000)
    assert listed.size == m and np.allclose(listed, ta["lcoe_real_per_kwh"][:m], rtol=1e-15)
    return f"{len(common)} trial columns agree (rel {REL:g}); workbook lists {m:,} trials"


def _median(runs: list[dict], key: str) -> float:
    return statistics.median(r[key] for r in runs)


def side_by_side(ref: str, repeat: int, trials: list[int], demo: bool) -> None:
    with tempfile.TemporaryDirectory(prefix="lcoe_bench_export_") as tmpdir:
        tmp = Path(tmpdir)
        base = tmp / "ref"
        subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "--detach", str(base), ref],
                       check=True, capture_output=True)
        try:
            trees = {"before": base, "after": ROOT}
            _run_side_by_side(trees, tmp, repeat, trials, demo, ref)
        finally:
            subprocess.run(["git", "-C", str(ROOT), "worktree", "remove", "--force",
                            str(base)], capture_output=True)


def _run_side_by_side(trees, tmp, repeat, trials, demo, ref) -> None:
    print(f"\nside by side: before = {ref}, after = this tree; medians of {repeat} alternating "
          f"runs; load average at start {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    wall = {t: {n: [] for n in trials} for t in trees}
    split = {t: {n: [] for n in trials} for t in trees}
    listings = {t: _listing(tree, 0, tmp, t) for t, tree in trees.items()}
    for _ in range(repeat):
        for n in trials:
            for t, tree in trees.items():
                out = tmp / f"cli_{t}_{n}"
                wall[t][n].append(_cli(tree, ["run", str(DEMO), "--samples", str(n), "--sobol",
                                              "0", "--out", str(out), "--force", "--quiet"],
                                       tmp))
                split[t][n].append(_driver(tree, str(n), 0, tmp / f"drv_{t}_{n}", listings[t]))
    for n in trials:
        print(f"  agreement at {n:>6,} trials: "
              f"{_agree(tmp / f'cli_after_{n}', tmp / f'cli_before_{n}', n)}")
    print(f"\n  lcoe run demo --sobol 0 [s]   {'before':>8} {'after':>8} {'ratio':>6}   "
          f"split after: start-up+imports / compute / export (export/compute)")
    for n in trials:
        b, a = statistics.median(wall["before"][n]), statistics.median(wall["after"][n])
        s = split["after"][n]
        imp, comp, exp = (_median(s, k) for k in ("start-up + imports", "compute", "export"))
        sb = split["before"][n]
        print(f"  {n:>7,} trials, wall          {b:8.2f} {a:8.2f} {b / a:6.2f}   "
              f"{imp:.2f} / {comp:.2f} / {exp:.2f} ({exp / comp:.2f}); before: "
              f"{_median(sb, 'start-up + imports'):.2f} / {_median(sb, 'compute'):.2f} / "
              f"{_median(sb, 'export'):.2f} ({_median(sb, 'export') / _median(sb, 'compute'):.2f})")
    if 0 in trials and len(trials) > 1:
        top = max(trials)
        mid = sorted(trials)[-2]
        for label, lo in (("(T(top) - T(0)) / top", 0), ("(T(top) - T(mid)) / (top - mid)", mid)):
            if lo == top or (lo == 0 and label.startswith("(T(top) - T(mid))")):
                continue
            per = {t: (statistics.median(wall[t][top]) - statistics.median(wall[t][lo])) /
                   (top - lo) * 1e6 for t in trees}
            text = label.replace("top", f"{top:,}").replace("mid", f"{mid:,}")
            print(f"  per trial {text}: before {per['before']:.1f} us, after "
                  f"{per['after']:.1f} us ({per['before'] / per['after']:.2f}x)")
    if demo:
        runs = {t: [] for t in trees}
        listings = {t: _listing(tree, 16, tmp, f"demo_{t}") for t, tree in trees.items()}
        for _ in range(repeat):
            for t, tree in trees.items():
                runs[t].append(_driver(tree, "default", 1024, tmp / f"demo_{t}", listings[t]))
        print(f"  agreement of the demo: {_agree(tmp / 'demo_after', tmp / 'demo_before', 2000)}")
        print(f"\n  lcoe demo (2,000 trials, Sobol N = 1,024) [s]           {'before':>8} "
              f"{'after':>8} {'ratio':>6}")
        for key in ("start-up + imports", "compute", "export", "wall"):
            b, a = _median(runs["before"], key), _median(runs["after"], key)
            print(f"  {key:<52} {b:8.2f} {a:8.2f} {b / a:6.2f}")
    print(f"  load average at end {os.getloadavg()[0]:.1f}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=10_000, help="trials of part 1")
    ap.add_argument("--sobol", type=int, default=0, help="Sobol base samples of part 1")
    ap.add_argument("--case", default=str(DEMO), help="case file of part 1 (default: the demo)")
    ap.add_argument("--ref", default=BASELINE_REF, help="earlier commit to compare against")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--trials", default="0,10000,20000",
                    help="trial counts of the side-by-side runs (comma-separated)")
    ap.add_argument("--skip-demo", action="store_true", help="no `lcoe demo` split")
    ap.add_argument("--skip-inside", action="store_true", help="no part 1")
    ap.add_argument("--skip-side", action="store_true", help="no part 2")
    args = ap.parse_args()
    print(f"load average at start {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    if not args.skip_inside:
        inside(args.samples, args.sobol, args.case)
    if not args.skip_side:
        side_by_side(args.ref, args.repeat, [int(n) for n in args.trials.split(",")],
                     not args.skip_demo)


if __name__ == "__main__":
    main()
