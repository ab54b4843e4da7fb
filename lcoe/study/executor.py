"""Where a study's chunks of trials run: serially, on local worker processes, or on a cluster.

The unit of work is a chunk of trials of one run (:class:`lcoe.study.trials.ChunkTask`); its
random numbers come from the study's seed and the trials' positions, so the numbers are
bit-identical whichever way the study runs. Serial: in this process. ``workers > 1``: a local
dask.distributed cluster of single-threaded worker processes bound to 127.0.0.1.
``scheduler="tcp://HOST:PORT"``: an existing cluster (its workers must have lcoe installed and
see the weather files at the same paths). A failed task is retried once; the caller decides
what a remaining failure means (a sweep reports it and writes the rest, a single run or a
comparison stops with the error).

Start external workers with ``distributed.worker.profile.enabled: false`` and without
``MALLOC_TRIM_THRESHOLD_`` in their environment for full speed (see :func:`local_cluster`).
"""

from __future__ import annotations

import re
import uuid
from collections.abc import Callable, Sequence

from lcoe.case.errors import InputError

#: Seconds to wait for an existing dask scheduler to answer.
CONNECT_TIMEOUT_S = 5.0
#: Attempts per task (the first run and one retry).
ATTEMPTS = 2
DASK_MISSING_NOTE = ("dask.distributed is not installed (pip install -e '.[distributed]'): "
                     "ran serially in this process")


def _one_line(exc: BaseException) -> str:
    return f"{type(exc).__name__}: {' '.join(str(exc).split())}"


