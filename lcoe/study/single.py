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
from dataclasses import dataclass, field, replace

import numpy as np

from lcoe.case.errors import ImplausibleResult, InputError
from lcoe.case.reader import Case
from lcoe.model import ModelOutput, Site, evaluate
from lcoe.study.chunked_sums import chunked_std, pairwise_pieces
from lcoe.study.design import TrialDesign, build_design, chunk_bounds
from lcoe.study.spec import UncertainSpec
from lcoe.study.trials import (
    CHUNK_TRIALS,
    ChunkTask,
    StudyRun,
    chunk_inputs,
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
#: What a chunk's evaluation gives that a single-case study does not keep: the sampled inputs
#: and the energy factors are drawn again from the design when read (:meth:`Trials.inputs`).
_DROPPED = ("X", "persistent_factor", "energy_factors", "energy_kwh", "dc_capacity_kw",
            "cell_area_m2", "land_area_m2")
#: Kept per trial beside :attr:`Trials.outputs` (energy for the P-values).
_ENERGY = ("physics_kwh", "energy_1yr_kwh", "energy_10yr_kwh")
#: Operating years averaged for the ten-year P-values [years].
TEN_YEARS = 10

Collector = Callable[[ModelOutput, dict, slice], dict]


@dataclass(frozen=True)
class Trials:
    """Outputs of every Monte Carlo trial; its inputs drawn again from the design when read.

    Memory: the study keeps per trial only the float64 vectors below (``outputs``: the four
    :data:`OUTPUTS` and the collectors' outputs; three energies), 8 bytes a trial each; the
    sampled inputs and the 30 or so yearly energy factors of a trial are not kept. The design
    gives any trial's inputs again, bit for bit (:meth:`inputs`, chunk by chunk for exports),
    and the one statistic over every trial-year (the year-to-year spread) is computed exactly
    in a second pass over the draws (:mod:`lcoe.study.chunked_sums`).

    Attributes
    ----------
    names : list of str
        Sampled input names (columns of :meth:`inputs`).
    outputs : dict of str to numpy.ndarray
        :data:`OUTPUTS` and collector outputs, each (n,) or (n, k).
    physics_kwh : numpy.ndarray
        (n,) average-year energy from the hourly physics alone [kWh].
    energy_1yr_kwh : numpy.ndarray
        (n,) physics x persistent factor x the first operating year's weather factor, no
        degradation [kWh].
    energy_10yr_kwh : numpy.ndarray
        (n,) the same with the mean weather factor of the first ten operating years [kWh].
    yearly_cov : float
        Sample standard deviation (ddof 1) of the year-to-year weather factors over all
        trial-years [-].
    seed : int or None
    method : str
        Sampling method.
    design : TrialDesign
        The study's design (trial inputs are drawn from it again).
    run : StudyRun
        The run, without collectors.
    """

    names: list
    outputs: dict
    physics_kwh: np.ndarray
    energy_1yr_kwh: np.ndarray
    energy_10yr_kwh: np.ndarray
    yearly_cov: float
    seed: int | None
    method: str
    design: TrialDesign = field(repr=False, compare=False)
    run: StudyRun = field(repr=False, compare=False)

    @property
    def n(self) -> int:
        return self.physics_kwh.shape[0]

    def _task(self, start: int, stop: int | None) -> ChunkTask:
        stop = self.n if stop is None else stop
        return ChunkTask(design=self.design, member=0, run=self.run, start=start, stop=stop)

    def inputs(self, start: int = 0, stop: int | None = None) -> np.ndarray:
        """(stop - start, d) sampled inputs of trials [start, stop), drawn again."""
        return chunk_inputs(self._task(start, stop), None, weather=False)[0]

    @property
    def X(self) -> np.ndarray:
        """(n, d) sampled inputs of all trials (held at once: read large runs by
        :meth:`inputs`)."""
        return self.inputs()

    def _weather(self) -> tuple[np.ndarray, np.ndarray]:
        _, _, persist, _, factors = chunk_inputs(self._task(0, None), prepared(self.run.case)[2])
        return persist, factors

    @property
    def persistent_factor(self) -> np.ndarray:
        """(n,) product of the persistent energy components [-], drawn again."""
        return self._weather()[0]

    @property
    def energy_factors(self) -> np.ndarray:
        """(n, N) year-by-year energy multipliers (persistent x year-to-year) [-], drawn again
        (all trials at once)."""
        return self._weather()[1]


def interannual_cov(trials: Trials) -> float:
    """Year-to-year CoV actually used (sample estimate over all trial-years) [-]."""
    return trials.yearly_cov


def single_run(case: Case, spec: UncertainSpec, collectors: tuple = ()) -> StudyRun:
    """The one run of a single-case study."""
    return StudyRun(label=case.name, case_label=case.name, site=case.name, case=case,
                    spec=spec, collectors=tuple(collectors), finish=keep_per_trial)


def _year_to_year(persist: np.ndarray, factors: np.ndarray) -> np.ndarray:
    """(n, N) year-to-year factors as the statistics read them: energy factors / persistent."""
    return factors / persist[:, None]


def keep_per_trial(res: dict, task: ChunkTask) -> dict:
    """What a single-case study keeps of a chunk (the run's ``finish``).

    The outputs, the physics energy and the one- and ten-year energies of each trial (own
    arrays, not views of the chunk's larger ones); the pieces of the sum of the year-to-year
    factors over the chunk's trial-years (:func:`~lcoe.study.chunked_sums.pairwise_pieces`);
    nothing else.
    """
    persist, factors = res["persistent_factor"], res["energy_factors"]
    yearly = _year_to_year(persist, factors)
    base = res["physics_kwh"] * persist
    life = yearly.shape[1]
    # a view (the first year's column of the cash flow's energy) would hold its whole array
    kept = {k: v.copy() if isinstance(v, np.ndarray) and v.base is not None else v
            for k, v in res.items() if k not in _DROPPED}
    kept["energy_1yr_kwh"] = base * yearly[:, 0]
    kept["energy_10yr_kwh"] = base * yearly[:, :min(TEN_YEARS, life)].mean(axis=1)
    kept["yearly_pieces"] = pairwise_pieces(yearly, task.start * life,
                                            task.design.samples * life)
    return kept


def _yearly_cov(design: TrialDesign, run: StudyRun, pieces: list, chunk_size: int) -> float:
    """numpy's ``std(ddof=1)`` of the (n, N) year-to-year factors, drawn again chunk by chunk
    for the squared deviations (the chunks gave the sum)."""
    life = int(run.case["case.lifetime_years"])
    ratios = prepared(run.case)[2]

    def chunks():
        for a, b in chunk_bounds(design.samples, chunk_size):
            task = ChunkTask(design=design, member=0, run=run, start=a, stop=b)
            _, _, persist, _, factors = chunk_inputs(task, ratios, inputs=False)
            yield a * life, _year_to_year(persist, factors)

    return chunked_std(pieces, chunks(), design.samples * life)


def monte_carlo(case: Case, site: Site, spec: UncertainSpec, n: int, seed: int | None,
                method: str = "lhs", chunk_size: int = CHUNK_TRIALS, collectors: tuple = (),
                progress: Callable[[int, int], None] | None = None, workers: int = 1,
                scheduler: str | None = None) -> tuple[Trials, list]:
    """Run ``n`` trials of the case with its uncertain inputs.

    Memory does not grow with ``n`` beyond the few vectors of :class:`Trials` (8 bytes per
    trial each): a chunk's inputs and yearly factors are dropped where it is evaluated.

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
    bare = replace(run, collectors=())
    trials = Trials(names=spec.names,
                    outputs={k: v for k, v in out.items()
                             if k not in _ENERGY and k != "yearly_pieces"},
                    physics_kwh=out["physics_kwh"], energy_1yr_kwh=out["energy_1yr_kwh"],
                    energy_10yr_kwh=out["energy_10yr_kwh"],
                    yearly_cov=_yearly_cov(design, bare, out.pop("yearly_pieces"), chunk_size),
                    seed=seed, method=method, design=design, run=bare)
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
            inputs = ", ".join(f"{n} = {x:g}" for n, x in zip(trials.names,
                                                              trials.inputs(i, i + 1)[0]))
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
    e1, e10 = trials.energy_1yr_kwh, trials.energy_10yr_kwh
    n10 = min(TEN_YEARS, int(trials.run.case["case.lifetime_years"]))
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
