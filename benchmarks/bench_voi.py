"""Benchmark of the value-of-information step of ``lcoe compare``.

Times (wall clock, this process) the bundled comparison (``lcoe demo --compare`` without
writing files: 3 cases, 2,000 trials, Sobol N = 512 per candidate) without its
value-of-information step, then that step alone on the same trials (EVPI and the EVPPI of every
input and group, 100 bootstrap resamples each), and prints the share.

Reference before the ratio: the EVPPI of the top input is recomputed by an independent,
cruder estimator on the same trials (conditional means in 40 equal-count bins of the input,
the "binned" estimate of partial EVPI) and must agree within three bootstrap standard errors
plus the binning bias bound (5 % of the value).

Target: the step costs under 20 % of the comparison's run time.

    python benchmarks/bench_voi.py
"""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
TARGET_SHARE = 0.20


def binned_evppi(values: np.ndarray, x: np.ndarray, bins: int = 40) -> float:
    """EVPPI from conditional means in equal-count bins of x [currency]."""
    order = np.argsort(x, kind="stable")
    inb = values - values[:, :1]
    parts = np.array_split(order, bins)
    cond = np.array([inb[p].mean(axis=0) for p in parts])  # (bins, K)
    w = np.array([p.size for p in parts]) / x.size
    return float(w @ cond.max(axis=1) - np.max(w @ cond))


def main() -> None:
    from lcoe.case.reader import load_case
    from lcoe.cli.compare import DEMO_COMPARE
    from lcoe.study.compare import run_comparison
    from lcoe.study.value_of_information import comparison_voi, option_values

    cases = [load_case(ROOT / "inputs" / name) for name in DEMO_COMPARE]
    t0 = time.perf_counter()
    result = run_comparison(cases, samples=2000, seed=1, sobol_base=512, voi_bootstrap=0)
    t_compare = time.perf_counter() - t0
    t0 = time.perf_counter()
    block = comparison_voi(result, 100)
    t_voi = time.perf_counter() - t0

    top = block.inputs[0]
    col = [c.dist.name for c in result.design.columns].index(top.name)
    values = option_values([o.trials.lcoe_real for o in result.cases], block.energy_ref_kwh)
    x = result.inputs
    if x is None:  # a study-engine design keeps its uniforms (the inputs' ranks), as the step
        x = result.design.trials.draws(0, result.samples)[0]
    ref = binned_evppi(values, x[:, col])
    assert abs(ref - top.value) < 3 * top.se + 0.05 * top.value, (ref, top.value, top.se)

    cur = block.currency
    print(f"comparison (3 cases, 2,000 trials, Sobol N = 512): {t_compare:8.2f} s")
    print(f"value of information ({len(block.rows)} inputs and groups, 100 bootstrap "
          f"resamples): {t_voi:8.2f} s")
    print(f"EVPI {block.evpi.value:,.0f} {cur} (se {block.evpi.se:,.0f}); top input "
          f"{top.name}: regression {top.value:,.0f} {cur} (se {top.se:,.0f}), binned "
          f"reference {ref:,.0f} {cur}")
    share = t_voi / t_compare
    print(f"share of the comparison's run time: {100 * share:.1f} % (target < "
          f"{100 * TARGET_SHARE:.0f} %): {'met' if share < TARGET_SHARE else 'MISSED'}")


if __name__ == "__main__":
    main()
