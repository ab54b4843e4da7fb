"""Export against compute, and the end-to-end cost per trial against the fair loop.

Usage (from the repository root)::

    python benchmarks/bench_export.py [--repeat 3] [--trials 0,10000,20000] [--ref COMMIT]
                                      [--samples 10000] [--skip-inside] [--skip-demo]

Parts (the machine is shared: every figure is a median of ``--repeat`` runs, the trial counts
and trees alternate so that load slows all alike, CPU time is printed beside wall time and the
load average around each part):

1. **The fair loop** of ``benchmarks/bench_engine.py`` (imported from there, so the reference
   is the same model): its agreement with the engine is asserted first (energy and LCOE on the
   same trials, relative 1e-9), then its time per trial (sun and plane of array once per site;
   per trial pvlib temperature, DC and inverter over the lit hours and the plain cash flow).
2. **lcoe run of the demo, end to end** (``python -m lcoe.cli run ... --sobol 0``; trials file,
   workbook and pictures included) at each of ``--trials``: wall and CPU time of the command
   (its pictures' child included), and a driver's split of the same run into start-up +
   imports / compute / export (export/compute at 10,000 trials: target <= 1; the export
   includes its own imports, openpyxl and, when no child draws the pictures, matplotlib, as
   in the command; the driver forks the pictures' child before the computation as the
   command does). The CPU of the export includes the child's (all of it: its import of
   matplotlib during the computation too). Per-trial cost
   ``(T(20,000) - T(0)) / 20,000`` against the fair loop's (target: at most 1/10 of it), and
   the marginal ``(T(20,000) - T(10,000)) / 10,000``; and where it goes: the imports only a
   run with a study does (timed apart in a fresh process), the compute and the export of the
   split. ``--samples 0`` is the command's own
   deterministic run (no Monte Carlo, no trials file, no study pictures), so T(0) is an honest
   zero point: everything a study adds, fixed or not, is counted per trial.
3. With ``--ref COMMIT`` the same runs of that commit (checked out into a temporary ``git
   worktree``) alternate with this tree's, and both trees' trials are checked to agree
   (every column of ``trials.csv`` present in both, relative 1e-9; summaries' LCOE statistics
   1e-9; the workbook lists exactly the first trials of ``trials.csv``).
4. Unless ``--skip-demo``: ``lcoe demo`` (2,000 trials, Sobol N = 1,024) split the same way.
5. Unless ``--skip-inside``: inside one process of this tree, the study of ``--samples``
   trials, then each exporter timed alone and in sequence (no child): where export time goes.
"""

from __future__ import annotations

import argparse
import csv
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "inputs" / "demo_fixed_tilt.toml"
REL = 1e-9
#: Trials of the fair loop's timing (two repetitions, the faster counts, as bench_engine).
FAIR_TRIALS = 300


def _cpu_children() -> float:
    """CPU seconds (user + system) of the waited-for child processes so far."""
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def _load() -> str:
    return f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores"


# --------------------------------------------------------------------------------------------
# part 1: the fair loop of bench_engine (same model, agreement asserted)
# --------------------------------------------------------------------------------------------
def part_fair() -> dict:
    """Agreement of bench_engine's references with the engine, then the fair loop per trial."""
    sys.path.insert(0, str(ROOT / "benchmarks"))
    import bench_engine as be

    agree = be.part_agree("demo")  # asserts <= 1e-9 on energy and LCOE before any timing
    ctx = be._context("demo")
    design = be._design(ctx, FAIR_TRIALS, seed=5)
    params, factors = be._trial_inputs(ctx, design, 0, FAIR_TRIALS)
    light = be.site_light(ctx["case"], ctx["site"].weather,
                          be._trial_params(ctx["case"], params, 0))
    wall, cpu = [], []
    for _ in range(2):
        t0, c0 = time.perf_counter(), time.process_time()
        be.fair_trials(ctx, params, factors, FAIR_TRIALS, light)
        wall.append((time.perf_counter() - t0) / FAIR_TRIALS)
        cpu.append((time.process_time() - c0) / FAIR_TRIALS)
    return {"agree": agree["fair"], "s_per_trial": min(wall), "cpu_per_trial": min(cpu)}


