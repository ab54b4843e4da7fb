"""The study of one case (``lcoe run``): Monte Carlo trials, energy exceedance, model function.

The trials are drawn by the study's trial design (:mod:`lcoe.study.design`: one seed, blocks
of trials each from its own ``SeedSequence`` child, so results never depend on the chunk size
or on which process evaluates a chunk) and evaluated by :func:`lcoe.study.trials.evaluate_runs`
through the one vectorised model, serially or on dask workers.

Energy uncertainty follows lenders' practice: persistent components (long-term resource, yield
model, ...) are drawn once per trial; the year-to-year weather factor is drawn independently for
each operating year of each trial. With a weather file of several calendar years the
year-to-year factor is the ratio of a drawn year's energy to the file's mean (the spread comes
from the file itself); otherwise it is normal with the case's ``interannual_cov``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from lcoe.case.errors import ImplausibleResult, InputError
from lcoe.case.reader import Case
from lcoe.model import ModelOutput, Site, evaluate
from lcoe.study.design import build_design
from lcoe.study.spec import UncertainSpec
from lcoe.study.trials import (
    CHUNK_TRIALS,
    StudyRun,
    evaluate_runs,
    failure_error,
    prepared,
    split_inputs,
    trial_text,
)
from lcoe.uncertainty.stats import Z90, Z99

#: Outputs collected from every trial, with their units.
OUTPUTS = {
    "lcoe_real_per_kwh": "currency/kWh",
    "lcoe_nominal_per_kwh": "currency/kWh",
    "npv_costs": "currency",
    "energy_first_year_kwh": "kWh",
}
#: Outputs that Sobol/tornado may target (scalar, no year-to-year noise in those designs).
SENSITIVITY_TARGETS = ("lcoe_real_per_kwh", "lcoe_nominal_per_kwh", "npv_costs",
                       "energy_first_year_kwh")
#: Outputs of a chunk that are kept apart from :attr:`Trials.outputs`.
_STRUCTURAL = ("X", "physics_kwh", "persistent_factor", "energy_factors", "energy_kwh",
               "dc_capacity_kw", "cell_area_m2", "land_area_m2")

Collector = Callable[[ModelOutput, dict, slice], dict]


@dataclass(frozen=True)
class Trials:
    """Inputs and outputs of every Monte Carlo trial.

    Attributes
    ----------
    names : list of str
        Sampled input names (columns of ``X``).
    X : numpy.ndarray
        (n, d) sampled input values.
    outputs : dict of str to numpy.ndarray
        :data:`OUTPUTS` and collector outputs, each (n,) or (n, k).
    energy_factors : numpy.ndarray
        (n, N) year-by-year energy multipliers (persistent x year-to-year).
    persistent_factor : numpy.ndarray
        (n,) product of the persistent energy components.
    physics_kwh : numpy.ndarray
        (n,) average-year energy from the hourly physics alone [kWh].
    seed : int or None
    method : str
        Sampling method.
    """

    names: list
    X: np.ndarray
    outputs: dict
    energy_factors: np.ndarray
    persistent_factor: np.ndarray
    physics_kwh: np.ndarray
    seed: int | None
    method: str

    @property
    def n(self) -> int:
        return self.X.shape[0]


def interannual_cov(trials: Trials) -> float:
    """Year-to-year CoV actually used (sample estimate over all trial-years) [-]."""
    f = trials.energy_factors / trials.persistent_factor[:, None]
    return float(f.std(ddof=1)) if f.size > 1 else 0.0


def single_run(case: Case, spec: UncertainSpec, collectors: tuple = ()) -> StudyRun:
    """The one run of a single-case study."""
    return StudyRun(label=case.name, case_label=case.name, site=case.name, case=case,
                    spec=spec, collectors=tuple(collectors))


def monte_carlo(case: Case, site: Site, spec: UncertainSpec, n: int, seed: int | None,
                method: str = "lhs", chunk_size: int = CHUNK_TRIALS, collectors: tuple = (),
                progress: Callable[[int, int], None] | None = None, workers: int = 1,
                scheduler: str | None = None) -> tuple[Trials, list]:
    """Run ``n`` trials of the case with its uncertain inputs.

    Parameters
    ----------
    case : Case
    site : Site
        The prepared site (kept for the callers' deterministic run; the trials prepare the
        site once per process).
    spec : UncertainSpec
    n : int
        Number of trials (>= 2).
    seed : int
        Seed of the study (None draws one from fresh entropy and stores it).
    method : {"lhs", "random"}
        Latin hypercube (default) or plain random sampling, within each block of trials.
    chunk_size : int
        Trials per task (memory bound, unit of parallel work); results do not depend on it.
    collectors : tuple of callables
        ``collector(model_output, params, chunk_slice) -> dict of arrays (n_chunk, ...)``,
        extra per-trial outputs (e.g. the project-finance layer).
    progress : callable, optional
        ``progress(done, total)`` in trials.
    workers : int
        1 = serial in this process; more = a local dask cluster of that many processes.
    scheduler : str, optional
        ``tcp://HOST:PORT`` of an existing dask scheduler.

    Returns
    -------
    trials : Trials
    notes : list of str
    """
    if n < 2:
        raise InputError(f"--samples {n}: expected at least 2 trials")
    if seed is None:
        seed = int(np.random.SeedSequence().generate_state(1)[0])
    d = len(spec.dists)
    if spec.corr is not None and n <= d and not np.allclose(spec.corr, np.eye(d)):
        raise InputError(f"--samples {n}: the [[correlation]] tables of {case.source} need "
                         f"more Monte Carlo trials than uncertain inputs ({d}); expected "
                         f"--samples {d + 1} or more")
    run = single_run(case, spec, collectors)
    design = build_design([run.member()], n, seed, method, source=case.source)
    chunks = max(1, -(-n // chunk_size))
    tick = (lambda done, total: progress(min(n, done * n // chunks), n)) if progress else None
    res = evaluate_runs(design, [run], chunk_size, workers, scheduler, tick)
    err = failure_error(res, [run])
    if err is not None:
        raise err
    out = res.outputs[0]
    trials = Trials(names=spec.names, X=out["X"],
                    outputs={k: v for k, v in out.items() if k not in _STRUCTURAL},
                    energy_factors=out["energy_factors"],
                    persistent_factor=out["persistent_factor"], physics_kwh=out["physics_kwh"],
                    seed=seed, method=method)
    _check_finite(trials)
    return trials, [weather_note(case, site, spec), *res.notes]


def weather_note(case: Case, site: Site, spec: UncertainSpec) -> str:
    """Where the year-to-year spread of a run comes from."""
    w = site.weather
    if not w.typical_year and w.n_years > 1:
        ratios = prepared(case)[2]
        cov = float(ratios.std(ddof=1))
        return (f"year-to-year weather drawn from the {ratios.size} calendar years of the "
                f"weather file (CoV {100 * cov:.1f} %)")
    if spec.interannual_cov > 0:
        return (f"year-to-year weather normal with CoV {100 * spec.interannual_cov:.1f} % "
                f"(independent each year)")
    return "no year-to-year weather variability given"


def _check_finite(trials: Trials) -> None:
    for key in OUTPUTS:  # collector outputs such as an IRR may legitimately have no value
        v = trials.outputs[key]
        bad = ~np.isfinite(v)
        if bad.any():
            i = int(np.argmax(bad))
            inputs = ", ".join(f"{n} = {x:g}" for n, x in zip(trials.names, trials.X[i]))
            raise InputError(f"trial {i}: {key} is not finite ({v[i]}); inputs: "
                             f"{inputs or 'none'}")


@dataclass(frozen=True)
class EnergyExceedance:
    """P50/P90/P99 of first-year energy for a one-year and a ten-year horizon [kWh].

    Attributes
    ----------
    sampled : dict
        ``p50, p90, p99, p90_10yr, p99_10yr`` from the trials (P90 = exceeded with 90 %
        probability = 10th percentile).
    normal : dict
        The same by the normal method: P_x = P50 (1 - z_x sigma), sigma the root-sum-square
        of the components, year-to-year part divided by sqrt(10) for the ten-year horizon.
    sigma_1yr, sigma_10yr : float
        Relative standard deviations used by the normal method [-].
    components : dict of str to float
        The components' relative standard deviations [-].
    differences : list of str
        Sentences where the two methods differ by more than 1 %.
    """

    sampled: dict
    normal: dict
    sigma_1yr: float
    sigma_10yr: float
    components: dict
    differences: list = field(default_factory=list)


def energy_exceedance(trials: Trials, spec: UncertainSpec) -> EnergyExceedance:
    """P-values of first-year energy, from the samples and by the normal method.

    Degradation is excluded (these are statements about the energy of a year of the plant as
    built): the 1-year value is physics x persistent x one year's weather, the 10-year value
    uses the mean of ten years' weather factors.

    References
    ----------
    .. [1] D. Thevenard and S. Pelland, "Estimating the uncertainty in long-term photovoltaic
       yield predictions", Solar Energy 91, 2013.
    """
    base = trials.physics_kwh * trials.persistent_factor
    yearly = trials.energy_factors / trials.persistent_factor[:, None]
    e1 = base * yearly[:, 0]
    n10 = min(10, yearly.shape[1])
    e10 = base * yearly[:, :n10].mean(axis=1)
    sampled = {"p50": float(np.quantile(e1, 0.5)), "p90": float(np.quantile(e1, 0.10)),
               "p99": float(np.quantile(e1, 0.01)), "p90_10yr": float(np.quantile(e10, 0.10)),
               "p99_10yr": float(np.quantile(e10, 0.01))}
    comps = {f"energy.{k}": v for k, v in spec.energy_components.items()}
    phys_sd = float(np.std(trials.physics_kwh, ddof=1) / np.mean(trials.physics_kwh)) \
        if trials.n > 1 else 0.0
    if phys_sd > 1e-12:
        comps["physics inputs (sampled)"] = phys_sd
    iav = interannual_cov(trials)
    persistent = float(np.sqrt(sum(v ** 2 for v in comps.values())))
    s1 = float(np.sqrt(persistent ** 2 + iav ** 2))
    s10 = float(np.sqrt(persistent ** 2 + iav ** 2 / n10))
    p50 = sampled["p50"]
    normal = {"p50": p50, "p90": p50 * (1 - Z90 * s1), "p99": p50 * (1 - Z99 * s1),
              "p90_10yr": p50 * (1 - Z90 * s10), "p99_10yr": p50 * (1 - Z99 * s10)}
    diffs = []
    for k in ("p90", "p99", "p90_10yr", "p99_10yr"):
        rel = sampled[k] / normal[k] - 1
        if abs(rel) > 0.01:
            diffs.append(f"{k.upper()}: samples {sampled[k]:,.0f} kWh vs normal method "
                         f"{normal[k]:,.0f} kWh ({100 * rel:+.1f} %): the sampled "
                         f"distribution is not normal (skew or truncation of the inputs, "
                         f"multiplicative factors)")
    comps["year-to-year weather"] = iav
    return EnergyExceedance(sampled=sampled, normal=normal, sigma_1yr=s1, sigma_10yr=s10,
                            components=comps, differences=diffs)


def model_function(case: Case, site: Site, spec: UncertainSpec, output: str,
                   chunk_size: int = CHUNK_TRIALS, progress=None,
                   extra: dict | None = None) -> Callable[[np.ndarray], np.ndarray]:
    """``f(X) -> Y`` for the sensitivity layer: sampled inputs (n, d) -> one output (n,).

    Year-to-year weather is left out of these designs (every year at its mean): Sobol and
    tornado rank the inputs a user can argue about, and a noise term would only blur them.
    ``extra`` adds targets computed from each chunk's model output,
    ``{name: fn(ModelOutput, params) -> (n,)}`` (e.g. the lender's minimum DSCR).
    """
    extra = dict(extra or {})
    if output not in SENSITIVITY_TARGETS and output not in extra:
        raise InputError(f"--sobol-output {output!r}: expected one of "
                         f"{', '.join(SENSITIVITY_TARGETS + tuple(extra))}")
    life = int(case["case.lifetime_years"])

    def f(X: np.ndarray) -> np.ndarray:
        params_all, persist = split_inputs(spec, X)
        y = np.empty(X.shape[0])
        for start in range(0, X.shape[0], chunk_size):
            sl = slice(start, min(start + chunk_size, X.shape[0]))
            params = {k: v[sl] for k, v in params_all.items()}
            wf = np.repeat(persist[sl, None], life, axis=1)
            try:
                out = evaluate(case, site, params, weather_factors=wf)
            except ImplausibleResult as exc:
                i = start + exc.sample
                raise InputError(f"{case.source}: sensitivity design point "
                                 f"{trial_text(i, exc.text, spec.names, X[i])}; narrow the "
                                 f"[uncertain] ranges (low/high) so that every point is a "
                                 f"possible plant") from None
            c = out.cashflow
            if output in extra:
                y[sl] = extra[output](out, params)
            else:
                y[sl] = {"lcoe_real_per_kwh": c.lcoe_real, "lcoe_nominal_per_kwh":
                         c.lcoe_nominal, "npv_costs": c.pv_costs,
                         "energy_first_year_kwh": c.energy_kwh[:, 1]}[output]
            if progress:
                progress(sl.stop, X.shape[0])
        return y

    return f
