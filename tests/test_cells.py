"""CSV safety: text that a spreadsheet would read as a formula is neutralised in every CSV, the
way the workbook writer does it; numbers stay numbers."""

from __future__ import annotations

import csv
from types import SimpleNamespace

import numpy as np
import pytest

from lcoe.export.cells import FORMULA_START, csv_cell, neutral_text, write_csv

HOSTILE = ["=HYPERLINK(\"http://x\",\"click\")", "@SUM(A1:A9)", "+1+cmd|' /C calc'!A0",
           "-2+3", "\tTAB", "\rCR"]


@pytest.mark.parametrize("text", HOSTILE)
def test_formula_like_text_is_neutralised(text):
    assert neutral_text(text) == "'" + text


def test_numbers_stay_numbers_and_plain_text_is_untouched():
    assert csv_cell(-0.5) == -0.5 and csv_cell(np.float64(-1e300)) == -1e300
    assert csv_cell(np.int64(-3)) == -3
    assert csv_cell(True) == "True" and csv_cell(None) == ""
    assert csv_cell("Site A (north)") == "Site A (north)"
    assert csv_cell("-5") == "'-5"  # text that looks like a number is still text


def test_workbook_and_csv_share_one_rule():
    from lcoe.export import cells as workbook

    assert workbook.FORMULA_START is FORMULA_START


def test_sweep_csv_names_are_neutralised_numbers_are_not(tmp_path):
    # Regression (issue 12, item 5): site and technology names went raw into sweep.csv.
    from lcoe.export.sweep_outputs import table_header, write_sweep_csv

    row = SimpleNamespace(site=HOSTILE[0], technology=HOSTILE[1], lcoe_real_q10=-0.01,
                          lcoe_real_q50=0.05, lcoe_real_q90=0.07, energy_p50_kwh=1.5e6,
                          energy_p90_kwh=1.4e6, prob_cheapest=1.0, lcoe_real_mean=0.05,
                          lcoe_nominal_q50=0.06)
    plan = SimpleNamespace(
        currency="USD", technologies=(SimpleNamespace(label=HOSTILE[1], case_name=HOSTILE[1]),),
        runs=(SimpleNamespace(site=HOSTILE[0], technology=HOSTILE[1],
                              raw={"plant": {"dc_capacity_kw": 1000.0}}),))
    result = SimpleNamespace(rows=[row], plan=plan)
    path = tmp_path / "sweep.csv"
    write_sweep_csv(result, path)
    header, got = list(csv.reader(path.open(encoding="utf-8")))
    assert header == table_header(result)
    assert got[:2] == ["'" + HOSTILE[0], "'" + HOSTILE[1]]
    assert [float(x) for x in got[2:]] == [-0.01, 0.05, 0.07, 0.06, 1500.0, 1400.0, 1500, 1400,
                                           1.0]
    assert got[2] == "-0.01"  # a negative number is written as a number


def test_trials_csv_is_numeric_with_one_header(tmp_path):
    from lcoe.export.trials_csv import write_trials_csv

    names = ("costs.capex_per_kw", "=evil")
    x = np.array([[1.0, -2.0], [3.0, 4.0], [5.0, 6.0]])
    t = SimpleNamespace(n=3, names=names, inputs=lambda a, b: x[a:b],
                        outputs={"lcoe_real_per_kwh": np.array([-0.1, 0.2, 0.3])},
                        physics_kwh=np.array([1.0, 2.0, 3.0]))
    result = SimpleNamespace(extras={"uncertainty": SimpleNamespace(trials=t)})
    path = tmp_path / "trials.csv"
    write_trials_csv(result, path)
    lines = path.read_text(encoding="utf-8").split("\n")
    assert lines[0] == "trial,costs.capex_per_kw,'=evil,lcoe_real_per_kwh,energy_physics_kwh"
    assert lines[1] == "0,1,-2,-0.1,1" and lines[-1] == ""
    assert "\r" not in path.read_text(encoding="utf-8")


def test_trials_csv_numbers_are_written_as_numpy_savetxt_writes_them(tmp_path, monkeypatch):
    # rows formatted a block at a time: the same text as numpy.savetxt a row at a time, also
    # across block edges and for values that are not finite
    import io

    from lcoe.export import trials_csv

    monkeypatch.setattr(trials_csv, "ROWS", 7)
    rng = np.random.default_rng(3)
    n = 23
    X = rng.normal(size=(n, 2)) * 10.0 ** rng.integers(-12, 12, size=(n, 2))
    X[2, 0], X[9, 1], X[16, 0] = np.nan, np.inf, -np.inf
    t = SimpleNamespace(n=n, names=("a", "b"), inputs=lambda a, b: X[a:b],
                        outputs={"y": rng.normal(size=n)},
                        physics_kwh=rng.uniform(1e6, 1e8, size=n))
    result = SimpleNamespace(extras={"uncertainty": SimpleNamespace(trials=t)})
    path = tmp_path / "trials.csv"
    trials_csv.write_trials_csv(result, path)
    header = trials_csv.trials_header(result)
    values = trials_csv.trials_block(result, 0, n)
    want = io.StringIO()
    np.savetxt(want, values, delimiter=",", fmt=["%d"] + ["%.10g"] * (values.shape[1] - 1))
    assert path.read_text(encoding="utf-8") == ",".join(header) + "\n" + want.getvalue()


def test_write_csv_round_trips(tmp_path):
    path = tmp_path / "x.csv"
    write_csv(path, ["name", "value"], [["@a", -1.25], ["b,c", 2]])
    assert list(csv.reader(path.open(encoding="utf-8"))) == [
        ["name", "value"], ["'@a", "-1.25"], ["b,c", "2"]]
