"""Runs of a study, the mapping of the design's draws to each run's inputs, chunk evaluation.

A chunk is a range of trials of one run. Its evaluation (in this process or in a worker):

1. the run's uniforms and weather scores for the range (:meth:`TrialDesign.member_draws`);
2. uniforms -> input values through the run's own distributions; sampled ``energy.*`` names
   multiply into the persistent energy factor (one per trial), the others are case inputs;
3. year-to-year weather factors from the site's scores (normal with the run's
   ``interannual_cov``, or the calendar year of a multi-year weather file picked by the
   score's probability);
4. the one vectorised model :func:`lcoe.model.evaluate` with weather factors = persistent x
   year-to-year, and the collectors of the run.

Shapes: every output is (n_chunk,) or (n_chunk, k).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy.special import ndtr

from lcoe.case.errors import InputError, collect_warnings
from lcoe.case.plausibility import check_output
from lcoe.case.reader import Case
from lcoe.model import evaluate, prepare
from lcoe.study.design import Member, TrialDesign, chunk_bounds
from lcoe.study.executor import execute
from lcoe.study.spec import ENERGY_FACTOR_FLOOR, UncertainSpec
from lcoe.uncertainty.sampling import uniforms_to_values

#: Default trials per chunk (a task of a worker, and the memory bound of a model call).
CHUNK_TRIALS = 1000
#: Sampled names that are persistent energy components, not case inputs.
ENERGY_PREFIX = "energy."
#: Prepared sites and year ratios kept per process.
CACHE_LIMIT = 256
_CACHE: dict = {}


def _file_stamp(path) -> tuple:
    """Size and modification time of a weather file (so an edited file is read again)."""
    try:
        st = os.stat(path)
    except (OSError, TypeError, ValueError):
        return ()
    return (st.st_size, st.st_mtime_ns)


def site_key(case: Case) -> str:
    """Key of a case's site: the weather (file, its size and time, or monthly values) and the
    location."""
    return repr((str(case.weather_path), _file_stamp(case.weather_path),
                 sorted((case.monthly or {}).items()),
                 case["site.latitude_deg"], case["site.longitude_deg"],
                 case["site.altitude_m"], case["site.timezone"],
                 case["site.weather_time_label"]))


@dataclass(frozen=True)
class StudyRun:
    """One run of a study: a case at its site (plain data, sent to worker processes).

    Attributes
    ----------
    label : str
        Unique label of the run.
    case_label : str
        Case (technology) label used by cross-case correlations.
    site : str
        Site name: runs with the same site share its weather draws.
    case : Case
        The validated case (shared inputs merged into its ``[uncertain]``).
    spec : UncertainSpec
    shared : frozenset of str
        Inputs declared once for the whole study.
    collectors : tuple of callables
        ``collector(model_output, params, chunk_slice) -> dict of (n_chunk, ...) arrays``,
        extra per-trial outputs (e.g. the project-finance layer).
    finish : callable, optional
        ``finish(outputs, task) -> outputs``: what the run keeps of a chunk, applied where the
        chunk is evaluated (a study that keeps a few numbers per trial drops the rest there,
        so its memory does not grow with the trials; see :mod:`lcoe.study.single`).
    """

    label: str
    case_label: str
    site: str
    case: Case
    spec: UncertainSpec
    shared: frozenset = frozenset()
    collectors: tuple = field(default=(), compare=False)
    finish: Callable | None = field(default=None, compare=False)

    def member(self) -> Member:
        """The design's view of this run."""
        pairs = []
        names = self.spec.names
        if self.spec.corr is not None:
            for i in range(len(names)):
                for j in range(i + 1, len(names)):
                    if self.spec.corr[i, j] != 0.0:
                        pairs.append((names[i], names[j], float(self.spec.corr[i, j])))
        return Member(label=self.label, case_label=self.case_label, site=self.site,
                      names=tuple(names), shared=frozenset(self.shared) & frozenset(names),
                      corr_pairs=tuple(pairs),
                      lifetime_years=int(self.case["case.lifetime_years"]))


@dataclass(frozen=True)
class ChunkTask:
    """Trials [start, stop) of run ``member`` of a study.

    Attributes
    ----------
    design : TrialDesign
    member : int
    run : StudyRun
    start, stop : int
    """

    design: TrialDesign
    member: int
    run: StudyRun
    start: int
    stop: int

    @property
    def site(self) -> str:
        """Affinity key for the executor (a worker prepares each site once)."""
        return site_key(self.run.case)


