"""Benchmark of ``lcoe sweep``: serial versus a local dask cluster, in one run; or the serial
sweep at scale, with where its time goes.

Default: 20 invented sites x the 3 bundled technologies x 2,000 trials, serial in this process
and then on 2 local worker processes (127.0.0.1 only). Prints wall times, the speed-up, trials
per second, whether the two runs are bit-identical, and the cost per trial against the
single-case engine (:func:`lcoe.study.single.monte_carlo`) on one site x technology.

Target: a speed-up of at least 1.6 with 2 workers on a 2-core machine.

    python benchmarks/bench_sweep.py [--sites 20] [--samples 2000] [--workers 2]

Scale (``--serial-only``): the sweep serial in this process, with ``--technologies 4`` the
three bundled ones plus ``inputs/tech_dual_axis.toml`` (an invented dual-axis variant). It
times loading the plan, the sweep (split by phase: weather synthesis, solar position, plane of
array with rows and diffuse tables, drawing the trials' inputs, the rest of the Monte Carlo,
the collection of results) and writing the sweep's files, in wall and CPU time
(``time.process_time``, less sensitive to other jobs on the machine), per site and per site x
technology, and the total extrapolated linearly to ``--target-sites``. Target of the scale
run: 1,000 sites x 4 technologies x 1,000 trials in under 600 s, serial.

    python benchmarks/bench_sweep.py --serial-only --technologies 4 --sites 20 --samples 1000
    python benchmarks/bench_sweep.py --serial-only --technologies 4 --sites 1000 --samples 1000

The sites are generated here: invented names, monthly climate values made from the
extraterrestrial irradiation of each latitude times an invented clearness index. They are
benchmark inputs, not data about any place.
"""

from __future__ import annotations

import argparse
import os
import resource
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
TECHNOLOGIES = ("demo_fixed_tilt.toml", "tech_single_axis.toml", "tech_fixed_dense.toml",
                "tech_dual_axis.toml")
TARGET_SPEEDUP = 1.6
#: Target of the scale run: 1,000 sites x 4 technologies x 1,000 trials, serial [s].
TARGET_SCALE_S = 600.0
TARGET_SITES = 1000


def invented_sites(n: int) -> list[dict]:
    """``n`` invented northern-hemisphere sites with plausible monthly climate values."""
    from lcoe.case.monthly import monthly_extraterrestrial_kwh_m2_day

    rng = np.random.default_rng(7)
    sites = []
    for i in range(n):
        lat = float(np.round(5.0 + 55.0 * i / max(n - 1, 1), 2))
        lon = float(np.round(-150.0 + 300.0 * ((i * 7) % n) / n, 2))
        clearness = 0.62 - 0.25 * (lat - 5.0) / 55.0 + rng.uniform(-0.04, 0.04)
        ghi = np.round(clearness * monthly_extraterrestrial_kwh_m2_day(lat), 2)
        mean_t = 28.0 - 0.45 * lat
        swing = 2.0 + 0.25 * lat
        temp = np.round(mean_t - swing * np.cos(2 * np.pi * (np.arange(12) + 0.5) / 12), 1)
        offset = int(np.clip(np.round(-lon / 15.0), -12, 12))
        tz = "Etc/GMT" + (f"+{offset}" if offset >= 0 else f"{offset}")
        sites.append({"name": f"Benchsite {i + 1:02d}", "lat": lat, "lon": lon, "tz": tz,
                      "ghi": ghi.tolist(), "temp": temp.tolist()})
    return sites


def plan_text(sites: list[dict], samples: int, n_technologies: int = 3) -> str:
    """A sweep plan over the invented sites and the first ``n_technologies`` bundled
    technologies."""
    techs = ", ".join(f'"{(ROOT / "inputs" / t).as_posix()}"'
                      for t in TECHNOLOGIES[:n_technologies])
    lines = ["# Benchmark plan: invented sites and invented climate values.", "[sweep]",
             f"samples = {samples}", "seed = 424242", "chunk_trials = 250",
             f"technologies = [{techs}]", "", "[uncertain.energy]", "interannual_cov = 0.04",
             "resource_sd = 0.06", ""]
    for s in sites:
        lines += ["[[sites]]", f'name = "{s["name"]}"', f"latitude_deg = {s['lat']}",
                  f"longitude_deg = {s['lon']}", "altitude_m = 200.0",
                  f'timezone = "{s["tz"]}"', "[sites.monthly]",
                  f"ghi_kwh_m2_day = {s['ghi']}", f"temp_air_c = {s['temp']}", ""]
    return "\n".join(lines)


