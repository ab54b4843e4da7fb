"""The study layer: one trial design, one sharing rule, one executor for run, compare, sweep.

Identities (analytic consequences of the design, so they hold bit for bit):
- a one-site sweep of the cases of a comparison gives the comparison's per-trial LCOE;
- P(cheapest) of a two-technology sweep is the comparison's P(candidate < baseline);
- a single-case study gives the same trials serially and on 1, 2 or 3 dask workers, with any
  chunk size; a sweep on a scheduler and workers started with dask's own command-line programs
  gives the serial numbers.
"""

from __future__ import annotations

import importlib.util
import os
import shutil
import socket
import subprocess
import sys
import time
import tomllib

import numpy as np
import pytest
from conftest import DEMO, INPUTS

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.model import prepare
from lcoe.study.compare import run_comparison
from lcoe.study.design import Member, build_design
from lcoe.study.plan import load_plan
from lcoe.study.shared import read_shared
from lcoe.study.single import monte_carlo
from lcoe.study.spec import read_spec
from lcoe.study.sweep import run_sweep

needs_dask = pytest.mark.skipif(importlib.util.find_spec("distributed") is None,
                                reason="dask.distributed not installed")
TRACKER = INPUTS / "compare_single_axis.toml"
SHARED = INPUTS / "compare_shared.toml"
SAMPLES, SEED = 300, 4242


def _plan_text(techs, samples=SAMPLES, chunk=70, extra=""):
    """A one-site plan at the demo case's own site, sharing what compare_shared.toml shares."""
    site = tomllib.loads(DEMO.read_text(encoding="utf-8"))["site"]
    site_lines = "".join(f"{k} = {v!r}\n".replace("'", '"') for k, v in site.items())
    shared = SHARED.read_text(encoding="utf-8")
    tech_list = ", ".join(f'"{t.as_posix()}"' for t in techs)
    return (f"[sweep]\nsamples = {samples}\nseed = {SEED}\nchunk_trials = {chunk}\n"
            f"technologies = [{tech_list}]\n\n{shared}\n{extra}\n"
            f'[[sites]]\nname = "Station"\n{site_lines}')


@pytest.fixture(scope="module")
def pair(tmp_path_factory):
    d = tmp_path_factory.mktemp("study")
    plan_path = d / "plan.toml"
    plan_path.write_text(_plan_text((DEMO, TRACKER)), encoding="utf-8")
    sweep = run_sweep(load_plan(plan_path))
    cases = [load_case(DEMO), load_case(TRACKER)]
    comp = run_comparison(cases, samples=SAMPLES, seed=SEED, claim_ratio=1.0, sobol_base=0,
                          shared=read_shared(SHARED), chunk_size=1000)
    return sweep, comp


def test_one_site_sweep_equals_comparison_bit_for_bit(pair):
    sweep, comp = pair
    for label, outcome in zip(("demo_fixed_tilt", "compare_single_axis"), comp.cases):
        s = sweep.trials[("Station", label)]
        assert np.array_equal(s.lcoe_real, outcome.trials.lcoe_real), label
        assert np.array_equal(s.lcoe_nominal, outcome.trials.lcoe_nominal), label


def test_prob_cheapest_equals_prob_candidate_below_baseline(pair):
    sweep, comp = pair
    rows = {r.technology: r for r in sweep.rows}
    base, cand = comp.cases[0].trials.lcoe_real, comp.cases[1].trials.lcoe_real
    # The candidate is cheapest exactly when its LCOE is below the baseline's (ties, which do
    # not occur here, go to the first technology in the sweep).
    assert rows["compare_single_axis"].prob_cheapest == np.mean(cand < base)
    assert comp.claims[0].stats["prob_claim_holds"] == pytest.approx(np.mean(cand <= base),
                                                                     abs=0.0)
    assert 0.0 < rows["compare_single_axis"].prob_cheapest < 1.0  # own capex: not lockstep


def test_sharing_rule_in_a_comparison(pair):
    _, comp = pair
    kinds = {c.dist.name: c.kind for c in comp.design.columns}
    assert kinds["finance.discount_rate"] == kinds["finance.inflation"] == "study"
    assert kinds["energy.resource [bundled weather]"] == "site"
    model = [k for k in kinds if k.startswith("energy.model [")]
    assert len(model) == 2 and all(kinds[k] == "run" for k in model)
    assert any("Sharing rule" in n for n in comp.notes)


