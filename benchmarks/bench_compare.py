"""Benchmark of the new mounts and of ``lcoe compare``.

Times (wall clock, this process):

1. the hourly model over 2,000 samples for a flat fixed-tilt plant, a static 24-facet
   cylinder field and the same cylinders rotating (rings merged into one row), to show what
   facets cost: a static body costs about k times a flat plane, a rotating one about the same;
2. the bundled claim test (``lcoe demo --compare`` without writing files) at its defaults,
   2,000 trials and Sobol N = 512 per candidate.

Targets (2-core machine): the static 24-facet body under 30 x the flat plane; the claim test
under 60 s.

    python benchmarks/bench_compare.py
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
BODY = """
[plant.body]
shape = "cylinder"
radius_m = 0.3
height_m = 4.0
facets = 24
spacing_m = 2.4
rotating = {rotating}
"""
TARGET_STATIC_RATIO = 30.0
TARGET_COMPARE_S = 60.0


def _timed(fn):
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def main() -> None:
    from lcoe.case.reader import load_case
    from lcoe.model import evaluate, prepare
    from lcoe.study.compare import run_comparison

    base = load_case(ROOT / "inputs" / "demo_fixed_tilt.toml")
    site = prepare(base)
    text = (ROOT / "inputs" / "demo_fixed_tilt.toml").read_text()
    text = text.split("# ---- What Larkspur")[0].replace('mount = "fixed"', 'mount = "body"')
    params = {"site.albedo": np.random.default_rng(1).uniform(0.15, 0.28, 2000)}
    times = {}
    with tempfile.TemporaryDirectory() as tmp:
        for label, rotating in (("static body", "false"), ("rotating body", "true")):
            path = Path(tmp) / f"{label.split()[0]}.toml"
            path.write_text(text + BODY.format(rotating=rotating))
            case = load_case(path)
            evaluate(case, site)  # irradiance of the geometry computed and cached
            times[label], _ = _timed(lambda case=case: evaluate(case, site, params))
    times["flat fixed tilt"], _ = _timed(lambda: evaluate(base, site, params))
    for label, t in times.items():
        print(f"  {label:<16} 2,000 samples: {t:6.2f} s ({2000 / t:,.0f} samples/s)")
    ratio = times["static body"] / times["flat fixed tilt"]
    print(f"  static body / flat: {ratio:.1f} x (target < {TARGET_STATIC_RATIO:g})")

    cases = [load_case(ROOT / "inputs" / n) for n in
             ("demo_fixed_tilt.toml", "compare_single_axis.toml",
              "compare_rotating_columns.toml")]
    t, _ = _timed(lambda: run_comparison(cases, samples=2000, seed=20261201))
    print(f"  claim test (3 cases, 2,000 trials, Sobol N = 512): {t:.1f} s "
          f"(target < {TARGET_COMPARE_S:g} s)")


if __name__ == "__main__":
    main()
