"""Speed of the uncertainty engine per trial, against references that compute the same model.

Run from the repository root:  python benchmarks/bench_engine.py  [--quick]

Two references, written here independently of the engine with pvlib's own functions, compute
exactly the engine's model: SPA sun position at the centre of each hour, the case's
transposition (Perez in both demos) with pvlib's ``get_total_irradiance``, the mount's
orientation (fixed, or ``pvlib.tracking.singleaxis`` with backtracking), the rows by pvlib's
infinite sheds (front beam x unshaded fraction, Perez sky x the row's sky view / the open
field's, infinite sheds' own front ground part), the beam angle loss (``pvlib.iam.physical``),
the diffuse angle loss of Marion (``pvlib.iam.marion_integrate`` at whole degrees, linearly
interpolated as the model defines it), monthly soiling ``min(scale x profile, 1)``, Faiman's
cell temperature driven by the shaded front irradiance, ``pvlib.pvsystem.pvwatts_dc``, the
DC loss, ``pvlib.inverter.pvwatts`` (Dobos part-load curve, clipped at the AC rating), then AC
loss and availability; energy by year with linear degradation x the trial's persistent and
year-to-year factors; costs and discounting in a plain loop over years (Short, Packey & Holt
1995). Both demos are monofacial (bifaciality 0), so the rear side adds exactly nothing in
the engine and is left out of the references.

(a) naive: every trial computes everything (sun, orientation, transposition, rows, angle
    losses, temperature, DC, inverter, cash flow);
(b) fair: sun, orientation, plane of array, rows and angle losses once per site (ground part
    per unit albedo); per trial pvlib's Faiman temperature, pvwatts DC and inverter over the
    daylight hours and the plain cash-flow loop.

Agreement with the engine (relative difference of first-year physics energy and real LCOE on
the same trials, <= 1e-9) is asserted before any time is reported. Then, in one run:
engine per trial (demo's uncertain set; lender demo) against the naive and the fair loop, and
against the engine's direct hourly method when it has one; 100,000 and 1,000,000 trials of
the demo, each in a fresh process (target < 60 s; peak memory side by side: flat when the
larger run peaks about where the smaller does); 10,000 Monte Carlo trials + Sobol N = 1,024
in a fresh process including start-up (target < 5 s). Each part runs in its own process.
"""

from __future__ import annotations

import json
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
CASES = {"demo": ROOT / "inputs" / "demo_fixed_tilt.toml",
         "lender": ROOT / "inputs" / "lender_single_axis.toml"}
TOL = 1e-9
QUICK = "--quick" in sys.argv
#: Trials of the two Monte Carlo runs whose peak memory is compared.
MILLION_SIZES = (10_000, 100_000) if QUICK else (100_000, 1_000_000)


def _peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


# -- trials: the same draws for the engine and the references -------------------------------

def _context(name: str) -> dict:
    from lcoe.case.reader import load_case
    from lcoe.study.spec import read_spec
    from lcoe.study.trials import prepared

    case = load_case(CASES[name])
    site, _, ratios = prepared(case)
    return {"case": case, "site": site, "spec": read_spec(case), "ratios": ratios}


def _design(ctx: dict, n: int, seed: int):
    from lcoe.study.design import build_design
    from lcoe.study.single import single_run

    run = single_run(ctx["case"], ctx["spec"])
    return build_design([run.member()], n, seed, "lhs", source=ctx["case"].source)


def _trial_inputs(ctx: dict, design, a: int, b: int):
    """Sampled parameters (dict of (n,)) and energy factors (n, N) of trials [a, b)."""
    import numpy as np

    from lcoe.study.trials import split_inputs, yearly_factors
    from lcoe.uncertainty.sampling import uniforms_to_values

    spec = ctx["spec"]
    life = int(ctx["case"]["case.lifetime_years"])
    u, z = design.member_draws(0, a, b)
    X = uniforms_to_values(spec.dists, u) if u.shape[1] else np.empty((b - a, 0))
    params, persist = split_inputs(spec, X)
    yearly = yearly_factors(z[:, :life], spec.interannual_cov, ctx["ratios"])
    return params, persist[:, None] * yearly


