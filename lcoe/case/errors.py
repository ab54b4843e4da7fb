"""Errors raised for bad user input.

Every problem with a case file, a weather file or a command-line option is raised as
:class:`InputError`, whose message is one line naming the file, the field, the value received
and what is allowed. The CLI prints that line and exits with status 2, without a traceback.
"""

from __future__ import annotations

import difflib
import warnings
from collections.abc import Iterable, Iterator
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
    """A model result that breaks physics or is absurd (see :mod:`lcoe.case.plausibility`).

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

#: Warnings meant for developers of the calling code, never for the person running lcoe.
DEVELOPER_WARNINGS = (DeprecationWarning, PendingDeprecationWarning, FutureWarning)


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
