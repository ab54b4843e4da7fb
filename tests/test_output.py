"""Publishing output folders: always entirely the old run or entirely the new one.

Failures are injected at every step of :func:`lcoe.export.staging.publish` (staging, writing,
marker,
swap, the two-rename fallback, deleting the old folder; the one rename of a first run), by
exception, by Ctrl-C and by SIGKILL of a child process; two processes race for one folder.
"""

from __future__ import annotations

import errno
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import textwrap
from pathlib import Path

import pytest
from conftest import DEMO, ROOT

from lcoe.case.errors import InputError
from lcoe.export import staging as output
from lcoe.export.staging import MARKER, publish, publish_file

OLD = {"summary.json": "old run", "trials.csv": "old trials", "old_plot.png": "old"}
NEW = {"summary.json": "new run", "workbook.xlsx": "new book"}


def _write(target, files, force=True):
    with publish(target, force=force) as stage:
        for name, text in files.items():
            stage.write_text(name, text)


def _content(folder: Path) -> dict:
    return {p.name: p.read_text() for p in folder.iterdir() if p.name != MARKER}


def _leftovers(parent: Path) -> list[str]:
    return sorted(p.name for p in parent.iterdir() if ".lcoe-" in p.name)


def _old_or_new(target: Path) -> str:
    """'old' or 'new' when the folder is entirely one run (marker included), else fail."""
    got = _content(target)
    listed = (target / MARKER).read_text().splitlines()[1:]
    assert sorted(listed) == sorted(got), "marker does not list exactly the folder's files"
    assert got in (OLD, NEW), f"mixed folder: {got}"
    return "old" if got == OLD else "new"


@pytest.fixture
def target(tmp_path):
    t = tmp_path / "out"
    _write(t, OLD, force=False)
    return t


def test_publish_new_folder_in_one_piece(tmp_path):
    t = tmp_path / "a" / "b"
    _write(t, NEW, force=False)
    assert _old_or_new(t) == "new"
    assert _leftovers(tmp_path / "a") == []


def test_force_replaces_whole_folder_no_stale_files(target):
    _write(target, NEW)
    assert _old_or_new(target) == "new"  # trials.csv and old_plot.png of the old run are gone
    assert _leftovers(target.parent) == []


def test_refusals_before_any_work(target, tmp_path):
    with pytest.raises(InputError, match="not empty"):
        _write(target, NEW, force=False)
    (target / "notes.txt").write_text("mine")
    with pytest.raises(InputError, match=r"did not write \(notes.txt\)"):
        _write(target, NEW, force=True)
    foreign = tmp_path / "foreign"
    foreign.mkdir()
    (foreign / "thesis.tex").write_text("x")
    with pytest.raises(InputError, match="did not write"):
        _write(foreign, NEW, force=True)
    f = tmp_path / "file"
    f.write_text("x")
    with pytest.raises(InputError, match="not a folder"):
        _write(f, NEW, force=True)
    with pytest.raises(InputError, match="root of the file system"):
        _write("/", NEW, force=True)
    assert (foreign / "thesis.tex").read_text() == "x" and f.read_text() == "x"
    assert _leftovers(tmp_path) == []


def test_replace_own_only_refreshes_a_folder_lcoe_wrote(target, tmp_path):
    with publish(target, replace_own=True) as stage:
        stage.write_text("summary.json", "new run")
        stage.write_text("workbook.xlsx", "new book")
    assert _old_or_new(target) == "new"
    other = tmp_path / "other"
    other.mkdir()
    (other / "x").write_text("x")
    with pytest.raises(InputError, match="not empty"):
        with publish(other, replace_own=True):
            pass


def test_exception_in_block_leaves_old_folder_and_releases_lock(target):
    with pytest.raises(RuntimeError):
        with publish(target, force=True) as stage:
            stage.write_text("summary.json", "half")
            raise RuntimeError("plotting failed")
    assert _old_or_new(target) == "old"
    assert _leftovers(target.parent) == []
    _write(target, NEW)  # the lock was released
    assert _old_or_new(target) == "new"