def cpu_seconds() -> tuple[float, float]:
    """CPU time [s] of this process and of its finished children (the worker processes)."""
    me = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime, kids.ru_utime + kids.ru_stime


def identical(a, b) -> bool:
    """True when two sweep results hold bit-identical trials."""
    if a.trials.keys() != b.trials.keys():
        return False
    return all(np.array_equal(a.trials[k].lcoe_real, b.trials[k].lcoe_real) and
               np.array_equal(a.trials[k].energy_kwh, b.trials[k].energy_kwh) and
               np.array_equal(a.trials[k].X, b.trials[k].X) for k in a.trials)


def single_case_cost(plan, samples: int) -> float:
    """Seconds per trial of the single-case engine on the plan's first site x technology."""
    from lcoe.model import prepare
    from lcoe.study.single import monte_carlo
    from lcoe.study.spec import read_spec

    case = plan.runs[0].case()
    site = prepare(case)
    spec = read_spec(case)
    t0 = time.perf_counter()
    monte_carlo(case, site, spec, samples, seed=1)
    return (time.perf_counter() - t0) / samples


class Phases:
    """Wall and CPU seconds spent inside chosen functions, by phase (wrappers installed on the
    module attributes the sweep calls; a phase nested in another is subtracted from it)."""

    def __init__(self):
        self.wall: dict = {}
        self.cpu: dict = {}
        self._undo: list = []
        self._stack: list = []

    def wrap(self, owner, attr: str, phase: str) -> None:
        import functools

        original = getattr(owner, attr)

        @functools.wraps(original)
        def timed(*a, **k):
            self._stack.append([0.0, 0.0])
            w0, c0 = time.perf_counter(), time.process_time()
            try:
                return original(*a, **k)
            finally:
                w, c = time.perf_counter() - w0, time.process_time() - c0
                inner_w, inner_c = self._stack.pop()
                self.wall[phase] = self.wall.get(phase, 0.0) + w - inner_w
                self.cpu[phase] = self.cpu.get(phase, 0.0) + c - inner_c
                if self._stack:  # the caller's phase does not count this time again
                    self._stack[-1][0] += w
                    self._stack[-1][1] += c

        setattr(owner, attr, timed)
        self._undo.append((owner, attr, original))

    def remove(self) -> None:
        for owner, attr, original in reversed(self._undo):
            setattr(owner, attr, original)
        self._undo.clear()


def sweep_phases() -> Phases:
    """Timers on the steps of a serial sweep (the functions are looked up where they are
    called, so the wrappers see every call)."""
    import lcoe.model as model
    import lcoe.study.sweep as sweep
    import lcoe.study.trials as trials

    ph = Phases()
    ph.wrap(trials, "evaluate_chunk", "Monte Carlo: checks, per-trial outputs")
    ph.wrap(trials, "evaluate", "Monte Carlo: energy and cash flow")
    ph.wrap(trials, "prepare", "site: weather and sun (rest)")
    ph.wrap(model, "synthetic_weather", "site: weather synthesis")
    ph.wrap(model, "solar_position", "site: solar position")
    ph.wrap(model.Site, "poa", "plane of array (rows, diffuse tables)")
    ph.wrap(trials, "chunk_inputs", "Monte Carlo: drawing the inputs")
    ph.wrap(sweep, "summarise", "summary table (quantiles, P(cheapest))")
    return ph