def _single(case, n, chunk, **how):
    trials, _ = monte_carlo(case, prepare(case), read_spec(case), n, seed=SEED,
                            chunk_size=chunk, **how)
    return trials


@pytest.fixture(scope="module")
def serial_demo():
    case = load_case(DEMO)
    return case, _single(case, 240, 1000)


def _same(a, b):
    assert np.array_equal(a.X, b.X)
    assert np.array_equal(a.energy_factors, b.energy_factors)
    for k, v in a.outputs.items():
        assert np.array_equal(v, b.outputs[k]), k
    for k in ("physics_kwh", "energy_1yr_kwh", "energy_10yr_kwh"):
        assert np.array_equal(getattr(a, k), getattr(b, k)), k
    assert a.yearly_cov == b.yearly_cov  # summed from each chunk's pieces, bit for bit


def test_single_case_independent_of_chunk_size(serial_demo):
    case, serial = serial_demo
    for chunk in (37, 100):
        _same(serial, _single(case, 240, chunk))


@needs_dask
@pytest.mark.parametrize("workers", [1, 2, 3])
def test_single_case_on_dask_is_bit_identical(serial_demo, workers):
    from distributed import Client

    from lcoe.study.executor import local_cluster

    case, serial = serial_demo
    with local_cluster(workers) as cluster, Client(cluster) as client:
        assert len(client.scheduler_info()["workers"]) == workers
        for chunk in (37, 100):
            _same(serial, _single(case, 240, chunk, scheduler=cluster.scheduler_address))


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@needs_dask
@pytest.mark.skipif(shutil.which("dask") is None, reason="dask command-line program not found")
def test_sweep_on_scheduler_and_workers_started_by_dask_cli(tmp_path, pair):
    sweep, _ = pair
    port = _free_port()
    address = f"tcp://127.0.0.1:{port}"
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(INPUTS.parent),
                                                       os.environ.get("PYTHONPATH", "")]),
               DASK_DISTRIBUTED__WORKER__PROFILE__ENABLED="False")
    env.pop("MALLOC_TRIM_THRESHOLD_", None)
    procs = [subprocess.Popen(["dask", "scheduler", "--host", "127.0.0.1", "--port", str(port),
                               "--no-dashboard"], env=env, stdout=subprocess.DEVNULL,
                              stderr=subprocess.DEVNULL)]
    try:
        time.sleep(1.0)
        for _ in range(2):
            procs.append(subprocess.Popen(
                ["dask", "worker", address, "--host", "127.0.0.1", "--nthreads", "1",
                 "--no-dashboard"], env=env, stdout=subprocess.DEVNULL,
                stderr=subprocess.DEVNULL))
        from distributed import Client

        deadline = time.monotonic() + 60
        while True:
            try:
                with Client(address, timeout=5) as client:
                    if len(client.scheduler_info()["workers"]) == 2:
                        break
            except OSError:
                pass
            assert time.monotonic() < deadline, "dask workers did not come up"
            time.sleep(0.5)
        plan_path = tmp_path / "plan.toml"
        plan_path.write_text(_plan_text((DEMO, TRACKER)), encoding="utf-8")
        remote = run_sweep(load_plan(plan_path), scheduler=address)
        assert "2 workers" in remote.execution
        for key, t in sweep.trials.items():
            assert np.array_equal(t.lcoe_real, remote.trials[key].lcoe_real), key
        assert remote.rows == sweep.rows
    finally:
        for p in reversed(procs):
            p.terminate()
        for p in procs:
            try:
                p.wait(timeout=20)
            except subprocess.TimeoutExpired:
                p.kill()


# --- the design and bad input -------------------------------------------------------------------


def _member(label, site, names, shared=(), pairs=()):
    return Member(label=label, case_label=label, site=site, names=tuple(names),
                  shared=frozenset(shared), corr_pairs=tuple(pairs), lifetime_years=5)


