"""Errors from the environment reach the user as one line: disk full, read-only or forbidden
output folder, Ctrl-C (also during start-up), a failing plotting library; warnings of
libraries go into the run's notes, never onto the terminal."""

from __future__ import annotations

import errno
import json
import os
import signal
import subprocess
import sys
import tempfile
import time
import warnings

import pytest
from conftest import DEMO, ROOT

from lcoe.case.errors import collect_warnings
from lcoe.cli import main
from lcoe.cli.guard import describe

RUN = ["run", str(DEMO), "--quiet", "--samples", "0"]


def _one_line(err: str) -> str:
    assert err.count("\n") == 1 and err.startswith("lcoe: "), err
    assert "Traceback" not in err
    return err


def _untouched(out, tmp_path):
    assert not out.exists()
    assert [p.name for p in tmp_path.iterdir() if ".lcoe-" in p.name] == []


@pytest.mark.parametrize("code,words", [
    (errno.ENOSPC, "no space left on device"),
    (errno.EROFS, "read-only file system"),
    (errno.EACCES, "permission denied"),
    (errno.EDQUOT, "disk quota exceeded"),
])
def test_disk_full_and_forbidden_writes_are_one_line(tmp_path, capsys, monkeypatch, code, words):
    from lcoe.export.workbook import book as wb

    def full(result, path):
        path.write_bytes(b"PK half a workbook")
        raise OSError(code, os.strerror(code), str(path))

    monkeypatch.setattr(wb, "write_workbook", full)
    out = tmp_path / "res"
    assert main(RUN + ["--out", str(out)]) == 2
    err = _one_line(capsys.readouterr().err)
    assert words in err and "workbook.xlsx" in err
    _untouched(out, tmp_path)


def test_output_folder_cannot_be_created(tmp_path, capsys, monkeypatch):
    def refuse(*a, **k):
        raise OSError(errno.EROFS, "Read-only file system", str(tmp_path / ".res.lcoe-stage-x"))

    monkeypatch.setattr(tempfile, "mkdtemp", refuse)
    assert main(RUN + ["--out", str(tmp_path / "res")]) == 2
    assert "read-only file system" in _one_line(capsys.readouterr().err)
    _untouched(tmp_path / "res", tmp_path)


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0,
                    reason="needs a user that file permissions apply to")
def test_read_only_parent_folder_for_real(tmp_path, capsys):
    parent = tmp_path / "ro"
    parent.mkdir()
    parent.chmod(0o555)
    try:
        assert main(RUN + ["--out", str(parent / "res")]) == 2
        assert "permission denied" in _one_line(capsys.readouterr().err)
    finally:
        parent.chmod(0o755)


def test_plotting_library_failure_is_one_line_nothing_written(tmp_path, capsys, monkeypatch):
    import lcoe.export.plots as plots

    def broken(inputs):
        import matplotlib.pyplot as plt

        plt.figure(figsize=(-1.0, 2.0))  # matplotlib refuses: a real exception from inside it

    monkeypatch.setattr(plots, "render_inputs", broken)
    out = tmp_path / "res"
    assert main(RUN + ["--out", str(out)]) == 2
    err = _one_line(capsys.readouterr().err)
    assert "in matplotlib" in err and "ValueError" in err
    _untouched(out, tmp_path)


def test_interrupt_turned_into_another_error_by_a_library_is_still_an_interrupt(
        tmp_path, capsys, monkeypatch):
    # A reader that swallows Ctrl-C and raises its own error (as a file parser may when the
    # interrupt lands inside it): before, the user read "not a readable TMY3 file".
    import pvlib

    def swallowing_reader(*a, **k):
        try:
            signal.raise_signal(signal.SIGINT)
        except KeyboardInterrupt:
            raise ValueError("Error tokenizing data") from None

    import lcoe.study.trials

    monkeypatch.setattr(pvlib.iotools, "read_tmy3", swallowing_reader)
    # the process keeps prepared sites (earlier tests ran the demo): read the weather again
    monkeypatch.setattr(lcoe.study.trials, "_CACHE", {})
    out = tmp_path / "res"
    assert main(RUN + ["--out", str(out)]) == 130
    assert _one_line(capsys.readouterr().err) == "lcoe: interrupted\n"
    _untouched(out, tmp_path)


@pytest.mark.parametrize("delay_s", [0.02, 0.3, 1.0, 2.5])
def test_ctrl_c_at_any_moment_of_start_up_and_run(tmp_path, delay_s):
    # The child says "ready" just before calling main(); from then on (lcoe's own imports,
    # reading the weather, the model, writing) Ctrl-C must end in one line and status 130.
    # Before that only the interpreter's start-up runs, as for any Python program.
    out = tmp_path / "res"
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    code = ("import sys, lcoe.cli; print('ready', flush=True); "
            f"status = lcoe.cli.main({RUN + ['--out', str(out)]!r}); "
            "print('returned', status, flush=True); sys.exit(status)")
    p = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE,
                         stderr=subprocess.PIPE, text=True, env=env)
    assert p.stdout.readline() == "ready\n"
    time.sleep(delay_s)
    p.send_signal(signal.SIGINT)
    said, err = p.communicate(timeout=300)
    if p.returncode == 0 or "returned 0" in said:
        # finished before the interrupt arrived (the run may take under 2.5 s): legal; a
        # signal during the interpreter's own shutdown, after main() returned, ends the
        # process by the signal (Python restores the default handlers as it exits)
        return
    assert p.returncode == 130, err
    assert err == "lcoe: interrupted\n"
    _untouched(out, tmp_path)


def test_library_warnings_go_to_notes_not_terminal(tmp_path, capsys, monkeypatch):
    from lcoe.study import run as runner

    real = runner.run_case

    def noisy(*a, **k):
        warnings.warn("overflow encountered in exp", RuntimeWarning, stacklevel=1)
        warnings.warn("old spelling", DeprecationWarning, stacklevel=1)
        return real(*a, **k)

    monkeypatch.setattr(runner, "run_case", noisy)
    out = tmp_path / "res"
    assert main(RUN + ["--out", str(out)]) == 0
    assert capsys.readouterr().err == ""
    notes = json.loads((out / "summary.json").read_text())["notes"]
    assert "overflow encountered in exp" in notes
    assert not any("old spelling" in n for n in notes)


def test_collect_warnings_dedups_and_drops_developer_warnings():
    with collect_warnings() as caught:
        for _ in range(3):
            warnings.warn("a  value\nwas clipped", UserWarning, stacklevel=1)
        warnings.warn("renamed", FutureWarning, stacklevel=1)
    assert caught == ["a value was clipped"]


def test_describe_cuts_long_messages_to_one_line():
    msg, status = describe(RuntimeError("x" * 5000 + "\n" + "y"))
    assert status == 2 and "\n" not in msg and len(msg) < 400 and "internal error" in msg
    msg, status = describe(OSError(errno.ENOSPC, "No space", "/d/" + "z" * 500))
    assert status == 2 and len(msg) < 260 and "no space left" in msg
    assert describe(KeyboardInterrupt()) == ("interrupted", 130)
    assert describe(MemoryError())[0].startswith("error: out of memory")