def engine_trials(ctx: dict, design, n: int, chunk: int = 1000, method: str | None = None):
    """The engine on trials [0, n), chunk by chunk as a study evaluates them."""
    import numpy as np

    from lcoe.model import evaluate

    kw = {} if method is None else {"method": method}
    e1, lcoe = np.empty(n), np.empty(n)
    for a in range(0, n, chunk):
        b = min(n, a + chunk)
        params, factors = _trial_inputs(ctx, design, a, b)
        out = evaluate(ctx["case"], ctx["site"], params, weather_factors=factors, **kw)
        e1[a:b], lcoe[a:b] = out.energy.annual_kwh, out.cashflow.lcoe_real
    return e1, lcoe


# -- the references -------------------------------------------------------------------------

def _trial_params(case, params: dict, i: int) -> dict:
    from lcoe.model import base_params

    p = {k: float(v[0]) for k, v in base_params(case).items()}
    p.update({k: float(v[i]) for k, v in params.items()})
    return p


def _marion(aoi_model: str, tilt, which: str):
    """Marion's diffuse modifier at whole degrees, linearly interpolated (the model's rule)."""
    import numpy as np
    import pvlib

    f = {"physical": pvlib.iam.physical, "ashrae": pvlib.iam.ashrae}[aoi_model]
    tilt = np.clip(np.asarray(tilt, dtype=float), 0.0, 180.0)
    lo = np.floor(tilt).astype(int)
    hi = np.minimum(lo + 1, 180)
    table = {d: float(pvlib.iam.marion_integrate(f, float(d), which))
             for d in np.unique(np.concatenate([lo.ravel(), hi.ravel()]))}
    look = np.vectorize(table.get, otypes=[float])
    w = tilt - lo
    return (1.0 - w) * look(lo) + w * look(hi)


