"""Value of information at the sites of a sweep."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from lcoe.study.value_of_information import site_inputs, sweep_site_voi, table_lines
from lcoe.uncertainty.voi import normal_evpi


def _result(n=4000, seed=0):
    # One site, two technologies: a shared input s (same draw) that moves both LCOEs alike,
    # and each technology's own capex-like input. LCOE_B - LCOE_A = 0.002 + 0.01 * (b - a)
    # with a, b independent N(0, 1): normal with sd 0.01 sqrt(2).
    rng = np.random.default_rng(seed)
    s, a, b = rng.normal(size=n), rng.normal(size=n), rng.normal(size=n)
    la, lb = 0.05 + 0.004 * s + 0.01 * a, 0.052 + 0.004 * s + 0.01 * b
    trials = {("here", "A"): SimpleNamespace(names=("shared", "capex"),
                                             X=np.column_stack([s, a]), lcoe_real=la),
              ("here", "B"): SimpleNamespace(names=("shared", "capex"),
                                             X=np.column_stack([s, b]), lcoe_real=lb),
              ("alone", "A"): SimpleNamespace(names=("shared",), X=s[:, None], lcoe_real=la)}
    sites = [SimpleNamespace(name="here"), SimpleNamespace(name="alone")]
    plan = SimpleNamespace(currency="USD", technologies=[
        SimpleNamespace(label=t, case_name=f"Plant {t}") for t in "AB"])
    return SimpleNamespace(trials=trials, sites=sites, plan=plan)


def test_site_inputs_merge_shared_draws_and_label_own_ones():
    r = _result(50)
    x, keys, labels = site_inputs({t: r.trials[("here", t)] for t in "AB"}, ["A", "B"])
    assert keys == labels == ["shared", "capex [A]", "capex [B]"] and x.shape == (50, 3)
    _, keys, labels = site_inputs({t: r.trials[("here", t)] for t in "AB"}, ["A", "B"],
                                  lambda n, t: (n.upper(), f"Plant {t}"))
    assert keys == ["shared", "capex [A]", "capex [B]"]
    assert labels == ["SHARED", "CAPEX [Plant A]", "CAPEX [Plant B]"]


def test_sweep_site_evpi_matches_the_normal_closed_form():
    # Analytic (Raiffa & Schlaifer 1961): INB of B over A = -(0.002 + 0.01 (b - a)) per kWh,
    # normal with mean -0.002 and sd 0.01 sqrt(2); the shared input does not touch it.
    rows = sweep_site_voi(_result(), n_boot=50)
    assert [r["site"] for r in rows] == ["here"]  # one technology: nothing to choose
    r = rows[0]
    exact = normal_evpi(-0.002, 0.01 * np.sqrt(2))
    assert r["evpi_per_kwh"] == pytest.approx(exact, rel=0.06)
    assert r["choice_now"] == "A"
    by = {e["name"]: e for e in r["evppi"]}
    assert set(by) >= {"capex [A]", "capex [B]"}
    assert by["capex [A]"]["label"] == "capex [Plant A]"  # technologies by case name
    assert table_lines(rows, "USD")[1].startswith("  here")


def test_cli_sweep_voi_writes_the_block(tmp_path):
    # Wiring: `lcoe sweep --voi` on the demo plan cut to one site and 60 trials puts one row
    # per site into sweep.json, with EVPI >= 0 up to rounding and the top inputs.
    import json
    import subprocess
    import sys

    from conftest import INPUTS, ROOT

    text = (INPUTS / "sweep_demo.toml").read_text()
    head, sites = text.split("[[sites]]", 1)
    one = "[[sites]]" + sites.split("[[sites]]")[0]
    head = head.replace("samples = 400", "samples = 60").replace("chunk_trials = 200",
                                                                 "chunk_trials = 60")
    plan = tmp_path / "plan.toml"
    plan.write_text(head.replace('"demo_fixed_tilt.toml"', f'"{INPUTS / "demo_fixed_tilt.toml"}"')
                    .replace('"tech_single_axis.toml"', f'"{INPUTS / "tech_single_axis.toml"}"')
                    .replace('"tech_fixed_dense.toml"', f'"{INPUTS / "tech_fixed_dense.toml"}"')
                    + one)
    p = subprocess.run([sys.executable, "-m", "lcoe.cli", "sweep", str(plan), "--out",
                        str(tmp_path / "o"), "--voi", "--quiet"], capture_output=True,
                       text=True, cwd=ROOT)
    assert p.returncode == 0, p.stderr
    rows = json.loads((tmp_path / "o" / "sweep.json").read_text())["value_of_information"]
    assert len(rows) == 1 and rows[0]["n_trials"] == 60 and len(rows[0]["options"]) == 3
    assert rows[0]["evpi_per_kwh"] > -1e-12 and rows[0]["evppi"]
    for e in rows[0]["evppi"]:  # the key for machines, a readable label with unit for people
        assert e["name"].split(" [")[0].count(".") == 1 and "." not in e["label"].split(" [")[0]
        assert "[" in e["label"]