def split_inputs(spec: UncertainSpec, X: np.ndarray) -> tuple[dict, np.ndarray]:
    """Case-parameter arrays and the persistent energy factor (n,) from sampled rows X (n, d)."""
    params = {name: X[:, j] for j, name in enumerate(spec.names)
              if not name.startswith(ENERGY_PREFIX)}
    return params, energy_product(spec.names, X)


def energy_product(names, X: np.ndarray) -> np.ndarray:
    """(n,) product of the columns of X (n, d) whose name is an ``energy.*`` component [-]."""
    persist = np.ones(X.shape[0])
    for j, name in enumerate(names):
        if name.startswith(ENERGY_PREFIX):
            persist = persist * X[:, j]
    return persist


def yearly_factors(z: np.ndarray, interannual_cov: float,
                   year_ratios: np.ndarray | None) -> np.ndarray:
    """Year-to-year weather factors from the site's normal scores.

    Parameters
    ----------
    z : numpy.ndarray
        (n, N) standard normal scores (the run's N years).
    interannual_cov : float
        Coefficient of variation of a typical-year file's energy [-].
    year_ratios : numpy.ndarray or None
        Energy of each calendar year of a multi-year weather file over their mean [-]; when
        given, year j of trial i is the year picked by the probability ``Phi(z[i, j])``.

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


def prepared(case: Case, fresh: bool = False, weather=None):
    """The case's prepared site, its notes and multi-year ratios, memoised in this process.

    ``fresh=True`` prepares the site again (a run's own start: ``lcoe run`` reads its weather
    each time, and may pass it as ``weather``) and keeps the result for the study's chunks and
    forked workers.
    """
    key = (site_key(case), case.sha256, case.name)
    if fresh:
        _CACHE.pop(key, None)
        _CACHE.pop(("site", site_key(case)), None)
    if key not in _CACHE:
        skey = ("site", site_key(case))
        if skey not in _CACHE:
            with collect_warnings() as caught:
                site = prepare(case, weather if fresh else None)
            notes = tuple(site.notes) + tuple(caught)
            _CACHE[skey] = (site, notes)
        site, notes = _CACHE[skey]
        ratios = None
        if not site.weather.typical_year and site.weather.n_years > 1:
            yearly = evaluate(case, site).energy.yearly_kwh[0]
            ratios = yearly / yearly.mean()
        if len(_CACHE) > CACHE_LIMIT:
            _CACHE.clear()
            _CACHE[skey] = (site, notes)
        _CACHE[key] = (site, notes, ratios)
    return _CACHE[key]


def chunk_inputs(task: ChunkTask, ratios: np.ndarray | None, weather: bool = True,
                 inputs: bool = True):
    """The sampled inputs of trials [start, stop) of a run, from the study's design.

    Any process draws the same numbers for the same trials (see :mod:`lcoe.study.design`), so
    inputs that a study does not keep can be drawn again, chunk by chunk, when needed.

    Parameters
    ----------
    task : ChunkTask
    ratios : numpy.ndarray or None
        The site's multi-year energy ratios (:func:`prepared`), see :func:`yearly_factors`.
    weather : bool
        False skips the year-to-year factors (returned as None).
    inputs : bool
        False maps only the energy components' uniforms to values (``X`` and ``params`` are
        returned as None; the persistent factor is the same).

    Returns
    -------
    X : numpy.ndarray or None
        (n, d) sampled input values, in the order of the run's spec.
    params : dict of str to numpy.ndarray or None
        The case inputs among them, (n,) each.
    persist : numpy.ndarray
        (n,) persistent energy factor [-].
    yearly, factors : numpy.ndarray or None
        (n, lifetime) year-to-year weather factors and energy factors = persist x yearly [-].
    """
    run = task.run
    n = task.stop - task.start
    u, z = task.design.member_draws(task.member, task.start, task.stop)
    if inputs:
        X = uniforms_to_values(run.spec.dists, u) if u.shape[1] else np.empty((n, 0))
        params, persist = split_inputs(run.spec, X)
    else:
        cols = [j for j, name in enumerate(run.spec.names) if name.startswith(ENERGY_PREFIX)]
        X = params = None
        persist = energy_product([run.spec.names[j] for j in cols], uniforms_to_values(
            [run.spec.dists[j] for j in cols], u[:, cols]) if cols else np.empty((n, 0)))
    if not weather:
        return X, params, persist, None, None
    life = int(run.case["case.lifetime_years"])
    yearly = yearly_factors(z[:, :life], run.spec.interannual_cov, ratios)
    return X, params, persist, yearly, persist[:, None] * yearly


def trial_text(i: int, text: str, names, x) -> str:
    """``trial i (inputs ...): text``, the sampled inputs cut to a short list."""
    inputs = ", ".join(f"{k} = {v:.4g}" for k, v in zip(names, x))
    if len(inputs) > 160:
        inputs = inputs[:157] + "..."
    return f"trial {i} ({inputs or 'energy factors only'}): {text}"


def evaluate_chunk(task: ChunkTask) -> dict:
    """Evaluate trials [start, stop) of one run of a study.

    Returns
    -------
    dict of str to numpy.ndarray
        ``X`` (n, d) sampled inputs; ``lcoe_real_per_kwh``, ``lcoe_nominal_per_kwh``
        [currency/kWh], ``npv_costs`` [currency], ``energy_first_year_kwh`` (first operating
        year, degradation included) [kWh], ``physics_kwh`` (average year of the hourly physics)
        [kWh], ``persistent_factor`` [-], ``energy_factors`` (n, N) [-], ``energy_kwh``
        (physics x persistent x first year's weather, no degradation) [kWh],
        ``dc_capacity_kw``, ``cell_area_m2``, ``land_area_m2``; and the collectors' outputs.
        Also ``notes``: tuple of remarks from preparing the site.

        A chunk where some trial fails the plausibility checks
        (:func:`lcoe.case.plausibility.check_output`) returns only ``notes`` and ``implausible``:
        (failing trials, trials of the chunk, text of its first failing trial), so that
        :func:`evaluate_runs` counts them over the whole run.
    """
    run = task.run
    site, notes, ratios = prepared(run.case)
    n = task.stop - task.start
    X, params, persist, yearly, factors = chunk_inputs(task, ratios)
    out = evaluate(run.case, site, params, weather_factors=factors, guard=False)
    bad, text = check_output(run.case["plant.mount"], out)
    if bad.any():  # never dropped: the whole run's count goes into its error
        i = int(np.argmax(bad))
        return {"notes": notes, "implausible": (int(bad.sum()), n, trial_text(
            task.start + i, text(i), run.spec.names, X[i]))}
    c, e = out.cashflow, out.energy
    res = {"X": X, "lcoe_real_per_kwh": c.lcoe_real, "lcoe_nominal_per_kwh": c.lcoe_nominal,
           "npv_costs": c.pv_costs, "energy_first_year_kwh": c.energy_kwh[:, 1],
           "physics_kwh": e.annual_kwh, "persistent_factor": persist, "energy_factors": factors,
           "energy_kwh": e.annual_kwh * persist * yearly[:, 0],
           "dc_capacity_kw": np.broadcast_to(e.dc_capacity_kw, (n,)).astype(float),
           "cell_area_m2": np.broadcast_to(e.cell_area_m2, (n,)).astype(float),
           "land_area_m2": np.broadcast_to(e.land_area_m2, (n,)).astype(float)}
    sl = slice(task.start, task.stop)
    for col in run.collectors:
        res.update(col(out, params, sl))
    if run.finish is not None:
        res = run.finish(res, task)
    res["notes"] = notes
    return res


def make_tasks(design: TrialDesign, runs: Sequence[StudyRun],
               chunk_trials: int = CHUNK_TRIALS) -> list[ChunkTask]:
    """Every run x chunk, run-major."""
    return [ChunkTask(design=design, member=m, run=run, start=a, stop=b)
            for m, run in enumerate(runs)
            for a, b in chunk_bounds(design.samples, chunk_trials)]


@dataclass(frozen=True)
class StudyOutput:
    """What the evaluation of a study's runs gave.

    Attributes
    ----------
    outputs : list of (dict or None)
        Per run, every output over all trials in trial order (None when a chunk failed).
    errors : dict of int to (int, str)
        Run index -> (index of its first failed chunk, one-line error).
    execution : str
        How it ran (does not change the numbers).
    notes : list of str
        Executor notes.
    site_notes : dict of str to list of str
        Note -> labels of the runs whose site gave it.
    """

    outputs: list
    errors: dict
    execution: str
    notes: list
    site_notes: dict


def evaluate_runs(design: TrialDesign, runs: Sequence[StudyRun],
                  chunk_trials: int = CHUNK_TRIALS, workers: int = 1,
                  scheduler: str | None = None, progress: Callable | None = None,
                  fn: Callable = evaluate_chunk) -> StudyOutput:
    """Evaluate every trial of every run, serially, on local workers or on a cluster.

    Parameters
    ----------
    design : TrialDesign
    runs : sequence of StudyRun
        In the order of the design's members.
    chunk_trials : int
        Trials per task; the numbers do not depend on it.
    workers : int
        1 = serial in this process; more = a local dask cluster of that many processes.
    scheduler : str, optional
        ``tcp://HOST:PORT`` of an existing dask scheduler.
    progress : callable, optional
        ``progress(done, total)`` over tasks.
    fn : callable
        Chunk evaluator (tests replace it to inject failures).
    """
    if chunk_trials < 1:
        raise InputError(f"chunk size {chunk_trials}: expected a whole number >= 1")
    tasks = make_tasks(design, runs, chunk_trials)
    joined = _Joined(tasks, len(runs), design.samples)
    results, errors, execution, notes = execute(tasks, fn, workers, scheduler, progress,
                                                keep=joined)
    outputs: list = []
    failed: dict[int, tuple] = {}
    site_notes: dict[str, list] = {}
    per_run = len(tasks) // max(1, len(runs))
    for m, run in enumerate(runs):
        parts = results[m * per_run:(m + 1) * per_run]
        bad = [i for i, p in enumerate(parts) if p is None or "implausible" in p]
        if bad:
            failed[m] = (bad[0], errors.get(m * per_run + bad[0], "no result")
                         if parts[bad[0]] is None else implausible_error(parts))
            outputs.append(None)
            continue
        for note in parts[0]["notes"]:
            site_notes.setdefault(note, [])
            if run.label not in site_notes[note]:
                site_notes[note].append(run.label)
        outputs.append(joined.outputs[m])
    return StudyOutput(outputs=outputs, errors=failed, execution=execution, notes=notes,
                       site_notes=site_notes)


class _Joined:
    """Each run's outputs over all its trials, filled chunk by chunk as the results arrive.

    An array output of a chunk is copied into its place in one array per output of the run
    (made at the first chunk that has it, as long as the run); other values are listed by
    chunk. The executor then keeps only a small marker per chunk, so the chunks' arrays are
    released one by one and never held beside the joined ones.
    """

    def __init__(self, tasks: Sequence[ChunkTask], n_runs: int, samples: int):
        self.tasks = tasks
        self.per_run = len(tasks) // max(1, n_runs)
        self.samples = samples
        self.outputs: list[dict] = [{} for _ in range(n_runs)]

    def __call__(self, i: int, res: dict) -> dict:
        if "implausible" in res:
            return res
        task = self.tasks[i]
        m, c = divmod(i, self.per_run)
        out = self.outputs[m]
        for k, v in res.items():
            if k == "notes":
                continue
            if isinstance(v, np.ndarray):
                if k not in out:
                    out[k] = np.empty((self.samples,) + v.shape[1:], v.dtype)
                elif out[k].dtype != np.result_type(out[k], v):  # as concatenation would
                    out[k] = out[k].astype(np.result_type(out[k], v))
                out[k][task.start:task.stop] = v
            else:
                out.setdefault(k, [None] * self.per_run)[c] = v
        return {"notes": res["notes"], "trials": task.stop - task.start}


def implausible_error(parts: Sequence) -> str:
    """The error of a run with trials that fail the plausibility checks, counted over the run.

    ``parts`` are the run's chunk results in order (None for a chunk that failed otherwise;
    ``{"trials": n, ...}`` for a chunk whose n trials passed).
    """
    n_bad = n_checked = 0
    first = None
    for p in parts:
        if p is None:
            continue
        if "implausible" in p:
            n_bad, n_checked = n_bad + p["implausible"][0], n_checked + p["implausible"][1]
            first = first or p["implausible"][2]
        else:
            n_checked += p["trials"]
    missing = sum(p is None for p in parts)
    also = f" ({missing} chunk{'s' * (missing > 1)} of trials failed otherwise)" if missing else ""
    return (f"{n_bad} of {n_checked} trials fail the plausibility check{also}; the first, "
            f"{first}; no trial is dropped: narrow the [uncertain] ranges (low/high) so that "
            f"every trial is a possible plant")


def failure_error(out: StudyOutput, runs: Sequence[StudyRun]) -> InputError | None:
    """The first failed run of a study that cannot go on without it, as an error, or None."""
    for m, (_, err) in out.errors.items():
        return InputError(f"{runs[m].case.source}: the run failed: {err}")
    return None
