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
import struct
import sys
import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager

_PR_SET_PDEATHSIG = 1
#: Length header of a message through a pipe.
_HEAD = struct.Struct("<Q")
#: Longest wait [s] for the child's value once it is asked for (its pictures take about 1 s):
#: a child silent for longer is killed and the value is computed in the command.
WAIT_S = 120.0


def can_fork() -> bool:
    """True when a child may be forked here: Linux and no other Python thread."""
    return (sys.platform.startswith("linux") and hasattr(os, "fork")
            and threading.active_count() == 1)


class Beside:
    """A value being computed beside this process (see :func:`beside`)."""

    def __init__(self, compute: Callable[..., object], preload: Callable[[], None] | None = None):
        self._compute, self._preload = compute, preload
        self._args: tuple | None = None
        self._pid: int | None = None
        self._to_child: int | None = None
        self._from_child: int | None = None
        self._frozen = False
        self.forked = False

    def _start(self) -> None:
        if not can_fork():
            return
        to_read, to_write = os.pipe()
        from_read, from_write = os.pipe()
        parent = os.getpid()
        # the command's objects out of the collector's reach while both processes run: neither
        # collector touches (and so copies) the memory pages they still share after the fork
        gc.freeze()
        self._frozen = True
        try:
            pid = os.fork()
        except OSError:  # no memory or process slot for a child: compute here instead
            self.close()
            for fd in (to_read, to_write, from_read, from_write):
                os.close(fd)
            return
        if pid == 0:  # pragma: no cover - runs in the child (reported through the pipe)
            os.close(to_write)
            os.close(from_read)
            _child(self._compute, self._preload, to_read, from_write, parent)
        os.close(to_read)
        os.close(from_write)
        self._pid, self._to_child, self._from_child = pid, to_write, from_read
        self.forked = True

    def submit(self, *args) -> None:
        """Hand the arguments of ``compute`` to the child (pickled; kept for a fallback here)."""
        self._args = args
        if self._to_child is None:
            return
        fd, self._to_child = self._to_child, None
        try:
            _send(fd, pickle.dumps(args, protocol=pickle.HIGHEST_PROTOCOL))
        except (OSError, pickle.PicklingError, TypeError, AttributeError):
            self.close()  # the child died or the arguments cannot travel: compute here
        finally:
            os.close(fd)

    def result(self):
        """``compute(*args)``: the child's value when it delivered one, else computed here."""
        if self._args is None:
            self.submit()
        if self._pid is not None:
            try:
                data = _receive(self._from_child, WAIT_S)
                if data is not None:
                    _, status = os.waitpid(self._pid, 0)
                    self._pid = None
            finally:
                self.close()  # a child that sent nothing in time is killed here
            if data is not None and status == 0:
                return pickle.loads(data)
        return self._compute(*self._args)

    def close(self) -> None:
        """Kill and reap a child still running; close the pipes; let the collector see every
        object again."""
        if self._frozen:
            gc.unfreeze()
            self._frozen = False
        for name in ("_to_child", "_from_child"):
            fd = getattr(self, name)
            if fd is not None:
                setattr(self, name, None)
                os.close(fd)
        if self._pid is not None:
            pid, self._pid = self._pid, None
            try:
                os.kill(pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
            os.waitpid(pid, 0)


def _child(compute, preload, read: int, write: int, parent: int) -> None:  # pragma: no cover
    """Body of the forked child: preload, wait for the arguments, compute, send the pickled
    value, ``os._exit``."""
    code = 1
    try:
        for name in ("SIGINT", "SIGTERM"):
            signal.signal(getattr(signal, name), signal.SIG_DFL)
        _die_with(parent)
        if preload is not None:
            preload()
        data = _receive(read)
        if data is not None:
            _send(write, pickle.dumps(compute(*pickle.loads(data)),
                                      protocol=pickle.HIGHEST_PROTOCOL))
            code = 0
    except BaseException:  # noqa: BLE001 - the caller computes the value itself
        pass
    finally:
        os._exit(code)


def _send(fd: int, data: bytes) -> None:
    """Write one message: its length (8 bytes), then the bytes."""
    view = memoryview(_HEAD.pack(len(data)) + data)
    while view:
        view = view[os.write(fd, view):]


def _receive(fd: int, timeout: float | None = None) -> bytes | None:
    """Read one message of :func:`_send`; None when the pipe ends first or nothing arrives for
    ``timeout`` seconds.

    The length comes first, so the end of the message does not depend on every copy of the
    pipe's other end being closed (a process forked meanwhile may hold one).
    """
    import select

    chunks, want, size = [], _HEAD.size, None
    while want:
        if timeout is not None and not select.select([fd], [], [], timeout)[0]:
            return None
        chunk = os.read(fd, min(want, 1 << 20))
        if not chunk:
            return None
        chunks.append(chunk)
        want -= len(chunk)
        if not want and size is None:
            size = _HEAD.unpack(b"".join(chunks))[0]
            chunks, want = [], size
    return b"".join(chunks)


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
def beside(compute: Callable[..., object],
           preload: Callable[[], None] | None = None) -> Iterator[Beside]:
    """Fork a child that will compute ``compute(*args)``; hand it ``args`` with ``.submit`` and
    take the value with ``.result()`` inside the block.

    Parameters
    ----------
    compute : callable
        Returns a picklable value from picklable arguments; must not write files or change
        state the caller relies on (it runs in the child or, as a fallback, here).
    preload : callable, optional
        Run by the child at once, before the arguments come (e.g. imports): a child forked
        early does it while the command computes.

    Yields
    ------
    Beside
        ``.submit(*args)`` sends the arguments (``.result()`` without it calls ``compute()``);
        ``.result()`` waits for the child (or computes the value here when no child could run
        or the child failed). Leaving the block kills a child not waited for.
    """
    job = Beside(compute, preload)
    job._start()
    try:
        yield job
    finally:
        job.close()
