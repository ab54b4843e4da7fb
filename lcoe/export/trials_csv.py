"""``trials.csv``: every Monte Carlo trial, its sampled inputs and its outputs.

Written in blocks of :data:`ROWS` trials: the study keeps only the trials' outputs and draws
their inputs again block by block (``Trials.inputs``), so a run of a million trials is written
without holding its whole table.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from lcoe.export.cells import write_csv
from lcoe.study.results import RunResult

#: Trials per block of rows.
ROWS = 10_000


def trials_header(result: RunResult) -> list[str]:
    """Column names of the trials table."""
    t = result.extras["uncertainty"].trials
    return ["trial", *t.names, *(k for k, v in t.outputs.items() if v.ndim == 1),
            "energy_physics_kwh"]


def trials_block(result: RunResult, start: int, stop: int) -> np.ndarray:
    """(stop - start, k) values of trials [start, stop) of the trials table."""
    t = result.extras["uncertainty"].trials
    x = t.inputs(start, stop)
    cols = [np.arange(start, stop, dtype=float)] + [x[:, j] for j in range(x.shape[1])]
    cols += [v[start:stop] for v in t.outputs.values() if v.ndim == 1]
    cols.append(t.physics_kwh[start:stop])
    return np.column_stack(cols)


def write_trials_csv(result: RunResult, path: Path) -> None:
    """Write the trials table as CSV (one row per trial).

    The numbers are the text ``numpy.savetxt`` writes (``%d`` for the trial, ``%.10g`` for the
    values), formatted a block of rows at a time with one ``%`` operation (about 25 % faster
    than ``savetxt``, which formats a row at a time).
    """
    header = trials_header(result)
    n = result.extras["uncertainty"].trials.n
    row = ",".join(["%d"] + ["%.10g"] * (len(header) - 1)) + "\n"
    write_csv(path, header, [])  # the header's text cells through the one CSV rule
    with open(path, "a", newline="", encoding="utf-8") as fh:  # numbers only
        for start in range(0, n, ROWS):
            block = trials_block(result, start, min(n, start + ROWS))
            fh.write((row * block.shape[0]) % tuple(block.ravel().tolist()))
