"""Pictures drawn in a forked child while the workbook is written: same files, no leftovers.

The child (:func:`lcoe.export.parallel.beside`) only sends bytes back; any failure of it makes
the command draw the pictures itself; leaving the block early kills and reaps it.
"""

from __future__ import annotations

import os
import signal
import threading
import time

import pytest
from conftest import DEMO

from lcoe.export import parallel
from lcoe.export.parallel import beside, can_fork
from lcoe.export.run_outputs import picture_maker, write_outputs
from lcoe.study.run import run_case

needs_fork = pytest.mark.skipif(not can_fork(), reason="forks only on Linux without threads")


def _files(folder):
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir())}


def _children_of_this_process() -> set[int]:
    """Process ids whose parent is this process (zombies included)."""
    kids = set()
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                with open(f"/proc/{entry}/stat") as fh:
                    fields = fh.read().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if int(fields[1]) == os.getpid():
                kids.add(int(entry))
    return kids


@needs_fork
def test_forked_pictures_give_the_same_files(tmp_path, monkeypatch):
    result = run_case(DEMO, samples=300, sobol_base=0)
    forked = []
    real_start = parallel.Beside._start

    def start(job):
        real_start(job)
        forked.append(job.forked)

    monkeypatch.setattr(parallel.Beside, "_start", start)
    write_outputs(result, tmp_path / "forked")
    assert forked == [True]
    monkeypatch.setattr(parallel, "can_fork", lambda: False)
    write_outputs(result, tmp_path / "here")
    assert forked == [True, False]
    a, b = _files(tmp_path / "forked"), _files(tmp_path / "here")
    assert set(a) == set(b) and {"lcoe_distribution.png", "tornado.png", "trials.csv"} <= set(a)
    for name in a:
        if name != "workbook.xlsx":  # the zip holds the time of writing
            assert a[name] == b[name], name


@needs_fork
def test_child_forked_before_the_computation_gives_the_same_files(tmp_path, monkeypatch):
    # as lcoe run does: the child imports matplotlib while the case is computed, then draws
    with picture_maker() as pictures:
        assert pictures.forked
        result = run_case(DEMO, samples=200, sobol_base=0)
        write_outputs(result, tmp_path / "early", pictures=pictures)
    monkeypatch.setattr(parallel, "can_fork", lambda: False)
    write_outputs(result, tmp_path / "here")
    a, b = _files(tmp_path / "early"), _files(tmp_path / "here")
    assert set(a) == set(b)
    for name in a:
        if name != "workbook.xlsx":
            assert a[name] == b[name], name
    assert not _children_of_this_process()


@needs_fork
def test_arguments_reach_the_child_after_its_preload():
    parent = os.getpid()
    big = bytes(range(256)) * 4096  # 1 MB: more than a pipe holds
    loaded = []
    with beside(lambda data, k: (os.getpid(), len(data) * k, loaded),
                preload=lambda: loaded.append(os.getpid())) as job:
        job.submit(big, 3)
        pid, size, seen = job.result()
    assert pid != parent and size == 3 * len(big) and seen == [pid] and loaded == []


@needs_fork
@pytest.mark.parametrize("how", ["preload dies", "arguments cannot travel"])
def test_child_lost_before_the_arguments_means_computed_here(how):
    parent = os.getpid()

    def preload():
        if how == "preload dies":
            os.kill(os.getpid(), signal.SIGKILL)

    def compute(x):
        return os.getpid(), x if isinstance(x, str) else x()

    with beside(compute, preload=preload) as job:
        assert job.forked
        time.sleep(0.2)
        # a broken pipe to a dead child, or a lambda (which cannot be pickled)
        job.submit("here" * 100_000 if how == "preload dies" else lambda: "here")
        pid, value = job.result()
        assert pid == parent and value.startswith("here")
    assert not _children_of_this_process()


@needs_fork
def test_a_process_forked_meanwhile_does_not_hold_the_child_up():
    # it inherits the pipes' ends; the messages carry their length, so neither side waits for
    # every copy of an end to close
    with beside(lambda x: (os.getpid(), x)) as job:
        other = os.fork()
        if other == 0:  # pragma: no cover - a process that lives on
            time.sleep(5)
            os._exit(0)
        try:
            t0 = time.perf_counter()
            job.submit("x")
            pid, x = job.result()
            assert pid not in (os.getpid(), other) and x == "x"
            assert time.perf_counter() - t0 < 4
        finally:
            os.kill(other, signal.SIGKILL)
            os.waitpid(other, 0)


@needs_fork
def test_a_silent_child_is_killed_and_the_value_computed_here(monkeypatch):
    monkeypatch.setattr(parallel, "WAIT_S", 0.5)
    parent = os.getpid()

    def compute():
        if os.getpid() != parent:
            time.sleep(60)
        return "here"

    with beside(compute) as job:
        assert job.forked
        assert job.result() == "here"
    assert not _children_of_this_process()


@needs_fork
def test_value_comes_from_the_child():
    import gc

    with beside(lambda: os.getpid()) as job:
        assert job.forked
        assert gc.get_freeze_count() > 0  # the collector leaves the shared pages alone
        assert job.result() != os.getpid()
    assert gc.get_freeze_count() == 0


@needs_fork
@pytest.mark.parametrize("how", ["raises", "dies", "unpicklable"])
def test_failed_child_means_the_value_is_computed_here(how):
    parent = os.getpid()

    def compute():
        if os.getpid() != parent:
            if how == "raises":
                raise RuntimeError("in the child only")
            if how == "dies":
                os.kill(os.getpid(), signal.SIGKILL)
            return lambda: None  # cannot be pickled
        return "computed here"

    with beside(compute) as job:
        assert job.forked
        assert job.result() == "computed here"
    assert not _children_of_this_process()


def test_an_error_is_raised_in_the_command_as_without_a_child():
    def compute():
        raise ValueError("bad picture")

    with beside(compute) as job, pytest.raises(ValueError, match="bad picture"):
        job.result()


@needs_fork
def test_leaving_the_block_early_kills_and_reaps_the_child():
    with pytest.raises(KeyboardInterrupt), beside(lambda: time.sleep(60)) as job:
        assert job.forked
        raise KeyboardInterrupt
    assert not _children_of_this_process()


def test_no_fork_while_another_thread_runs():
    stop = threading.Event()
    t = threading.Thread(target=stop.wait)
    t.start()
    try:
        with beside(lambda: os.getpid()) as job:
            assert not job.forked
            assert job.result() == os.getpid()
    finally:
        stop.set()
        t.join()