def run_serial(tasks: Sequence, fn: Callable, progress: Callable | None = None,
               keep: Callable | None = None):
    """Run ``fn(task)`` for every task in this process, each tried up to :data:`ATTEMPTS` times.

    ``keep(position, result)``, when given, receives each result as it is made and returns
    what is stored in its place (a caller that gathers the results elsewhere keeps little).

    Returns
    -------
    results : list
        ``fn``'s result per task (or what ``keep`` made of it), None where it failed.
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
        if keep is not None and results[i] is not None:
            results[i] = keep(i, results[i])
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


def affinity_batches(tasks: Sequence, size: int, affinity: Callable | None = None) -> list:
    """Task positions in batches of about ``size``, a group of the same affinity kept whole.

    Tasks with the same ``affinity(task)`` (a site) form a group, in order of first
    appearance. A group smaller than ``size`` is never split (a worker prepares the site once;
    several small groups share a batch up to ``size`` tasks); a larger group is cut into
    batches of ``size``.
    """
    groups: dict = {}
    for i, task in enumerate(tasks):
        groups.setdefault(str(affinity(task)) if affinity is not None else None, []).append(i)
    batches, current = [], []
    for members in groups.values():
        if len(members) >= size:
            if current:
                batches.append(current)
                current = []
            batches += [members[a:a + size] for a in range(0, len(members), size)]
            continue
        if current and len(current) + len(members) > size:
            batches.append(current)
            current = []
        current += members
    if current:
        batches.append(current)
    return batches


def run_on_client(client, tasks: Sequence, fn: Callable, progress: Callable | None = None,
                  affinity: Callable | None = None, keep: Callable | None = None):
    """Run ``fn(task)`` for every task on a dask.distributed client, one retry per task.

    Parameters
    ----------
    client : distributed.Client
    tasks : sequence
    fn : callable
    progress : callable, optional
        ``progress(done, total)``.
    affinity : callable, optional
        ``affinity(task) -> key``: a site's tasks go into one batch when they are fewer than a
        batch (:func:`affinity_batches`), so that one worker prepares the site (weather, sun,
        rows) once. Tasks are sent in batches of several (about :data:`BATCHES_PER_WORKER` per
        worker); a failing task is retried on its own and reported alone.
    keep : callable, optional
        ``keep(position, result)`` as in :func:`run_serial`, called here as results arrive.

    Returns
    -------
    Same as :func:`run_serial`.
    """
    from distributed import as_completed

    token = uuid.uuid4().hex[:12]
    workers = sorted(client.scheduler_info().get("workers", {}))
    size = max(1, -(-len(tasks) // max(1, BATCHES_PER_WORKER * max(1, len(workers)))))
    batches = affinity_batches(tasks, size, affinity)
    futures = []
    for b, members in enumerate(batches):
        where = {}
        if workers:
            where = {"workers": [workers[b % len(workers)]], "allow_other_workers": True}
        futures.append(client.submit(run_batch, fn, [tasks[i] for i in members],
                                     key=f"lcoe-study-{token}-{b}", retries=ATTEMPTS - 1,
                                     pure=False, **where))
    position = {f.key: b for b, f in enumerate(futures)}
    results, errors = [None] * len(tasks), {}
    done = 0
    try:
        for fut in as_completed(futures):
            members = batches[position[fut.key]]
            if fut.status == "finished":
                for i, (res, err) in zip(members, fut.result()):
                    results[i] = res if keep is None or res is None else keep(i, res)
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
    return getattr(task, "site", None)


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


def worker_start_method() -> str:
    """How local worker processes start: ``"forkserver"`` on Linux, else ``"spawn"``.

    The workers are forked from a small single-threaded server process that has imported the
    scientific stack and the model once (:func:`_preload_forkserver`), so they start without
    importing it again. They are not forked from this process: the cluster's scheduler runs an
    event-loop thread here, and a process forked while another thread holds a lock can hang
    for ever (seen twice in the test suite with plain ``fork``: workers idle, the study never
    finishing). A worker prepares its sites once (weather, sun, rows; see
    :func:`lcoe.study.trials.prepared`) and keeps them for all its tasks. The numbers do not
    depend on the start method: the same code runs on the same data. Elsewhere (macOS,
    Windows) only ``spawn`` is used.
    """
    import multiprocessing
    import sys

    if (sys.platform.startswith("linux")
            and "forkserver" in multiprocessing.get_all_start_methods()):
        return "forkserver"
    return "spawn"


#: Modules the fork server imports once, so that workers start with them in place.
FORKSERVER_PRELOAD = ("distributed", "numpy", "pandas", "scipy.special", "pvlib",
                      "lcoe.model", "lcoe.study.trials")


def _preload_forkserver() -> None:
    """Have the fork server import :data:`FORKSERVER_PRELOAD` (before its first start)."""
    import multiprocessing

    import distributed.utils

    if not getattr(distributed.utils, "_forkserver_preload_set", True):
        multiprocessing.get_context("forkserver").set_forkserver_preload(
            list(FORKSERVER_PRELOAD))
        distributed.utils._forkserver_preload_set = True


def local_cluster(workers: int):
    """A LocalCluster of ``workers`` single-threaded processes on 127.0.0.1, no dashboard.

    The workers are started by :func:`worker_start_method` (from a fork server on Linux).
    """
    import logging

    import dask
    from distributed import LocalCluster

    # Two worker defaults slow this model down, measured on 24 chunks of a 4-site sweep with one
    # worker (serial in this process: 3.2 s): MALLOC_TRIM_THRESHOLD_ in the workers' environment
    # (it pins glibc's mmap threshold, so every (n, 8760) hourly temporary is a fresh mmap whose
    # pages fault in again; 8.6 s with it) and the sampling profiler (a thread walking every stack
    # every 10 ms; 7.4 s with it). Without both: 3.3 s. The workers keep one BLAS/OpenMP thread
    # each. Task failures are reported by the sweep itself, so the workers' logs are silenced.
    method = worker_start_method()
    if method == "forkserver":
        _preload_forkserver()
    environ = {k: v for k, v in dask.config.get("distributed.nanny.pre-spawn-environ",
                                                {}).items() if k != "MALLOC_TRIM_THRESHOLD_"}
    with dask.config.set({"distributed.nanny.pre-spawn-environ": environ,
                          "distributed.worker.profile.enabled": False,
                          "distributed.worker.multiprocessing-method": method}):
        # The scheduler always serves a small HTTP API: bind it to 127.0.0.1 on a free port
        # (not the default 8787, which may be taken) and leave the dashboard off.
        return LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                            host="127.0.0.1", dashboard_address="127.0.0.1:0",
                            scheduler_kwargs={"dashboard": False},
                            silence_logs=logging.CRITICAL)


def execute(tasks: Sequence, fn: Callable, workers: int = 1,
            scheduler: str | None = None, progress: Callable | None = None,
            keep: Callable | None = None):
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
    keep : callable, optional
        ``keep(position, result) -> stored``, applied to each result in this process as it
        arrives (see :func:`run_serial`).

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
            results, errors = run_on_client(client, tasks, fn, progress, _site_of, keep)
        finally:
            client.close()
        return results, errors, f"dask scheduler {scheduler} ({n} workers)", []
    if workers > 1:
        try:
            from distributed import Client
        except ImportError:
            results, errors = run_serial(tasks, fn, progress, keep)
            return results, errors, "serial (in process)", [DASK_MISSING_NOTE]
        with local_cluster(workers) as cluster, Client(cluster) as client:
            results, errors = run_on_client(client, tasks, fn, progress, _site_of, keep)
        return results, errors, f"local dask cluster, {workers} worker processes", []
    results, errors = run_serial(tasks, fn, progress, keep)
    return results, errors, "serial (in process)", []
