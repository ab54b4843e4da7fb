"""``trials.csv``: every Monte Carlo trial, its sampled inputs and its outputs."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from lcoe.export.cells import write_csv
from lcoe.study.results import RunResult


def trials_table(result: RunResult) -> tuple[list[str], np.ndarray]:
    """Header and (n, k) values of the trials table."""
    t = result.extras["uncertainty"].trials
    header = ["trial"] + list(t.names)
    cols = [np.arange(t.n, dtype=float)] + [t.X[:, j] for j in range(t.X.shape[1])]
    for k, v in t.outputs.items():
        if v.ndim == 1:
            header.append(k)
            cols.append(v)
    header.append("energy_physics_kwh")
    cols.append(t.physics_kwh)
    return header, np.column_stack(cols)


def write_trials_csv(result: RunResult, path: Path) -> None:
    """Write the trials table as CSV (one row per trial)."""
    header, values = trials_table(result)
    fmt = ["%d"] + ["%.10g"] * (values.shape[1] - 1)
    write_csv(path, header, [])  # the header's text cells through the one CSV rule
    with open(path, "a", newline="", encoding="utf-8") as fh:
        np.savetxt(fh, values, delimiter=",", fmt=fmt)  # numbers only
