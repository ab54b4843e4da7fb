"""``lcoe run`` as a study: case -> site -> model -> results. Thin; computes nothing
itself and writes no file (the files are :func:`lcoe.export.run_outputs.write_outputs`).
"""

from __future__ import annotations

import datetime as _dt
import platform
import sys
from importlib import metadata
from pathlib import Path

from lcoe import __version__
from lcoe.case.plausibility import atypical_inputs
from lcoe.case.reader import Case, load_case
from lcoe.model import evaluate
from lcoe.study.defaults import DEFAULT_SAMPLES, DEFAULT_SEED, DEFAULT_SOBOL_BASE  # noqa: F401 (re-export)
from lcoe.study.results import RunResult

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
        from lcoe.case.readback import case_from_workbook

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
    from lcoe.model import load_weather_for
    from lcoe.study.progress import phase
    from lcoe.study.spec import read_spec
    from lcoe.study.trials import prepared

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
    from lcoe.plant.concentrator import cautions
    from lcoe.study.audit import audit_run

    notes = list(site_notes) + cautions(case) + [f"unusual input: {n}"
                                                 for n in atypical_inputs(case)]
    extras = {"audit": audit_run(case, site, base)}
    bank = None
    if "revenue" in case.sections:
        from lcoe.study.bankability import run_bankability

        phase(progress, "tax and debt")
        bank = run_bankability(case, base, spec)
        extras["bankability"] = bank
        if spec.energy_components.get("resource", 0.0) > 0:  # lender's value of information
            from lcoe.study.value_of_information import resource_information_value

            extras["resource_information"] = resource_information_value(case, base, spec)
    n = (DEFAULT_SAMPLES if not spec.is_empty else 0) if samples is None else samples
    if n:
        from lcoe.study.case_study import run_study

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
        from lcoe.study import SHARING_RULE
        from lcoe.study.headlines import deterministic_outside_band, sizing_against_sampled

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
