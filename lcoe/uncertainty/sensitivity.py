"""Sensitivity analysis over SALib: Sobol indices, Morris screening, tornado swings.

The user's model stays outside as a plain ``f(X) -> Y`` with ``X`` of shape (n_runs, d), one
row per run and one column per uncertain input (in the order of the distributions), and ``Y``
of shape (n_runs,). Designs are built in uniform space, where SALib's unit bounds apply to
every input, and mapped to values through each :meth:`Distribution.ppf`; so the sensitivity
indices refer to the distributions actually specified, not to uniform ranges.

Sobol workflow::

    u, x, note = sobol_sample(dists, 1024, rng)
    y = model(x)                                  # (n_runs,)
    result = sobol_analyze(dists, y, 1024, rng)

The module also ships analytic test functions with closed-form indices (Ishigami, Sobol
G-function, linear) against which the estimators are checked.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from importlib.metadata import version

import numpy as np

from lcoe.uncertainty.distributions import Distribution
from lcoe.uncertainty.sampling import (
    U_MAX,
    U_MIN,
    check_count,
    round_up_power_of_two,
    seed_from,
    uniforms_to_values,
)

#: A confidence half-width above this fraction of its index is flagged as wide.
WIDE_FRACTION = 0.10

#: Smallest base sample for which the half-sample ranking check is made.
MIN_BASE_FOR_HALF_CHECK = 16


# -- problem definition -----------------------------------------------------------------------
def sobol_problem(dists: Sequence[Distribution]) -> dict:
    """SALib problem for the uncertain inputs, in uniform space.

    Parameters
    ----------
    dists : sequence of Distribution
        The d uncertain inputs, in column order; names must be unique.

    Returns
    -------
    dict
        ``{"num_vars": d, "names": [...], "bounds": [[0, 1]] * d}`` plus ``"groups"`` when any
        input has a group. SALib needs a group for every input once groups are used, so an
        ungrouped input forms a singleton group named after the input.
    """
    names = [d.name for d in dists]
    if not names:
        raise ValueError("dists is empty: expected at least one uncertain input")
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        raise ValueError(f"input names {dupes} appear twice: expected unique names")
    problem = {"num_vars": len(names), "names": names, "bounds": [[0.0, 1.0] for _ in names]}
    if any(d.group for d in dists):
        user_groups = {d.group for d in dists if d.group}
        clash = sorted(d.name for d in dists if not d.group and d.name in user_groups)
        if clash:
            raise ValueError(
                f"ungrouped inputs {clash} share their name with a group: expected distinct "
                "group and input names"
            )
        problem["groups"] = [d.group or d.name for d in dists]
    return problem


def _factors(problem: dict) -> list[tuple[str, list[str]]]:
    """Analysed factors (groups in order of first appearance, or inputs) and their members."""
    groups = problem.get("groups")
    if not groups:
        return [(name, [name]) for name in problem["names"]]
    order: dict[str, list[str]] = {}
    for name, group in zip(problem["names"], groups):
        order.setdefault(group, []).append(name)
    return list(order.items())


def _evaluate(f: Callable[[np.ndarray], np.ndarray], x: np.ndarray) -> np.ndarray:
    """Call ``f`` once on all rows of ``x`` (n_runs, d) and check the (n_runs,) output."""
    y = np.asarray(f(x), dtype=float)
    if y.shape != (x.shape[0],):
        raise ValueError(f"f(X) returned shape {y.shape}: expected ({x.shape[0]},)")
    _check_finite(y)
    return y


def _check_finite(y: np.ndarray) -> None:
    bad = np.flatnonzero(~np.isfinite(y))
    if bad.size:
        raise ValueError(
            f"model output is not finite at run {bad[0]} (value {y[bad[0]]!r}; "
            f"{bad.size} bad runs in all): expected finite outputs"
        )


# -- Sobol ------------------------------------------------------------------------------------
def _correlated_pairs(dists: Sequence[Distribution], corr) -> list[tuple[int, int, float]]:
    if corr is None:
        return []
    c = np.asarray(corr, dtype=float)
    d = len(dists)
    if c.shape != (d, d):
        raise ValueError(f"corr shape {c.shape}: expected ({d}, {d})")
    return [(i, j, float(c[i, j])) for i in range(d) for j in range(i + 1, d) if c[i, j] != 0.0]


def sobol_sample(
    dists: Sequence[Distribution],
    n_base: int,
    rng: np.random.Generator,
    corr: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray, str]:
    """Saltelli design for first-order and total Sobol indices.

    Parameters
    ----------
    dists : sequence of Distribution
        The d uncertain inputs.
    n_base : int
        Wanted number of base samples N (>= 2); rounded up to a power of two, which the Sobol
        sequence needs for its balance properties.
    rng : numpy.random.Generator
        A nonzero seed for the scrambling is drawn from it.
    corr : numpy.ndarray, optional
        Shape (d, d) rank correlation of the inputs. NOT applied: Sobol indices assume
        independent inputs; when correlations exist the returned note says so.

    Returns
    -------
    u : numpy.ndarray
        Shape (N (k + 2), d) uniforms strictly inside (0, 1), k the number of factors (groups,
        or inputs when there are no groups), in SALib's block order (one block of k + 2 rows
        per base sample).
    x : numpy.ndarray
        Same shape, values of the inputs [units of the inputs] (``ppf`` of ``u``).
    note : str
        Empty, or sentences on the rounding of ``n_base`` and on ignored correlations.

    References
    ----------
    .. [1] Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M., Tarantola, S.
       (2010). Variance based sensitivity analysis of model output. Design and estimator for
       the total sensitivity index. Computer Physics Communications 181(2), 259-270.
    .. [2] Sobol', I. M. (1967). On the distribution of points in a cube and the approximate
       evaluation of integrals. USSR Computational Mathematics and Mathematical Physics 7(4),
       86-112.
    """
    check_count("n_base", n_base, 2)
    n = round_up_power_of_two(n_base)
    problem = sobol_problem(dists)
    notes = []
    if n != n_base:
        notes.append(
            f"n_base {n_base} rounded up to {n}: Sobol sequences keep their balance only at "
            "powers of two."
        )
    if _correlated_pairs(dists, corr):
        notes.append(
            "Rank correlations are not applied in the Sobol design: Sobol indices assume "
            "independent inputs; group correlated inputs to read their joint effect."
        )
    from SALib.sample import sobol as sobol_sample_salib  # SALib imports scipy.stats: ~0.3 s

    u = sobol_sample_salib.sample(
        problem, n, calc_second_order=False, scramble=True, seed=seed_from(rng)
    )
    u = np.clip(u, U_MIN, U_MAX)
    return u, uniforms_to_values(dists, u), " ".join(notes)


#: Indices (and interval half-widths) below this are rounding residue, read as exactly 0 and
#: not flagged: an input that cancels out of the output (e.g. from both sides of a ratio)
#: leaves differences of order 1e-16 of the output in float64, i.e. indices of 1e-16 to 1e-12.
NOISE_FLOOR = 1e-9


def _sobol_rows(problem, y, n, num_resamples, conf_level, seed) -> list[dict]:
    """Run SALib's estimator on the first ``n`` base blocks of ``y`` and build rows."""
    factors = _factors(problem)
    from SALib.analyze import sobol as sobol_analyze_salib

    si = sobol_analyze_salib.analyze(
        problem,
        y[: n * (len(factors) + 2)],
        calc_second_order=False,
        num_resamples=num_resamples,
        conf_level=conf_level,
        seed=seed,
    )
    rows = []
    for k, (name, members) in enumerate(factors):
        row = {"input": name, "members": list(members)}
        for key in ("S1", "ST"):
            value, conf = float(si[key][k]), float(si[f"{key}_conf"][k])
            if abs(value) < NOISE_FLOOR and conf < NOISE_FLOOR:  # rounding residue: exactly 0
                row[key], row[f"{key}_conf"] = 0.0, 0.0
                row[f"{key}_includes_zero"] = row[f"{key}_wide"] = False
                continue
            row[key], row[f"{key}_conf"] = value, conf
            row[f"{key}_includes_zero"] = bool(value - conf <= 0.0 <= value + conf)
            row[f"{key}_wide"] = bool(conf > WIDE_FRACTION * abs(value))
        row["wide"] = row["S1_wide"] or row["ST_wide"]
        rows.append(row)
    return rows