def site_light(case, weather, p: dict) -> dict:
    """Sun, plane of array, rows and angle losses with pvlib: the per-site part of the model.

    Returns per-hour arrays: ``n``/``g`` shaded front light without / per unit albedo (drives
    the cell temperature), ``e``/``eg`` the same after angle losses, ``soil`` the soiling
    history, air temperature and wind.
    """
    import numpy as np
    import pvlib
    from pvlib.bifacial import infinite_sheds, utils

    if p["plant.bifaciality"] != 0.0:
        raise SystemExit("the references cover monofacial plants (bifaciality 0) only")
    d = weather.data
    ghi, dni, dhi = (d[c].to_numpy() for c in ("ghi", "dni", "dhi"))
    loc = pvlib.location.Location(p["site.latitude_deg"], p["site.longitude_deg"],
                                  altitude=p["site.altitude_m"])
    times = weather.mid_times
    sp = loc.get_solarposition(times, temperature=d["temp_air"].to_numpy())
    am = loc.get_airmass(solar_position=sp)["airmass_relative"].to_numpy()
    zen, azi = sp["apparent_zenith"].to_numpy(), sp["azimuth"].to_numpy()
    dni_extra = np.asarray(pvlib.irradiance.get_extra_radiation(times), dtype=float)
    nh = zen.size
    mount = case["plant.mount"]
    if mount == "fixed":
        tilt, az = np.full(nh, p["plant.tilt_deg"]), np.full(nh, p["plant.azimuth_deg"])
    elif mount == "single_axis":
        tr = pvlib.tracking.singleaxis(zen, azi, axis_tilt=p["plant.tilt_deg"],
                                       axis_azimuth=p["plant.azimuth_deg"],
                                       max_angle=p["plant.max_rotation_deg"],
                                       backtrack=bool(case["plant.backtrack"]),
                                       gcr=p["plant.gcr"])
        tilt = np.nan_to_num(np.asarray(tr["surface_tilt"], dtype=float), nan=0.0)
        az = np.nan_to_num(np.asarray(tr["surface_azimuth"], dtype=float),
                           nan=p["plant.azimuth_deg"])
    else:
        raise SystemExit(f"the references cover fixed and single-axis mounts, not {mount}")
    irr = pvlib.irradiance.get_total_irradiance(
        tilt, az, zen, azi, dni, ghi, dhi, dni_extra=dni_extra, airmass=am, albedo=1.0,
        model=case["plant.transposition"])
    beam, sky, ground = (np.nan_to_num(np.asarray(irr[k], dtype=float), nan=0.0)
                         for k in ("poa_direct", "poa_sky_diffuse", "poa_ground_diffuse"))
    aoi = np.nan_to_num(np.asarray(pvlib.irradiance.aoi(tilt, az, zen, azi)), nan=90.0)
    if case["plant.rows"]:
        pitch = p["plant.row_width_m"] / p["plant.gcr"]
        sh = infinite_sheds.get_irradiance(
            tilt, az, zen, azi, p["plant.gcr"], p["plant.row_height_m"], pitch, ghi, dhi, dni,
            albedo=1.0, model="isotropic", iam_front=1.0, iam_back=1.0, bifaciality=1.0,
            shade_factor=0.0, transmission_factor=0.0)
        fx = np.nan_to_num(np.asarray(sh["shaded_fraction_front"], dtype=float), nan=0.0)
        open_sky = 0.5 * (1.0 + np.cos(np.radians(tilt)))
        vf = np.asarray(utils.vf_row_sky_2d_integ(tilt, p["plant.gcr"], 0.0, 1.0), dtype=float)
        beam = beam * (1.0 - fx)
        sky = sky * np.divide(vf, open_sky, out=np.zeros_like(vf), where=open_sky > 1e-9)
        ground = np.nan_to_num(np.asarray(sh["poa_front_ground_diffuse"], dtype=float), nan=0.0)
    aoi_model = case["plant.aoi_model"]
    iam = {"physical": pvlib.iam.physical, "ashrae": pvlib.iam.ashrae}[aoi_model]
    sky_iam = ground_iam = 1.0
    if case["plant.diffuse_iam"]:
        sky_iam, ground_iam = _marion(aoi_model, tilt, "sky"), _marion(aoi_model, tilt,
                                                                       "ground")
    soil = np.zeros(nh)
    if case["plant.soiling.model"] == "monthly":
        soil = np.asarray(case.soiling_monthly, dtype=float)[d.index.month.to_numpy() - 1]
    elif case["plant.soiling.model"] != "none":
        raise SystemExit("the references cover monthly soiling or none")
    return {"n": beam + sky, "g": ground,
            "e": beam * np.asarray(iam(aoi), dtype=float) + sky * sky_iam,
            "eg": ground * ground_iam, "soil": soil,
            "temp_air": d["temp_air"].to_numpy(), "wind": d["wind_speed"].to_numpy(),
            "n_years": weather.n_years}


def trial_energy(light: dict, p: dict, hours=slice(None)) -> float:
    """First-year delivered energy of one trial with pvlib's temperature, DC and inverter
    [kWh]."""
    import numpy as np
    import pvlib

    a = p["site.albedo"]
    keep = 1.0 - np.minimum(p.get("plant.soiling.scale", 1.0) * light["soil"][hours], 1.0)
    poa = light["n"][hours] + a * light["g"][hours]
    eff = (light["e"][hours] + a * light["eg"][hours]) * keep
    t_cell = pvlib.temperature.faiman(poa, light["temp_air"][hours], light["wind"][hours],
                                      u0=p["plant.thermal_u0"], u1=p["plant.thermal_u1"])
    p_stc = p["plant.dc_capacity_kw"]
    pdc = pvlib.pvsystem.pvwatts_dc(eff, t_cell, p_stc, p["plant.temp_coeff_per_c"])
    pdc = pdc * (1.0 - p["plant.dc_loss_fraction"])
    eta = p["plant.inverter_efficiency"]
    ac = pvlib.inverter.pvwatts(pdc, p_stc / p["plant.dc_ac_ratio"] / eta, eta_inv_nom=eta)
    return float(np.sum(ac)) * (1.0 - p["plant.ac_loss_fraction"]) * \
        p["plant.availability"] / light["n_years"]


