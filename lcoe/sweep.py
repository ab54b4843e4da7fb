"""``lcoe sweep``: many sites x many technologies, each with its full Monte Carlo.

Orchestration only: the plan is read by :mod:`lcoe.sweep_plan`, each chunk of trials is
evaluated by :func:`lcoe.sweep_trials.evaluate_chunk` (common random numbers), the files are
written by :mod:`lcoe.export.sweep_outputs`.

Execution: serial in this process (``workers=1``, or when dask is not installed), on a local
dask.distributed cluster of worker processes bound to 127.0.0.1 (``workers > 1``), or on an
existing cluster (``scheduler="tcp://HOST:PORT"``). The work is split per site x technology x
chunk of trials and each chunk's random numbers come from the sweep's seed and the chunk's
position, so the numbers are bit-identical whichever way the sweep runs. A failed task is
retried once; a site x technology with a chunk that still fails is reported (site, technology,
error) and left out of the table, while the other results are written.

With ``--scheduler``, the workers must have lcoe installed and see the plan's weather files at
the same paths (sites given by monthly values need no file). Start them with
``distributed.worker.profile.enabled: false`` and without ``MALLOC_TRIM_THRESHOLD_`` in their
environment for full speed (see :func:`local_cluster`).
"""

from __future__ import annotations

import re
import sys
import time
import uuid
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import InputError
from .sweep_plan import SweepPlan, load_plan
from .sweep_trials import ChunkResult, ChunkTask, evaluate_chunk, prob_cheapest

#: Seconds to wait for an existing dask scheduler to answer.
CONNECT_TIMEOUT_S = 5.0
#: Attempts per task (the first run and one retry).
ATTEMPTS = 2
#: Percentiles of the table (a fraction of 1).
Q_LOW, Q_HIGH = 0.10, 0.90
DASK_MISSING_NOTE = ("dask.distributed is not installed (pip install -e '.[distributed]'): "
                     "ran serially in this process")


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
        Value of information per site (``--voi``; :func:`lcoe.sweep_voi.sweep_site_voi`).
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


def make_tasks(plan: SweepPlan) -> list[ChunkTask]:
    """Every site x technology x chunk of the plan, run-major."""
    return [ChunkTask(run_index=i, run=run, chunk_index=c, start=a, stop=b, seed=plan.seed,
                      input_names=plan.input_names, corr=plan.corr, life_max=plan.life_max,
                      method=plan.method)
            for i, run in enumerate(plan.runs) for c, (a, b) in enumerate(plan.chunks)]


def _one_line(exc: BaseException) -> str:
    return f"{type(exc).__name__}: {' '.join(str(exc).split())}"


def run_serial(tasks: Sequence, fn: Callable, progress: Callable | None = None):
    """Run ``fn(task)`` for every task in this process, each tried up to :data:`ATTEMPTS` times.

    Returns
    -------
    results : list
        ``fn``'s result per task, None where it failed.
    errors : dict of int to str
        Task position -> one-line error of the last attempt.
    """
    results, errors = [None] * len(tasks), {}
    for i, task in enumerate(tasks):
        for _ in range(ATTEMPTS):
            try:
                results[i] = fn(task)
                errors.pop(i, None)
                break
            except Exception as exc:  # reported with its site and technology, not raised
                errors[i] = _one_line(exc)
        if progress:
            progress(i + 1, len(tasks))
    return results, errors


def run_batch(fn: Callable, batch: Sequence) -> list:
    """Run ``fn`` on each task of a batch in one worker call, each tried up to ATTEMPTS times.

    Returns a list of ``(result, None)`` or ``(None, one-line error)`` in batch order.
    """
    results, errors = run_serial(batch, fn)
    return [(r, errors.get(i)) for i, r in enumerate(results)]


#: Batches per worker: a dask task carries several chunks, so that scheduling and transfer cost
#: little next to the model (one chunk takes tens of milliseconds), while the batches still
#: balance the load.
BATCHES_PER_WORKER = 4


