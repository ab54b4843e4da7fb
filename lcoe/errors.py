"""Errors raised for bad user input.

Every problem with a case file, a weather file or a command-line option is raised as
:class:`InputError`, whose message is one line naming the file, the field, the value received
and what is allowed. The CLI prints that line and exits with status 2, without a traceback.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable


class InputError(ValueError):
    """Invalid user input; the message is a single line fit for the terminal."""

    def __init__(self, message: str):
        super().__init__(" ".join(str(message).split()))


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
    return InputError(f"{source}: {field} = {value!r}: expected {allowed}")


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