def test_stage_refuses_paths_outside_itself(tmp_path):
    with pytest.raises(ValueError):
        with publish(tmp_path / "o") as stage:
            stage.write_text("../escape.txt", "x")
    assert not (tmp_path / "escape.txt").exists() and not (tmp_path / "o").exists()


def _enospc(*a, **k):
    raise OSError(errno.ENOSPC, "No space left on device")


def _interrupt(*a, **k):
    raise KeyboardInterrupt


class _NthCall:
    """Wrap ``real`` so that its n-th call (1-based) runs ``fail`` instead."""

    def __init__(self, real, n, fail):
        self.real, self.n, self.fail, self.calls = real, n, fail, 0

    def __call__(self, *a, **k):
        self.calls += 1
        if self.calls == self.n:
            return self.fail(*a, **k)
        return self.real(*a, **k)


STEPS = ["mkdtemp", "write", "marker", "exchange", "fallback_aside", "fallback_in",
         "delete_old", "fallback_delete_old"]


def _inject(monkeypatch, step, fail):
    if step == "mkdtemp":
        monkeypatch.setattr(tempfile, "mkdtemp", fail)
    elif step == "marker":  # the marker is written after every exporter's file
        real = Path.write_text
        monkeypatch.setattr(Path, "write_text", lambda self, *a, **k: (
            fail() if self.name == MARKER else real(self, *a, **k)))
    elif step == "exchange":
        monkeypatch.setattr(output, "_exchange", fail)
    elif step.startswith("fallback"):
        monkeypatch.setattr(output, "_exchange", lambda a, b: False)
        if step == "fallback_aside":
            monkeypatch.setattr(os, "rename", _NthCall(os.rename, 1, fail))
        elif step == "fallback_in":
            monkeypatch.setattr(os, "rename", _NthCall(os.rename, 2, fail))
        else:
            monkeypatch.setattr(shutil, "rmtree", lambda *a, **k: None)
    elif step == "delete_old":
        monkeypatch.setattr(shutil, "rmtree", lambda *a, **k: None)


@pytest.mark.parametrize("fail", [_enospc, _interrupt], ids=["ENOSPC", "Ctrl-C"])
@pytest.mark.parametrize("step", STEPS)
def test_failure_at_every_step_leaves_old_or_new(target, monkeypatch, step, fail):
    with monkeypatch.context() as m:
        if step == "write":
            def run():
                with publish(target, force=True) as stage:
                    stage.write_text("summary.json", "new run")
                    fail()
        else:
            _inject(m, step, fail)

            def run():
                _write(target, NEW)
        try:
            run()
            raised = False
        except (OSError, KeyboardInterrupt):
            raised = True
    state = _old_or_new(target)
    # A failed step keeps the old run; only a failure in deleting the old folder comes after
    # the new one is in place.
    assert state == ("new" if step in ("delete_old", "fallback_delete_old") else "old")
    assert raised == (step not in ("delete_old", "fallback_delete_old"))
    # The next run cleans whatever was left and publishes normally.
    _write(target, NEW)
    assert _old_or_new(target) == "new"
    assert _leftovers(target.parent) == []


@pytest.mark.parametrize("fail", [_enospc, _interrupt], ids=["ENOSPC", "Ctrl-C"])
@pytest.mark.parametrize("step", ["mkdtemp", "write", "marker", "rename"])
def test_failure_at_every_step_of_a_first_run_leaves_no_folder(tmp_path, monkeypatch, step,
                                                               fail):
    # No old run: the one rename publishes the stage; a failure before it leaves nothing
    target = tmp_path / "new"
    with monkeypatch.context() as m:
        if step == "rename":
            m.setattr(os, "rename", _NthCall(os.rename, 1, fail))
        elif step != "write":
            _inject(m, step, fail)
        with pytest.raises((OSError, KeyboardInterrupt)):
            with publish(target) as stage:
                stage.write_text("summary.json", "new run")
                if step == "write":
                    fail()
                stage.write_text("workbook.xlsx", "new book")
    assert not os.path.lexists(target)
    assert _leftovers(tmp_path) == []
    _write(target, NEW, force=False)
    assert _old_or_new(target) == "new"
    assert _leftovers(tmp_path) == []