@dataclass(frozen=True)
class SobolResult:
    """First-order and total Sobol indices of one model output.

    Attributes
    ----------
    rows : list of dict
        One row per factor (input, or group when groups are used), in problem order, with keys
        ``input`` (factor name), ``members`` (input names), ``S1``, ``S1_conf``, ``ST``,
        ``ST_conf`` [-] (conf: half-width of the bootstrap interval at ``conf_level``), flags
        ``S1_includes_zero``, ``ST_includes_zero``, ``S1_wide``, ``ST_wide`` and ``wide``
        (half-width above 10 % of the index).
    warnings : list of str
        Wide intervals (for indices whose interval excludes zero), change of the ST ranking
        between the first half of the base samples and all of them, the independence caveat.
    method : str
        Estimators, library version, sample sizes.
    output : str
        Name of the analysed output.
    base_samples : int
        N, a power of two.
    n_runs : int
        Model runs used, N (k + 2).
    conf_level : float
        Confidence level of the intervals [-].
    num_resamples : int
        Bootstrap resamples.
    rows_half : list of dict
        Same rows computed from the first N/2 base samples (empty when N < 16).
    """

    rows: list[dict]
    warnings: list[str]
    method: str
    output: str
    base_samples: int
    n_runs: int
    conf_level: float
    num_resamples: int
    rows_half: list[dict] = field(default_factory=list)


