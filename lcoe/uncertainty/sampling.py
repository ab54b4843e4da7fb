"""Sampling of uncertain inputs: uniforms, rank correlation, values.

The chain is ``uniforms (n, d) -> [Iman-Conover reordering] -> Distribution.ppf per column``.
Working in uniform space first lets one design serve any mix of marginals; reordering before
the (monotone) ppf keeps the ranks, hence the rank correlation.

Every function takes a :class:`numpy.random.Generator` (see :func:`lcoe.case.rng.make_rng`); none
touches global random state, so one seed reproduces the whole sample.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from lcoe.case.errors import InputError, did_you_mean
from lcoe.uncertainty.distributions import Distribution, is_real

#: Smallest and largest uniform handed to a ppf: keeps unbounded quantiles finite.
U_MIN = np.finfo(float).eps / 2.0
U_MAX = 1.0 - np.finfo(float).eps / 2.0

#: Smallest eigenvalue for a correlation matrix to count as positive definite.
PD_TOL = 1e-10


def seed_from(rng: np.random.Generator) -> int:
    """A nonzero integer seed in [1, 2**31 - 1) drawn from ``rng``.

    Nonzero because some SALib functions read ``seed=0`` as "no seed".
    """
    return int(rng.integers(1, 2**31 - 1))


def check_count(name: str, value, least: int) -> int:
    """``value`` as an int if it is an integer >= ``least`` (bools refused), else ValueError."""
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < least:
        raise ValueError(f"{name} = {value!r}: expected an integer >= {least}")
    return int(value)


def _check_size(n, d) -> None:
    check_count("n", n, 1)
    check_count("d", d, 1)


def latin_hypercube(n: int, d: int, rng: np.random.Generator) -> np.ndarray:
    """Latin hypercube sample of uniforms (McKay et al. 1979).

    Each column has exactly one point in each of the ``n`` equal strata of (0, 1), placed at
    random within its stratum; columns are paired at random.

    Parameters
    ----------
    n : int
        Number of samples (rows).
    d : int
        Number of inputs (columns).
    rng : numpy.random.Generator
        Source of randomness; one integer seed is drawn from it for the hypercube's own
        generator (as scipy.stats.qmc.LatinHypercube would be seeded).

    Returns
    -------
    numpy.ndarray
        Shape (n, d), values strictly inside (0, 1) [-].

    References
    ----------
    .. [1] McKay, M. D., Beckman, R. J., Conover, W. J. (1979). A comparison of three methods
       for selecting values of input variables in the analysis of output from a computer code.
       Technometrics 21(2), 239-245.
    """
    _check_size(n, d)
    seed = seed_from(rng)
    # scipy.stats.qmc.LatinHypercube's scrambled draw, written out so that a study need not
    # import scipy.stats (about 0.25 s): the engine's generator spawned from default_rng(seed)
    # as scipy spawns it, the same calls in the same order, hence the same numbers
    # (tests/test_sampling.py compares them with scipy's)
    gen = np.random.Generator(np.random.PCG64(np.random.SeedSequence(seed).spawn(1)[0]))
    within = gen.uniform(size=(n, d))
    perms = np.tile(np.arange(1, n + 1), (d, 1))
    for i in range(d):
        gen.shuffle(perms[i, :])
    return np.clip((perms.T - within) / n, U_MIN, U_MAX)


def random_uniform(n: int, d: int, rng: np.random.Generator) -> np.ndarray:
    """Plain Monte Carlo uniforms, shape (n, d), strictly inside (0, 1) [-]."""
    _check_size(n, d)
    return np.clip(rng.random((n, d)), U_MIN, U_MAX)


def _check_target(target: np.ndarray, d: int) -> np.ndarray:
    """Validate a target correlation matrix (programming errors: ValueError)."""
    c = np.asarray(target, dtype=float)
    if c.shape != (d, d):
        raise ValueError(f"target_rank_corr shape {c.shape}: expected ({d}, {d})")
    if not np.all(np.isfinite(c)) or not np.allclose(c, c.T, atol=1e-12):
        raise ValueError("target_rank_corr: expected a finite symmetric matrix")
    if not np.allclose(np.diag(c), 1.0, atol=1e-12):
        raise ValueError(f"target_rank_corr diagonal {np.diag(c)}: expected ones")
    if np.linalg.eigvalsh(c)[0] <= PD_TOL:
        raise ValueError("target_rank_corr: expected a positive definite matrix")
    return c


def spearman_to_pearson(rank_corr: np.ndarray) -> np.ndarray:
    """Pearson correlation of normal scores giving the wanted Spearman rank correlation.

    For a bivariate normal, rho_S = (6/pi) arcsin(rho/2), so rho = 2 sin(pi rho_S / 6)
    (Kruskal 1958; attribution from memory). Applied elementwise; the diagonal stays 1.

    References
    ----------
    .. [1] Kruskal, W. H. (1958). Ordinal measures of association. Journal of the American
       Statistical Association 53(284), 814-861.
    """
    r = np.asarray(rank_corr, dtype=float)
    return 2.0 * np.sin(np.pi * r / 6.0)


def iman_conover(
    u: np.ndarray, target_rank_corr: np.ndarray, rng: np.random.Generator
) -> np.ndarray:
    """Reorder each column so that the rank correlation approaches a target.

    The values of each column are kept exactly (only their order changes), so the marginals of
    any sample, uniform or not, are untouched.

    Parameters
    ----------
    u : numpy.ndarray
        Shape (n, d): uniforms or sampled values, one column per input; n > d.
    target_rank_corr : numpy.ndarray
        Shape (d, d): wanted Spearman rank correlation, symmetric positive definite with unit
        diagonal.
    rng : numpy.random.Generator
        Shuffles the scores.

    Returns
    -------
    numpy.ndarray
        Shape (n, d): each column a permutation of the same column of ``u``.

    Notes
    -----
    Iman & Conover (1982): build a score matrix M whose columns are random permutations of the
    van der Waerden scores Phi^-1(i/(n+1)), i = 1..n. With E the actual correlation of M and
    C the target, Cholesky E = Q Q^T and C = P P^T; then T = M (Q^-1)^T P^T has correlation C
    exactly (the correction that removes the spurious correlation of M). Each column of the
    input is rearranged to have the ranks of the same column of T.

    T is normal-like, and the Spearman correlation of normal variables is
    (6/pi) arcsin(rho/2), slightly below rho; C is therefore taken as
    :func:`spearman_to_pearson` of the target when that matrix is positive definite, else the
    target itself.

    References
    ----------
    .. [1] Iman, R. L., Conover, W. J. (1982). A distribution-free approach to inducing rank
       correlation among input variables. Communications in Statistics - Simulation and
       Computation 11(3), 311-334.
    """
    x = np.asarray(u, dtype=float)
    if x.ndim != 2:
        raise ValueError(f"u has shape {x.shape}: expected (n, d)")
    n, d = x.shape
    target = _check_target(target_rank_corr, d)
    if d == 1:
        return x.copy()
    if n <= d:
        raise ValueError(f"u has {n} rows for {d} columns: expected more rows than columns")

    from scipy.special import ndtri

    scores = ndtri(np.arange(1, n + 1) / (n + 1.0))
    m = np.column_stack([rng.permutation(scores) for _ in range(d)])
    e = np.corrcoef(m, rowvar=False)
    q = np.linalg.cholesky(e)
    pearson = spearman_to_pearson(target)
    np.fill_diagonal(pearson, 1.0)
    if np.linalg.eigvalsh(pearson)[0] <= PD_TOL:
        pearson = target
    p = np.linalg.cholesky(pearson)
    t = m @ np.linalg.solve(q.T, p.T)  # = M (Q^-1)^T P^T

    out = np.empty_like(x)
    for j in range(d):  # per column: place sorted values at the ranks of t[:, j]
        out[np.argsort(t[:, j], kind="stable"), j] = np.sort(x[:, j], kind="stable")
    return out


def _is_pd(c: np.ndarray) -> bool:
    return bool(np.linalg.eigvalsh(c)[0] > PD_TOL)


def correlation_matrix(
    names: Sequence[str],
    pairs: Sequence[tuple[str, str, float]],
    source: str,
    key: str = "correlations",
) -> np.ndarray:
    """Build and check a target rank-correlation matrix from named pairs.

    Parameters
    ----------
    names : sequence of str
        Names of the uncertain inputs, in column order (length d).
    pairs : sequence of (str, str, float)
        ``(a, b, rho)``: Spearman rank correlation ``rho`` in [-1, 1] between inputs ``a`` and
        ``b``; pairs not given are uncorrelated.
    source : str
        File the pairs came from, for messages.
    key : str, optional
        Name of the case-file field holding the pairs, for messages.

    Returns
    -------
    numpy.ndarray
        Shape (d, d), symmetric, unit diagonal, positive definite [-].

    Raises
    ------
    lcoe.case.errors.InputError
        One line naming ``source``, ``key[i]`` and the value: malformed pair, rho not a number
        in [-1, 1], a name not among the uncertain inputs (with the closest one), a self pair, a
        pair given twice (in either order), or a matrix that is not positive definite. In the
        last case the message names the pair whose removal alone raises the smallest
        eigenvalue the most, and says whether that removal restores positive definiteness.
    """
    names = list(names)
    index = {name: i for i, name in enumerate(names)}
    c = np.eye(len(names))
    seen: dict[frozenset, int] = {}
    entries: list[tuple[int, int, float, int]] = []
    for k, pair in enumerate(pairs):
        field = f"{key}[{k}]"
        if isinstance(pair, (str, bytes)) or not hasattr(pair, "__len__") or len(pair) != 3:
            raise InputError(f"{source}: {field} = {pair!r}: expected [name_a, name_b, rho]")
        a, b, rho = pair
        for name in (a, b):
            if name not in index:
                suggestion = did_you_mean(name, names)
                raise InputError(
                    f"{source}: {field} = {list(pair)!r}: {name!r} is not an uncertain input "
                    f"(uncertain inputs: {', '.join(names)}){suggestion}"
                )
        if a == b:
            raise InputError(
                f"{source}: {field} = {list(pair)!r}: expected two different inputs "
                "(an input's correlation with itself is 1)"
            )
        if not is_real(rho) or not -1.0 <= float(rho) <= 1.0:
            raise InputError(
                f"{source}: {field} = {list(pair)!r}: rho = {rho!r}: expected a number in [-1, 1]"
            )
        twice = frozenset((a, b))
        if twice in seen:
            raise InputError(
                f"{source}: {field} = {list(pair)!r}: pair ({a}, {b}) already given at "
                f"{key}[{seen[twice]}]; give each pair once"
            )
        seen[twice] = k
        i, j = index[a], index[b]
        c[i, j] = c[j, i] = float(rho)
        entries.append((i, j, float(rho), k))

    if not _is_pd(c):
        raise _not_pd_error(c, entries, names, source, key)
    return c


def _not_pd_error(c, entries, names, source, key) -> InputError:
    """One-line error naming the pair whose removal helps a non positive definite matrix most."""
    smallest = np.linalg.eigvalsh(c)[0]
    best = None
    for i, j, rho, k in entries:
        trial = c.copy()
        trial[i, j] = trial[j, i] = 0.0
        gain = np.linalg.eigvalsh(trial)[0]
        if best is None or gain > best[0]:
            best = (gain, i, j, rho, k)
    gain, i, j, rho, k = best
    if gain > PD_TOL:
        fix = "removing or weakening this pair restores positive definiteness"
    else:
        fix = (
            f"removing this pair alone raises the smallest eigenvalue to {gain:.3g}; "
            "weaken it and others"
        )
    return InputError(
        f"{source}: {key}[{k}] = {[names[i], names[j], rho]!r}: the correlations are not "
        f"jointly possible (matrix not positive definite, smallest eigenvalue {smallest:.3g}); "
        f"{fix}"
    )


def uniforms_to_values(dists: Sequence[Distribution], u: np.ndarray) -> np.ndarray:
    """Map uniforms to input values column by column through each distribution's ppf.

    Parameters
    ----------
    dists : sequence of Distribution
        Length d.
    u : numpy.ndarray
        Shape (n, d), probabilities in [0, 1].

    Returns
    -------
    numpy.ndarray
        Shape (n, d) [units of the inputs].
    """
    u = np.asarray(u, dtype=float)
    if u.ndim != 2 or u.shape[1] != len(dists):
        raise ValueError(f"u has shape {u.shape}: expected (n, {len(dists)})")
    out = np.empty_like(u)
    for j, dist in enumerate(dists):
        out[:, j] = dist.ppf(u[:, j])
    return out


def sample_inputs(
    dists: Sequence[Distribution],
    n: int,
    rng: np.random.Generator,
    corr: np.ndarray | None = None,
    method: str = "lhs",
) -> np.ndarray:
    """Sample values of the uncertain inputs.

    Parameters
    ----------
    dists : sequence of Distribution
        The d uncertain inputs, in column order.
    n : int
        Number of samples (trials).
    rng : numpy.random.Generator
        Single source of randomness.
    corr : numpy.ndarray, optional
        Shape (d, d) target rank correlation (see :func:`correlation_matrix`); None for
        independent inputs.
    method : {"lhs", "random"}
        Latin hypercube (:func:`latin_hypercube`) or plain Monte Carlo (:func:`random_uniform`).

    Returns
    -------
    numpy.ndarray
        Shape (n, d) [units of the inputs]; each column follows its distribution, and with
        ``corr`` the Spearman correlation approaches the target (Iman-Conover on the uniforms,
        which the monotone ppf preserves).
    """
    d = len(dists)
    if method == "lhs":
        u = latin_hypercube(n, d, rng)
    elif method == "random":
        u = random_uniform(n, d, rng)
    else:
        raise ValueError(f"method = {method!r}: expected 'lhs' or 'random'")
    if corr is not None and not np.allclose(np.asarray(corr, dtype=float), np.eye(d)):
        u = iman_conover(u, corr, rng)
    return uniforms_to_values(dists, u)


def round_up_power_of_two(n: int) -> int:
    """Smallest power of two >= ``n`` (n >= 1)."""
    return 1 << (check_count("n", n, 1) - 1).bit_length()