def _fair() -> dict:
    out = subprocess.run([sys.executable, __file__, "--part", "fair"], capture_output=True,
                         text=True, cwd=ROOT, env=_env(ROOT))
    if out.returncode:
        raise SystemExit(f"fair loop failed:\n{out.stderr}")
    return json.loads(out.stdout.strip().splitlines()[-1])


# --------------------------------------------------------------------------------------------
# parts 2-4: commands in fresh processes
# --------------------------------------------------------------------------------------------
DRIVER = r"""
import importlib, json, os, sys, time
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
c1 = os.times()
try:
    from lcoe.case.errors import collect_warnings
    from lcoe.export.run_outputs import write_outputs
    from lcoe.study.run import read_case, run_case
except ImportError:  # a commit before the package layout by layer
    from lcoe.errors import collect_warnings
    from lcoe.runner import read_case, run_case, write_outputs
from contextlib import nullcontext
try:  # as lcoe run does: the pictures' child forked before the computation
    from lcoe.export.run_outputs import picture_maker
except ImportError:
    picture_maker = nullcontext
with picture_maker() as pictures:
    with collect_warnings():
        result = run_case(read_case(case), samples=None if samples == "default" else
                          int(samples), sobol_base=sobol)
    t2 = time.perf_counter()
    c2 = os.times()
    if listing == "-":  # what the command has imported when its export starts
        json.dump([m for m in sys.modules if not m.startswith("__")], sys.stderr)
    write_outputs(result, out, force=True, **({} if pictures is None else
                                              {"pictures": pictures}))
    t3 = time.perf_counter()
    c3 = os.times()
cpu = lambda c: c.user + c.system + c.children_user + c.children_system
print(json.dumps({"imports": t1 - t0, "compute": t2 - t1, "export": t3 - t2,
                  "compute cpu": cpu(c2) - cpu(c1), "export cpu": cpu(c3) - cpu(c2)}))
"""


def _env(tree: Path) -> dict:
    return {**os.environ, "PYTHONPATH": str(tree)}


def _cli(tree: Path, args: list[str], cwd: Path) -> dict:
    """Wall and CPU time (the command and its children) of one command line."""
    t0, c0 = time.perf_counter(), _cpu_children()
    subprocess.run([sys.executable, "-m", "lcoe.cli", *args], check=True, env=_env(tree),
                   cwd=cwd, stdout=subprocess.DEVNULL)
    return {"wall": time.perf_counter() - t0, "cpu": _cpu_children() - c0}


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
    """Modules a run with a study has imported when its export starts, in import order (one
    small untimed run): the driver imports them before its clock for the compute starts, so
    the export is timed with the imports it does itself (matplotlib, openpyxl), as in the
    command."""
    split = _driver(tree, "64", sobol, tmp / f"list_{tag}", "-")
    path = tmp / f"modules_{tag}.json"
    path.write_text(split["_stderr"].strip().splitlines()[-1])
    return str(path)


IMPORTS = r"""
import importlib, json, sys, time
before, after = (json.load(open(p)) for p in sys.argv[1:3])
for name in before:
    try:
        importlib.import_module(name)
    except Exception:
        pass
extra = [m for m in after if m not in sys.modules]
t0, c0 = time.perf_counter(), time.process_time()
for name in extra:
    try:
        importlib.import_module(name)
    except Exception:
        pass
print(json.dumps({"wall": time.perf_counter() - t0, "cpu": time.process_time() - c0,
                  "top": sorted({m if m.startswith("scipy.") else m.split(".")[0]
                                 for m in extra if m.count(".") <= 1 and "._" not in m
                                 and not m.startswith(("lcoe", "_"))})[:6]}))
"""


def _study_imports(tree: Path, tmp: Path, study_listing: str, repeat: int) -> dict:
    """Time of the imports a run with a study does and a deterministic run does not (the
    modules imported by the start of the export, in a fresh process; median of ``repeat``)."""
    split = _driver(tree, "0", 0, tmp / "list_det", "-")
    det = tmp / "modules_det.json"
    det.write_text(split["_stderr"].strip().splitlines()[-1])
    runs = []
    for _ in range(repeat):
        r = subprocess.run([sys.executable, "-c", IMPORTS, str(det), study_listing],
                           check=True, env=_env(tree), capture_output=True, text=True)
        runs.append(json.loads(r.stdout.strip().splitlines()[-1]))
    return {"wall": _median(runs, "wall"), "cpu": _median(runs, "cpu"), "top": runs[0]["top"]}


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


