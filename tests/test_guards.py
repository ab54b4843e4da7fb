"""Plausibility guards and regressions: a wrong answer never leaves with exit 0, a traceback never.

Every case here once ended in a traceback or in a result that breaks physics. Each either gives
exactly one line on stderr with exit status 2, or (where the input is legitimate) a result.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from conftest import INPUTS, MINIMAL_CASE

from lcoe.case.errors import MAX_LINE_CHARS, InputError, short_text
from lcoe.case.plausibility import PR_MAX, energy_problems
from lcoe.cli import main
from lcoe.plant.energy import EnergyResult
from lcoe.site.weather import bundled_weather_path, read_weather

FAST = ["--samples", "0", "--quiet", "--force"]


def run_cli(argv, capsys):
    """``lcoe`` in-process: (exit status, stdout, stderr)."""
    rc = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return rc, out, err


def one_line_error(rc, err, *needles):
    """Exit 2 with exactly one line on stderr holding every needle."""
    assert rc == 2, err
    lines = err.splitlines()
    assert len(lines) == 1 and lines[0].startswith("lcoe: error: "), err
    assert "Traceback" not in err
    for n in needles:
        assert n in lines[0], (n, lines[0])
    return lines[0]


def edited(tmp_path, src: Path, *subs, name="case.toml", append="") -> Path:
    """Copy of a bundled case with text substitutions (each must apply)."""
    text = src.read_text(encoding="utf-8")
    for old, new in subs:
        assert old in text, old
        text = text.replace(old, new)
    p = tmp_path / name
    p.write_text(text + append, encoding="utf-8")
    return p


def minimal(tmp_path, site_extra="", extra="", name="case.toml") -> Path:
    p = tmp_path / name
    p.write_text(MINIMAL_CASE.replace("[site]", "[site]\n" + site_extra) + extra,
                 encoding="utf-8")
    return p


def bundled_csv(tmp_path, mutate=None, name="w.csv") -> Path:
    """The bundled TMY3 year written as plain CSV (hour-start, UTC-05:00), optionally edited."""
    w = read_weather(bundled_weather_path())
    df = w.data.copy()
    df.insert(0, "timestamp", [t.isoformat() for t in df.index])
    df = df.reset_index(drop=True)
    if mutate is not None:
        df = mutate(df)
    p = tmp_path / name
    df.to_csv(p, index=False)
    return p


CSV_SITE = 'weather = "w.csv"\nweather_time_label = "start"\n'


# --- physics guards on results -------------------------------------------------------------
def test_drive_power_larger_than_production(tmp_path, capsys):
    case = edited(tmp_path, INPUTS / "compare_rotating_columns.toml",
                  ("drive_power_w = 15.0", "drive_power_w = 2000.0"))
    rc, _, err = run_cli(["run", case, "--out", tmp_path / "o"] + FAST, capsys)
    one_line_error(rc, err, "own consumption", "plant.body.drive_power_w = 2,000")
    assert not (tmp_path / "o").exists()


def test_tiny_module_efficiency_multiplies_bodies(tmp_path, capsys):
    case = edited(tmp_path, INPUTS / "compare_rotating_columns.toml",
                  ("module_efficiency = 0.215", "module_efficiency = 1e-6"))
    for cmd in (["check", case], ["run", case, "--out", tmp_path / "o"] + FAST):
        rc, _, err = run_cli(cmd, capsys)  # valid keys, but the result is impossible
        one_line_error(rc, err, "plant.module_efficiency = 1e-06")


def test_thermal_u0_near_zero(tmp_path, capsys):
    # once a raster overflow while plotting a loss chain of -3.5e12 kWh
    case = minimal(tmp_path, extra="", name="c.toml")
    text = case.read_text().replace("[plant]", "[plant]\nthermal_u0 = 1e-6\nthermal_u1 = 0.0")
    case.write_text(text)
    rc, _, err = run_cli(["run", case, "--out", tmp_path / "o"] + FAST, capsys)
    one_line_error(rc, err, "cell temperature", "plant.thermal_u0 = 1e-06")


def test_decommissioning_1e300(tmp_path, capsys):
    case = edited(tmp_path, INPUTS / "demo_fixed_tilt.toml",
                  ("decommissioning_per_kw = 30.0", "decommissioning_per_kw = 1e300"))
    rc, _, err = run_cli(["run", case, "--out", tmp_path / "o"] + FAST, capsys)
    one_line_error(rc, err, "absurd", "costs.decommissioning_per_kw = 1e+300")


def test_salvage_larger_than_costs(tmp_path, capsys):
    case = edited(tmp_path, INPUTS / "demo_fixed_tilt.toml",
                  ("salvage_per_kw = 0.0", "salvage_per_kw = 1e9"))
    rc, _, err = run_cli(["run", case, "--out", tmp_path / "o"] + FAST, capsys)
    one_line_error(rc, err, "LCOE is negative", "costs.salvage_per_kw = 1e+09")


def test_monte_carlo_stops_on_impossible_trials(tmp_path, capsys):
    # decision: trials are never dropped; the run stops with one line naming the inputs
    case = edited(tmp_path, INPUTS / "demo_fixed_tilt.toml", append=(
        '\n[uncertain."costs.salvage_per_kw"]\ndist = "uniform"\nlow = 0\nhigh = 2e5\n'))
    rc, _, err = run_cli(["run", case, "--out", tmp_path / "o", "--samples", "40",
                          "--sobol", "0", "--quiet"], capsys)
    line = one_line_error(rc, err, "LCOE is negative", "costs.salvage_per_kw =",
                          "of 40 trials fail the plausibility check", "narrow the [uncertain]")
    n_bad = int(line.split("the run failed: ")[1].split(" of 40")[0])
    assert 0 < n_bad < 40
    assert not (tmp_path / "o").exists()


def test_monte_carlo_counts_impossible_trials_over_the_whole_run(tmp_path):
    # the count in the error is that of the run, not of the chunk where a failure was met:
    # the trials do not depend on the chunk size, so 4 chunks of 10 give the count of 1 of 40
    from lcoe.case.reader import load_case
    from lcoe.model import prepare
    from lcoe.study.single import monte_carlo
    from lcoe.study.spec import read_spec

    case = load_case(edited(tmp_path, INPUTS / "demo_fixed_tilt.toml", append=(
        '\n[uncertain."costs.salvage_per_kw"]\ndist = "uniform"\nlow = 0\nhigh = 2e5\n')))
    site, spec = prepare(case), read_spec(case)
    lines = []
    for chunk in (40, 10):
        with pytest.raises(InputError) as exc:
            monte_carlo(case, site, spec, 40, seed=7, chunk_size=chunk)
        lines.append(str(exc.value))
    counts = [int(x.split("the run failed: ")[1].split(" of 40 trials")[0]) for x in lines]
    assert counts[0] == counts[1]
    assert 10 < counts[1] < 40  # more than one chunk holds failing trials
    assert lines[0] == lines[1]


def test_implausible_error_counts_checked_trials_only():
    # a chunk that failed for another reason is not counted as checked, and is said
    from lcoe.study.trials import implausible_error

    parts = [{"trials": 10}, {"implausible": (3, 10, "trial 12 (x = 1): bad")},
             None, {"implausible": (2, 5, "trial 31 (x = 2): bad")}]
    assert implausible_error(parts).startswith(
        "5 of 25 trials fail the plausibility check (1 chunk of trials failed otherwise); "
        "the first, trial 12 (x = 1): bad; no trial is dropped")


def test_performance_ratio_above_one_is_refused():
    # PR = Yf / Yr (IEC 61724-1) above 1.05 cannot come from real modules: analytic case of a
    # plant delivering 1,300 kWh/kW from 1,200 kWh/m2 on the plane.
    chain = {k: np.array([1.3e6]) for k in ("poa_kwh", "after_iam_kwh", "after_temperature_kwh",
                                            "after_dc_losses_kwh", "after_inverter_kwh",
                                            "after_clipping_kwh", "after_ac_losses_kwh",
                                            "after_availability_kwh", "delivered_kwh")}
    e = EnergyResult(annual_kwh=np.array([1.3e6]), monthly_kwh=np.zeros((1, 12)),
                     yearly_kwh=np.zeros((1, 1)), loss_chain_kwh=chain,
                     poa_kwh_m2=np.array([1200.0]), dc_capacity_kw=np.array([1000.0]))
    bad, checks = energy_problems("fixed", e, {"plant.thermal_u0": np.array([25.0])})
    assert bad[0] and e.performance_ratio[0] > PR_MAX
    text = next(t(0) for m, t in checks if m[0])
    assert "performance ratio 1.083" in text and "kelvin" in text


# --- traceback regressions -------------------------------------------------------------------
def test_negative_tariff_escalation_in_lender_demo(tmp_path, capsys):
    case = edited(tmp_path, INPUTS / "lender_single_axis.toml",
                  ("tariff_escalation = 0.02", "tariff_escalation = -0.05"))
    rc, _, err = run_cli(["run", case, "--out", tmp_path / "o", "--samples", "30", "--sobol",
                          "0", "--quiet"], capsys)
    assert rc == 0 and err == ""
    assert (tmp_path / "o" / "summary.json").is_file()


def test_resource_sd_0_4_in_lender_demo(tmp_path, capsys):
    # once KeyError 'min_dscr' while writing the workbook (a P99 sizing case with no debt)
    case = edited(tmp_path, INPUTS / "lender_single_axis.toml",
                  ("resource_sd = 0.05", "resource_sd = 0.4"))
    rc, _, err = run_cli(["run", case, "--out", tmp_path / "o", "--samples", "30",
                          "--sobol", "0", "--quiet"], capsys)
    assert rc == 0 and err == "", err
    bank = json.loads((tmp_path / "o" / "summary.json").read_text(encoding="utf-8"))[
        "bankability"]
    # P99 at 40 % resource uncertainty leaves negative CFADS: the case carries no debt, says why
    assert bank["debt"] == 0.0 and bank["min_dscr"] is None
    assert bank["no_debt_reason"].startswith("no debt can be carried")
    assert (tmp_path / "o" / "workbook.xlsx").is_file()


@pytest.mark.parametrize("n", [2, 13])
def test_too_few_samples_for_correlations(tmp_path, capsys, n):
    rc, _, err = run_cli(["run", INPUTS / "demo_fixed_tilt.toml", "--out", tmp_path / "o",
                          "--samples", n, "--sobol", "0", "--quiet"], capsys)
    one_line_error(rc, err, f"--samples {n}", "--samples 14 or more")


def test_dollar_signs_in_names_are_text_in_plots(tmp_path, capsys):
    case = edited(tmp_path, INPUTS / "demo_fixed_tilt.toml",
                  ('name = "Larkspur 20 MW fixed tilt"', 'name = "Larkspur $\\\\frac{1}{ $"'),
                  ('currency = "USD"', 'currency = "$^$"'))
    rc, _, err = run_cli(["run", case, "--out", tmp_path / "o", "--samples", "20", "--sobol",
                          "0", "--quiet"], capsys)
    assert rc == 0 and err == ""
    assert (tmp_path / "o" / "lcoe_distribution.png").stat().st_size > 1000


def test_lognormal_high_not_positive(tmp_path, capsys):
    case = edited(tmp_path, INPUTS / "demo_fixed_tilt.toml",
                  ("sigma = 0.35, high = 0.02", "sigma = 0.35, high = -0.01"))
    rc, _, err = run_cli(["check", case], capsys)
    one_line_error(rc, err, "high", "lognormal values are positive")


def test_new_template_with_short_life_and_no_debt(tmp_path, capsys):
    # item 4: an unused default tenor (18) or recovery period (20) never refuses a 15-year life
    p = tmp_path / "new.toml"
    assert run_cli(["new", p], capsys)[0] == 0
    text = p.read_text()
    text = "\n".join("lifetime_years = 15" if line.startswith("lifetime_years") else line
                     for line in text.splitlines())
    p.write_text(text + '\n[revenue]\ntariff_per_kwh = 0.07\n')
    rc, out, err = run_cli(["check", p], capsys)
    assert rc == 0 and "valid" in out, err
    p.write_text(text + '\n[debt]\ntenor_years = 18\n')
    rc, _, err = run_cli(["check", p], capsys)
    one_line_error(rc, err, "debt.tenor_years = 18", "case.lifetime_years (15)")


def test_short_life_names_tax_keys(tmp_path, capsys):
    # once "depreciation_schedule: n_years = 1" (internal names)
    case = edited(tmp_path, INPUTS / "lender_single_axis.toml",
                  ("lifetime_years = 30", "lifetime_years = 3"),
                  ("tenor_years = 18", "tenor_years = 3"),
                  ("contract_years = 20", "contract_years = 3"),
                  ("every_years = 15", "every_years = 2"))
    rc, _, err = run_cli(["check", case], capsys)
    line = one_line_error(rc, err, "tax.depreciation = 'accelerated_5yr'",
                          "case.lifetime_years (3)")
    assert "depreciation_schedule" not in line and "n_years" not in line


# --- weather files ---------------------------------------------------------------------------
def test_csv_with_only_a_header(tmp_path, capsys):
    (tmp_path / "w.csv").write_text("timestamp,ghi,dni,dhi,temp_air,wind_speed\n")
    rc, _, err = run_cli(["check", minimal(tmp_path, CSV_SITE)], capsys)
    one_line_error(rc, err, "w.csv", "no data rows")


def test_epw_without_data_rows(tmp_path, capsys):
    header = ["LOCATION,Town,ST,USA,TMY3,723170,36.1,-79.95,-5.0,273.0",
              "DESIGN CONDITIONS,0", "TYPICAL/EXTREME PERIODS,0", "GROUND TEMPERATURES,0",
              "HOLIDAYS/DAYLIGHT SAVINGS,No,0,0,0", "COMMENTS 1,x", "COMMENTS 2,x",
              "DATA PERIODS,1,1,Data,Sunday, 1/ 1,12/31"]
    (tmp_path / "w.epw").write_text("\n".join(header) + "\n")
    rc, _, err = run_cli(["check", minimal(tmp_path, 'weather = "w.epw"\n')], capsys)
    one_line_error(rc, err, "w.epw", "no data rows")


def test_timestamp_with_malformed_offset(tmp_path, capsys):
    def bad(df):
        df.loc[100, "timestamp"] = df.loc[100, "timestamp"] + "0"  # -05:00 -> -05:000
        return df

    bundled_csv(tmp_path, bad)
    rc, _, err = run_cli(["check", minimal(tmp_path, CSV_SITE)], capsys)
    one_line_error(rc, err, "row 102", "-05:000", "malformed UTC offset")


def test_weather_path_symlink_loop(tmp_path, capsys):
    os.symlink(tmp_path / "b.csv", tmp_path / "a.csv")
    os.symlink(tmp_path / "a.csv", tmp_path / "b.csv")
    case = minimal(tmp_path, 'weather = "a.csv"\nweather_time_label = "start"\n')
    rc, _, err = run_cli(["check", case], capsys)
    one_line_error(rc, err, "a.csv", "cannot open the weather file")


def test_weather_path_with_nul_byte(tmp_path, capsys):
    case = minimal(tmp_path, 'weather = "a\\u0000b.csv"\nweather_time_label = "start"\n')
    rc, _, err = run_cli(["check", case], capsys)
    line = one_line_error(rc, err, "site.weather", "no NUL byte")
    assert "\x00" not in line and "\\x00" in line


def test_weather_path_too_long(tmp_path, capsys):
    case = minimal(tmp_path, f'weather = "{"x" * 300}.csv"\nweather_time_label = "start"\n')
    rc, _, err = run_cli(["check", case], capsys)
    line = one_line_error(rc, err, "cannot open the weather file")
    assert len(line) < 300


@pytest.mark.skipif(not Path("/proc/self/environ").exists(), reason="needs /proc")
def test_proc_environ_as_weather_never_printed(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("LCOE_TEST_SECRET", "do-not-print-me")
    for label in ('weather_time_label = "start"\n', ""):
        case = minimal(tmp_path, 'weather = "/proc/self/environ"\n' + label)
        rc, _, err = run_cli(["check", case], capsys)
        one_line_error(rc, err, "environ")
        assert "do-not-print-me" not in err and "PATH=" not in err


def test_temperature_in_kelvin(tmp_path, capsys):
    bundled_csv(tmp_path, lambda d: d.assign(temp_air=d.temp_air + 273.15))
    rc, _, err = run_cli(["check", minimal(tmp_path, CSV_SITE)], capsys)
    one_line_error(rc, err, "row 2: temp_air = ", "kelvin")


def test_temperature_in_fahrenheit(tmp_path, capsys):
    bundled_csv(tmp_path, lambda d: d.assign(temp_air=d.temp_air * 1.8 + 32))
    rc, _, err = run_cli(["check", minimal(tmp_path, CSV_SITE)], capsys)
    one_line_error(rc, err, "temp_air", "Fahrenheit")


def test_diffuse_five_times_global(tmp_path, capsys):
    bundled_csv(tmp_path, lambda d: d.assign(dhi=d.ghi * 5))
    rc, _, err = run_cli(["check", minimal(tmp_path, CSV_SITE)], capsys)
    one_line_error(rc, err, "dhi = ", "is above ghi")


def test_beam_and_diffuse_swapped(tmp_path, capsys):
    bundled_csv(tmp_path, lambda d: d.assign(dni=d.dhi, dhi=d.dni.clip(upper=d.ghi)))
    rc, _, err = run_cli(["check", minimal(tmp_path, CSV_SITE)], capsys)
    one_line_error(rc, err, "dni x cos(zenith) + dhi", "do not add up")


def test_irradiance_at_night(tmp_path, capsys):
    # the timestamps written 12 h off (a wrong offset or hour label) put the sun at night
    bundled_csv(tmp_path, lambda d: d.assign(**{c: np.roll(d[c].to_numpy(), 12)
                                               for c in ("ghi", "dni", "dhi")}))
    rc, _, err = run_cli(["check", minimal(tmp_path, CSV_SITE)], capsys)
    one_line_error(rc, err, "below the horizon", "UTC offset")


def test_8784_rows_in_a_non_leap_year(tmp_path, capsys):
    def extra_day(df):
        tail = df.iloc[:24].copy()
        tail["timestamp"] = [(pd.Timestamp(t) + pd.DateOffset(years=1)).isoformat()
                             for t in tail.timestamp]
        return pd.concat([df, tail], ignore_index=True)

    bundled_csv(tmp_path, extra_day)
    rc, _, err = run_cli(["check", minimal(tmp_path, CSV_SITE)], capsys)
    one_line_error(rc, err, "row 8762", "8784 hourly rows", "not a leap year")


@pytest.mark.parametrize("path", ["723170TYA.CSV", "703165TY.csv"])
def test_bundled_pvlib_weather_still_passes(tmp_path, capsys, path):
    import pvlib

    w = read_weather(Path(pvlib.__file__).parent / "data" / path)
    site = (f"latitude_deg = {w.latitude_deg}\nlongitude_deg = {w.longitude_deg}\n"
            f"altitude_m = {w.altitude_m}\nweather = \"{w.source}\"\n")
    text = MINIMAL_CASE.replace("latitude_deg = 36.1\nlongitude_deg = -79.95\n"
                                "altitude_m = 273.0\n", site)
    (tmp_path / "c.toml").write_text(text)
    rc, out, err = run_cli(["run", tmp_path / "c.toml", "--out", tmp_path / "o"] + FAST,
                           capsys)
    assert rc == 0 and err == "", err


def test_bundled_plain_csv_year_passes(tmp_path, capsys):
    bundled_csv(tmp_path)
    rc, _, err = run_cli(["check", minimal(tmp_path, CSV_SITE)], capsys)
    assert rc == 0, err


# --- error lines ---------------------------------------------------------------------------
def test_long_values_are_cut(tmp_path, capsys):
    p = minimal(tmp_path)
    p.write_text(p.read_text().replace("[plant]", f'[plant]\nmount = "{"y" * 100_000}"'))
    rc, _, err = run_cli(["check", p], capsys)
    line = one_line_error(rc, err, "plant.mount = 'yyy", "...")
    assert len(line) < 400


def test_error_line_is_one_line_and_bounded():
    e = InputError("a\nb\tc\x1b[31m" + "z" * 5000)
    assert "\n" not in str(e) and "\x1b" not in str(e) and len(str(e)) <= MAX_LINE_CHARS
    assert short_text("p" * 100) == "p" * 38 + "..." + "p" * 39


def test_workbook_with_an_over_long_weather_path(tmp_path, capsys):
    # found by the workbook fuzz: a 300-character site.weather typed into the Inputs sheet
    import openpyxl

    assert run_cli(["run", INPUTS / "demo_fixed_tilt.toml", "--out", tmp_path / "o"] + FAST,
                   capsys)[0] == 0
    wb = openpyxl.load_workbook(tmp_path / "o" / "workbook.xlsx")
    ws = wb["Inputs"]
    row = next(c.row for c in ws["A"] if c.value == "site.weather")
    ws.cell(row=row, column=2, value="x" * 300)
    wb.save(tmp_path / "edited.xlsx")
    rc, _, err = run_cli(["run", tmp_path / "edited.xlsx", "--out", tmp_path / "o2"] + FAST,
                         capsys)
    one_line_error(rc, err, "cannot open the weather file")
