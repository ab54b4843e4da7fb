"""Start-up of the command line, today's code against an earlier commit, side by side.

Times ``lcoe --help``, ``lcoe --version``, ``lcoe new``, ``lcoe check`` on the demo case, and
the time until the first line of progress of ``lcoe run`` reaches a terminal (a pseudo-terminal
here). The earlier commit is checked out into a temporary ``git worktree`` and each command is
run alternately on both trees, so a loaded machine slows both alike; medians are reported.

Targets (issue "first contact"): --help, --version and new under 1 s, check under 3 s, the
first progress line within 1 s.

Run from the repository root::

    python benchmarks/bench_startup.py [--ref COMMIT] [--repeat 5]
"""

from __future__ import annotations

import argparse
import os
import pty
import select
import statistics
import subprocess
import sys
import tempfile
import time
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
#: The command line before the start-up work (lazy imports, per-command options).
BASELINE_REF = "12861ed"
DEMO = ROOT / "inputs" / "demo_fixed_tilt.toml"


def _demo(tree: Path) -> Path:
    """The demo case of ``tree``: each tree checks and runs its own (an earlier tree does not
    know the keys added to today's demo since)."""
    return tree / "inputs" / DEMO.name


def _env(tree: Path) -> dict:
    return {**os.environ, "PYTHONPATH": str(tree)}


def _time(tree: Path, args: list[str], cwd: Path) -> tuple[float, subprocess.CompletedProcess]:
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, "-m", "lcoe.cli", *args], capture_output=True,
                       text=True, env=_env(tree), cwd=cwd)
    return time.perf_counter() - t0, r


def _first_progress_s(tree: Path, out: Path, timeout_s: float = 120.0) -> float:
    """Seconds until the first byte of progress reaches a terminal, for ``lcoe run``."""
    master, slave = pty.openpty()
    t0 = time.perf_counter()
    proc = subprocess.Popen([sys.executable, "-m", "lcoe.cli", "run", str(_demo(tree)), "--samples",
                             "400", "--sobol", "0", "--out", str(out), "--force"],
                            stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL, stderr=slave,
                            env=_env(tree), cwd=out.parent)
    os.close(slave)
    first = float("nan")
    try:
        while time.perf_counter() - t0 < timeout_s:
            ready, _, _ = select.select([master], [], [], 0.02)
            if ready:
                try:
                    if os.read(master, 1024):
                        first = time.perf_counter() - t0
                        break
                except OSError:
                    break
            if proc.poll() is not None and not ready:
                break
    finally:
        proc.wait()
        os.close(master)
    return first


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--ref", default=BASELINE_REF, help="earlier commit to compare against")
    ap.add_argument("--repeat", type=int, default=5)
    a = ap.parse_args()
    with tempfile.TemporaryDirectory(prefix="lcoe_bench_startup_") as tmp:
        tmp = Path(tmp)
        old = tmp / "old"
        subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "--detach", str(old), a.ref],
                       check=True, capture_output=True)
        try:
            return _compare(old, tmp, a.repeat)
        finally:
            subprocess.run(["git", "-C", str(ROOT), "worktree", "remove", "--force", str(old)],
                           capture_output=True)


def _compare(old: Path, tmp: Path, repeat: int) -> int:
    cases = {
        "lcoe --help": ["--help"],
        "lcoe --version": ["--version"],
        "lcoe new T.toml": ["new", "{dir}/t.toml", "--force"],
        "lcoe check demo": ["check", "{demo}"],
    }
    times = {(k, t): [] for k in cases for t in ("old", "new")}
    outputs = {}
    for _ in range(repeat):
        for name, args in cases.items():
            for label, tree in (("old", old), ("new", ROOT)):
                d = tmp / label
                d.mkdir(exist_ok=True)
                dt, r = _time(tree, [x.format(dir=d, demo=_demo(tree)) for x in args], d)
                times[(name, label)].append(dt if r.returncode == 0 else float("nan"))
                outputs[(name, label)] = r
    # Same results before any ratio: both checks accept the demo and name the same case; both
    # templates are cases the new validator accepts.
    for label in ("old", "new"):
        r = outputs[("lcoe check demo", label)]
        assert r.returncode == 0 and ": valid" in r.stdout, (label, r.stderr)
    case_line = [ln for ln in outputs[("lcoe check demo", "old")].stdout.splitlines()
                 if ln.strip().startswith("case")]
    assert case_line and case_line[0] in outputs[("lcoe check demo", "new")].stdout
    sys.path.insert(0, str(ROOT))
    from lcoe.case.reader import load_case

    for label in ("old", "new"):
        p = tmp / label / "t.toml"
        tomllib.loads(p.read_text())
        load_case(p)
    first = {label: statistics.median(_first_progress_s(tree, tmp / label / "run")
                                      for _ in range(max(1, repeat // 2)))
             for label, tree in (("old", old), ("new", ROOT))}
    load = os.getloadavg()[0]
    print(f"Start-up, median of {repeat} runs, machine load average {load:.1f} "
          f"({os.cpu_count()} cores); old = {BASELINE_REF}, new = this tree")
    print(f"  {'command':<22}{'old [s]':>10}{'new [s]':>10}{'old/new':>10}{'target':>10}")
    targets = {"lcoe --help": 1.0, "lcoe --version": 1.0, "lcoe new T.toml": 1.0,
               "lcoe check demo": 3.0}
    for name in cases:
        o = statistics.median(times[(name, "old")])
        n = statistics.median(times[(name, "new")])
        ratio = f"{o / n:.1f}x" if o == o else "n/a"
        o_txt = f"{o:.2f}" if o == o else "absent"
        print(f"  {name:<22}{o_txt:>10}{n:>10.2f}{ratio:>10}{'< ' + str(targets[name]):>10}")
    o, n = first["old"], first["new"]
    o_txt = f"{o:.2f}" if o == o else "none"  # none: nothing on the terminal until the end
    ratio = f"{o / n:.1f}x" if o == o else "n/a"
    print(f"  {'first progress line':<22}{o_txt:>10}{n:>10.2f}{ratio:>10}{'< 1.0':>10}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