def scale(args) -> int:
    """The serial sweep at scale: figures by phase and the extrapolation to the target."""
    import lcoe.study.trials as trials
    from lcoe.export.sweep_outputs import write_sweep_outputs
    from lcoe.study.plan import load_plan
    from lcoe.study.sweep import run_sweep

    n_tech = args.technologies
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "bench_plan.toml"
        path.write_text(plan_text(invented_sites(args.sites), args.samples, n_tech),
                        encoding="utf-8")
        load0 = os.getloadavg()
        w0, c0 = time.perf_counter(), time.process_time()
        plan = load_plan(path)
        t_load, c_load = time.perf_counter() - w0, time.process_time() - c0
        runs = len(plan.runs)
        print(f"scale: {len(plan.sites)} sites x {len(plan.technologies)} technologies "
              f"({', '.join(t.label for t in plan.technologies)}) x {plan.samples} trials = "
              f"{runs * plan.samples:,} trials, serial")
        print("load average before: {:.2f} {:.2f} {:.2f} (2 cores; other jobs inflate wall "
              "time, CPU time much less)".format(*load0))
        ph = sweep_phases()
        try:
            w0, c0 = time.perf_counter(), time.process_time()
            result = run_sweep(plan, workers=1, fn=trials.evaluate_chunk)  # the timed one
            t_run, c_run = time.perf_counter() - w0, time.process_time() - c0
        finally:
            ph.remove()
        w0, c0 = time.perf_counter(), time.process_time()
        write_sweep_outputs(result, Path(tmp) / "out")
        t_out, c_out = time.perf_counter() - w0, time.process_time() - c0
        peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        load1 = os.getloadavg()
        print(f"failures: {len(result.failures)}")
        rest = "collecting: executor, chunks joined"
        ph.wall[rest] = t_run - sum(ph.wall.values())
        ph.cpu[rest] = c_run - sum(ph.cpu.values())
        rows = [("loading the plan", t_load, c_load)] + \
            [(k, ph.wall[k], ph.cpu[k]) for k in ph.wall] + \
            [("writing the sweep's files", t_out, c_out)]
        n_sites = len(plan.sites)
        print(f"{'step':<44} {'wall s':>8} {'CPU s':>8} {'CPU ms/site':>12} "
              f"{'CPU ms/site-tech':>17}")
        for name, w, c in rows:
            print(f"{name:<44} {w:8.2f} {c:8.2f} {1e3 * c / n_sites:12.1f} "
                  f"{1e3 * c / runs:17.1f}")
        total_w, total_c = t_load + t_run + t_out, c_load + c_run + c_out
        print(f"{'total':<44} {total_w:8.2f} {total_c:8.2f} {1e3 * total_c / n_sites:12.1f} "
              f"{1e3 * total_c / runs:17.1f}")
        print(f"per site: {total_w / n_sites:.3f} s wall, {total_c / n_sites:.3f} s CPU; per "
              f"site x technology: {total_w / runs:.3f} s wall, {total_c / runs:.3f} s CPU; "
              f"{runs * plan.samples / t_run:,.0f} trials/s in the sweep")
        print(f"peak memory (max RSS) {peak_mb:,.0f} MB; load average after: "
              "{:.2f} {:.2f} {:.2f}".format(*load1))
        k = args.target_sites / n_sites
        est_w, est_c = total_w * k, total_c * k
        if n_sites == args.target_sites:
            verdict = "meets" if total_w < TARGET_SCALE_S else "MISSES"
            print(f"measured at {n_sites} sites: {total_w:.0f} s wall ({total_c:.0f} s CPU): "
                  f"{verdict} the {TARGET_SCALE_S:.0f} s target (ratio target/measured "
                  f"{TARGET_SCALE_S / total_w:.2f})")
        else:
            verdict = "within" if est_w < TARGET_SCALE_S else "OVER"
            print(f"extrapolated to {args.target_sites} sites (linear in sites): {est_w:.0f} s "
                  f"wall, {est_c:.0f} s CPU: {verdict} the {TARGET_SCALE_S:.0f} s target "
                  f"(ratio target/estimate {TARGET_SCALE_S / est_w:.2f} wall, "
                  f"{TARGET_SCALE_S / est_c:.2f} CPU)")
    return 0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sites", type=int, default=20)
    ap.add_argument("--samples", type=int, default=2000)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--technologies", type=int, choices=(3, 4), default=3,
                    help="3 bundled technologies, or 4 with inputs/tech_dual_axis.toml")
    ap.add_argument("--serial-only", action="store_true",
                    help="the serial sweep only, timed by phase, with its files written")
    ap.add_argument("--target-sites", type=int, default=TARGET_SITES,
                    help="sites the serial figures are extrapolated to")
    args = ap.parse_args(argv)
    if args.serial_only:
        return scale(args)

    from lcoe.study.plan import load_plan
    from lcoe.study.sweep import run_sweep

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "bench_plan.toml"
        path.write_text(plan_text(invented_sites(args.sites), args.samples, args.technologies),
                        encoding="utf-8")
        plan = load_plan(path)
        n_trials = len(plan.runs) * plan.samples
        print(f"sweep: {len(plan.sites)} sites x {len(plan.technologies)} technologies x "
              f"{plan.samples} trials = {n_trials:,} trials in {len(plan.runs) * len(plan.chunks)}"
              f" tasks")

        print("load average before: {:.2f} {:.2f} {:.2f} (other work on the machine slows "
              "the parallel run)".format(*os.getloadavg()))
        c0 = cpu_seconds()
        t0 = time.perf_counter()
        serial = run_sweep(plan, workers=1)
        t_serial = time.perf_counter() - t0
        c1 = cpu_seconds()
        cpu_serial = c1[0] - c0[0]
        print(f"serial:    {t_serial:8.1f} s  {n_trials / t_serial:8.0f} trials/s  "
              f"(CPU {cpu_serial:.1f} s)")

        t0 = time.perf_counter()
        parallel = run_sweep(plan, workers=args.workers)
        t_par = time.perf_counter() - t0
        c2 = cpu_seconds()
        cpu_workers, cpu_driver = c2[1] - c1[1], c2[0] - c1[0]
        print(f"{args.workers} workers: {t_par:8.1f} s  {n_trials / t_par:8.0f} trials/s  "
              f"({parallel.execution}; cluster start-up included; CPU: workers "
              f"{cpu_workers:.1f} s, driver {cpu_driver:.1f} s)")

        # The same work on a cluster that is already running (as with --scheduler): the
        # start-up of worker processes and their imports is paid once, not per sweep.
        from lcoe.study.executor import local_cluster

        warm_path = Path(tmp) / "warm_plan.toml"
        warm_path.write_text(plan_text(invented_sites(args.sites + 1)[-1:], 100,
                                       args.technologies), encoding="utf-8")
        with local_cluster(args.workers) as cluster:
            # warm the workers' imports on a site that is not in the plan, so that no site of
            # the timed sweep is already prepared in a worker
            run_sweep(load_plan(warm_path), scheduler=cluster.scheduler_address)
            t0 = time.perf_counter()
            warm = run_sweep(plan, scheduler=cluster.scheduler_address)
            t_warm = time.perf_counter() - t0
        print(f"{args.workers} workers, running cluster: {t_warm:8.1f} s  "
              f"{n_trials / t_warm:8.0f} trials/s  (workers started and imported, no site "
              f"prepared)")

        print("load average after:  {:.2f} {:.2f} {:.2f}".format(*os.getloadavg()))
        speedup = t_serial / t_par
        verdict = "meets" if speedup >= TARGET_SPEEDUP else "MISSES"
        print(f"speed-up:  {speedup:.2f}x including cluster start-up ({verdict} the "
              f"{TARGET_SPEEDUP}x target); {t_serial / t_warm:.2f}x on a running cluster "
              f"(bit-identical: {identical(serial, warm)})")
        print(f"CPU cost of distributing: workers + driver use "
              f"{(cpu_workers + cpu_driver) / cpu_serial:.2f}x the serial CPU time; with "
              f"{args.workers} idle cores the wall-time speed-up would be about "
              f"{args.workers * cpu_serial / max(cpu_workers, cpu_driver * args.workers):.2f}x")
        print(f"bit-identical serial vs {args.workers} workers: {identical(serial, parallel)}")
        print(f"failures:  serial {len(serial.failures)}, parallel {len(parallel.failures)}")

        per_trial_engine = single_case_cost(plan, plan.samples)
        per_trial_sweep = t_serial / n_trials
        print(f"per trial: sweep serial {1e3 * per_trial_sweep:.3f} ms (including site "
              f"preparation) vs single-case engine {1e3 * per_trial_engine:.3f} ms "
              f"(ratio {per_trial_sweep / per_trial_engine:.2f})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
