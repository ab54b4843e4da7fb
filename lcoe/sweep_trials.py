"""Trials of a sweep with common random numbers, and the statistics across technologies.

The unit of work is a chunk of trials of one site x technology. Its random numbers depend only
on the sweep's seed and the chunk's index, never on the run or the process that evaluates it:

1. a generator is built from ``numpy.random.SeedSequence(seed, spawn_key=(chunk,))``
   (the chunk-th child of the sweep's seed);
2. it draws uniforms for the union of every run's uncertain inputs (Latin hypercube within the
   chunk, or plain random), reordered once by Iman & Conover (1982) for the sweep's rank
   correlation, then standard normal year-to-year weather scores for the longest lifetime;
3. each run takes the columns of its own inputs and maps them through its own distributions.

So a shared input has the same uniform, hence the same rank, in every site x technology for a
given trial (the same value when the distributions agree), the year-to-year weather of trial i
is the same everywhere, and the results are bit-identical whichever process evaluates a chunk
and in whatever order. Comparing technologies trial by trial then measures their difference,
not the noise of independent draws.
"""

from __future__ import annotations

import json
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtr

from .errors import collect_warnings
from .model import evaluate, prepare
from .rng import make_rng
from .sweep_plan import RunDef
from .uncertainty.engine import _params_from
from .uncertainty.sampling import (
    iman_conover,
    latin_hypercube,
    random_uniform,
    uniforms_to_values,
)
from .uncertainty.spec import ENERGY_FACTOR_FLOOR, read_spec

#: Prepared sites and cases kept per process (each worker prepares a site once).
CACHE_LIMIT = 256
_CACHE: dict = {}


@dataclass(frozen=True)
class ChunkTask:
    """One chunk of trials of one site x technology (plain data, picklable).

    Attributes
    ----------
    run_index : int
        Position of the run in the plan.
    run : RunDef
    chunk_index : int
    start, stop : int
        Trial indices [start, stop) of the chunk.
    seed : int
        The sweep's seed.
    input_names : tuple of str
        Union of the uncertain inputs (columns of the common uniforms).
    corr : numpy.ndarray or None
        (d, d) rank correlation over ``input_names``.
    life_max : int
        Columns of the year-to-year draws [years].
    method : str
        ``"lhs"`` or ``"random"``.
    """

    run_index: int
    run: RunDef
    chunk_index: int
    start: int
    stop: int
    seed: int
    input_names: tuple
    corr: np.ndarray | None
    life_max: int
    method: str


@dataclass(frozen=True)
class ChunkResult:
    """Outputs of one chunk.

    Attributes
    ----------
    run_index, chunk_index : int
    names : tuple of str
        The run's sampled inputs (columns of ``X``).
    X : numpy.ndarray
        (n_c, d_run) sampled input values.
    lcoe_real, lcoe_nominal : numpy.ndarray
        (n_c,) [currency/kWh].
    energy_kwh : numpy.ndarray
        (n_c,) one-year energy: physics x persistent factors x the first year's weather
        factor, without degradation [kWh].
    notes : tuple of str
        Remarks from preparing the site (e.g. the synthetic-weather caution).
    """

    run_index: int
    chunk_index: int
    names: tuple
    X: np.ndarray
    lcoe_real: np.ndarray
    lcoe_nominal: np.ndarray
    energy_kwh: np.ndarray
    notes: tuple


def chunk_generator(seed: int, chunk_index: int) -> np.random.Generator:
    """The generator of a chunk: child ``chunk_index`` of ``SeedSequence(seed)``."""
    return make_rng(np.random.SeedSequence(seed, spawn_key=(chunk_index,)))