def trial_lcoe(case, p: dict, e1_kwh: float, factors) -> float:
    """Real LCOE of one trial by a plain loop over the years (Short, Packey & Holt 1995)."""
    life = int(case["case.lifetime_years"])
    r, infl = p["finance.discount_rate"], p["finance.inflation"]
    r_real = (1.0 + r) / (1.0 + infl) - 1.0
    kw = p["plant.dc_capacity_kw"]
    pv_cost = p["costs.capex_per_kw"] * kw
    pv_energy = 0.0
    for t in range(1, life + 1):
        esc = (1.0 + infl) ** t
        e = e1_kwh * max(0.0, 1.0 - p["plant.degradation_per_year"] * (t - 1)) * factors[t - 1]
        cost = (p["costs.fixed_om_per_kw_year"] * kw + p["costs.variable_om_per_kwh"] * e
                + p["costs.insurance_fraction_per_year"] * p["costs.capex_per_kw"] * kw
                + p["costs.land_lease_per_year"]) * esc
        for i, rep in enumerate(case.replacements):
            if t % rep.every_years == 0 and t < life:
                cost += p[f"costs.replacement[{i}].cost_per_kw"] * kw * esc
        if t == life:
            cost += (p["costs.decommissioning_per_kw"] - p["costs.salvage_per_kw"]) * kw * esc
        pv_cost += cost / (1.0 + r) ** t
        pv_energy += e / (1.0 + r_real) ** t
    return pv_cost / pv_energy


def naive_trials(ctx: dict, params: dict, factors, n: int):
    """Everything per trial."""
    import numpy as np

    case, weather = ctx["case"], ctx["site"].weather
    e1, lcoe = np.empty(n), np.empty(n)
    for i in range(n):
        p = _trial_params(case, params, i)
        light = site_light(case, weather, p)
        e1[i] = trial_energy(light, p)
        lcoe[i] = trial_lcoe(case, p, e1[i], factors[i])
    return e1, lcoe


def fair_trials(ctx: dict, params: dict, factors, n: int, light=None):
    """Sun and plane of array once per site; per trial temperature, DC, inverter, cash flow."""
    import numpy as np

    case, weather = ctx["case"], ctx["site"].weather
    if light is None:
        light = site_light(case, weather, _trial_params(case, params, 0))
    day = np.nonzero(light["n"] + light["g"] > 0)[0]  # hours without light deliver nothing
    e1, lcoe = np.empty(n), np.empty(n)
    for i in range(n):
        p = _trial_params(case, params, i)
        e1[i] = trial_energy(light, p, day)
        lcoe[i] = trial_lcoe(case, p, e1[i], factors[i])
    return e1, lcoe


def _geometry_fixed(ctx: dict) -> None:
    from lcoe.model import geometry_paths

    sampled = set(ctx["spec"].names) & set(geometry_paths(ctx["case"]))
    if sampled:
        raise SystemExit(f"the fair reference needs a fixed geometry; sampled: {sampled}")


# -- parts (each in its own process) --------------------------------------------------------

def _methods() -> list:
    import inspect

    from lcoe.model import evaluate

    return ["hourly"] if "method" in inspect.signature(evaluate).parameters else []


def part_agree(name: str, n: int = 6) -> dict:
    """Engine vs both references on the same trials: max relative differences."""
    import numpy as np

    ctx = _context(name)
    _geometry_fixed(ctx)
    design = _design(ctx, 64, seed=11)
    params, factors = _trial_inputs(ctx, design, 0, n)
    out = {}
    e_eng, l_eng = engine_trials(ctx, design, n)
    runs = {"naive": naive_trials(ctx, params, factors, n),
            "fair": fair_trials(ctx, params, factors, n)}
    for m in _methods():
        runs[m] = engine_trials(ctx, design, n, method=m)
    for ref, (e, lc) in runs.items():
        de = float(np.max(np.abs(e / e_eng - 1.0)))
        dl = float(np.max(np.abs(lc / l_eng - 1.0)))
        out[ref] = {"energy": de, "lcoe": dl}
        assert de <= TOL and dl <= TOL, f"{name}: {ref} differs from the engine: {out[ref]}"
    return out


