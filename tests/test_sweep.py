"""Sweeps of many sites x technologies: common random numbers, execution modes, outputs, errors.

The sites here are invented and their monthly climate values are invented test data.
"""

from __future__ import annotations

import csv
import importlib.util
import json
import socket
import time
from dataclasses import replace

import numpy as np
import pytest
from conftest import DEMO, INPUTS

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.cli import main
from lcoe.study.design import chunk_bounds
from lcoe.study.executor import DASK_MISSING_NOTE, execute, local_cluster, run_serial
from lcoe.study.plan import load_plan
from lcoe.study.sweep import prob_cheapest, run_sweep
from lcoe.study.trials import evaluate_chunk, make_tasks, yearly_factors

needs_dask = pytest.mark.skipif(importlib.util.find_spec("distributed") is None,
                                reason="dask.distributed not installed "
                                       "(pip install -e '.[distributed]')")

TRACKER = INPUTS / "tech_single_axis.toml"

# Invented test climates [kWh/m2/day], [C].
SUNNY = ([4.4, 5.3, 6.4, 7.2, 7.6, 8.0, 7.9, 7.4, 6.6, 5.5, 4.6, 4.1],
         [13, 15, 19, 24, 28, 31, 32, 31, 29, 24, 18, 14])
CLOUDY = ([0.8, 1.5, 2.6, 3.9, 4.8, 5.2, 5.1, 4.3, 3.1, 1.9, 0.9, 0.6],
          [3, 4, 7, 10, 14, 17, 19, 19, 15, 11, 7, 4])
DARK = ([0.0] * 12, [5.0] * 12)


def site_toml(name, lat=30.0, lon=10.0, climate=SUNNY, tz="Etc/GMT-1", extra=""):
    ghi, temp = climate
    return (f'[[sites]]\nname = "{name}"\nlatitude_deg = {lat}\nlongitude_deg = {lon}\n'
            f'altitude_m = 100.0\ntimezone = "{tz}"\n{extra}[sites.monthly]\n'
            f"ghi_kwh_m2_day = {ghi}\ntemp_air_c = {temp}\n\n")


SITES = (site_toml("Dunecrest", 28.0, 12.0, SUNNY)
         + site_toml("Mossfield", 51.0, 4.0, CLOUDY)
         + site_toml("=Saltpan", 24.0, 40.0, SUNNY, "Etc/GMT-3"))


def plan_toml(sites=SITES, techs=(DEMO, TRACKER), samples=40, chunk=20, extra=""):
    tech_list = ", ".join(f'"{t.as_posix()}"' for t in techs)
    return (f"[sweep]\nsamples = {samples}\nseed = 77\nchunk_trials = {chunk}\n"
            f"technologies = [{tech_list}]\n\n{extra}\n{sites}")


