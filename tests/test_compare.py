"""Comparison of cases with common random numbers, the claim test and its outputs."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
from conftest import MINIMAL_CASE, write_case

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.model import cash_flow, evaluate, prepare
from lcoe.study.compare import build_design, drivers, run_comparison, study_runs
from lcoe.study.shared import SharedInputs

UNCERTAIN = """
[uncertain]
"costs.capex_per_kw" = { dist = "triangular", low = 900, mode = 1000, high = 1200 }
"finance.discount_rate" = { dist = "uniform", low = 0.05, high = 0.09 }
"plant.dc_loss_fraction" = { dist = "pert", low = 0.05, mode = 0.07, high = 0.12 }
[uncertain.energy]
interannual_cov = 0.04
resource_sd = 0.04
"""


def _shared(*paths, pairs=()):
    """Declare some of UNCERTAIN's inputs once for the whole comparison."""
    import tomllib

    table = tomllib.loads(UNCERTAIN)["uncertain"]
    return SharedInputs(source="shared.toml", uncertain={p: table[p] for p in paths},
                        pairs=list(pairs))


ALL_SHARED = ("costs.capex_per_kw", "finance.discount_rate", "plant.dc_loss_fraction")


def _case(tmp_path, name, extra="", uncertain=UNCERTAIN, plant=""):
    text = MINIMAL_CASE.replace('name = "t"', f'name = "{name}"').replace(
        "[plant]", "[plant]\n" + plant) + extra + uncertain
    return load_case(write_case(tmp_path, text, f"{name}.toml"))


@pytest.fixture(scope="module")
def tmp(tmp_path_factory):
    return tmp_path_factory.mktemp("compare")


def test_identical_cases_give_ratio_one_in_every_trial(tmp):
    # Analytic consequence of the sharing rule: a case compared with a copy of itself at the
    # same site, every input declared once for the comparison, draws the same values, so its
    # LCOE ratio is 1 in every trial, the claim "at most 1x" holds always and the break-even
    # capex is the trial's own capex.
    a, b = _case(tmp, "a"), _case(tmp, "b")
    r = run_comparison([a, b], samples=64, seed=3, claim_ratio=1.0, sobol_base=0,
                       shared=_shared(*ALL_SHARED))
    claim = r.claims[0]
    np.testing.assert_allclose(claim.ratio, 1.0, rtol=1e-12)
    assert claim.stats["prob_claim_holds"] == 1.0
    np.testing.assert_allclose(claim.capex_star, r.cases[1].trials.capex_per_kw, rtol=1e-9)
    assert all(col.shared for col in r.design.columns)


def test_own_inputs_are_independent_unless_shared(tmp):
    # Without a shared declaration the two cases' identical inputs are each their own: the
    # same case twice then gives a ratio that varies (probability about 1/2 each way).
    a, b = _case(tmp, "a"), _case(tmp, "b")
    r = run_comparison([a, b], samples=400, seed=3, claim_ratio=1.0, sobol_base=0)
    assert 0.4 < r.claims[0].stats["prob_claim_holds"] < 0.6
    kinds = {c.dist.name: c.kind for c in r.design.columns}
    assert kinds["energy.resource [bundled weather]"] == "site"
    assert kinds["costs.capex_per_kw [a]"] == kinds["costs.capex_per_kw [b]"] == "run"


def test_finance_drawn_apart_gets_a_nudge_to_share_it(tmp):
    # a discount rate drawn for each case apart adds spread to the ratio that no technology
    # causes: the notes name it and point to --shared; declared once, the nudge goes
    a, b = _case(tmp, "a"), _case(tmp, "b")
    apart = run_comparison([a, b], samples=64, seed=3, sobol_base=0)
    nudge = [n for n in apart.notes if n.startswith("Finance inputs drawn for each case apart")]
    assert len(nudge) == 1
    assert "finance.discount_rate [a]" in nudge[0] and "finance.discount_rate [b]" in nudge[0]
    assert "--shared" in nudge[0]
    once = run_comparison([a, b], samples=64, seed=3, sobol_base=0,
                          shared=_shared("finance.discount_rate"))
    assert not [n for n in once.notes if n.startswith("Finance inputs drawn")]