def test_columns_follow_the_sharing_rule():
    a = _member("a", "s1", ["costs.capex_per_kw", "finance.discount_rate", "energy.resource",
                            "energy.model"], shared=["finance.discount_rate"])
    b = _member("b", "s1", ["costs.capex_per_kw", "finance.discount_rate", "energy.resource",
                            "energy.model"], shared=["finance.discount_rate"])
    c = _member("c", "s2", ["finance.discount_rate", "energy.resource"],
                shared=["finance.discount_rate"])
    d = build_design([a, b, c], 50, 1)
    ca, cb, cc = d.member_columns
    assert ca[1] == cb[1] == cc[0]           # shared input: one column
    assert ca[2] == cb[2] != cc[1]           # resource: one column per site
    assert ca[0] != cb[0] and ca[3] != cb[3]  # own inputs and energy model: own columns
    u, z = d.draws(0, 50)
    assert u.shape == (50, len(d.columns)) and z.shape == (2, 50, 5)
    # Blocks: any range of trials is the same slice of the whole.
    assert np.array_equal(d.draws(10, 30)[0], u[10:30])


def test_blocks_do_not_depend_on_the_range_drawn():
    m = _member("a", "s", ["x", "y"], pairs=[("x", "y", 0.7)])
    d = build_design([m], 2500, 9, block_trials=1000)
    whole = d.draws(0, 2500)[0]
    parts = np.concatenate([d.draws(a, min(a + 333, 2500))[0] for a in range(0, 2500, 333)])
    assert np.array_equal(whole, parts)
    # Latin hypercube within each block: one point per stratum of each column.
    first = whole[:833, 0]
    assert np.array_equal(np.sort(np.floor(first * 833)), np.arange(833))
    # Iman-Conover: the rank correlation approaches the target (sampling error ~0.02).
    from scipy.stats import spearmanr

    assert spearmanr(whole[:, 0], whole[:, 1])[0] == pytest.approx(0.7, abs=0.05)


def test_correlation_kept_by_group_equals_the_whole_matrix():
    """The design keeps one matrix per correlated group; assembled, it is the matrix built over
    every column at once, and a run's draws are the columns of the whole draw."""
    from lcoe.case.errors import InputError
    from lcoe.uncertainty.sampling import correlation_matrix

    members = [_member(f"r{i}", f"s{i // 2}", ["a", "b", "c", "d", "energy.resource"],
                       shared=["d"], pairs=[("a", "b", 0.5), ("b", "c", -0.3)])
               for i in range(6)]
    d = build_design(members, 40, 3)
    pairs = [(d.columns[ca], d.columns[cb], r) for m, cols in zip(members, d.member_columns)
             for ca, cb, r in [(cols[0], cols[1], 0.5), (cols[1], cols[2], -0.3)]]
    assert np.array_equal(d.corr, correlation_matrix(d.columns, pairs, "t"))
    assert len(d.groups) == 6 and all(len(g) == 3 for g in d.groups)
    u, z = d.draws(5, 33)
    for m, cols in enumerate(d.member_columns):
        um, zm = d.member_draws(m, 5, 33)
        assert np.array_equal(um, u[:, list(cols)])
        assert np.array_equal(zm, z[d.member_sites[m]])
    # a group whose correlations are not jointly possible is still refused
    bad = _member("x", "s", ["a", "b", "c"], pairs=[("a", "b", 0.9), ("b", "c", 0.9),
                                                    ("a", "c", -0.9)])
    with pytest.raises(InputError, match="not positive definite"):
        build_design(members + [bad], 40, 3)


def _refused(capsys, tmp_path, argv):
    from lcoe.cli import main

    out = tmp_path / "out"
    rc = main([*map(str, argv), "--out", str(out)])
    err = capsys.readouterr().err
    assert rc == 2 and err.count("\n") == 1 and "Traceback" not in err, err
    assert not out.exists()
    return err


@pytest.mark.parametrize("extra,needles", [
    ('[[correlation]]\nbetween = ["nowhere/costs.capex_per_kw", '
     '"compare_single_axis/costs.capex_per_kw"]\nrank = 0.7\n',
     ("correlation[1].between", "nowhere/costs.capex_per_kw", "a case of the study")),
    ('[[correlation]]\nbetween = ["demo_fixed_tilt/costs.capex_per_kwh", '
     '"compare_single_axis/costs.capex_per_kw"]\nrank = 0.7\n',
     ("demo_fixed_tilt/costs.capex_per_kwh", "an uncertain input of case 'demo_fixed_tilt'")),
])
def test_bad_cross_case_correlation_refused(tmp_path, capsys, extra, needles):
    shared = tmp_path / "shared.toml"
    shared.write_text(SHARED.read_text(encoding="utf-8") + extra, encoding="utf-8")
    err = _refused(capsys, tmp_path, ["compare", DEMO, TRACKER, "--shared", shared,
                                      "--samples", 20, "--sobol-ratio", 0])
    assert "shared.toml" in err
    for n in needles:
        assert n in err, err


