"""Running a command: any exception ends as one line on stderr and an exit status (2 for
bad input or an internal error, 130 for Ctrl-C); library warnings are dropped.
"""

from __future__ import annotations

import errno
import warnings
from collections.abc import Callable

from lcoe.case.errors import InputError, cut

# ---------------------------------------------------------------------------------------------
# The command line's last line of defence: every exception becomes one line and an exit status
# ---------------------------------------------------------------------------------------------

#: Exit status of an interrupted run (128 + SIGINT, the shell's convention).
EXIT_INTERRUPTED = 130

_OS_HINTS = {
    errno.ENOSPC: "no space left on device; free some space or choose another --out folder",
    errno.EDQUOT: "disk quota exceeded; free some space or choose another --out folder",
    errno.EROFS: "read-only file system; choose another --out folder",
    errno.EACCES: "permission denied",
    errno.EPERM: "operation not permitted",
}


def describe(exc: BaseException, interrupted: bool = False) -> tuple[str, int]:
    """The one line (without the ``lcoe:`` prefix) and exit status for an exception.

    Parameters
    ----------
    exc : BaseException
        What reached the command line.
    interrupted : bool
        Ctrl-C was pressed during the run; a library may have turned the interrupt into
        another exception (e.g. a reader reporting an unreadable file), so the interrupt wins.

    Returns
    -------
    (str, int)
        Message and exit status: 130 on interrupt, otherwise 2.
    """
    if interrupted or isinstance(exc, KeyboardInterrupt):
        return "interrupted", EXIT_INTERRUPTED
    if isinstance(exc, InputError):
        return f"error: {exc}", 2
    if isinstance(exc, OSError):
        names = [n for n in (exc.filename, exc.filename2) if n is not None]
        where = cut(" -> ".join(map(str, names)), 120) + ": " if names else ""
        what = _OS_HINTS.get(exc.errno) or cut(exc.strerror or exc, 120)
        return f"error: {where}{what}", 2
    if isinstance(exc, MemoryError):
        return "error: out of memory; use fewer --samples or a smaller --sobol", 2
    return (f"error: internal error{_origin(exc)}: {type(exc).__name__}: {cut(exc)} (a bug in "
            f"lcoe or a library; please report it with the case file; set LCOE_TRACEBACK=1 "
            f"to see the traceback)"), 2


def _origin(exc: BaseException) -> str:
    """`` in matplotlib (from lcoe/export/plots.py:120)`` for the library that raised."""
    import os
    import traceback

    frames = traceback.extract_tb(exc.__traceback__)
    here = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))  # lcoe/
    ours = [f for f in frames if os.path.abspath(f.filename).startswith(here)]
    last_ours = ours[-1] if ours else None
    if not frames or frames[-1] is last_ours:
        return "" if last_ours is None else (f" (lcoe/{os.path.relpath(last_ours.filename, here)}"
                                             f":{last_ours.lineno})")
    lib = frames[-1].filename.replace("\\", "/")
    parts = lib.split("/site-packages/", 1)[-1].split("/")
    name = parts[0] if "site-packages" in lib else os.path.basename(lib)
    src = "" if last_ours is None else (f" (from lcoe/{os.path.relpath(last_ours.filename, here)}"
                                        f":{last_ours.lineno})")
    return f" in {name}{src}"


def run_guarded(func: Callable[[], int], stderr=None) -> int:
    """Run a command; print any exception as one line on stderr and return the exit status.

    Warnings that nobody collected are dropped, never printed (see :func:`collect_warnings`).
    Ctrl-C is remembered, so that an interrupt a library turned into another error is still
    reported as an interrupt (status 130). ``LCOE_TRACEBACK=1`` re-raises for developers.
    """
    import os
    import signal
    import sys
    import threading

    stderr = stderr or sys.stderr
    pressed: list[int] = []

    def on_interrupt(signum, frame):
        pressed.append(signum)
        raise KeyboardInterrupt

    main_thread = threading.current_thread() is threading.main_thread()
    before = signal.signal(signal.SIGINT, on_interrupt) if main_thread else None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return func()
    except SystemExit:
        raise
    except BaseException as exc:
        if os.environ.get("LCOE_TRACEBACK") and not isinstance(exc, InputError):
            raise
        message, status = describe(exc, interrupted=bool(pressed))
        print(f"lcoe: {message}", file=stderr)
        return status
    finally:
        if main_thread and before is not None:
            signal.signal(signal.SIGINT, before)