def write_plan(tmp_path, text, name="plan.toml"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


# The technologies' own distribution of the discount rate, declared once for the whole sweep.
SHARED_RATE = ('[uncertain]\n"finance.discount_rate" = { dist = "triangular", low = 0.06, '
               'mode = 0.075, high = 0.095 }\n"finance.inflation" = { dist = "normal", '
               'mean = 0.025, sd = 0.005, low = 0.0, high = 0.06 }\n')


@pytest.fixture(scope="module")
def small_plan(tmp_path_factory):
    d = tmp_path_factory.mktemp("sweep")
    return load_plan(write_plan(d, plan_toml(extra=SHARED_RATE)))


@pytest.fixture(scope="module")
def serial_result(small_plan):
    return run_sweep(small_plan, workers=1)


# --- chunks and common random numbers -----------------------------------------------------------


@pytest.mark.parametrize("n,size", [(40, 20), (41, 20), (7, 3), (2000, 250), (5, 10)])
def test_chunk_bounds_cover_trials_evenly(n, size):
    b = chunk_bounds(n, size)
    assert b[0][0] == 0 and b[-1][1] == n
    assert all(b[i][1] == b[i + 1][0] for i in range(len(b) - 1))
    sizes = [stop - start for start, stop in b]
    assert max(sizes) <= size and max(sizes) - min(sizes) <= 1


def test_yearly_factors_from_common_scores():
    z = np.random.default_rng(1).standard_normal((20000, 3))
    f = yearly_factors(z, 0.04, None)
    assert np.array_equal(f, np.maximum(1.0 + 0.04 * z, 0.05))
    assert np.array_equal(yearly_factors(z, 0.0, None), np.ones_like(z))
    # Multi-year weather file: each calendar year picked with probability 1/k via Phi(z).
    ratios = np.array([0.9, 1.0, 1.05, 1.05])
    picked = yearly_factors(z, 0.04, ratios)
    assert set(np.unique(picked)) <= set(ratios)
    share = np.mean(picked == 0.9)
    assert share == pytest.approx(0.25, abs=0.01)  # binomial sd 0.0018 for 60000 draws


def test_shared_input_same_draw_in_every_site_and_technology(serial_result):
    trials = serial_result.trials
    assert len(trials) == 6
    rate = [t.X[:, t.names.index("finance.discount_rate")] for t in trials.values()]
    # Declared once in the plan: the same values in every site x technology.
    assert all(np.array_equal(rate[0], r) for r in rate[1:])
    assert rate[0].min() >= 0.06 and rate[0].max() <= 0.095
    # Capex is each technology's own input: independent draws in every site x technology.
    capex = [t.X[:, t.names.index("costs.capex_per_kw")] for t in trials.values()]
    ranks = [np.argsort(np.argsort(c)) for c in capex]
    assert not any(np.array_equal(ranks[0], r) for r in ranks[1:])
    # The site's weather is shared by the technologies there, not across sites.
    e = {k: t.energy_kwh / np.median(t.energy_kwh) for k, t in trials.items()}
    same_site = np.corrcoef(e[("Dunecrest", "demo_fixed_tilt")],
                            e[("Dunecrest", "tech_single_axis")])[0, 1]
    other_site = np.corrcoef(e[("Dunecrest", "demo_fixed_tilt")],
                             e[("Mossfield", "demo_fixed_tilt")])[0, 1]
    assert same_site > 0.5 and abs(other_site) < 0.5


def test_trial_by_trial_comparison_of_identical_plants(tmp_path):
    """Two technologies that differ only in capex, every uncertain input declared once for the
    sweep and the site's weather shared: the same energy in every trial, so the cheaper one
    wins every trial."""
    base = DEMO.read_text(encoding="utf-8").split("# ---- What Larkspur is unsure of")[0]
    dear = write_plan(tmp_path, base, "dear.toml")
    cheap = write_plan(tmp_path, base.replace("capex_per_kw = 1050.0", "capex_per_kw = 1000.0"),
                       "cheap.toml")
    shared = ('[uncertain]\n"plant.dc_loss_fraction" = { dist = "pert", low = 0.05, '
              'mode = 0.08, high = 0.13 }\n' + SHARED_RATE.split("\n", 1)[1] +
              '[uncertain.energy]\ninterannual_cov = 0.04\nresource_sd = 0.05\n')
    plan = write_plan(tmp_path, plan_toml(sites=site_toml("Dunecrest"), techs=(dear, cheap),
                                          extra=shared))
    result = run_sweep(plan)
    a = result.trials[("Dunecrest", "dear")]
    b = result.trials[("Dunecrest", "cheap")]
    assert np.array_equal(a.energy_kwh, b.energy_kwh) and np.ptp(a.energy_kwh) > 0
    assert np.all(b.lcoe_real < a.lcoe_real)
    assert [r.prob_cheapest for r in result.rows] == [0.0, 1.0]


def test_prob_cheapest_counts_wins_trial_by_trial():
    lcoe = np.array([[1.0, 2.0, 3.0], [3.0, 2.0, 4.0], [0.5, 5.0, 0.4], [2.0, 1.0, 3.0]])
    assert np.array_equal(prob_cheapest(lcoe), [0.25, 0.5, 0.25])
    with pytest.raises(ValueError):
        prob_cheapest(np.empty((0, 2)))


def test_prob_cheapest_sums_to_one_per_site(serial_result):
    for site in serial_result.plan.sites:
        rows = [r for r in serial_result.rows if r.site == site.name]
        assert sum(r.prob_cheapest for r in rows) == pytest.approx(1.0, abs=1e-12)
        lcoe = {r.technology: serial_result.trials[(site.name, r.technology)].lcoe_real
                for r in rows}
        for r in rows:  # recount: trials in which no other technology is cheaper
            others = np.min([v for k, v in lcoe.items() if k != r.technology], axis=0)
            assert r.prob_cheapest == pytest.approx(np.mean(lcoe[r.technology] < others))


def test_table_statistics_from_trials(serial_result):
    for r in serial_result.rows:
        t = serial_result.trials[(r.site, r.technology)]
        assert r.lcoe_real_q10 < r.lcoe_real_q50 < r.lcoe_real_q90
        assert r.lcoe_real_q50 == np.quantile(t.lcoe_real, 0.5)
        # Energy P90 is exceeded with 90 % probability: the 10th percentile (DOMAIN.md 4).
        # (1 - 0.9 is 0.1 only to the last bit, hence approx)
        assert r.energy_p90_kwh == pytest.approx(np.quantile(t.energy_kwh, 0.10), rel=1e-14)
        assert r.energy_p90_kwh < r.energy_p50_kwh
    # DOMAIN.md section 2: tracker energy must not fall below fixed tilt at a sunny site.
    by = {(r.site, r.technology): r for r in serial_result.rows}
    assert by[("Dunecrest", "tech_single_axis")].energy_p50_kwh > \
        by[("Dunecrest", "demo_fixed_tilt")].energy_p50_kwh
    # DOMAIN.md section 6 sanity range for a sunny site: 0.02-0.10 USD/kWh.
    assert 0.02 < by[("Dunecrest", "demo_fixed_tilt")].lcoe_real_q50 < 0.10
    assert by[("Mossfield", "demo_fixed_tilt")].lcoe_real_q50 > \
        by[("Dunecrest", "demo_fixed_tilt")].lcoe_real_q50


def test_no_uncertainty_reproduces_the_deterministic_model(tmp_path):
    """Cross-check against lcoe.model.evaluate: without uncertain inputs every trial is the
    deterministic case, bit for bit."""
    from lcoe.case.reader import load_case
    from lcoe.model import evaluate, prepare

    text = DEMO.read_text(encoding="utf-8").split("# ---- What Larkspur is unsure of")[0]
    tech = write_plan(tmp_path, text, "plain.toml")
    # Second site: no weather and no monthly values = the TMY3 file bundled with pvlib.
    station = ('[[sites]]\nname = "Station"\nlatitude_deg = 36.1\nlongitude_deg = -79.95\n'
               'altitude_m = 273.0\ntimezone = "Etc/GMT+5"\n')
    plan = load_plan(write_plan(tmp_path, plan_toml(
        sites=site_toml("Mossfield", 51.0, 4.0, CLOUDY) + station, techs=(tech,), samples=6,
        chunk=3)))
    result = run_sweep(plan)
    for run in plan.runs:
        case = run.case()
        base = evaluate(case, prepare(case))
        t = result.trials[(run.site, "plain")]
        assert np.all(t.lcoe_real == base.cashflow.lcoe_real[0])
        assert np.all(t.energy_kwh == base.energy.annual_kwh[0])
    assert [r.prob_cheapest for r in result.rows] == [1.0, 1.0]
    # The bundled-weather site is the demo case's own site: the same LCOE as the demo case.
    demo = load_case(DEMO)
    assert result.rows[1].lcoe_real_q50 == evaluate(demo, prepare(demo)).cashflow.lcoe_real[0]


def test_sweep_agrees_with_single_case_engine(serial_result):
    """Statistical cross-check against lcoe.study.single.monte_carlo (independent random
    numbers): the medians agree within 4 % (about 3 standard errors of the difference of two
    medians of 200 trials with a 10 % spread)."""
    from lcoe.model import prepare
    from lcoe.study.single import monte_carlo
    from lcoe.study.spec import read_spec

    plan = serial_result.plan
    run = plan.runs[0]
    case = run.case()
    trials, _ = monte_carlo(case, prepare(case), read_spec(case), 200, seed=3)
    single = np.median(trials.outputs["lcoe_real_per_kwh"])
    from lcoe.study.design import build_design

    one = plan.study_runs[0]
    design = build_design([one.member()], 200, 9, "lhs")
    sweep = run_sweep(replace(plan, samples=200, chunk_trials=100, runs=(run,),
                              study_runs=(one,), design=design))
    assert np.median(sweep.trials[(run.site, run.technology)].lcoe_real) == \
        pytest.approx(single, rel=0.04)


# --- execution modes ---------------------------------------------------------------------------


@pytest.fixture(scope="module")
def cluster():
    pytest.importorskip("distributed", reason="dask.distributed not installed")
    from distributed import Client

    with local_cluster(2) as c:
        with Client(c) as client:  # every listener of the cluster is on the loopback address
            workers = list(client.scheduler_info()["workers"])
        assert c.scheduler_address.startswith("tcp://127.0.0.1:")
        assert len(workers) == 2 and all(w.startswith("tcp://127.0.0.1:") for w in workers)
        yield c


@needs_dask
def test_bit_identical_serial_scheduler_and_local_workers(tmp_path, small_plan, serial_result,
                                                          cluster):
    on_cluster = run_sweep(small_plan, scheduler=cluster.scheduler_address)
    assert "2 workers" in on_cluster.execution
    two = run_sweep(small_plan, workers=2)
    assert "local dask cluster" in two.execution
    for other in (on_cluster, two):
        assert other.trials.keys() == serial_result.trials.keys()
        for key, t in serial_result.trials.items():
            o = other.trials[key]
            for name in ("X", "lcoe_real", "lcoe_nominal", "energy_kwh"):
                assert np.array_equal(getattr(t, name), getattr(o, name)), (key, name)
        assert other.rows == serial_result.rows


@needs_dask
def test_failed_runs_reported_and_the_rest_written_on_cluster(tmp_path, cluster, capsys):
    """A site that delivers no energy fails (non-finite LCOE) in every technology: each failure
    is retried, then listed with its site and technology; the other site is still written."""
    plan = write_plan(tmp_path, plan_toml(sites=site_toml("Dunecrest") + site_toml(
        "Nightvale", 70.0, 20.0, DARK)))
    out = tmp_path / "res"
    rc = main(["sweep", str(plan), "--out", str(out), "--scheduler", cluster.scheduler_address,
               "--quiet"])
    err = capsys.readouterr().err
    assert rc == 1
    assert "site 'Nightvale', technology 'demo_fixed_tilt'" in err and "non-finite" in err
    s = json.loads((out / "sweep.json").read_text(encoding="utf-8"))
    assert {(f["site"], f["technology"]) for f in s["failures"]} == {
        ("Nightvale", "demo_fixed_tilt"), ("Nightvale", "tech_single_axis")}
    assert all(f["attempts"] == 2 for f in s["failures"])
    with open(out / "sweep.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["Site"] for r in rows] == ["Dunecrest", "Dunecrest"]
    serial = run_sweep(load_plan(plan))
    assert [(f.site, f.technology, f.attempts) for f in serial.failures] == \
        [(f["site"], f["technology"], f["attempts"]) for f in s["failures"]]


def test_task_retried_once_then_reported():
    calls = {}

    def flaky(task):
        calls[task] = calls.get(task, 0) + 1
        if task == "always" or calls[task] == 1:
            raise RuntimeError(f"boom {task}\nsecond line")
        return task.upper()

    seen = []
    results, errors = run_serial(["a", "always", "b"], flaky, lambda d, n: seen.append((d, n)))
    assert results == ["A", None, "B"]
    assert errors == {1: "RuntimeError: boom always second line"}
    assert calls == {"a": 2, "always": 2, "b": 2}
    assert seen == [(1, 3), (2, 3), (3, 3)]


def test_without_dask_workers_fall_back_to_serial(monkeypatch, small_plan):
    import sys

    monkeypatch.setitem(sys.modules, "distributed", None)  # import now raises ImportError
    tasks = make_tasks(small_plan.design, small_plan.study_runs, 20)[:2]
    results, errors, how, notes = execute(tasks, evaluate_chunk, workers=2)
    assert how.startswith("serial") and notes == [DASK_MISSING_NOTE] and not errors
    assert all(r is not None for r in results)


def test_unreachable_scheduler_fails_fast(tmp_path, capsys):
    with socket.socket() as s:  # a port on 127.0.0.1 that nothing listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    plan = write_plan(tmp_path, plan_toml(sites=site_toml("Dunecrest")))
    out = tmp_path / "res"
    t0 = time.monotonic()
    rc = main(["sweep", str(plan), "--out", str(out), "--scheduler", f"tcp://127.0.0.1:{port}"])
    elapsed = time.monotonic() - t0
    err = capsys.readouterr().err
    assert rc == 2 and elapsed < 15.0
    assert err.count("\n") == 1 and f"tcp://127.0.0.1:{port}" in err
    assert not out.exists()
    rc = main(["sweep", str(plan), "--out", str(out), "--scheduler", "localhost"])
    assert rc == 2 and "expected an address such as" in capsys.readouterr().err


# --- outputs -------------------------------------------------------------------------------------


def test_cli_writes_table_workbook_json_and_charts(tmp_path, capsys):
    from matplotlib.image import imread
    from openpyxl import load_workbook

    plan = write_plan(tmp_path, plan_toml())
    out = tmp_path / "res"
    assert main(["sweep", str(plan), "--out", str(out)]) == 0
    printed = capsys.readouterr().out
    assert "Dunecrest" in printed and "P(cheapest)" in printed
    with open(out / "sweep.csv", newline="", encoding="utf-8") as fh:
        reader = csv.reader(fh)
        header = next(reader)
        rows = list(reader)
    # Headers with units, technologies by case name, energy per kW and the nominal LCOE.
    assert header == ["Site", "Technology", "LCOE real P10 [USD/kWh]", "LCOE real P50 [USD/kWh]",
                      "LCOE real P90 [USD/kWh]", "LCOE nominal P50 [USD/kWh]",
                      "Energy P50 [MWh/year]", "Energy P90 [MWh/year]",
                      "Specific yield P50 [kWh/kW/year]", "Specific yield P90 [kWh/kW/year]",
                      "Probability cheapest at the site [-]"]
    single_axis = load_case(INPUTS / "tech_single_axis.toml").name
    assert len(rows) == 6 and rows[-1][:2] == ["'=Saltpan", single_axis]  # neutralised
    assert len(rows[0][3].split(".")[1]) <= 4 and "." not in rows[0][8]  # rounded
    kw = load_case(INPUTS / "demo_fixed_tilt.toml")["plant.dc_capacity_kw"]
    assert float(rows[0][8]) == pytest.approx(1000 * float(rows[0][6]) / kw, abs=0.6)
    s = json.loads((out / "sweep.json").read_text(encoding="utf-8"))
    assert s["kind"] == "sweep" and s["plan"]["samples"] == 40 and s["failures"] == []
    assert len(s["rows"]) == 6 and len(s["sites"]) == 3 and "numpy" in s["versions"]
    wb = load_workbook(out / "sweep.xlsx")
    ws = wb["Sweep"]
    assert [c.value for c in ws[1]] == header
    name = ws.cell(row=6, column=1)
    assert name.value == "=Saltpan" and name.data_type == "s"  # text, never a formula
    assert ws.cell(row=2, column=4).value == pytest.approx(float(rows[0][3]), abs=5e-5)
    assert {"Sweep", "Sites", "About"} <= set(wb.sheetnames)
    for png in ("sweep_ranking.png", "sweep_sites.png"):
        img = imread(out / png)
        assert img.shape[0] > 300 and img.shape[1] > 600


# --- bad input ----------------------------------------------------------------------------------


def _refused(tmp_path, capsys, text, *needles):
    plan = write_plan(tmp_path, text)
    out = tmp_path / "res"
    rc = main(["sweep", str(plan), "--out", str(out)])
    err = capsys.readouterr().err
    assert rc == 2, err
    assert err.count("\n") == 1 and "Traceback" not in err
    for needle in needles:
        assert needle in err, err
    assert not out.exists()  # nothing half-written
    return err


@pytest.mark.parametrize("site,needles", [
    (site_toml("Farpoint", lat=95.0), ("site 'Farpoint'", "site.latitude_deg = 95.0")),
    (site_toml("Farpoint", lon=200.0), ("site 'Farpoint'", "site.longitude_deg = 200.0")),
    (site_toml("Farpoint", climate=(SUNNY[0][:11], SUNNY[1])),
     ("site 'Farpoint'", "site.monthly.ghi_kwh_m2_day", "12 numbers")),
    (site_toml("Farpoint", climate=(SUNNY[0][:3] + [-1.0] + SUNNY[0][4:], SUNNY[1])),
     ("site 'Farpoint'", "site.monthly.ghi_kwh_m2_day[3] = -1.0")),
    (site_toml("Farpoint", extra="elevation_m = 10.0\n"), ("site 'Farpoint'", "site.elevation_m")),
    (site_toml("Farpoint") + f"dni_kwh_m2_day = {[-0.5] + SUNNY[0][1:]}\n",
     ("site 'Farpoint'", "site.monthly.dni_kwh_m2_day[0] = -0.5", "January")),
])
def test_bad_site_refused(tmp_path, capsys, site, needles):
    _refused(tmp_path, capsys, plan_toml(sites=site_toml("Dunecrest") + site), *needles)


def test_unknown_plan_keys_refused(tmp_path, capsys):
    _refused(tmp_path, capsys, plan_toml().replace("samples =", "sample ="),
             "unknown key 'sweep.sample'", "did you mean 'sweep.samples'")
    _refused(tmp_path, capsys, plan_toml() + "[extras]\na = 1\n", "unknown key 'extras'")


def test_bad_technology_file_refused(tmp_path, capsys):
    bad = write_plan(tmp_path, DEMO.read_text(encoding="utf-8").replace(
        "capex_per_kw = 1050.0", "capex_per_kw = -5.0"), "broken_tech.toml")
    err = _refused(tmp_path, capsys, plan_toml(techs=(DEMO, bad)), "broken_tech.toml",
                   "costs.capex_per_kw = -5.0")
    assert "plan.toml" not in err
    _refused(tmp_path, capsys, plan_toml(techs=(DEMO, tmp_path / "missing.toml")),
             "missing.toml", "not found")


def test_plan_level_errors(tmp_path, capsys):
    _refused(tmp_path, capsys, plan_toml(sites=site_toml("Dunecrest") * 2),
             "sites[1].name", "not used by another site")
    _refused(tmp_path, capsys, plan_toml(
        extra='[[correlation]]\nbetween = ["finance.discount_rate", "finance.inflaton"]\n'
              'rank = 0.5\n'), "plan.toml", "finance.inflaton", "did you mean")
    _refused(tmp_path, capsys, plan_toml(
        extra='[uncertain]\n"plant.tilt_dg" = { dist = "uniform", low = 1, high = 2 }\n'),
        "plan.toml", "plant.tilt_dg", "no case of the study has this input")


def test_conflicting_correlations_between_technologies(tmp_path):
    # Own inputs: each technology's pair is its own, no conflict.
    other = write_plan(tmp_path, TRACKER.read_text(encoding="utf-8").replace(
        "rank = 0.6", "rank = 0.3"), "other.toml")
    load_plan(write_plan(tmp_path, plan_toml(techs=(DEMO, other))))
    # Shared inputs: one draw for all, so one rank.
    with pytest.raises(InputError, match="0.6 in .* but 0.3"):
        load_plan(write_plan(tmp_path, plan_toml(techs=(DEMO, other), extra=SHARED_RATE)))


def test_non_empty_output_folder_refused_before_running(tmp_path, capsys):
    out = tmp_path / "res"
    out.mkdir()
    (out / "mine.txt").write_text("keep")
    plan = write_plan(tmp_path, plan_toml(sites=site_toml("Dunecrest")))
    assert main(["sweep", str(plan), "--out", str(out)]) == 2
    assert "not empty" in capsys.readouterr().err
    assert sorted(p.name for p in out.iterdir()) == ["mine.txt"]
