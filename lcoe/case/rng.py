"""The one place where a seed becomes a random generator."""

from __future__ import annotations

import numpy as np


def make_rng(seed: int | np.random.Generator | np.random.SeedSequence | None
             ) -> np.random.Generator:
    """Return a :class:`numpy.random.Generator` for ``seed``.

    Parameters
    ----------
    seed : int, numpy.random.Generator, numpy.random.SeedSequence or None
        A non-negative integer seed, an existing generator (returned as is), a seed sequence
        (e.g. spawned from a run's seed) or None for fresh entropy (not reproducible).

    Returns
    -------
    numpy.random.Generator
    """
    if isinstance(seed, np.random.Generator):
        return seed
    if isinstance(seed, np.random.SeedSequence):
        return np.random.default_rng(seed)
    if seed is not None and (not isinstance(seed, (int, np.integer)) or seed < 0):
        raise ValueError(f"seed = {seed!r}: expected a non-negative integer")
    return np.random.default_rng(seed)


def child_seeds(seed: int, n: int) -> list[np.random.SeedSequence]:
    """``n`` independent child seed sequences derived from ``seed`` (numpy SeedSequence.spawn)."""
    return np.random.SeedSequence(seed).spawn(n)