def test_shared_and_case_specific_columns(tmp):
    # The design: a shared input -> one column; a case's own input -> one column per case,
    # labelled with the case; the site's resource factor is one column for both cases.
    a = _case(tmp, "a")
    b = _case(tmp, "b", uncertain=UNCERTAIN.replace("high = 1200", "high = 1500"))
    shared = _shared("finance.discount_rate", "plant.dc_loss_fraction")
    d = build_design(study_runs([a, b], shared), 200, 5, shared=shared)
    names = {c.dist.name: c for c in d.columns}
    assert names["finance.discount_rate"].shared
    assert names["energy.resource [bundled weather]"].shared
    assert "costs.capex_per_kw [a]" in names and "costs.capex_per_kw [b]" in names
    r = run_comparison([a, b], samples=200, seed=5, sobol_base=0, shared=shared)
    capex_a, capex_b = r.cases[0].trials.capex_per_kw, r.cases[1].trials.capex_per_kw
    assert abs(np.corrcoef(capex_a, capex_b)[0, 1]) < 0.2  # independent columns
    # Analytic: the minimal case has capex as its only cost, and the cases share every energy
    # and finance draw, so trial by trial the LCOE ratio is the capex ratio.
    np.testing.assert_allclose(r.claims[0].ratio, capex_b / capex_a, rtol=1e-12)


def test_breakeven_values_solve_the_claim_exactly(demo_case, demo_site):
    # Analytic: LCOE is affine in capex per kW and A/s + B in a factor s on the energy; the
    # solved capex and energy factor reproduce the target LCOE when put back into the finance.
    from lcoe.study.claim_ratio import (
        breakeven_capex_per_kw,
        breakeven_energy_scale,
        energy_scale_terms,
    )

    capex = np.array([800.0, 1000.0, 1300.0])
    out = evaluate(demo_case, demo_site, {"costs.capex_per_kw": capex,
                                          "costs.variable_om_per_kwh": np.full(3, 0.002)})
    lcoe = out.cashflow.lcoe_real
    probe = dict(out.params, **{"costs.capex_per_kw": capex + 100.0})
    slope = (cash_flow(demo_case, probe, out.energy).lcoe_real - lcoe) / 100.0
    target = np.array([0.05, 0.06, 0.04])
    c_star = breakeven_capex_per_kw(lcoe, capex, slope, target)
    at_star = cash_flow(demo_case, dict(out.params, **{"costs.capex_per_kw": c_star}),
                        out.energy).lcoe_real
    np.testing.assert_allclose(at_star, target, rtol=1e-10)
    from dataclasses import replace

    doubled = replace(out.energy, annual_kwh=2 * out.energy.annual_kwh)
    a, b = energy_scale_terms(lcoe, cash_flow(demo_case, out.params, doubled).lcoe_real)
    s = breakeven_energy_scale(a, b, target)
    scaled = replace(out.energy, annual_kwh=s * out.energy.annual_kwh)
    np.testing.assert_allclose(cash_flow(demo_case, out.params, scaled).lcoe_real, target,
                               rtol=1e-10)
    assert np.isinf(breakeven_energy_scale(a, b, b - 1e-6)).all()  # target below B: never


def test_reproducible_and_chunk_independent(tmp):
    a, b = _case(tmp, "a"), _case(tmp, "b", plant="dc_loss_fraction = 0.05")
    one = run_comparison([a, b], samples=50, seed=11, sobol_base=0, chunk_size=7)
    two = run_comparison([a, b], samples=50, seed=11, sobol_base=0, chunk_size=50)
    np.testing.assert_array_equal(one.claims[0].ratio, two.claims[0].ratio)