def commands(ref: str | None, repeat: int, trials: list[int], demo: bool) -> None:
    with tempfile.TemporaryDirectory(prefix="lcoe_bench_export_") as tmpdir:
        tmp = Path(tmpdir)
        trees = {"this tree": ROOT}
        if ref:
            base = tmp / "ref"
            subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "--detach", str(base),
                            ref], check=True, capture_output=True)
            trees = {ref: base, "this tree": ROOT}
        try:
            _commands(trees, tmp, repeat, trials, demo)
        finally:
            if ref:
                subprocess.run(["git", "-C", str(ROOT), "worktree", "remove", "--force",
                                str(base)], capture_output=True)


def _commands(trees, tmp, repeat, trials, demo) -> None:
    print(f"\nfair loop of bench_engine.py (same model as the engine), {_load()}")
    fair = _fair()
    print(f"  agreement with the engine: energy {fair['agree']['energy']:.1e}, LCOE "
          f"{fair['agree']['lcoe']:.1e} (max relative, limit {REL:g})")
    print(f"  fair loop per trial: {1e6 * fair['s_per_trial']:.0f} us wall, "
          f"{1e6 * fair['cpu_per_trial']:.0f} us CPU (faster of 2 x {FAIR_TRIALS} trials)")
    print(f"\nlcoe run of the demo, --sobol 0, medians of {repeat} alternating runs; {_load()}")
    cli = {t: {n: [] for n in trials} for t in trees}
    split = {t: {n: [] for n in trials} for t in trees}
    listings = {t: _listing(tree, 0, tmp, f"t{i}") for i, (t, tree) in enumerate(trees.items())}
    for _ in range(repeat):
        for n in trials:
            for i, (t, tree) in enumerate(trees.items()):
                out = tmp / f"cli_{i}_{n}"
                cli[t][n].append(_cli(tree, ["run", str(DEMO), "--samples", str(n), "--sobol",
                                             "0", "--out", str(out), "--force", "--quiet"],
                                      tmp))
                split[t][n].append(_driver(tree, str(n), 0, tmp / f"drv_{i}_{n}",
                                           listings[t]))
    if len(trees) > 1:
        for n in trials:
            print(f"  agreement at {n:>6,} trials: "
                  f"{_agree(tmp / f'cli_1_{n}', tmp / f'cli_0_{n}', n)}")
    for t in trees:
        print(f"\n  {t}: trials | command wall / CPU [s] | split start-up+imports / compute / "
              f"export [s] (export/compute) | CPU compute / export [s]")
        for n in trials:
            s = split[t][n]
            comp, exp = _median(s, "compute"), _median(s, "export")
            print(f"  {n:>7,} | {_median(cli[t][n], 'wall'):5.2f} / "
                  f"{_median(cli[t][n], 'cpu'):5.2f} | {_median(s, 'start-up + imports'):.2f}"
                  f" / {comp:.2f} / {exp:.2f} ({exp / comp:.2f}) | "
                  f"{_median(s, 'compute cpu'):.2f} / {_median(s, 'export cpu'):.2f}")
        if 0 in trials and len(trials) > 1:
            top = max(trials)
            per = {k: (_median(cli[t][top], k) - _median(cli[t][0], k)) / top for k in
                   ("wall", "cpu")}
            goal = fair["s_per_trial"] / 10
            print(f"  per trial (T({top:,}) - T(0)) / {top:,}: {1e6 * per['wall']:.1f} us wall "
                  f"({1e6 * per['cpu']:.1f} us CPU) = 1/{fair['s_per_trial'] / per['wall']:.1f}"
                  f" of the fair loop's {1e6 * fair['s_per_trial']:.0f} us (target 1/10 = "
                  f"{1e6 * goal:.0f} us: {'met' if per['wall'] <= goal else 'missed'})")
            imp = _study_imports(trees[t], tmp, listings[t], repeat)
            parts = {k: (_median(split[t][top], k) - _median(split[t][0], k)) / top
                     for k in ("compute", "export", "compute cpu", "export cpu")}
            print(f"  of which: imports only a study needs {1e6 * imp['wall'] / top:.1f} us "
                  f"({imp['wall']:.2f} s, {imp['cpu']:.2f} s CPU; {', '.join(imp['top'])}), "
                  f"compute {1e6 * parts['compute']:.1f} us ({1e6 * parts['compute cpu']:.1f} "
                  f"CPU), export {1e6 * parts['export']:.1f} us ({1e6 * parts['export cpu']:.1f}"
                  f" CPU, its child's included)")
            mid = sorted(trials)[-2]
            if mid:
                marg = (_median(cli[t][top], "wall") - _median(cli[t][mid], "wall")) / (top - mid)
                print(f"  marginal (T({top:,}) - T({mid:,})) / {top - mid:,}: "
                      f"{1e6 * marg:.1f} us wall")
    if demo:
        runs = {t: [] for t in trees}
        listings = {t: _listing(tree, 16, tmp, f"demo{i}")
                    for i, (t, tree) in enumerate(trees.items())}
        for _ in range(repeat):
            for i, (t, tree) in enumerate(trees.items()):
                runs[t].append(_driver(tree, "default", 1024, tmp / f"demo_{i}", listings[t]))
        if len(trees) > 1:
            print(f"\n  agreement of the demo: {_agree(tmp / 'demo_1', tmp / 'demo_0', 2000)}")
        print(f"\n  lcoe demo (2,000 trials, Sobol N = 1,024) [s]   "
              + " ".join(f"{t:>10}" for t in trees))
        for key in ("start-up + imports", "compute", "export", "wall", "export cpu"):
            print(f"  {key:<44} " + " ".join(f"{_median(runs[t], key):10.2f}" for t in trees))
    print(f"\n  at end: {_load()}")