def test_interrupt_during_swap_is_held_back(target, monkeypatch):
    real = output._exchange

    def exchange_with_ctrl_c(a, b):
        signal.raise_signal(signal.SIGINT)  # arrives in the middle of publishing
        return real(a, b)

    monkeypatch.setattr(output, "_exchange", exchange_with_ctrl_c)
    with pytest.raises(KeyboardInterrupt):
        _write(target, NEW)
    assert _old_or_new(target) == "new"  # the swap finished before the interrupt was raised
    assert _leftovers(target.parent) == []


def test_second_run_into_locked_folder_fails_at_once(target):
    with publish(target, force=True) as stage:
        stage.write_text("summary.json", "first")
        with pytest.raises(InputError, match=r"another lcoe run \(process \d+\)"):
            _write(target, NEW)
    assert _content(target) == {"summary.json": "first"}
    assert _leftovers(target.parent) == []


@pytest.mark.skipif(not hasattr(os, "fork"), reason="fork only")
def test_forked_worker_does_not_keep_the_folder_locked(target):
    # A local worker forked while the command holds the folder (lcoe run --workers N on
    # Linux) inherits the lock's descriptor; the lock file is removed while still locked, so
    # the next run locks a new file and is not held up by a worker that lives on.
    read, write = os.pipe()
    with publish(target, force=True) as stage:
        stage.write_text("summary.json", "first")
        pid = os.fork()
        if pid == 0:  # the "worker": waits until the parent has tried again, then exits
            os.close(write)
            os.read(read, 1)
            os._exit(0)
    try:
        _write(target, NEW)  # the worker still runs: the folder is free all the same
        assert _content(target) == NEW
    finally:
        os.write(write, b"x")
        os.waitpid(pid, 0)
        os.close(read)
        os.close(write)


def test_publish_file(tmp_path):
    p = tmp_path / "case.toml"
    publish_file(p, b"one")
    with pytest.raises(InputError, match="file exists"):
        publish_file(p, b"two")
    publish_file(p, b"three", force=True)
    assert p.read_bytes() == b"three"
    with pytest.raises(InputError, match="is a folder"):
        publish_file(tmp_path, b"x", force=True)
    assert sorted(x.name for x in tmp_path.iterdir()) == ["case.toml"]


# --- Other processes -------------------------------------------------------------------------

_CHILD = textwrap.dedent("""
    import os, signal, sys
    sys.path.insert(0, {root!r})
    from pathlib import Path
    from lcoe.export import staging as output
    target, step = Path(sys.argv[1]), sys.argv[2]
    die = lambda *a, **k: os.kill(os.getpid(), signal.SIGKILL)
    real_rename = os.rename
    if step == "exchange":
        output._exchange = die
    elif step == "after_exchange":
        real = output._exchange
        output._exchange = lambda a, b: (real(a, b), die())
    elif step.startswith("between_renames"):
        output._exchange = lambda a, b: False
        calls = []
        def rename(a, b):
            calls.append(1)
            if len(calls) == 2:
                die()
            real_rename(a, b)
        os.rename = rename
    elif step == "first_rename":
        os.rename = die
    with output.publish(target, force=True) as stage:
        stage.write_text("summary.json", "new run")
        if step == "writing":
            die()
        stage.write_text("workbook.xlsx", "new book")
""")