def part_speed(name: str) -> dict:
    """Seconds per trial: engine (and its hourly method), fair loop, naive loop."""
    import numpy as np

    from lcoe.study.design import _BLOCKS

    ctx = _context(name)
    n_eng, n_fair, n_naive = (2000, 100, 2) if QUICK else (10_000, 300, 5)
    design = _design(ctx, max(n_eng, n_fair, n_naive), seed=5)
    res = {}
    for m in [None] + _methods():
        engine_trials(ctx, design, 200, method=m)  # warm-up: plane of array cached
        reps = []
        for _ in range(3):
            _BLOCKS.clear()  # the design keeps a few blocks of draws: draw them every time
            t0 = time.perf_counter()
            engine_trials(ctx, design, n_eng, method=m)
            reps.append((time.perf_counter() - t0) / n_eng)
        res[m or "engine"] = {"s_per_trial": min(reps), "trials": n_eng}
    # the same trials in two steps: drawing the inputs, then the model on them (the fair loop
    # is given its inputs, so "model" is the like-for-like figure)
    from lcoe.model import evaluate

    draws, model = [], []
    for _ in range(3):
        _BLOCKS.clear()
        t0 = time.perf_counter()
        inputs = [_trial_inputs(ctx, design, a, min(n_eng, a + 1000))
                  for a in range(0, n_eng, 1000)]
        t1 = time.perf_counter()
        for params, factors in inputs:
            evaluate(ctx["case"], ctx["site"], params, weather_factors=factors)
        t2 = time.perf_counter()
        draws.append((t1 - t0) / n_eng)
        model.append((t2 - t1) / n_eng)
    res["engine"].update(draws_s=min(draws), model_s=min(model))
    params, factors = _trial_inputs(ctx, design, 0, n_fair)
    t0 = time.perf_counter()
    light = site_light(ctx["case"], ctx["site"].weather, _trial_params(ctx["case"], params, 0))
    t_site = time.perf_counter() - t0
    reps = []
    for _ in range(2):
        t0 = time.perf_counter()
        fair_trials(ctx, params, factors, n_fair, light)
        reps.append((time.perf_counter() - t0) / n_fair)
    res["fair"] = {"s_per_trial": min(reps), "trials": n_fair, "site_s": t_site}
    t0 = time.perf_counter()
    naive_trials(ctx, params, factors, n_naive)
    res["naive"] = {"s_per_trial": (time.perf_counter() - t0) / n_naive, "trials": n_naive}
    assert np.isfinite(res["naive"]["s_per_trial"])
    return res


def part_million(n: str) -> dict:
    """``n`` trials of the demo through the study's Monte Carlo, in a fresh process.

    Returns the wall time, the peak resident memory before the run (imports, site, a warm-up
    run of 100 trials) and after it, and a hash of the first trials' LCOE: the design's blocks
    do not depend on the number of trials, so a smaller run's trials are the first trials of a
    larger one, and the two runs are compared on the same trials.
    """
    import hashlib

    from lcoe.study.single import monte_carlo

    n = int(n)
    ctx = _context("demo")
    monte_carlo(ctx["case"], ctx["site"], ctx["spec"], 100, seed=1)
    before = _peak_mb()
    t0 = time.perf_counter()
    trials, _ = monte_carlo(ctx["case"], ctx["site"], ctx["spec"], n, seed=2)
    dt = time.perf_counter() - t0
    head = trials.outputs["lcoe_real_per_kwh"][:MILLION_SIZES[0]]
    return {"trials": n, "seconds": dt, "peak_mb": _peak_mb(), "before_mb": before,
            "head": hashlib.sha256(head.tobytes()).hexdigest(),
            "mean": float(trials.outputs["lcoe_real_per_kwh"].mean())}


def part_study() -> dict:
    """10,000 trials + Sobol N = 1,024, measured from a fresh interpreter (start-up in)."""
    code = ("import time; t0 = time.perf_counter(); from lcoe.study.run import run_case; "
            f"r = run_case({str(CASES['demo'])!r}, samples=10000, sobol_base=1024); "
            "s = r.extras['sensitivity']; "
            "print(time.perf_counter() - t0, s.sobol.n_runs, "
            "len(r.extras['uncertainty'].spec.dists))")
    t0 = time.perf_counter()
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, cwd=ROOT, env={**os.environ, "PYTHONPATH": str(ROOT)})
    wall = time.perf_counter() - t0
    inner, runs, d = out.stdout.split()[-3:]
    return {"wall_s": wall, "in_process_s": float(inner), "sobol_runs": int(runs),
            "inputs": int(d)}