def test_shared_input_no_case_uses_refused(tmp_path, capsys):
    shared = tmp_path / "shared.toml"
    shared.write_text('[uncertain]\n"costs.moving_part[0].mean_years" = { dist = "uniform", '
                      'low = 5, high = 9 }\n', encoding="utf-8")
    err = _refused(capsys, tmp_path, ["compare", DEMO, TRACKER, "--shared", shared,
                                      "--samples", 20, "--sobol-ratio", 0])
    assert 'uncertain."costs.moving_part[0].mean_years"' in err and "no case" in err


def test_shared_and_case_distribution_for_one_input_refused(tmp_path, capsys):
    shared = tmp_path / "shared.toml"
    shared.write_text('[uncertain]\n"costs.capex_per_kw" = { dist = "uniform", low = 900, '
                      'high = 1100 }\n', encoding="utf-8")
    err = _refused(capsys, tmp_path, ["compare", DEMO, TRACKER, "--shared", shared,
                                      "--samples", 20, "--sobol-ratio", 0])
    assert 'shared.toml: uncertain."costs.capex_per_kw"' in err and "its own distribution" in err
    plan = tmp_path / "plan.toml"
    plan.write_text(_plan_text((DEMO, TRACKER)).replace(
        "[uncertain]\n", '[uncertain]\n"costs.capex_per_kw" = { dist = "uniform", low = 900, '
                         'high = 1100 }\n', 1), encoding="utf-8")
    err = _refused(capsys, tmp_path, ["sweep", plan])
    assert 'plan.toml: uncertain."costs.capex_per_kw"' in err


def test_model_sd_in_a_plan_refused(tmp_path):
    plan = tmp_path / "plan.toml"
    plan.write_text(_plan_text((DEMO, TRACKER), extra="[uncertain.energy]\nmodel_sd = 0.03\n")
                    .replace('"finance.inflation"', '"finance.inflation"', 1), encoding="utf-8")
    with pytest.raises(InputError, match="uncertain.energy.model_sd"):
        load_plan(plan)


def test_own_input_correlated_with_shared_input_refused(tmp_path):
    shared = tmp_path / "shared.toml"
    shared.write_text('[uncertain]\n"finance.discount_rate" = { dist = "triangular", '
                      'low = 0.06, mode = 0.075, high = 0.095 }\n', encoding="utf-8")
    with pytest.raises(InputError, match="its own input.*one draw for the whole study"):
        run_comparison([load_case(DEMO), load_case(TRACKER)], samples=20, sobol_base=0,
                       shared=read_shared(shared))


def test_cross_case_rank_correlation_imposed(tmp_path):
    shared = tmp_path / "shared.toml"
    shared.write_text(SHARED.read_text(encoding="utf-8") + (
        '[[correlation]]\nbetween = ["demo_fixed_tilt/costs.capex_per_kw", '
        '"compare_single_axis/costs.capex_per_kw"]\nrank = 0.7\n'), encoding="utf-8")
    r = run_comparison([load_case(DEMO), load_case(TRACKER)], samples=400, seed=3,
                       sobol_base=0, shared=read_shared(shared))
    from scipy.stats import spearmanr

    rho = spearmanr(r.cases[0].trials.capex_per_kw, r.cases[1].trials.capex_per_kw)[0]
    assert rho == pytest.approx(0.7, abs=0.06)  # Iman-Conover target, sampling error ~0.03


if __name__ == "__main__":
    sys.exit(pytest.main([__file__, "-q"]))


def test_affinity_batches_keep_a_site_whole():
    from lcoe.study.executor import affinity_batches

    sites = ["a"] * 6 + ["b"] * 6 + ["c"] * 2 + ["d"] * 20
    batches = affinity_batches(sites, 9, affinity=lambda s: s)
    assert sorted(i for b in batches for i in b) == list(range(len(sites)))
    for b in batches:  # a site smaller than a batch is never split, a large one is cut
        assert len(b) <= 9
    assert [0, 1, 2, 3, 4, 5] in batches and [6, 7, 8, 9, 10, 11, 12, 13] in batches
    assert [len(b) for b in batches if sites[b[0]] == "d"] == [9, 9, 2]
    assert affinity_batches(list(range(5)), 2) == [[0, 1], [2, 3], [4]]
