"""Library API: a Monte Carlo of the demo case, then a vendor's claim against it.

Run from the repository root:  python examples/uncertainty_and_claim.py
(a few seconds on a laptop CPU).
"""

from pathlib import Path

import numpy as np

from lcoe import energy_exceedance, load_case, monte_carlo, prepare, read_spec, run_comparison

INPUTS = Path(__file__).resolve().parent.parent / "inputs"

# 1. Monte Carlo of one case: every trial is a row of the one vectorised model.
case = load_case(INPUTS / "demo_fixed_tilt.toml")
spec = read_spec(case)  # the case's [uncertain], [uncertain.energy] and [[correlation]]
trials, _ = monte_carlo(case, prepare(case), spec, n=1000, seed=7)
lcoe = trials.outputs["lcoe_real_per_kwh"]
print(f"{case.name}: LCOE real P10/P50/P90 = "
      f"{' / '.join(f'{q:.4f}' for q in np.quantile(lcoe, [0.1, 0.5, 0.9]))} USD/kWh")
ex = energy_exceedance(trials, spec)
print(f"  first-year energy P50 {ex.sampled['p50'] / 1e6:.2f} GWh, "
      f"P90 {ex.sampled['p90'] / 1e6:.2f} GWh (one year), sigma {100 * ex.sigma_1yr:.1f} %")

# 2. A vendor's claim ("a third cheaper") against that baseline, with common random numbers.
cases = [case, load_case(INPUTS / "compare_rotating_columns.toml")]
result = run_comparison(cases, samples=500, seed=7, claim_ratio=0.667, sobol_base=0)
for claim in result.claims:
    held = float(np.mean(claim.ratio <= claim.claim_ratio))
    print(f"  {cases[claim.index].name}: LCOE ratio median {np.median(claim.ratio):.2f}; "
          f"the claim holds in {100 * held:.1f} % of trials")