def test_sigkill_at_the_rename_of_a_first_run_leaves_no_folder(tmp_path):
    script = tmp_path / "child.py"
    script.write_text(_CHILD.format(root=str(ROOT)))
    target = tmp_path / "new"
    r = subprocess.run([sys.executable, str(script), str(target), "first_rename"],
                       capture_output=True)
    assert r.returncode == -signal.SIGKILL
    assert not os.path.lexists(target) and _leftovers(tmp_path)
    _write(target, NEW, force=False)
    assert _old_or_new(target) == "new"
    assert _leftovers(tmp_path) == []


@pytest.mark.parametrize("step", ["writing", "exchange", "after_exchange", "between_renames"])
def test_sigkill_leaves_old_or_new_and_next_run_cleans(target, tmp_path, step):
    script = tmp_path / "child.py"
    script.write_text(_CHILD.format(root=str(ROOT)))
    r = subprocess.run([sys.executable, str(script), str(target), step], capture_output=True)
    assert r.returncode == -signal.SIGKILL
    left = _leftovers(target.parent)
    assert left, "the killed run leaves its staging (or moved-aside) folder"
    if step == "between_renames":
        # The one moment of the two-rename fallback where the target is missing: the old
        # folder waits beside it, whole, and the next run puts it back.
        assert not target.exists()
        assert _content(target.parent / next(n for n in left if ".lcoe-old-" in n)) == OLD
        with pytest.raises(RuntimeError):
            with publish(target, force=True):
                raise RuntimeError("this run fails too")
    assert _old_or_new(target) == ("new" if step == "after_exchange" else "old")
    _write(target, NEW)  # the kernel released the dead process's lock; leftovers are cleaned
    assert _old_or_new(target) == "new"
    assert _leftovers(target.parent) == []


def test_next_run_into_a_neighbour_folder_cleans_too(target, tmp_path):
    script = tmp_path / "child.py"
    script.write_text(_CHILD.format(root=str(ROOT)))
    r = subprocess.run([sys.executable, str(script), str(target), "writing"], capture_output=True)
    assert r.returncode == -signal.SIGKILL and _leftovers(tmp_path)
    with publish(tmp_path / "busy") as busy:  # a live run's staging folder is left alone
        busy.write_text("summary.json", "busy")
        _write(tmp_path / "other", NEW, force=False)
        assert _leftovers(tmp_path) == sorted(p.name for p in tmp_path.iterdir()
                                              if p.name.startswith(".busy.lcoe-"))
    assert _old_or_new(target) == "old" and _leftovers(tmp_path) == []


def _cli(*args, cwd=None):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    return subprocess.Popen([sys.executable, "-m", "lcoe.cli", *map(str, args)], cwd=cwd,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)


def test_cli_refuses_folder_another_process_is_writing(target):
    with publish(target, force=True) as stage:
        r = _cli("run", DEMO, "--out", target, "--force", "--samples", "0")
        out, err = r.communicate(timeout=300)
        for name, text in NEW.items():
            stage.write_text(name, text)
    assert r.returncode == 2
    assert err.count("\n") == 1 and "another lcoe run" in err and "Traceback" not in err
    assert _old_or_new(target) == "new"


def test_two_cli_runs_race_for_one_folder(tmp_path):
    out = tmp_path / "race"
    procs = [_cli("run", DEMO, "--out", out, "--quiet", "--samples", "0", "--seed", str(s))
             for s in (1, 2)]
    results = [(p.wait(timeout=600), p.stderr.read()) for p in procs]
    codes = sorted(code for code, _ in results)
    assert codes == [0, 2], results
    err = next(e for code, e in results if code == 2)
    assert err.count("\n") == 1 and ("another lcoe run" in err or "not empty" in err)
    listed = (out / MARKER).read_text().splitlines()[1:]
    assert sorted(listed) == sorted(p.name for p in out.iterdir() if p.name != MARKER)
    assert _leftovers(tmp_path) == []
