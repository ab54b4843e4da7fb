"""Speed and memory of the uncertainty engine against a naive per-trial loop.

Run from the repository root:  python benchmarks/bench_engine.py

Prints, for the demo case with its uncertain inputs:
(a) the vectorised engine (hourly physics + cash flow) in trials per second;
(b) a naive reference that loops over trials calling pvlib's ModelChain and a per-trial cash
    flow (at least 20 trials), in trials per second; and the ratio (target >= 300x);
(c) a full study: 10,000 Monte Carlo trials plus Sobol with N = 1024 on the demo's 13 inputs,
    wall time (target < 60 s) and peak memory of that process (target < 1.5 GB).
Each part runs in its own process so that its peak resident memory is its own.
"""

from __future__ import annotations

import json
import resource
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "inputs" / "demo_fixed_tilt.toml"


def _peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def part_engine(n: int = 2000) -> dict:
    import numpy as np

    from lcoe.case import load_case
    from lcoe.model import prepare
    from lcoe.study.single import monte_carlo
    from lcoe.uncertainty.spec import read_spec

    case = load_case(DEMO)
    site = prepare(case)
    spec = read_spec(case)
    monte_carlo(case, site, spec, 50, seed=1)  # warm-up (caches the plane of array)
    t0 = time.perf_counter()
    trials, _ = monte_carlo(case, site, spec, n, seed=2)
    dt = time.perf_counter() - t0
    assert np.all(np.isfinite(trials.outputs["lcoe_real_per_kwh"]))
    return {"trials": n, "seconds": dt, "trials_per_s": n / dt, "peak_mb": _peak_mb()}


def part_naive(n: int = 20) -> dict:
    """One pvlib ModelChain run and one cash flow per trial, inputs from the same sampler."""
    import numpy as np
    import pvlib
    from pvlib.modelchain import ModelChain
    from pvlib.pvsystem import Array, FixedMount, PVSystem

    from lcoe.case import load_case
    from lcoe.cashflow import build_cashflow, energy_by_year
    from lcoe.model import base_params, load_weather_for
    from lcoe.rng import make_rng
    from lcoe.uncertainty.sampling import sample_inputs
    from lcoe.uncertainty.spec import read_spec

    case = load_case(DEMO)
    spec = read_spec(case)
    weather = load_weather_for(case)
    wx = weather.data.copy()
    wx.index = weather.mid_times
    X = sample_inputs(spec.dists, n, make_rng(3), spec.corr)
    loc = pvlib.location.Location(case["site.latitude_deg"], case["site.longitude_deg"],
                                  altitude=case["site.altitude_m"])
    life = case["case.lifetime_years"]
    t0 = time.perf_counter()
    lcoe = []
    for i in range(n):
        p = {k: v[0] for k, v in base_params(case).items()}
        persist = 1.0
        for j, name in enumerate(spec.names):
            if name.startswith("energy."):
                persist *= X[i, j]
            else:
                p[name] = X[i, j]
        pdc0 = p["plant.dc_capacity_kw"] * 1000
        array = Array(FixedMount(p["plant.tilt_deg"], p["plant.azimuth_deg"]),
                      albedo=p["site.albedo"],
                      module_parameters={"pdc0": pdc0, "gamma_pdc": p["plant.temp_coeff_per_c"]},
                      temperature_model_parameters={"u0": p["plant.thermal_u0"],
                                                    "u1": p["plant.thermal_u1"]})
        eta = p["plant.inverter_efficiency"]
        system = PVSystem(arrays=[array], inverter_parameters={
            "pdc0": pdc0 / p["plant.dc_ac_ratio"] / eta, "eta_inv_nom": eta})
        mc = ModelChain(system, loc, dc_model="pvwatts", ac_model="pvwatts",
                        aoi_model="physical", spectral_model="no_loss",
                        temperature_model="faiman", losses_model="no_loss")
        mc.run_model(wx)
        ac_kwh = mc.results.ac.fillna(0).clip(lower=0).sum() / 1000
        e1 = ac_kwh * (1 - p["plant.dc_loss_fraction"]) * (1 - p["plant.ac_loss_fraction"]) * \
            p["plant.availability"] * persist
        e = energy_by_year([e1], p["plant.degradation_per_year"], life)
        cf = build_cashflow({k: np.array([v]) for k, v in p.items()}, case.replacements,
                            life, e)
        lcoe.append(cf.lcoe_real[0])
    dt = time.perf_counter() - t0
    return {"trials": n, "seconds": dt, "trials_per_s": n / dt, "peak_mb": _peak_mb()}


def part_study(samples: int = 10_000, sobol_base: int = 1024) -> dict:
    from lcoe.runner import run_case

    t0 = time.perf_counter()
    r = run_case(DEMO, samples=samples, sobol_base=sobol_base)
    dt = time.perf_counter() - t0
    sens = r.extras["sensitivity"]
    return {"samples": samples, "sobol_base": sobol_base,
            "inputs": len(r.extras["uncertainty"].spec.dists), "sobol_runs": sens.sobol.n_runs,
            "seconds": dt, "peak_mb": _peak_mb()}


def main() -> None:
    if len(sys.argv) > 1:
        print(json.dumps({"engine": part_engine, "naive": part_naive,
                          "study": part_study}[sys.argv[1]]()))
        return
    res = {}
    for name in ("engine", "naive", "study"):
        out = subprocess.run([sys.executable, __file__, name], capture_output=True, text=True,
                             check=True, cwd=ROOT)
        res[name] = json.loads(out.stdout.strip().splitlines()[-1])
    e, n, s = res["engine"], res["naive"], res["study"]
    print(f"engine : {e['trials']:6d} trials in {e['seconds']:7.2f} s = "
          f"{e['trials_per_s']:9.1f} trials/s   peak {e['peak_mb']:7.0f} MB")
    print(f"naive  : {n['trials']:6d} trials in {n['seconds']:7.2f} s = "
          f"{n['trials_per_s']:9.1f} trials/s   peak {n['peak_mb']:7.0f} MB  "
          f"(pvlib ModelChain + cash flow per trial)")
    print(f"ratio  : engine / naive = {e['trials_per_s'] / n['trials_per_s']:.0f}x "
          f"(target >= 300x)")
    print(f"study  : {s['samples']} Monte Carlo trials + Sobol N = {s['sobol_base']} "
          f"({s['sobol_runs']} runs) on {s['inputs']} inputs in {s['seconds']:.1f} s "
          f"(target < 60 s), peak {s['peak_mb']:.0f} MB (target < 1536 MB)")


if __name__ == "__main__":
    main()