# --------------------------------------------------------------------------------------------
# part 5: inside one process
# --------------------------------------------------------------------------------------------
def inside(samples: int, sobol: int, case: str) -> None:
    from lcoe.export.plots import render_figures
    from lcoe.export.report import write_report
    from lcoe.export.summary import summary_json
    from lcoe.export.trials_csv import write_trials_csv
    from lcoe.export.workbook.book import write_workbook
    from lcoe.study.run import run_case

    print(f"\ninside one process, each exporter alone (no child), {_load()}")
    warm = run_case(case, samples=16, sobol_base=0)  # caches and lazy imports
    with tempfile.TemporaryDirectory() as tmp:
        write_workbook(warm, Path(tmp) / "w.xlsx")
    render_figures(warm)
    t0, c0 = time.perf_counter(), time.process_time()
    result = run_case(case, samples=samples, sobol_base=sobol)
    compute, compute_cpu = time.perf_counter() - t0, time.process_time() - c0
    print(f"  study ({samples:,} trials, Sobol N={sobol}): {compute:6.2f} s "
          f"({compute_cpu:.2f} s CPU)")
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
        print(f"  {'export in turn':<16} {total:6.2f} s  = {total / compute:.2f} x the compute "
              f"(matplotlib already imported)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=10_000, help="trials of part 5")
    ap.add_argument("--sobol", type=int, default=0, help="Sobol base samples of part 5")
    ap.add_argument("--case", default=str(DEMO), help="case file of part 5 (default: the demo)")
    ap.add_argument("--ref", default=None, help="earlier commit to run side by side")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--trials", default="0,10000,20000",
                    help="trial counts of the lcoe run commands (comma-separated)")
    ap.add_argument("--skip-demo", action="store_true", help="no `lcoe demo` split")
    ap.add_argument("--skip-inside", action="store_true", help="no part 5")
    ap.add_argument("--skip-commands", action="store_true", help="only part 5")
    ap.add_argument("--part", help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.part == "fair":
        print(json.dumps(part_fair()))
        return
    print(f"start: {_load()}")
    if not args.skip_commands:
        commands(args.ref, args.repeat, [int(n) for n in args.trials.split(",")],
                 not args.skip_demo)
    if not args.skip_inside:
        inside(args.samples, args.sobol, args.case)


if __name__ == "__main__":
    main()