def common_draws(seed: int, chunk_index: int, n_trials: int, n_inputs: int,
                 corr: np.ndarray | None, years: int, method: str = "lhs"
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Random numbers of one chunk, shared by every site x technology.

    Parameters
    ----------
    seed : int
        The sweep's seed.
    chunk_index : int
    n_trials : int
        Trials in the chunk.
    n_inputs : int
        Number of uncertain inputs in the union (may be 0).
    corr : numpy.ndarray or None
        (n_inputs, n_inputs) target rank correlation.
    years : int
        Operating years to draw weather scores for.
    method : {"lhs", "random"}

    Returns
    -------
    u : numpy.ndarray
        (n_trials, n_inputs) uniforms strictly inside (0, 1) [-].
    z : numpy.ndarray
        (n_trials, years) standard normal year-to-year weather scores [-].
    """
    rng = chunk_generator(seed, chunk_index)
    if n_inputs:
        draw = latin_hypercube if method == "lhs" else random_uniform
        u = draw(n_trials, n_inputs, rng)
        if corr is not None and not np.allclose(corr, np.eye(n_inputs)):
            u = iman_conover(u, corr, rng)
    else:
        u = np.empty((n_trials, 0))
    z = rng.standard_normal((n_trials, years))
    return u, z


def yearly_factors(z: np.ndarray, interannual_cov: float,
                   year_ratios: np.ndarray | None) -> np.ndarray:
    """Year-to-year weather factors from common normal scores.

    Parameters
    ----------
    z : numpy.ndarray
        (n, N) standard normal scores (only the run's N years).
    interannual_cov : float
        Coefficient of variation of a typical-year file's energy [-].
    year_ratios : numpy.ndarray or None
        Energy of each calendar year of a multi-year weather file over their mean [-]; when
        given, year j of trial i is the year picked by the uniform ``Phi(z[i, j])``.

    Returns
    -------
    numpy.ndarray
        (n, N) energy multipliers [-], mean about 1.
    """
    if year_ratios is not None:
        k = year_ratios.size
        pick = np.minimum((ndtr(z) * k).astype(int), k - 1)
        return year_ratios[pick]
    if interannual_cov > 0:
        return np.maximum(1.0 + interannual_cov * z, ENERGY_FACTOR_FLOOR)
    return np.ones_like(z)


def _prepared(run: RunDef):
    """Case, spec, site, year ratios and notes of a run, memoised in this process."""
    key = ("run", run.source, run.base_dir, json.dumps(run.raw, sort_keys=True, default=str))
    if key not in _CACHE:
        case = run.case()
        spec = read_spec(case)
        site_key = ("site", run.base_dir, json.dumps(run.raw["site"], sort_keys=True,
                                                     default=str))
        if site_key not in _CACHE:
            with collect_warnings() as caught:
                site = prepare(case)
            notes = tuple(site.notes) + tuple(caught)
            _CACHE[site_key] = (site, notes)
        site, notes = _CACHE[site_key]
        ratios = None
        w = site.weather
        if not w.typical_year and w.n_years > 1:
            yearly = evaluate(case, site).energy.yearly_kwh[0]
            ratios = yearly / yearly.mean()
        if len(_CACHE) > CACHE_LIMIT:
            _CACHE.clear()
            _CACHE[site_key] = (site, notes)
        _CACHE[key] = (case, spec, site, ratios, notes)
    return _CACHE[key]


def evaluate_chunk(task: ChunkTask) -> ChunkResult:
    """Evaluate one chunk of trials of one site x technology.

    Parameters
    ----------
    task : ChunkTask

    Returns
    -------
    ChunkResult

    Raises
    ------
    lcoe.errors.InputError
        If the model gives a non-finite LCOE (e.g. a site that delivers no energy).
    """
    case, spec, site, ratios, notes = _prepared(task.run)
    n = task.stop - task.start
    u, z = common_draws(task.seed, task.chunk_index, n, len(task.input_names), task.corr,
                        task.life_max, task.method)
    cols = [task.input_names.index(name) for name in spec.names]
    X = uniforms_to_values(spec.dists, u[:, cols]) if cols else np.empty((n, 0))
    params, persist = _params_from(spec, X)
    yearly = yearly_factors(z[:, :task.run.lifetime_years], spec.interannual_cov, ratios)
    out = evaluate(case, site, params, weather_factors=persist[:, None] * yearly)
    energy = out.energy.annual_kwh * persist * yearly[:, 0]
    return ChunkResult(run_index=task.run_index, chunk_index=task.chunk_index,
                       names=tuple(spec.names), X=X, lcoe_real=out.cashflow.lcoe_real,
                       lcoe_nominal=out.cashflow.lcoe_nominal, energy_kwh=energy, notes=notes)


def prob_cheapest(lcoe: np.ndarray) -> np.ndarray:
    """Probability of each technology being the cheapest, trial by trial.

    Parameters
    ----------
    lcoe : numpy.ndarray
        (n_trials, k) LCOE of k technologies at one site; row i is trial i of each, drawn with
        common random numbers [currency/kWh].

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
