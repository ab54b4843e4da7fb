"""Progress on the terminal: one line naming each phase as it starts, a bar for counted stages.

Nothing is written when the stream is not a terminal (logs, pipes, tests) or with ``--quiet``.
Computational code only calls ``progress(stage, done, total)``; ``total == 0`` announces a phase
that has no count (reading weather, sun positions, writing).
"""

from __future__ import annotations

import sys
import time


class Progress:
    """Callable ``progress(stage, done, total)`` writing to a terminal.

    Parameters
    ----------
    enabled : bool
        False (``--quiet``) writes nothing.
    stream : file, optional
        Where to write (default ``sys.stderr``); nothing is written unless it is a terminal.
    force : bool
        Write even when ``stream`` is not a terminal (tests).
    """

    def __init__(self, enabled: bool = True, stream=None, force: bool = False):
        self.stream = stream if stream is not None else sys.stderr
        tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self.enabled = bool(enabled and (tty or force))
        self._stage: str | None = None
        self._bar = None
        self._t0 = time.monotonic()

    def __call__(self, stage: str, done: int = 0, total: int = 0) -> None:
        if not self.enabled:
            return
        if stage != self._stage:
            self.close()
            self._stage = stage
            if not total:
                self.stream.write(f"  {stage} ... ({time.monotonic() - self._t0:.1f} s)\n")
                self.stream.flush()
                return
            from tqdm import tqdm

            self._bar = tqdm(total=total, desc=f"  {stage}", file=self.stream, leave=True,
                             mininterval=0.25, dynamic_ncols=True)
        if self._bar is not None and total:
            self._bar.update(max(0, min(done, total) - self._bar.n))
            if done >= total:
                self.close()

    def close(self) -> None:
        """Finish the current bar (if any)."""
        if self._bar is not None:
            self._bar.close()
            self._bar = None
