"""Progress protocol of computational code: it calls ``progress(stage, done, total)``;
``total == 0`` announces a phase that has no count. The terminal display is
:class:`lcoe.cli.progress.Progress`.
"""

from __future__ import annotations


def phase(progress, name: str) -> None:
    """Announce an uncounted phase through an optional ``progress`` callable."""
    if progress is not None:
        progress(name, 0, 0)