def test_sobol_of_the_ratio_names_the_case_specific_input(tmp):
    # Analytic expectation: the candidate differs from the baseline only in its capex
    # distribution; its ratio (a + b c1) / (a + b c0) moves with the two capex columns, while
    # shared inputs move both LCOEs alike and nearly cancel.
    a = _case(tmp, "a")
    b = _case(tmp, "b", uncertain=UNCERTAIN.replace("low = 900, mode = 1000, high = 1200",
                                                    "low = 600, mode = 800, high = 1300"))
    r = run_comparison([a, b], samples=16, seed=2, sobol_base=64,
                       shared=_shared("finance.discount_rate", "plant.dc_loss_fraction"))
    rows = {d["input"]: d for d in drivers(r.claims[0], top=10)}
    capex = rows["costs.capex_per_kw [b]"]["ST"] + rows["costs.capex_per_kw [a]"]["ST"]
    assert capex > 0.9
    assert rows["finance.discount_rate"]["ST"] < 0.1


@pytest.mark.parametrize("change,match", [
    ('currency = "EUR"', "currency"),
    ("", "name"),
])
def test_comparison_refuses_mixed_currency_or_same_names(tmp, change, match):
    a = _case(tmp, "a")
    text = MINIMAL_CASE.replace('name = "t"', 'name = "a"' if not change else 'name = "c"')
    text = text.replace("[case]", "[case]\n" + change) + UNCERTAIN
    b = load_case(write_case(tmp, text, "other.toml"))
    with pytest.raises(InputError, match=match):
        run_comparison([a, b], samples=10, sobol_base=0)


def test_conflicting_correlations_refused(tmp):
    pair = ('\n[[correlation]]\nbetween = ["costs.capex_per_kw", "finance.discount_rate"]\n'
            'rank = {r}\n')
    a = _case(tmp, "a", uncertain=UNCERTAIN + pair.format(r=0.3))
    b = _case(tmp, "b", uncertain=UNCERTAIN + pair.format(r=-0.3))
    with pytest.raises(InputError, match="correlation"):
        run_comparison([a, b], samples=10, sobol_base=0,
                       shared=_shared("costs.capex_per_kw", "finance.discount_rate"))


def test_claims_are_audited(tmp):
    # Published limit (Shockley & Queisser 1961, via lcoe.study.audit): 5,000 kWh/kW a year on
    # cells that receive about 1,700 kWh/m2 needs more than the one-sun limit.
    claim = "\n[claim]\nenergy_per_kw_kwh = 5000.0\nenergy_ratio = 1.05\nlcoe_ratio = 0.5\n"
    a, b = _case(tmp, "a"), _case(tmp, "b", extra=claim)
    r = run_comparison([a, b], samples=20, seed=1, sobol_base=0)
    found = {f["check"]: f for f in r.cases[1].audit}
    assert found["claim_energy_per_kw"]["verdict"] == "impossible"
    assert found["claim_energy_ratio"]["verdict"] == "ok"  # same plant: ratio 1 is possible
    assert found["claim_lcoe_ratio"]["verdict"] == "doubtful"
    assert r.claims[0].claim_ratio == 0.5  # taken from [claim] without --claim-ratio
    assert "claim_energy_per_kw" not in {f["check"] for f in r.cases[0].audit}
    # every finding says in words what it checks (the key is for JSON and the Key column)
    from lcoe.study.audit import CHECK_LABELS

    for f in r.cases[0].audit + r.cases[1].audit:
        assert f["label"] == CHECK_LABELS[f["check"]]


def _cli(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "lcoe.cli", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd)