def run_on_client(client, tasks: Sequence, fn: Callable, progress: Callable | None = None,
                  affinity: Callable | None = None):
    """Run ``fn(task)`` for every task on a dask.distributed client, one retry per task.

    Parameters
    ----------
    client : distributed.Client
    tasks : sequence
    fn : callable
    progress : callable, optional
        ``progress(done, total)``.
    affinity : callable, optional
        ``affinity(task) -> key``: tasks with the same key go into the same batches, so that a
        worker prepares what they share (a site's weather) once. Tasks are sent in batches of
        several (:data:`BATCHES_PER_WORKER` per worker); a failing task is retried on its own
        and reported alone.

    Returns
    -------
    Same as :func:`run_serial`.
    """
    from distributed import as_completed

    token = uuid.uuid4().hex[:12]
    workers = sorted(client.scheduler_info().get("workers", {}))
    order = sorted(range(len(tasks)), key=lambda i: (str(affinity(tasks[i])), i)) \
        if affinity is not None else list(range(len(tasks)))
    size = max(1, -(-len(tasks) // max(1, BATCHES_PER_WORKER * max(1, len(workers)))))
    batches = [order[a:a + size] for a in range(0, len(order), size)]
    futures = []
    for b, members in enumerate(batches):
        where = {}
        if workers:
            where = {"workers": [workers[b % len(workers)]], "allow_other_workers": True}
        futures.append(client.submit(run_batch, fn, [tasks[i] for i in members],
                                     key=f"lcoe-sweep-{token}-{b}", retries=ATTEMPTS - 1,
                                     pure=False, **where))
    position = {f.key: b for b, f in enumerate(futures)}
    results, errors = [None] * len(tasks), {}
    done = 0
    try:
        for fut in as_completed(futures):
            members = batches[position[fut.key]]
            if fut.status == "finished":
                for i, (res, err) in zip(members, fut.result()):
                    results[i] = res
                    if err is not None:
                        errors[i] = err
            else:
                try:
                    exc = fut.exception()
                except BaseException as cancelled:  # a cancelled task has no exception
                    if isinstance(cancelled, KeyboardInterrupt):
                        raise
                    exc = cancelled
                for i in members:
                    errors[i] = _one_line(exc)
            fut.release()
            done += len(members)
            if progress:
                progress(done, len(tasks))
    finally:
        client.cancel([f for f in futures if not f.done()])
    return results, errors


def _site_of(task):
    """Affinity key of a chunk: its site (a worker prepares each site's weather once)."""
    return getattr(getattr(task, "run", None), "site", None)


def connect(address: str, timeout_s: float = CONNECT_TIMEOUT_S):
    """A dask.distributed client of the scheduler at ``address`` (``tcp://HOST:PORT``).

    Raises
    ------
    InputError
        Malformed address, dask missing, or no scheduler answering within ``timeout_s``.
    """
    if not re.fullmatch(r"(tcp|tls)://(\[[0-9a-fA-F:]+\]|[A-Za-z0-9_.-]+):\d{1,5}", address):
        raise InputError(f"--scheduler {address!r}: expected an address such as "
                         f"tcp://127.0.0.1:8786")
    try:
        from distributed import Client
    except ImportError:
        raise InputError(f"--scheduler {address}: dask.distributed is not installed "
                         f"(pip install -e '.[distributed]')") from None
    try:
        return Client(address, timeout=timeout_s)
    except (OSError, TimeoutError) as exc:
        raise InputError(f"--scheduler {address}: no dask scheduler answered within "
                         f"{timeout_s:g} s ({' '.join(str(exc).split())[:120]}); check the "
                         f"address and that the scheduler is running") from None


def local_cluster(workers: int):
    """A LocalCluster of ``workers`` single-threaded processes on 127.0.0.1, no dashboard."""
    import logging

    import dask
    from distributed import LocalCluster

    # Two worker defaults slow this model down, measured on 24 chunks of a 4-site sweep with one
    # worker (serial in this process: 3.2 s): MALLOC_TRIM_THRESHOLD_ in the workers' environment
    # (it pins glibc's mmap threshold, so every (n, 8760) hourly temporary is a fresh mmap whose
    # pages fault in again; 8.6 s with it) and the sampling profiler (a thread walking every stack
    # every 10 ms; 7.4 s with it). Without both: 3.3 s. The workers keep one BLAS/OpenMP thread
    # each. Task failures are reported by the sweep itself, so the workers' logs are silenced.
    environ = {k: v for k, v in dask.config.get("distributed.nanny.pre-spawn-environ",
                                                {}).items() if k != "MALLOC_TRIM_THRESHOLD_"}
    with dask.config.set({"distributed.nanny.pre-spawn-environ": environ,
                          "distributed.worker.profile.enabled": False}):
        # The scheduler always serves a small HTTP API: bind it to 127.0.0.1 on a free port
        # (not the default 8787, which may be taken) and leave the dashboard off.
        return LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                            host="127.0.0.1", dashboard_address="127.0.0.1:0",
                            scheduler_kwargs={"dashboard": False},
                            silence_logs=logging.CRITICAL)


def execute(tasks: Sequence, fn: Callable = evaluate_chunk, workers: int = 1,
            scheduler: str | None = None, progress: Callable | None = None):
    """Run the tasks the requested way.

    Parameters
    ----------
    tasks : sequence
    fn : callable
        Top-level function ``fn(task) -> result`` (importable by the workers).
    workers : int
        1: serial in this process; more: a local cluster of that many worker processes.
    scheduler : str, optional
        Address of an existing scheduler (overrides ``workers``).
    progress : callable, optional
        ``progress(done, total)`` after each task.

    Returns
    -------
    results : list
    errors : dict of int to str
    execution : str
        What ran (for the report).
    notes : list of str
    """
    if workers < 1:
        raise InputError(f"--workers {workers}: expected a whole number >= 1")
    if scheduler:
        client = connect(scheduler)
        try:
            n = len(client.scheduler_info().get("workers", {}))
            results, errors = run_on_client(client, tasks, fn, progress, _site_of)
        finally:
            client.close()
        return results, errors, f"dask scheduler {scheduler} ({n} workers)", []
    if workers > 1:
        try:
            from distributed import Client
        except ImportError:
            results, errors = run_serial(tasks, fn, progress)
            return results, errors, "serial (in process)", [DASK_MISSING_NOTE]
        with local_cluster(workers) as cluster, Client(cluster) as client:
            results, errors = run_on_client(client, tasks, fn, progress, _site_of)
        return results, errors, f"local dask cluster, {workers} worker processes", []
    results, errors = run_serial(tasks, fn, progress)
    return results, errors, "serial (in process)", []


def _sites_note(names: list, n_sites: int, note: str) -> str:
    where = "every site" if len(names) == n_sites and n_sites > 1 else \
        ("site " if len(names) == 1 else "sites ") + ", ".join(f"'{n}'" for n in names)
    return f"{where}: {note}"


def summarise(plan: SweepPlan, tasks: Sequence[ChunkTask], results: Sequence,
              errors: dict) -> tuple[list, list, list, dict, list]:
    """Assemble chunk results into the table, the site summaries and the failures.

    Returns
    -------
    rows, sites, failures, trials, notes
    """
    by_run: dict[int, list] = {i: [None] * len(plan.chunks) for i in range(len(plan.runs))}
    failed: dict[int, Failure] = {}
    site_notes: dict[str, list] = {}
    for pos, task in enumerate(tasks):
        res: ChunkResult | None = results[pos]
        if res is None:
            if task.run_index not in failed:
                failed[task.run_index] = Failure(site=task.run.site,
                                                 technology=task.run.technology,
                                                 chunk=task.chunk_index, attempts=ATTEMPTS,
                                                 error=errors.get(pos, "no result"))
            continue
        by_run[task.run_index][task.chunk_index] = res
        for note in res.notes:
            names = site_notes.setdefault(note, [])
            if task.run.site not in names:
                names.append(task.run.site)
    notes = [_sites_note(names, len(plan.sites), note) for note, names in site_notes.items()]
    trials = {}
    for i, run in enumerate(plan.runs):
        if i in failed:
            continue
        parts = by_run[i]
        trials[(run.site, run.technology)] = RunTrials(
            names=parts[0].names, X=np.concatenate([p.X for p in parts]),
            lcoe_real=np.concatenate([p.lcoe_real for p in parts]),
            lcoe_nominal=np.concatenate([p.lcoe_nominal for p in parts]),
            energy_kwh=np.concatenate([p.energy_kwh for p in parts]))
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
                energy_p90_kwh=float(np.quantile(tr.energy_kwh, 1.0 - Q_HIGH)),
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
        Chunk evaluator (default :func:`lcoe.sweep_trials.evaluate_chunk`).

    Returns
    -------
    SweepResult
    """
    from .runner import provenance

    if not isinstance(plan, SweepPlan):
        plan = load_plan(plan)
    tasks = make_tasks(plan)
    t0 = time.perf_counter()
    results, errors, execution, notes = execute(tasks, fn, workers, scheduler, progress)
    elapsed = time.perf_counter() - t0
    rows, sites, failures, trials, run_notes = summarise(plan, tasks, results, errors)
    return SweepResult(plan=plan, rows=rows, sites=sites, failures=failures, trials=trials,
                       execution=execution, notes=list(plan.notes) + run_notes + notes,
                       provenance=provenance(plan.seed), elapsed_s=elapsed)


# ---------------------------------------------------------------------------------------------
# Command line (registered by lcoe.cli.build_parser)
# ---------------------------------------------------------------------------------------------


def format_table(result: SweepResult) -> str:
    """The compact table printed by ``lcoe sweep``."""
    cur = result.plan.currency
    head = (f"  {'site':<24} {'technology':<24} {'LCOE real P10-P50-P90 ' + cur + '/kWh':>34} "
            f"{'P(cheapest)':>12}")
    lines = [head]
    for r in result.rows:
        band = f"{r.lcoe_real_q10:.4f} {r.lcoe_real_q50:.4f} {r.lcoe_real_q90:.4f}"
        lines.append(f"  {r.site[:24]:<24} {r.technology[:24]:<24} {band:>34} "
                     f"{r.prob_cheapest:>12.3f}")
    return "\n".join(lines)


def _cmd_sweep(args) -> int:
    from .cli import Progress
    from .export.sweep_outputs import write_sweep_outputs
    from .errors import collect_warnings
    from .output import publish

    plan = load_plan(args.plan)
    out_path = Path(args.out) if args.out else Path("outputs") / Path(args.plan).stem
    bar = Progress(not args.quiet)
    with publish(out_path, force=args.force) as stage:  # refuses or locks before the run
        with collect_warnings() as caught:
            result = run_sweep(plan, workers=args.workers, scheduler=args.scheduler,
                               progress=lambda done, total: bar("sweep", done, total))
            if args.voi:  # value of information per site, on the trials already run
                from dataclasses import replace

                from .sweep_voi import sweep_site_voi

                result = replace(result, voi=sweep_site_voi(result, seed=plan.seed))
        result.notes.extend(n for n in caught if n not in result.notes)
        write_sweep_outputs(result, stage)
    if not args.quiet:
        print(format_table(result))
        if result.voi:
            from .sweep_voi import table_lines

            print("\n".join(table_lines(result.voi, plan.currency)))
        for note in result.notes:
            print(f"  note: {note}")
        print(f"  ran {len(plan.runs)} site x technology runs of {plan.samples} trials "
              f"({result.execution}, {result.elapsed_s:.1f} s); wrote {out_path}/")
    for f in result.failures:
        print(f"lcoe: failed: site '{f.site}', technology '{f.technology}' (chunk {f.chunk}, "
              f"{f.attempts} attempts): {f.error}", file=sys.stderr)
    return 1 if result.failures else 0


def add_sweep_options(s) -> None:
    """Arguments and options of ``lcoe sweep`` on its subparser ``s``."""
    from .cli import _non_negative_int

    s.description = ("Run every site x technology of a sweep plan with its full Monte Carlo. "
                     "Exit status 2 for bad input (nothing written), 1 when some runs failed "
                     "(the rest is written).")
    s.add_argument("plan", help="sweep plan (.toml)")
    s.add_argument("--out", help="output folder (default outputs/<plan name>)")
    how = s.add_mutually_exclusive_group()
    how.add_argument("--workers", type=_non_negative_int, default=1, metavar="N",
                     help="worker processes on a local dask cluster bound to 127.0.0.1 "
                          "(default 1 = serial in this process)")
    how.add_argument("--scheduler", metavar="ADDRESS",
                     help="submit to an existing dask scheduler, e.g. tcp://127.0.0.1:8786")
    s.add_argument("--force", action="store_true",
                   help="replace an output folder written by lcoe before, as a whole")
    s.add_argument("--quiet", action="store_true", help="print nothing but errors")
    s.add_argument("--voi", action="store_true",
                   help="also the value of information per site: what learning each input "
                        "before choosing the technology is worth per kWh")
    s.set_defaults(func=_cmd_sweep)
