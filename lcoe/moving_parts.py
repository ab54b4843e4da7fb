"""Moving parts in the lifetime cash flow: failures by renewal theory, their costs, lost energy.

Each ``[[costs.moving_part]]`` is a population of identical parts (e.g. one drive per rotating
column), each replaced at once when it fails, so the failures of one position form a renewal
process (:mod:`lcoe.tech.reliability`): with exponential lives of mean m the expected failures
per unit are 1/m every year; with Weibull lives they are the yearly increments of the renewal
function, computed numerically. Per operating year t and sample:

* replacement cost = units x failures per unit x cost_each x (1 + inflation)^t;
* damage cost = units x failures per unit x damage_fraction x capital cost served by one part
  (capex per kW x DC nameplate / units) x (1 + inflation)^t;
* lost energy fraction = failures per unit x repair_days / 365 (each part serves an equal
  share of the plant; all parts together lose at most the whole year).

Every number can be uncertain by its indexed path, e.g. ``costs.moving_part[0].mean_years``.
Shapes: parameters (n_s,), yearly results (n_s, N).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from .tech.reliability import (
    moving_part_costs,
    yearly_failures_exponential,
    yearly_failures_weibull,
)

#: Numeric keys of a moving part that may be sampled (dotted-path suffixes).
NUMERIC_KEYS = ("units", "mean_years", "shape", "scale_years", "cost_each", "repair_days",
                "damage_fraction")


def part_path(i: int, key: str) -> str:
    """Dotted path of a moving part's key, e.g. ``costs.moving_part[0].mean_years``."""
    return f"costs.moving_part[{i}].{key}"


def base_values(parts) -> dict:
    """The case's numeric moving-part values by indexed path (keys that are given)."""
    out = {}
    for i, part in enumerate(parts):
        for key in NUMERIC_KEYS:
            value = getattr(part, key)
            if value is not None:
                out[part_path(i, key)] = float(value)
    return out


def failures_per_unit_year(weibull: bool, params: Mapping, i: int, n_years: int) -> np.ndarray:
    """Expected failures per unit in each operating year, (n_s, n_years).

    The Weibull renewal function is solved once per distinct (shape, scale) pair among the
    samples, so a part whose life is not uncertain costs one solution whatever n_s.
    """
    if not weibull:
        return yearly_failures_exponential(params[part_path(i, "mean_years")], n_years)
    pairs = np.stack([np.asarray(params[part_path(i, "shape")], dtype=float),
                      np.asarray(params[part_path(i, "scale_years")], dtype=float)], axis=1)
    uniq, inverse = np.unique(pairs, axis=0, return_inverse=True)
    rates = yearly_failures_weibull(uniq[:, 0], uniq[:, 1], n_years)
    return rates[inverse.reshape(-1)]


def moving_part_lines(parts, params: Mapping, n_bodies, lifetime_years: int):
    """Yearly cost and lost-energy fraction of every moving part of a case.

    Parameters
    ----------
    parts : sequence of lcoe.case.MovingPart
    params : mapping of str to numpy.ndarray
        Every numeric input by dotted path, (n_s,), including the parts' indexed paths,
        ``costs.capex_per_kw``, ``plant.dc_capacity_kw`` and ``finance.inflation``.
    n_bodies : numpy.ndarray or None
        Bodies in the plant, (n_s,) (parts counted per body).
    lifetime_years : int
        N [years].

    Returns
    -------
    cost : numpy.ndarray
        Nominal cost of failures [currency], (n_s, N + 1), 0 in year 0.
    lost_energy_fraction : numpy.ndarray
        Share of each operating year's energy lost while parts are down [-], (n_s, N).
    failures : numpy.ndarray
        Expected failures in the plant per operating year, all parts [count], (n_s, N).
    """
    n_s = np.asarray(params["plant.dc_capacity_kw"]).shape[0]
    t = np.arange(1, lifetime_years + 1)[None, :]
    esc = (1.0 + np.asarray(params["finance.inflation"], dtype=float)[:, None]) ** t
    capex = np.asarray(params["costs.capex_per_kw"], dtype=float) * \
        np.asarray(params["plant.dc_capacity_kw"], dtype=float)
    cost = np.zeros((n_s, lifetime_years + 1))
    lost = np.zeros((n_s, lifetime_years))
    failures = np.zeros((n_s, lifetime_years))
    for i, part in enumerate(parts):
        def col(key, i=i):
            return np.asarray(params[part_path(i, key)], dtype=float)[:, None]

        units = col("units")
        if part.per == "body":
            units = units * np.asarray(n_bodies, dtype=float)[:, None]
        rate = failures_per_unit_year(part.weibull, params, i, lifetime_years)
        lines = moving_part_costs(units, rate, col("cost_each"), col("repair_days"),
                                  col("damage_fraction"), capex[:, None] / units)
        cost[:, 1:] += (lines["replacement_cost"] + lines["damage_cost"]) * esc
        lost += lines["lost_energy_fraction"]
        failures += lines["failures"]
    return cost, np.minimum(lost, 1.0), failures