def test_cli_compare_writes_outputs(tmp):
    a = _case(tmp, "a")
    b = _case(tmp, "b", extra="\n[claim]\nenergy_per_m2_kwh = 300.0\n",
              plant="tilt_deg = 35.0")
    out = tmp / "cmp"
    r = _cli("compare", a.source, b.source, "--out", out, "--samples", 40, "--sobol-ratio", 16,
             "--claim-ratio", 0.667)
    assert r.returncode == 0, r.stderr
    assert "Physics audit" in r.stdout and "holds in" in r.stdout
    data = json.loads((out / "comparison.json").read_text())
    cand = data["candidates"][0]
    for key in ("name", "lcoe_ratio", "prob_claim_holds", "breakeven_capex_per_kw_median",
                "breakeven_capex_per_kw_p90", "audit"):
        assert key in cand
    assert set(cand["lcoe_ratio"]) >= {"q10", "q50", "q90"}
    assert cand["claim_ratio"] == 0.667 and data["baseline"]["name"] == "a"
    assert {f["check"] for f in cand["audit"]} >= {"cell_efficiency", "claim_energy_per_cell_m2"}
    for name in ("lcoe_cumulative.png", "lcoe_ratio.png"):
        assert (out / name).read_bytes()[:4] == b"\x89PNG"
    from openpyxl import load_workbook

    wb = load_workbook(out / "comparison.xlsx")
    assert "Comparison" in wb.sheetnames and "Audit" in wb.sheetnames
    listed = list(wb["Trials"].iter_rows(min_row=2, values_only=True))
    assert [r[0] for r in listed] == list(range(1, 41))
    assert all(isinstance(v, float) and v > 0 for r in listed for v in r[1:])
    # a non-empty folder is refused without --force, with one line and exit status 2
    again = _cli("compare", a.source, b.source, "--out", out, "--samples", 10)
    assert again.returncode == 2 and again.stderr.count("\n") == 1


def test_cli_compare_needs_two_cases(tmp):
    a = _case(tmp, "a")
    r = _cli("compare", a.source, "--out", tmp / "one")
    assert r.returncode == 2 and "candidate" in r.stderr and "Traceback" not in r.stderr


def test_prepared_site_is_shared(tmp):
    from lcoe.study.trials import prepared

    a, b = _case(tmp, "a"), _case(tmp, "b", plant="tilt_deg = 30.0")
    s1, s2 = prepared(a)[0], prepared(b)[0]
    assert s1 is s2
    assert prepare(a).weather.n_hours == s1.weather.n_hours


def test_demo_compare_runs(tmp):
    # Frozen regression of the bundled claim test (invented scenario), at a few trials: the
    # vendor's vertical columns get far less light per m2 of cells than a tilted plane, so the
    # claim of a third cheaper power fails and the claimed energy ratio is impossible.
    out = tmp / "demo_cmp"
    r = _cli("demo", "--compare", "--samples", 30, "--sobol-ratio", 0, "--out", out,
             "--quiet")
    assert r.returncode == 0, r.stderr
    data = json.loads((out / "comparison.json").read_text())
    assert [c["mount"] for c in [data["baseline"], *data["candidates"]]] == \
        ["fixed", "single_axis", "body"]
    vendor = data["candidates"][1]
    assert vendor["claim_ratio"] == 0.667 and vendor["prob_claim_holds"] < 0.05
    verdicts = {f["check"]: f["verdict"] for f in vendor["audit"]}
    assert verdicts["claim_energy_ratio"] == "impossible"
    assert len(data["pairs"]) == 1  # the columns against the single-axis plant as well


def test_bifacial_rear_light_counts_in_the_audit_bounds():
    # the audit bounds a claimed energy ratio by the ratio of light on the cells; a bifacial
    # plant's cells also get bifaciality x rear irradiation, so the model's own energy ratio
    # against the same plant monofacial, stated as a claim, is within the bound ("ok")
    from lcoe.case.reader import load_case
    from lcoe.study.audit import audit_case, case_facts

    root = __import__("pathlib").Path(__file__).resolve().parent.parent
    mono = load_case(root / "inputs" / "lender_single_axis.toml")
    bif = mono.with_values({"plant.bifaciality": 0.8, "plant.rear_loss_fraction": 0.1})
    site = prepare(mono)
    facts = [case_facts(c, site, evaluate(c, site, {})) for c in (mono, bif)]
    per_m2 = [f["energy_kwh"] / f["cell_area_m2"] for f in facts]
    model_ratio = per_m2[1] / per_m2[0]
    assert model_ratio > 1.04  # a real rear gain
    assert facts[1]["poa_kwh_m2"] > facts[0]["poa_kwh_m2"]
    found = {f["check"]: f for f in audit_case(facts[1], {"energy_ratio": model_ratio,
                                                          "energy_per_kw_kwh": None,
                                                          "energy_per_m2_kwh": None,
                                                          "lcoe_ratio": None},
                                               baseline=facts[0])}
    assert found["claim_energy_ratio"]["verdict"] == "ok", found["claim_energy_ratio"]