def _run(*args) -> dict:
    out = subprocess.run([sys.executable, __file__, *args] + (["--quick"] if QUICK else []),
                         capture_output=True, text=True, cwd=ROOT,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    if out.returncode:
        raise SystemExit(f"part {' '.join(args)} failed:\n{out.stderr}")
    return json.loads(out.stdout.strip().splitlines()[-1])


def report_million() -> None:
    """Print the Monte Carlo at :data:`MILLION_SIZES` trials side by side (time, peak memory)."""
    small, big = (_run("million", str(n)) for n in MILLION_SIZES)
    if small["head"] != big["head"]:
        raise SystemExit("the first trials of the two Monte Carlo runs differ")
    print(f"demo   Monte Carlo, {small['trials']:,} vs {big['trials']:,} trials (each in a fresh "
          f"process; the first {small['trials']:,} trials identical): "
          f"{small['seconds']:.1f} vs {big['seconds']:.1f} s (target < 60 s at 1,000,000)")
    grow, more = big["peak_mb"] - small["peak_mb"], big["trials"] - small["trials"]
    print(f"demo   peak memory {small['peak_mb']:.0f} vs {big['peak_mb']:.0f} MB (before the run "
          f"{small['before_mb']:.0f} / {big['before_mb']:.0f} MB): {grow:+.0f} MB for {more:,} "
          f"more trials = {2 ** 20 * grow / more:.0f} bytes per trial "
          f"({big['peak_mb'] / small['peak_mb']:.2f}x; flat = 1.00x)")


def main() -> None:
    args = [a for a in sys.argv[1:] if a != "--quick"]
    if args:
        fn = {"agree": part_agree, "speed": part_speed, "million": part_million,
              "study": part_study}[args[0]]
        print(json.dumps(fn(*args[1:])))
        return
    print(f"load average at start: {os.getloadavg()[0]:.1f} (2 cores)")
    for name in CASES:
        agree = _run("agree", name)
        for ref, d in agree.items():
            print(f"{name:6s} agreement with {ref:6s}: energy {d['energy']:.1e}, LCOE "
                  f"{d['lcoe']:.1e} (max relative, limit {TOL:g})")
    for name in CASES:
        s = _run("speed", name)
        eng = s["engine"]["s_per_trial"]
        print(f"{name:6s} per trial: engine {1e6 * eng:8.1f} us (drawing the inputs "
              f"{1e6 * s['engine']['draws_s']:.1f} us, the model on them "
              f"{1e6 * s['engine']['model_s']:.1f} us: {s['fair']['s_per_trial'] / s['engine']['model_s']:.0f}x the fair loop, which is given its inputs)")
        print(f"{name:6s} per trial: engine {1e6 * eng:8.1f} us | fair loop "
              f"{1e3 * s['fair']['s_per_trial']:7.2f} ms (site part {s['fair']['site_s']:.1f} s"
              f" once) | naive loop {s['naive']['s_per_trial']:6.2f} s")
        line = (f"{name:6s} ratios: engine vs fair {s['fair']['s_per_trial'] / eng:7.0f}x "
                f"(target >= 75x) | vs naive {s['naive']['s_per_trial'] / eng:8.0f}x")
        if "hourly" in s:
            line += (f" | vs its hourly method ({1e6 * s['hourly']['s_per_trial']:.1f} us) "
                     f"{s['hourly']['s_per_trial'] / eng:5.1f}x (target >= 10x)")
        print(line)
    report_million()
    st = _run("study")
    print(f"demo   10,000 trials + Sobol N = 1,024 ({st['sobol_runs']} runs, {st['inputs']} "
          f"inputs) from a fresh process: {st['wall_s']:.1f} s wall (target < 5 s), "
          f"{st['in_process_s']:.1f} s after start")
    print(f"load average at end: {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
