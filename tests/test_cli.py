"""The command line as a user meets it: exit codes, one-line errors, safe outputs."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest
from conftest import DEMO, MINIMAL_CASE, write_case

from lcoe.cli import main


def _run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "lcoe.cli", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd)


def test_run_writes_summary_and_workbook(tmp_path, capsys):
    out = tmp_path / "res"
    assert main(["run", str(DEMO), "--out", str(out), "--samples", "64",
                 "--sobol", "16"]) == 0
    printed = capsys.readouterr().out
    assert "LCOE real" in printed and "Performance ratio" in printed
    s = json.loads((out / "summary.json").read_text())
    for key in ("schema_version", "versions"):
        assert key in s
    assert s["case"]["name"] and len(s["case"]["sha256"]) == 64
    assert len(s["energy"]["monthly_kwh"]) == 12
    assert set(s["versions"]) >= {"lcoe", "pvlib", "numpy"}
    # DOMAIN.md section 6 sanity range for a sunny site with today's costs: 0.02-0.10 USD/kWh.
    assert 0.02 < s["lcoe"]["real_per_kwh"] < 0.10
    assert s["lcoe"]["nominal_per_kwh"] > s["lcoe"]["real_per_kwh"]
    assert 1200 < s["energy"]["specific_yield_kwh_per_kw"] < 1800
    assert (out / "workbook.xlsx").stat().st_size > 0


def test_non_empty_out_refused_without_force(tmp_path):
    out = tmp_path / "res"
    out.mkdir()
    (out / "mine.txt").write_text("user data")
    r = _run("run", DEMO, "--out", out, "--samples", "0")
    assert r.returncode == 2 and "not empty" in r.stderr and "Traceback" not in r.stderr
    assert sorted(p.name for p in out.iterdir()) == ["mine.txt"]
    # --force replaces a whole folder, so it refuses one holding files lcoe did not write
    r = _run("run", DEMO, "--out", out, "--force", "--quiet", "--samples", "0")
    assert r.returncode == 2 and r.stderr.count("\n") == 1 and "mine.txt" in r.stderr
    assert sorted(p.name for p in out.iterdir()) == ["mine.txt"]
    (out / "mine.txt").unlink()
    r = _run("run", DEMO, "--out", out, "--force", "--quiet", "--samples", "0")
    assert r.returncode == 0 and r.stdout == ""
    assert (out / "summary.json").is_file()


@pytest.mark.parametrize("old,new", [
    ("capex_per_kw = 1000.0", "capex_per_kw = -1.0"),
    ("[plant]", "[plant]\ntilt_dg = 20.0"),
    ("discount_rate = 0.07", "discount_rate = -1.5"),
])
def test_bad_case_exit_2_nothing_written(tmp_path, old, new):
    case = write_case(tmp_path, MINIMAL_CASE.replace(old, new))
    out = tmp_path / "res"
    r = _run("run", case, "--out", out)
    assert r.returncode == 2
    assert r.stderr.count("\n") == 1 and "case.toml" in r.stderr
    assert "Traceback" not in r.stderr
    assert not out.exists()
    assert [p.name for p in tmp_path.iterdir()] == ["case.toml"]


def test_check_and_new(tmp_path, capsys):
    assert main(["check", str(DEMO)]) == 0
    assert "valid" in capsys.readouterr().out
    path = tmp_path / "new.toml"
    assert main(["new", str(path)]) == 0
    assert main(["check", str(path)]) == 0
    assert main(["new", str(path)]) == 2  # refuses to overwrite
    assert main(["new", str(path), "--force"]) == 0


def test_missing_file(tmp_path):
    r = _run("run", tmp_path / "nope.toml", "--out", tmp_path / "o")
    assert r.returncode == 2 and "not found" in r.stderr


def test_demo_refreshes_its_own_folder(tmp_path):
    r1 = _run("demo", "--quiet", "--samples", "16", "--sobol", "8", cwd=tmp_path)
    r2 = _run("demo", "--quiet", "--samples", "16", "--sobol", "8", cwd=tmp_path)
    assert r1.returncode == 0 and r2.returncode == 0, r2.stderr
    assert (tmp_path / "outputs" / "demo" / "summary.json").is_file()


@pytest.mark.parametrize("script", ["quick_lcoe.py", "uncertainty_and_claim.py"])
def test_examples_run(script):
    # The examples in examples/ are part of the documentation: they must keep running.
    from conftest import ROOT

    r = subprocess.run([sys.executable, str(ROOT / "examples" / script)], capture_output=True,
                       text=True, cwd=ROOT)
    assert r.returncode == 0, r.stderr
    assert "LCOE" in r.stdout
