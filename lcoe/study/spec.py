"""Read a case's ``[uncertain]``, ``[uncertain.energy]`` and ``[[correlation]]`` tables.

Any numeric case input can be made uncertain by its dotted path, e.g.
``"costs.capex_per_kw" = { dist = "triangular", low = 850, mode = 950, high = 1150 }``;
scheduled replacement costs by ``"costs.replacement[0].cost_per_kw"``; moving parts by
``"costs.moving_part[0].mean_years"`` (and ``units``, ``shape``, ``scale_years``,
``cost_each``, ``repair_days``, ``damage_fraction``).

Energy uncertainty the way lenders treat it, in ``[uncertain.energy]`` (all fractions, 1 sigma):

- ``interannual_cov``: year-to-year variability of the weather; drawn independently for every
  operating year of every trial.
- ``resource_sd``, ``model_sd`` and any other named component (e.g. ``soiling_sd``): persistent
  uncertainties of the long-term energy, each drawn once per trial as a normal factor with mean 1
  and that standard deviation. They become inputs named ``energy.resource``, ``energy.model``,
  ... so that they show up among the drivers.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from lcoe.case.errors import InputError, field_error, unknown_key_error, unknown_path_error
from lcoe.case.reader import Case
from lcoe.case.schema import FIELD_BY_PATH, STATEMENT_SECTIONS, list_field
from lcoe.uncertainty.distributions import Distribution, parse_distribution
from lcoe.uncertainty.sampling import correlation_matrix

#: Factors of the energy with mean 1: a persistent component can't push them below this.
ENERGY_FACTOR_FLOOR = 0.05


@dataclass(frozen=True)
class UncertainSpec:
    """The uncertain inputs of a case.

    Attributes
    ----------
    dists : list of Distribution
        Sampled inputs in column order (case inputs first, then persistent energy factors
        ``energy.<name>`` with mean 1).
    corr : numpy.ndarray or None
        (d, d) target rank correlation, None when there is none.
    interannual_cov : float
        Year-to-year coefficient of variation of energy [-] (0: none).
    energy_components : dict of str to float
        Persistent energy components and their standard deviations [-].
    """

    dists: list
    corr: np.ndarray | None = None
    interannual_cov: float = 0.0
    energy_components: dict = field(default_factory=dict)

    @property
    def names(self) -> list[str]:
        return [d.name for d in self.dists]

    @property
    def case_paths(self) -> list[str]:
        """Sampled inputs that are case values (not energy factors)."""
        return [n for n in self.names if not n.startswith("energy.")]

    @property
    def is_empty(self) -> bool:
        return not self.dists and self.interannual_cov == 0.0


def valid_paths(case: Case) -> list[str]:
    """Dotted paths that may be made uncertain in ``case``."""
    paths = [p for p, f in FIELD_BY_PATH.items() if f.numeric and case.values.get(p) is not None
             and f.section not in STATEMENT_SECTIONS]
    paths += [f"costs.replacement[{i}].cost_per_kw" for i in range(len(case.replacements))]
    if case.moving_parts:
        from lcoe.money.reliability import base_values

        paths += list(base_values(case.moving_parts))
    return paths


def read_spec(case: Case) -> UncertainSpec:
    """Parse and check the uncertainty tables of ``case``.

    Raises
    ------
    InputError
        Unknown distribution, bad parameters, a path that is not a numeric input, a
        distribution that leaves the input's allowed range without truncation, or a bad
        correlation; one line naming the file and key.
    """
    src = case.source
    table = dict(case.uncertain)
    energy = table.pop("energy", {})
    allowed = valid_paths(case)
    dists: list[Distribution] = []
    for path, spec in table.items():
        if path not in allowed:
            raise unknown_path_error(src, "uncertain", path, allowed) if path not in \
                FIELD_BY_PATH else field_error(src, f'uncertain."{path}"', spec,
                                               "a numeric input of the case")
        if not isinstance(spec, Mapping):
            raise field_error(src, f'uncertain."{path}"', spec,
                              'a table such as { dist = "normal", mean = 1, sd = 0.1 }')
        d = parse_distribution(path, dict(spec), src)
        _check_support(d, src)
        dists.append(d)
    interannual, components = _read_energy(energy, src)
    for name, sd in components.items():
        dists.append(Distribution(name=f"energy.{name}", dist="normal",
                                  params={"mean": 1.0, "sd": sd}, low=ENERGY_FACTOR_FLOOR,
                                  group=None))
    names = [d.name for d in dists]
    pairs = []
    for i, entry in enumerate(case.correlation):
        where = f"correlation[{i}]"
        if not isinstance(entry, Mapping) or set(entry) - {"between", "rank"} or \
                "between" not in entry or "rank" not in entry:
            raise field_error(src, where, entry, "a table with between = [a, b] and rank = r")
        between = entry["between"]
        if not (isinstance(between, list) and len(between) == 2 and
                all(isinstance(b, str) for b in between)):
            raise field_error(src, f"{where}.between", between,
                              "a list of two uncertain input paths")
        rank = entry["rank"]
        if isinstance(rank, bool) or not isinstance(rank, (int, float)):
            raise field_error(src, f"{where}.rank", rank, "a number in [-1, 1]")
        pairs.append((between[0], between[1], float(rank)))
    corr = correlation_matrix(names, pairs, src, key="correlation") if pairs else None
    return UncertainSpec(dists=dists, corr=corr, interannual_cov=interannual,
                         energy_components=components)


def _check_support(d: Distribution, src: str) -> None:
    """Refuse a distribution that can leave the input's allowed range (suggest truncation)."""
    f = FIELD_BY_PATH.get(d.name) or list_field(d.name)
    if f is None:  # anything else: non-negative
        lo_allowed, hi_allowed = 0.0, math.inf
    else:
        lo_allowed, hi_allowed = f.low, f.high
    lo, hi = d.support()
    bad_lo = lo < lo_allowed or (f is not None and f.low_open and lo <= lo_allowed)
    bad_hi = hi > hi_allowed or (f is not None and f.high_open and hi >= hi_allowed)
    if bad_lo or bad_hi:
        rng_txt = f.allowed() if f is not None else "a number >= 0"
        fix = "add low = ... / high = ... to truncate it" if d.dist in ("normal", "lognormal") \
            else "narrow its low/high"
        raise InputError(f'{src}: uncertain."{d.name}": {d.describe()} reaches '
                         f"[{lo:g}, {hi:g}] but the input allows {rng_txt}; {fix}")


def _read_energy(energy, src: str) -> tuple[float, dict]:
    if not isinstance(energy, Mapping):
        raise field_error(src, "uncertain.energy", energy, "a table [uncertain.energy]")
    interannual = 0.0
    comps: dict[str, float] = {}
    for key, value in energy.items():
        where = f"uncertain.energy.{key}"
        if isinstance(value, bool) or not isinstance(value, (int, float)) or \
                not 0.0 <= float(value) <= 0.5:
            raise field_error(src, where, value, "a standard deviation as a fraction in "
                                                 "[0, 0.5]")
        if key == "interannual_cov":
            interannual = float(value)
        elif key.endswith("_sd"):
            if float(value) > 0:
                comps[key[:-3]] = float(value)
        else:
            raise unknown_key_error(src, where, ["uncertain.energy.interannual_cov",
                                                 "uncertain.energy.resource_sd",
                                                 "uncertain.energy.model_sd",
                                                 "uncertain.energy.<name>_sd"])
    return interannual, comps
