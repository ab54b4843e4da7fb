"""Use the library directly: run the demo case, then ask how the LCOE moves with capex.

Run from the repository root:  python examples/quick_lcoe.py
"""

from pathlib import Path

import numpy as np

from lcoe import evaluate, load_case, prepare

case = load_case(Path(__file__).resolve().parent.parent / "inputs" / "demo_fixed_tilt.toml")
site = prepare(case)  # weather + sun, once

# One call evaluates many parameter sets: every array is one value per sample.
capex = np.linspace(800.0, 1300.0, 6)
out = evaluate(case, site, {"costs.capex_per_kw": capex})
cur = case["case.currency"]
print(f"{case.name}: first-year energy {out.energy.annual_kwh[0]:,.0f} kWh")
for c, real, nominal in zip(capex, out.cashflow.lcoe_real, out.cashflow.lcoe_nominal):
    print(f"  capex {c:7.0f} {cur}/kW -> LCOE {real:.4f} real, {nominal:.4f} nominal {cur}/kWh")
