"""One piece of an export computed in a forked process while this process writes the rest.

The pictures of a run (matplotlib: its import and the drawing, 0.4-0.7 s) and the workbook
and ``trials.csv`` (openpyxl and text, 0.1-0.4 s) need nothing from each other. On a machine
with a free core, :func:`beside` computes a value (e.g. the PNG bytes of every picture) in a
forked child while the caller writes its files, and hands the value over through a pipe.

Rules that keep the output folder's guarantees (:mod:`lcoe.export.staging`) intact:

- The child writes **no file**: it only sends its value (pickled) through the pipe; the caller
  writes every file into its stage, as without a child.
- The child never returns into the caller's code: whatever happens it ends with ``os._exit``
  (no ``finally`` or ``atexit`` of the command runs twice, no buffered output is repeated). It
  dies with the command (Linux ``PR_SET_PDEATHSIG``) and on Ctrl-C at once (default signal
  handlers); leaving the ``with`` block early (an exception, Ctrl-C) kills and reaps it.
- Any failure of the child (an exception, a crash, a kill) costs time, not a result: the
  caller then computes the value itself, so a real error is raised where it would have been
  raised without a child, with the command's usual handling.
- A child is forked only on Linux and only when the process runs no other Python thread
  (a fork copies no thread, and a lock another thread held would stay locked in the child);
  otherwise the value is computed in this process when asked for.
- Until the child is reaped the command's objects are frozen out of the garbage collector
  (``gc.freeze``): neither process's collector then touches, and so copies, the memory pages
  they share after the fork, and the fork costs next to no CPU (measured: 1.12 s of CPU for
  the export of 20,000 trials with or without the child; 1.23-1.33 s when both collectors ran).
  On a busy machine the child gains little (Linux shares a session's CPU among its processes,
  ``sched_autogroup``) but costs nothing either; with a free core the pictures are drawn while
  the workbook is written.
"""

from __future__ import annotations

import gc
import os
import pickle
import signal
import sys
import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager

_PR_SET_PDEATHSIG = 1


def can_fork() -> bool:
    """True when a child may be forked here: Linux and no other Python thread."""
    return (sys.platform.startswith("linux") and hasattr(os, "fork")
            and threading.active_count() == 1)


class Beside:
    """A value being computed beside this process (see :func:`beside`)."""

    def __init__(self, compute: Callable[[], object]):
        self._compute = compute
        self._pid: int | None = None
        self._fd: int | None = None
        self._frozen = False
        self.forked = False

    def _start(self) -> None:
        if not can_fork():
            return
        read, write = os.pipe()
        parent = os.getpid()
        # the command's objects out of the collector's reach while both processes run: neither
        # collector touches (and so copies) the memory pages they still share after the fork
        gc.freeze()
        self._frozen = True
        try:
            pid = os.fork()
        except OSError:  # no memory or process slot for a child: compute here instead
            self.close()
            os.close(read)
            os.close(write)
            return
        if pid == 0:  # pragma: no cover - runs in the child (reported through the pipe)
            _child(self._compute, read, write, parent)
        os.close(write)
        self._pid, self._fd, self.forked = pid, read, True

    def result(self):
        """The value: the child's when it delivered one, else computed here and now."""
        if self._pid is not None:
            try:
                with os.fdopen(self._fd, "rb") as fh:
                    self._fd = None
                    data = fh.read()
                _, status = os.waitpid(self._pid, 0)
                self._pid = None
            finally:
                self.close()
            if status == 0 and data:
                return pickle.loads(data)
        return self._compute()

    def close(self) -> None:
        """Kill and reap a child still running; close the pipe; let the collector see every
        object again."""
        if self._frozen:
            gc.unfreeze()
            self._frozen = False
        if self._fd is not None:
            os.close(self._fd)
            self._fd = None
        if self._pid is not None:
            pid, self._pid = self._pid, None
            try:
                os.kill(pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
            os.waitpid(pid, 0)


def _child(compute, read: int, write: int, parent: int) -> None:  # pragma: no cover
    """Body of the forked child: compute, send the pickled value, ``os._exit``."""
    code = 1
    try:
        os.close(read)
        for name in ("SIGINT", "SIGTERM"):
            signal.signal(getattr(signal, name), signal.SIG_DFL)
        _die_with(parent)
        data = pickle.dumps(compute(), protocol=pickle.HIGHEST_PROTOCOL)
        view = memoryview(data)
        while view:
            view = view[os.write(write, view):]
        code = 0
    except BaseException:  # noqa: BLE001 - the caller computes the value itself
        pass
    finally:
        os._exit(code)


def _die_with(parent: int) -> None:  # pragma: no cover - runs in the child
    """Have the kernel kill this child when the command dies; exit if it already has."""
    import ctypes

    try:
        ctypes.CDLL(None, use_errno=True).prctl(_PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
    except (AttributeError, OSError):
        pass
    if os.getppid() != parent:
        os._exit(1)


@contextmanager
def beside(compute: Callable[[], object]) -> Iterator[Beside]:
    """Start ``compute()`` in a forked child; ``.result()`` inside the block returns its value.

    Parameters
    ----------
    compute : callable
        Takes no argument and returns a picklable value; must not write files or change state
        the caller relies on (it may run in a child process or, as a fallback, here).

    Yields
    ------
    Beside
        ``.result()`` waits for the child (or computes the value here when no child could run
        or the child failed). Leaving the block kills a child not waited for.
    """
    job = Beside(compute)
    job._start()
    try:
        yield job
    finally:
        job.close()
