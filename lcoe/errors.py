"""Errors raised for bad user input.

Every problem with a case file, a weather file or a command-line option is raised as
:class:`InputError`, whose message is one line naming the file, the field, the value received
and what is allowed. The CLI prints that line and exits with status 2, without a traceback.
"""

from __future__ import annotations

import difflib
import errno
import warnings
from collections.abc import Callable, Iterable, Iterator
from contextlib import contextmanager


#: Longest echo of a user's value in a message [characters]; longer ones are cut in the middle.
MAX_VALUE_CHARS = 80
#: Longest error line [characters]: a safety net, messages are written to stay far below it.
MAX_LINE_CHARS = 600


def short_text(text, n: int = MAX_VALUE_CHARS) -> str:
    """``text`` with control characters escaped, cut to ``n`` characters in the middle.

    >>> short_text("a" * 100, 9)
    'aaa...aaa'
    """
    text = "".join(c if c.isprintable() or c == " " else repr(c)[1:-1] for c in str(text))
    if len(text) <= n:
        return text
    head = (n - 3) // 2
    return text[:head] + "..." + text[len(text) - (n - 3 - head):]


class InputError(ValueError):
    """Invalid user input; the message is a single line fit for the terminal.

    Whitespace runs (newlines included) become one space, other control characters are
    escaped and the line is cut to :data:`MAX_LINE_CHARS`.
    """

    def __init__(self, message: str):
        super().__init__(short_text(" ".join(str(message).split()), MAX_LINE_CHARS))


class ImplausibleResult(InputError):
    """A model result that breaks physics or is absurd (see :mod:`lcoe.plausibility`).

    Attributes
    ----------
    source : str
        Case file.
    text : str
        What is wrong and which inputs to check.
    sample : int
        First failing sample of the model call.
    n_bad, n : int
        Failing samples and samples of the call.
    """

    def __init__(self, source: str, text: str, sample: int = 0, n_bad: int = 1, n: int = 1):
        self.source, self.text, self.sample, self.n_bad, self.n = source, text, sample, n_bad, n
        where = "" if n == 1 else f"sample {sample} ({n_bad} of {n} samples): "
        super().__init__(f"{source}: {where}{text}")


def field_error(source: str, field: str, value, allowed: str) -> InputError:
    """Build the one-line error for a bad field.

    Parameters
    ----------
    source : str
        File (or other origin) the value came from.
    field : str
        Dotted name of the field, e.g. ``plant.tilt_deg``.
    value : object
        The value received.
    allowed : str
        Plain description of what is allowed, e.g. ``"a number in [0, 90]"``.
    """
    return InputError(f"{source}: {field} = {short_text(repr(value))}: expected {allowed}")


def closest(name: str, candidates: Iterable[str]) -> str | None:
    """Closest valid name to ``name`` among ``candidates`` (None when nothing is close)."""
    hits = difflib.get_close_matches(name, list(candidates), n=1, cutoff=0.5)
    return hits[0] if hits else None


def did_you_mean(name, candidates: Iterable[str]) -> str:
    """``"; did you mean 'x'?"`` for the closest of ``candidates`` to ``name``, or ``""``."""
    hint = closest(str(name), candidates) if isinstance(name, str) else None
    return f"; did you mean '{hint}'?" if hint else ""


def unknown_key_error(source: str, key: str, candidates: Iterable[str]) -> InputError:
    """One-line error for an unknown key, suggesting the closest valid one."""
    candidates = list(candidates)
    hint = closest(key.rsplit(".", 1)[-1], [c.rsplit(".", 1)[-1] for c in candidates])
    prefix = key.rsplit(".", 1)[0] + "." if "." in key else ""
    suggestion = f"; did you mean '{prefix}{hint}'?" if hint else ""
    valid = ", ".join(sorted(c.rsplit(".", 1)[-1] for c in candidates))
    return InputError(f"{source}: unknown key '{key}'{suggestion} (valid here: {valid})")


def unknown_path_error(source: str, table: str, path: str, candidates: Iterable[str]) -> InputError:
    """One-line error for an unknown dotted input path in ``table`` (e.g. ``[uncertain]``).

    The suggestion is the closest full dotted path, quoted as it would be written in the file.
    """
    candidates = list(candidates)
    hint = closest(path, candidates)
    suggestion = f'; did you mean "{hint}"?' if hint else ""
    return InputError(f'{source}: [{table}] "{path}" is not a numeric input of this case'
                      f"{suggestion} (give the full dotted path of a key, e.g. "
                      f'"costs.capex_per_kw"; lcoe new writes every key)')


# ---------------------------------------------------------------------------------------------
# The command line's last line of defence: every exception becomes one line and an exit status
# ---------------------------------------------------------------------------------------------

#: Exit status of an interrupted run (128 + SIGINT, the shell's convention).
EXIT_INTERRUPTED = 130

#: Warnings meant for developers of the calling code, never for the person running lcoe.
DEVELOPER_WARNINGS = (DeprecationWarning, PendingDeprecationWarning, FutureWarning)

_OS_HINTS = {
    errno.ENOSPC: "no space left on device; free some space or choose another --out folder",
    errno.EDQUOT: "disk quota exceeded; free some space or choose another --out folder",
    errno.EROFS: "read-only file system; choose another --out folder",
    errno.EACCES: "permission denied",
    errno.EPERM: "operation not permitted",
}


def cut(text, limit: int = 200) -> str:
    """``text`` on one line, cut to about ``limit`` characters."""
    line = " ".join(str(text).split())
    return line if len(line) <= limit else line[: limit - 3] + "..."


@contextmanager
def collect_warnings() -> Iterator[list[str]]:
    """Record the warnings raised in the block instead of printing them.

    Yields
    ------
    list of str
        Filled when the block ends: one line per distinct warning a user should read (the
        developer warnings of :data:`DEVELOPER_WARNINGS` are dropped). Put them into the run's
        notes.
    """
    notes: list[str] = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            yield notes
        finally:
            for w in caught:
                line = cut(w.message)
                if not issubclass(w.category, DEVELOPER_WARNINGS) and line not in notes:
                    notes.append(line)


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
    here = os.path.dirname(os.path.abspath(__file__))
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
