"""``lcoe sweep``: many sites x many technologies, each with its full Monte Carlo.

Orchestration only: the plan is read by :mod:`lcoe.study.plan`, the trials are drawn and
evaluated by the study layer (:mod:`lcoe.study`: one trial design, one sharing rule, one
executor), the files are written by :mod:`lcoe.export.sweep_outputs`.

Execution: serial in this process (``workers=1``, or when dask is not installed), on a local
dask.distributed cluster of worker processes bound to 127.0.0.1 (``workers > 1``), or on an
existing cluster (``scheduler="tcp://HOST:PORT"``). The numbers are bit-identical whichever way
the sweep runs and whatever the chunk size. A failed task is retried once; a site x technology
with a chunk that still fails is reported (site, technology, error) and left out of the table,
while the other results are written.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from lcoe.study import SHARING_RULE
from lcoe.study.executor import ATTEMPTS
from lcoe.study.plan import SweepPlan, load_plan
from lcoe.study.trials import evaluate_chunk, evaluate_runs

#: Percentiles of the table (a fraction of 1).
Q_LOW, Q_HIGH = 0.10, 0.90


@dataclass(frozen=True)
class RunSummary:
    """One row of the sweep table: a site x technology.

    Attributes
    ----------
    site, technology : str
    lcoe_real_q10, lcoe_real_q50, lcoe_real_q90 : float
        10th, 50th and 90th percentiles of the real LCOE [currency/kWh].
    lcoe_real_mean : float
        [currency/kWh]
    lcoe_nominal_q50 : float
        [currency/kWh]
    energy_p50_kwh, energy_p90_kwh : float
        One-year energy exceeded with 50 % and 90 % probability [kWh].
    prob_cheapest : float
        Fraction of trials in which this technology has the lowest real LCOE at the site,
        among the technologies that ran there [-].
    """

    site: str
    technology: str
    lcoe_real_q10: float
    lcoe_real_q50: float
    lcoe_real_q90: float
    lcoe_real_mean: float
    lcoe_nominal_q50: float
    energy_p50_kwh: float
    energy_p90_kwh: float
    prob_cheapest: float


@dataclass(frozen=True)
class SiteSummary:
    """A site and its cheapest technology.

    Attributes
    ----------
    name : str
    latitude_deg, longitude_deg : float
    cheapest : str or None
        Technology most often cheapest, trial by trial (None when nothing ran).
    prob_cheapest : float
        Its probability of being cheapest [-].
    cheapest_by_median : str or None
        Technology with the lowest median real LCOE.
    """

    name: str
    latitude_deg: float
    longitude_deg: float
    cheapest: str | None
    prob_cheapest: float
    cheapest_by_median: str | None


@dataclass(frozen=True)
class Failure:
    """A site x technology that did not complete.

    Attributes
    ----------
    site, technology : str
    chunk : int
        First chunk that failed.
    attempts : int
    error : str
        One line: the exception's type and message.
    """

    site: str
    technology: str
    chunk: int
    attempts: int
    error: str


@dataclass(frozen=True)
class RunTrials:
    """Every trial of one site x technology (in trial order).

    Attributes
    ----------
    names : tuple of str
        Sampled inputs (columns of ``X``).
    X : numpy.ndarray
        (n, d) input values.
    lcoe_real, lcoe_nominal, energy_kwh : numpy.ndarray
        (n,) [currency/kWh], [currency/kWh], [kWh].
    """

    names: tuple
    X: np.ndarray
    lcoe_real: np.ndarray
    lcoe_nominal: np.ndarray
    energy_kwh: np.ndarray


@dataclass(frozen=True)
class SweepResult:
    """Everything a sweep produced; the exporters read it and compute nothing.

    Attributes
    ----------
    plan : SweepPlan
    rows : list of RunSummary
        Completed runs in plan order.
    sites : list of SiteSummary
    failures : list of Failure
    trials : dict
        (site, technology) -> RunTrials.
    execution : str
        How the sweep ran (does not change the numbers).
    notes : list of str
    provenance : dict
        Versions, seed, command, date.
    elapsed_s : float
        Wall time of the evaluation [s].
    voi : list of dict
        Value of information per site (``--voi``;
        :func:`lcoe.study.value_of_information.sweep_site_voi`).
    """

    plan: SweepPlan
    rows: list
    sites: list
    failures: list
    trials: dict
    execution: str
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)
    elapsed_s: float = 0.0
    voi: list = field(default_factory=list)


def prob_cheapest(lcoe: np.ndarray) -> np.ndarray:
    """Probability of each technology being the cheapest, trial by trial.

    Parameters
    ----------
    lcoe : numpy.ndarray
        (n_trials, k) LCOE of k technologies at one site; row i is trial i of each, drawn by
        the one trial design [currency/kWh].

    Returns
    -------
    numpy.ndarray
        (k,) fraction of trials in which each column is the lowest (a tie goes to the first
        column) [-]; sums to 1.
    """
    lcoe = np.asarray(lcoe, dtype=float)
    if lcoe.ndim != 2 or lcoe.shape[0] == 0 or lcoe.shape[1] == 0:
        raise ValueError(f"lcoe has shape {lcoe.shape}: expected (n_trials >= 1, k >= 1)")
    wins = np.bincount(np.argmin(lcoe, axis=1), minlength=lcoe.shape[1])
    return wins / lcoe.shape[0]


def _sites_note(names: list, n_sites: int, note: str) -> str:
    where = "every site" if len(names) == n_sites and n_sites > 1 else \
        ("site " if len(names) == 1 else "sites ") + ", ".join(f"'{n}'" for n in names)
    return f"{where}: {note}"


def summarise(plan: SweepPlan, out) -> tuple[list, list, list, dict, list]:
    """Assemble the study's outputs into the table, the site summaries and the failures.

    Returns
    -------
    rows, sites, failures, trials, notes
    """
    failed = {m: Failure(site=plan.runs[m].site, technology=plan.runs[m].technology,
                         chunk=chunk, attempts=ATTEMPTS, error=err)
              for m, (chunk, err) in out.errors.items()}
    site_of = {r.label: plan.runs[i].site for i, r in enumerate(plan.study_runs)}
    notes = []
    for note, labels in out.site_notes.items():
        names = list(dict.fromkeys(site_of[label] for label in labels))
        notes.append(_sites_note(names, len(plan.sites), note))
    trials = {}
    for i, run in enumerate(plan.runs):
        o = out.outputs[i]
        if o is None:
            continue
        trials[(run.site, run.technology)] = RunTrials(
            names=tuple(plan.study_runs[i].spec.names), X=o["X"],
            lcoe_real=o["lcoe_real_per_kwh"], lcoe_nominal=o["lcoe_nominal_per_kwh"],
            energy_kwh=o["energy_kwh"])
    rows, sites = [], []
    for site in plan.sites:
        techs = [t.label for t in plan.technologies if (site.name, t.label) in trials]
        probs = prob_cheapest(np.column_stack([trials[(site.name, t)].lcoe_real
                                               for t in techs])) if techs else np.array([])
        medians = []
        for t, p in zip(techs, probs):
            tr = trials[(site.name, t)]
            q10, q50, q90 = np.quantile(tr.lcoe_real, (Q_LOW, 0.5, Q_HIGH))
            medians.append(q50)
            rows.append(RunSummary(
                site=site.name, technology=t, lcoe_real_q10=float(q10),
                lcoe_real_q50=float(q50), lcoe_real_q90=float(q90),
                lcoe_real_mean=float(tr.lcoe_real.mean()),
                lcoe_nominal_q50=float(np.quantile(tr.lcoe_nominal, 0.5)),
                energy_p50_kwh=float(np.quantile(tr.energy_kwh, 0.5)),
                energy_p90_kwh=float(np.quantile(tr.energy_kwh, Q_LOW)),  # exceeded 90 %
                prob_cheapest=float(p)))
        best = int(np.argmax(probs)) if techs else None
        sites.append(SiteSummary(
            name=site.name, latitude_deg=site.latitude_deg, longitude_deg=site.longitude_deg,
            cheapest=techs[best] if techs else None,
            prob_cheapest=float(probs[best]) if techs else 0.0,
            cheapest_by_median=techs[int(np.argmin(medians))] if techs else None))
        if techs and len(techs) < len(plan.technologies):
            notes.append(f"site '{site.name}': prob_cheapest compares only the technologies "
                         f"that completed ({', '.join(techs)})")
    return rows, sites, [failed[i] for i in sorted(failed)], trials, notes


def run_sweep(plan: SweepPlan | str | Path, workers: int = 1, scheduler: str | None = None,
              progress: Callable | None = None, fn: Callable = evaluate_chunk) -> SweepResult:
    """Run every site x technology of a plan.

    Parameters
    ----------
    plan : SweepPlan or path
    workers : int
        1 = serial in this process; more = local dask cluster with that many processes.
    scheduler : str, optional
        ``tcp://HOST:PORT`` of an existing dask scheduler.
    progress : callable, optional
        ``progress(done, total)`` over tasks.
    fn : callable
        Chunk evaluator (default :func:`lcoe.study.trials.evaluate_chunk`).

    Returns
    -------
    SweepResult
    """
    from lcoe.study.run import provenance

    if not isinstance(plan, SweepPlan):
        plan = load_plan(plan)
    t0 = time.perf_counter()
    out = evaluate_runs(plan.design, plan.study_runs, plan.chunk_trials, workers, scheduler,
                        progress, fn)
    elapsed = time.perf_counter() - t0
    rows, sites, failures, trials, run_notes = summarise(plan, out)
    return SweepResult(plan=plan, rows=rows, sites=sites, failures=failures, trials=trials,
                       execution=out.execution,
                       notes=[SHARING_RULE] + list(plan.notes) + run_notes + out.notes,
                       provenance=provenance(plan.seed), elapsed_s=elapsed)