def _ranking(rows: list[dict], keep: set[str]) -> list[str]:
    ranked = sorted(rows, key=lambda r: -r["ST"])
    return [r["input"] for r in ranked if r["input"] in keep]


def sobol_analyze(
    dists: Sequence[Distribution],
    Y: np.ndarray,
    n_base: int,
    rng: np.random.Generator,
    num_resamples: int = 200,
    conf_level: float = 0.95,
    corr: np.ndarray | None = None,
    output: str = "output",
) -> SobolResult:
    """First-order and total Sobol indices from the outputs of a :func:`sobol_sample` design.

    Parameters
    ----------
    dists : sequence of Distribution
        The same inputs, in the same order, as given to :func:`sobol_sample`.
    Y : numpy.ndarray
        Shape (n_runs,) model outputs, one per row of the design.
    n_base : int
        The ``n_base`` given to :func:`sobol_sample` (rounded up the same way).
    rng : numpy.random.Generator
        A nonzero seed for the bootstrap is drawn from it.
    num_resamples : int, optional
        Bootstrap resamples for the confidence intervals.
    conf_level : float, optional
        Confidence level in (0, 1) [-].
    corr : numpy.ndarray, optional
        Shape (d, d) rank correlation used elsewhere in the study; when it has nonzero
        off-diagonal entries a warning names the correlated pairs and whether they share a
        group.
    output : str, optional
        Name of the output, kept in the result.

    Returns
    -------
    SobolResult

    Raises
    ------
    ValueError
        ``Y`` of the wrong shape, with a non-finite value (names the first bad run index), or
        constant (indices undefined).

    Notes
    -----
    With A, B the two base matrices and A_B^i A with column (or group) i from B, SALib
    estimates S1_i = mean(f(B) (f(A_B^i) - f(A))) / V (Saltelli et al. 2010) and
    ST_i = mean((f(A) - f(A_B^i))^2) / (2 V) (Jansen 1999), V the output variance, with
    bootstrap confidence intervals (half-width = z * bootstrap standard deviation). The first
    N/2 base samples of a scrambled Sobol sequence are themselves a balanced set, so indices
    are recomputed on them to check that the ranking by ST is settled.

    References
    ----------
    .. [1] Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M., Tarantola, S.
       (2010). Variance based sensitivity analysis of model output. Design and estimator for
       the total sensitivity index. Computer Physics Communications 181(2), 259-270.
    .. [2] Jansen, M. J. W. (1999). Analysis of variance designs for model output. Computer
       Physics Communications 117(1-2), 35-43.
    .. [3] Sobol', I. M. (2001). Global sensitivity indices for nonlinear mathematical models
       and their Monte Carlo estimates. Mathematics and Computers in Simulation 55, 271-280.
    """
    check_count("n_base", n_base, 2)
    if not 0.0 < conf_level < 1.0:
        raise ValueError(f"conf_level = {conf_level!r}: expected a number in (0, 1)")
    check_count("num_resamples", num_resamples, 2)
    problem = sobol_problem(dists)
    factors = _factors(problem)
    n = round_up_power_of_two(n_base)
    y = np.asarray(Y, dtype=float)
    expected = n * (len(factors) + 2)
    if y.shape != (expected,):
        raise ValueError(
            f"Y has shape {y.shape}: expected ({expected},) = N {n} x ({len(factors)} factors + 2)"
        )
    _check_finite(y)
    if np.ptp(y) == 0.0:
        raise ValueError(f"Y is constant ({y[0]!r}): Sobol indices are undefined")

    seed = seed_from(rng)
    rows = _sobol_rows(problem, y, n, num_resamples, conf_level, seed)
    warnings: list[str] = []
    for row in rows:
        parts = [
            f"{key} = {row[key]:.3g} +/- {row[key + '_conf']:.2g}"
            for key in ("S1", "ST")
            if row[f"{key}_wide"] and not row[f"{key}_includes_zero"]
        ]
        if parts:
            warnings.append(
                f"{output}: wide interval for {row['input']} ({'; '.join(parts)}): half-width "
                f"above {WIDE_FRACTION:.0%} of the index; increase n_base"
            )

    rows_half: list[dict] = []
    if n >= MIN_BASE_FOR_HALF_CHECK and np.ptp(y[: (n // 2) * (len(factors) + 2)]) > 0.0:
        rows_half = _sobol_rows(problem, y, n // 2, num_resamples, conf_level, seed)
        keep = {r["input"] for r in rows if not r["ST_includes_zero"]}
        full_rank, half_rank = _ranking(rows, keep), _ranking(rows_half, keep)
        if full_rank != half_rank:
            warnings.append(
                f"{output}: ranking by ST changes between N = {n // 2} ({', '.join(half_rank)}) "
                f"and N = {n} ({', '.join(full_rank)}): not settled; increase n_base"
            )

    pairs = _correlated_pairs(dists, corr)
    if pairs:
        group_of = {d.name: (d.group or d.name) for d in dists}
        split = [
            f"{dists[i].name} ~ {dists[j].name} ({rho:+.2g})"
            for i, j, rho in pairs
            if group_of[dists[i].name] != group_of[dists[j].name]
        ]
        tail = (
            f"correlated inputs analysed as independent: {', '.join(split)}; put each "
            "correlated set in one group"
            if split
            else "all correlated inputs share a group, whose index is read jointly"
        )
        warnings.append(
            f"{output}: Sobol indices assume independent inputs and the design samples the "
            f"inputs independently; {tail}"
        )

    method = (
        f"Sobol first-order (S1) and total (ST) indices, Saltelli et al. (2010) design and "
        f"estimators via SALib {version('SALib')}; scrambled Sobol sequence, N = {n} base "
        f"samples, {expected} runs; bootstrap with {num_resamples} resamples at "
        f"{conf_level:g} confidence"
    )
    return SobolResult(
        rows=rows,
        warnings=warnings,
        method=method,
        output=output,
        base_samples=n,
        n_runs=expected,
        conf_level=float(conf_level),
        num_resamples=int(num_resamples),
        rows_half=rows_half,
    )


# -- Morris -----------------------------------------------------------------------------------
def morris_screen(
    dists: Sequence[Distribution],
    f: Callable[[np.ndarray], np.ndarray],
    n_trajectories: int,
    rng: np.random.Generator,
    num_levels: int = 4,
    num_resamples: int = 1000,
    conf_level: float = 0.95,
) -> list[dict]:
    """Morris elementary-effects screening.

    Parameters
    ----------
    dists : sequence of Distribution
        The d uncertain inputs (groups are moved together when given).
    f : callable
        ``f(X) -> Y`` with X of shape (n_runs, d) [units of the inputs] and Y of shape
        (n_runs,); called once with all n_trajectories (k + 1) rows.
    n_trajectories : int
        Number of trajectories r (>= 2; 10 to 50 is usual).
    rng : numpy.random.Generator
        Seeds for the design and the bootstrap are drawn from it.
    num_levels : int, optional
        Even number p of grid levels.
    num_resamples : int, optional
        Bootstrap resamples for ``mu_star_conf``.
    conf_level : float, optional
        Confidence level [-].

    Returns
    -------
    list of dict
        One row per factor, sorted by ``mu_star`` (largest first): ``input``, ``mu``,
        ``mu_star``, ``mu_star_conf``, ``sigma`` [output unit per grid jump Delta].

    Notes
    -----
    The grid lives in quantile space: level l/(p-1), l = 0..p-1, is mapped to the
    probability (l + 1/2)/p, the midpoint of the l-th of p equiprobable strata, so unbounded
    distributions stay finite. SALib's jump Delta = p/(2(p-1)) on the grid is thus a move of
    half the probability range; effects are in output units per Delta and comparable across
    inputs. mu_star ranks importance (Campolongo et al. 2007); sigma large against mu_star
    signals interaction or non-linearity.

    References
    ----------
    .. [1] Morris, M. D. (1991). Factorial sampling plans for preliminary computational
       experiments. Technometrics 33(2), 161-174.
    .. [2] Campolongo, F., Cariboni, J., Saltelli, A. (2007). An effective screening design
       for sensitivity analysis of large models. Environmental Modelling & Software 22(10),
       1509-1518.
    """
    check_count("n_trajectories", n_trajectories, 2)
    if check_count("num_levels", num_levels, 2) % 2:
        raise ValueError(f"num_levels = {num_levels!r}: expected an even integer >= 2")
    problem = sobol_problem(dists)
    from SALib.analyze import morris as morris_analyze
    from SALib.sample import morris as morris_sample

    grid = morris_sample.sample(
        problem, int(n_trajectories), num_levels=int(num_levels), seed=seed_from(rng)
    )
    probs = (0.5 + grid * (num_levels - 1)) / num_levels
    y = _evaluate(f, uniforms_to_values(dists, probs))
    si = morris_analyze.analyze(
        problem,
        grid,
        y,
        num_resamples=int(num_resamples),
        conf_level=conf_level,
        num_levels=int(num_levels),
        seed=seed_from(rng),
    )
    rows = [
        {
            "input": str(si["names"][k]),
            "mu": float(si["mu"][k]),
            "mu_star": float(si["mu_star"][k]),
            "mu_star_conf": float(si["mu_star_conf"][k]),
            "sigma": float(si["sigma"][k]),
        }
        for k in range(len(si["names"]))
    ]
    return sorted(rows, key=lambda r: -r["mu_star"])


# -- tornado ----------------------------------------------------------------------------------
def tornado(
    dists: Sequence[Distribution],
    f: Callable[[np.ndarray], np.ndarray],
    base_values: Mapping[str, float] | np.ndarray,
    lo_q: float = 0.10,
    hi_q: float = 0.90,
) -> list[dict]:
    """One-at-a-time swings of the output between two percentiles of each input.

    Parameters
    ----------
    dists : sequence of Distribution
        The d uncertain inputs.
    f : callable
        ``f(X) -> Y``, X of shape (2d + 1, d), Y of shape (2d + 1,); called once. Row 0 is the
        base case; rows 2i + 1 and 2i + 2 move input i to its ``lo_q`` and ``hi_q`` percentile.
    base_values : mapping or numpy.ndarray
        Base value of each input, by name, or as an array of shape (d,) [units of the inputs].
    lo_q, hi_q : float, optional
        Probabilities with 0 < lo_q < hi_q < 1 [-].

    Returns
    -------
    list of dict
        ``input``, ``low_value``, ``high_value`` (the input at lo_q / hi_q), ``y_low``,
        ``y_high``, ``y_base`` and ``swing`` = |y_high - y_low| [output unit], sorted by swing
        (largest first).
    """
    if not 0.0 < lo_q < hi_q < 1.0:
        raise ValueError(f"lo_q, hi_q = {lo_q!r}, {hi_q!r}: expected 0 < lo_q < hi_q < 1")
    names = [d.name for d in dists]
    if isinstance(base_values, Mapping):
        missing = [n for n in names if n not in base_values]
        extra = [k for k in base_values if k not in names]
        if missing or extra:
            raise ValueError(
                f"base_values: missing {missing}, unexpected {extra}: expected exactly {names}"
            )
        base = np.array([float(base_values[n]) for n in names])
    else:
        base = np.asarray(base_values, dtype=float)
        if base.shape != (len(names),):
            raise ValueError(f"base_values shape {base.shape}: expected ({len(names)},)")
    d = len(names)
    x = np.tile(base, (2 * d + 1, 1))
    lows = np.array([dist.percentile(lo_q) for dist in dists])
    highs = np.array([dist.percentile(hi_q) for dist in dists])
    x[1 + 2 * np.arange(d), np.arange(d)] = lows
    x[2 + 2 * np.arange(d), np.arange(d)] = highs
    y = _evaluate(f, x)
    rows = [
        {
            "input": names[i],
            "low_value": float(lows[i]),
            "high_value": float(highs[i]),
            "y_low": float(y[1 + 2 * i]),
            "y_high": float(y[2 + 2 * i]),
            "y_base": float(y[0]),
            "swing": float(abs(y[2 + 2 * i] - y[1 + 2 * i])),
        }
        for i in range(d)
    ]
    return sorted(rows, key=lambda r: -r["swing"])
