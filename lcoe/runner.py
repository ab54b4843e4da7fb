"""Orchestration: case -> site -> model -> results -> files. Thin; computes nothing itself."""

from __future__ import annotations

import datetime as _dt
import platform
import sys
from importlib import metadata
from pathlib import Path

from . import __version__
from .case import Case, load_case
from .defaults import DEFAULT_SAMPLES, DEFAULT_SEED, DEFAULT_SOBOL_BASE  # noqa: F401 (re-export)
from .model import evaluate
from .output import staged
from .plausibility import atypical_inputs
from .results import RunResult

#: Libraries whose versions are stored with every result.
VERSIONED = ("numpy", "pandas", "scipy", "pvlib", "SALib", "openpyxl", "matplotlib")


def versions() -> dict:
    """Versions of lcoe, Python and the libraries that shape the numbers."""
    out = {"lcoe": __version__, "python": platform.python_version()}
    for name in VERSIONED:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = None
    return out


def provenance(seed=None) -> dict:
    """Versions, seed, command line and UTC date of a run."""
    return {"versions": versions(), "seed": seed, "command": " ".join(sys.argv),
            "date_utc": _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")}



def read_case(case: Case | str | Path) -> Case:
    """A validated case from a case file or an edited workbook (``.xlsx``); a Case as is."""
    if isinstance(case, Case):
        return case
    if str(case).lower().endswith(".xlsx"):
        from .export.readback import case_from_workbook

        return case_from_workbook(case)
    return load_case(case)


def run_case(case: Case | str | Path, samples: int | None = None, seed: int = DEFAULT_SEED,
             sobol_base: int = DEFAULT_SOBOL_BASE, sobol_output: str = "lcoe_real_per_kwh",
             screen: bool = False, method: str = "lhs", chunk_size: int = 1000,
             progress=None, workers: int = 1, scheduler: str | None = None) -> RunResult:
    """Run a case: the deterministic case and, when it has uncertain inputs, the study.

    Parameters
    ----------
    case : Case or path
        A validated case or the path of a case file.
    samples : int, optional
        Monte Carlo trials; None = :data:`DEFAULT_SAMPLES` when the case has ``[uncertain]``
        tables; 0 = deterministic only.
    seed : int
        Seed of the one random generator (stored with the results).
    sobol_base : int
        Sobol base samples N (0 skips Sobol).
    sobol_output : str
        Output whose drivers are ranked.
    screen : bool
        Also run Morris screening.
    method : {"lhs", "random"}
        Sampling method of the Monte Carlo.
    chunk_size : int
        Trials per model call (memory bound; results do not depend on it).
    progress : callable, optional
        ``progress(stage, done, total)``; ``total == 0`` names a phase as it starts.
    workers : int
        Monte Carlo on a local dask cluster of that many worker processes (1 = serial).
    scheduler : str, optional
        Monte Carlo on an existing dask scheduler (``tcp://HOST:PORT``).

    Returns
    -------
    RunResult
    """
    from .model import load_weather_for
    from .progress import phase
    from .study.trials import prepared
    from .uncertainty.spec import read_spec

    case = read_case(case)
    spec = read_spec(case)
    phase(progress, "reading weather")
    weather = load_weather_for(case)
    phase(progress, "sun positions")
    # prepared for this run, then kept: the Monte Carlo (and forked workers) reuse it, with the
    # plane of array of every geometry it computes
    site, site_notes, _ = prepared(case, fresh=True, weather=weather)
    phase(progress, "energy and cash flow")
    base = evaluate(case, site, keep_hourly=True)  # one sample: the hourly arrays are small
    from .claims import audit_run
    from .tech.concentrator_model import cautions

    notes = list(site_notes) + cautions(case) + [f"unusual input: {n}"
                                                 for n in atypical_inputs(case)]
    extras = {"audit": audit_run(case, site, base)}
    bank = None
    if "revenue" in case.sections:
        from .bankability import run_bankability

        phase(progress, "tax and debt")
        bank = run_bankability(case, base, spec)
        extras["bankability"] = bank
        if spec.energy_components.get("resource", 0.0) > 0:  # lender's value of information
            from .lender_voi import resource_information_value

            extras["resource_information"] = resource_information_value(case, base, spec)
    n = (DEFAULT_SAMPLES if not spec.is_empty else 0) if samples is None else samples
    if n:
        from .study.case_study import run_study

        collectors = (bank.collector(case),) if bank is not None else ()
        targets = bank.sensitivity_targets(case) if bank is not None else None
        unc, sens = run_study(case, site, spec, n, seed, sobol_base, sobol_output, screen,
                              chunk_size, method, collectors=collectors, progress=progress,
                              targets=targets, workers=workers, scheduler=scheduler)
        extras["uncertainty"] = unc
        if sens is not None:
            extras["sensitivity"] = sens
        if bank is not None:
            bank.add_trials(unc.trials.outputs)
        from .study import SHARING_RULE
        from .study.headlines import deterministic_outside_band, sizing_against_sampled

        outside = deterministic_outside_band(float(base.cashflow.lcoe_real[0]),
                                             unc.trials.outputs["lcoe_real_per_kwh"],
                                             "real LCOE", f"{case['case.currency']}/kWh")
        notes += [outside] if outside else []
        if bank is not None:
            notes.append(sizing_against_sampled(
                float(base.energy.annual_kwh[0]), bank.factors, unc.exceedance.sampled,
                [c for c, _ in case.debt_sizing]))
        unc.notes.append(SHARING_RULE)
    return RunResult(case=case, site=site, base=base, notes=notes, extras=extras,
                     provenance=provenance(seed if n else None))


def write_outputs(result: RunResult, out_dir, force: bool = False,
                  replace_own: bool = False, progress=None, hourly: bool = False) -> Path:
    """Write ``summary.json``, ``workbook.xlsx``, the pictures (PNG) and ``report.html``.

    With an uncertainty study also ``trials.csv``; with ``hourly`` also every hour of the
    deterministic case (``hourly.parquet``, or ``hourly.csv`` when pyarrow is missing).
    ``out_dir`` is a folder, published whole in one rename (:func:`lcoe.output.publish`; a non-empty folder is refused unless
    ``force``), or the :class:`lcoe.output.Stage` of a command that already holds it.
    """
    from .progress import phase

    phase(progress, "writing outputs")
    from .export.plots import render_figures
    from .export.report import write_report
    from .export.summary import summary_json
    from .export.workbook import write_workbook

    with staged(out_dir, force=force, replace_own=replace_own) as out:
        out.write_text("summary.json", summary_json(result))
        out.write_with("workbook.xlsx", lambda p: write_workbook(result, p))
        if "uncertainty" in result.extras:
            from .export.trials import write_trials_csv

            out.write_with("trials.csv", lambda p: write_trials_csv(result, p))
        figures = render_figures(result)
        for name, png in figures.items():
            out.write_with(name, lambda p, png=png: p.write_bytes(png))
        out.write_with("report.html", lambda p: write_report(result, p, figures))
        if hourly:
            from .export.hourly import hourly_file_name, write_hourly

            out.write_with(hourly_file_name(), lambda p: write_hourly(result, p))
    return out.target
