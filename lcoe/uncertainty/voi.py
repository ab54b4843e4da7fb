"""Expected value of perfect and partial information from trials already run.

A decision picks one of ``K`` options (e.g. which case to build). Each Monte Carlo trial gives
the value of every option, an array ``values`` of shape (n, K) [currency]. The expected value
of perfect information (EVPI) is what a decision-maker should at most pay to learn every
uncertain quantity before choosing; the expected value of partial perfect information (EVPPI)
of an input, or of a group of inputs, is what learning that input alone is worth.

EVPPI is estimated without nested Monte Carlo by the regression (non-parametric) method of
Strong, Oakley & Brennan (2014): the incremental net benefit of every option over the first is
regressed on the input(s); the fitted values estimate the conditional expectation given the
input(s), and ``EVPPI = mean(max_k fitted_k) - max_k mean(fitted_k)``.

The smoother used here (named so its limits are clear):

- one input: a penalised cubic regression spline (P-spline; Eilers & Marx 1996) on the input's
  rank transform ``u = F_n(x)`` in (0, 1): 20 equal segments (23 cubic B-splines), a
  second-order difference penalty, smoothing parameter chosen by generalised cross-validation
  (GCV). The rank transform makes the knots equally spaced in probability, so skewed inputs
  are handled; ``E[y | x] = E[y | F(x)]`` for a monotone F, so nothing is lost.
- a group of inputs: an additive P-spline (one such spline per input, fitted jointly with one
  GCV smoothing parameter) plus unpenalised pairwise products of the centred rank transforms.
  It captures each input's own non-linear effect and the leading (bilinear) interaction of
  every pair, but not higher-order or strongly non-linear interactions; where those matter it
  underestimates the group's EVPPI (Strong et al. use a Gaussian process there).

Its standard error comes from a non-parametric bootstrap of the trials (the fit is redone on
every resample with the smoothing parameter chosen on the full sample). Regression estimates
of EVPPI are biased upwards by fitted noise by about the size of this standard error, so an
estimate below its standard error is flagged as not distinguishable from zero.

Shapes: ``n`` trials, ``K`` options, ``g`` inputs in a group.

References
----------
.. [1] M. Strong, J. E. Oakley and A. Brennan, "Estimating multiparameter partial expected
   value of perfect information from a probabilistic sensitivity analysis sample: a
   nonparametric regression approach", Medical Decision Making 34(3), 311-326, 2014.
.. [2] P. H. C. Eilers and B. D. Marx, "Flexible smoothing with B-splines and penalties",
   Statistical Science 11(2), 89-121, 1996.
.. [3] H. Raiffa and R. Schlaifer, Applied Statistical Decision Theory, Harvard, 1961 (the
   unit normal loss integral: EVPI of a two-option decision with normal incremental value).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtr

from lcoe.case.rng import make_rng
from lcoe.case.threads import one_blas_thread as _one_blas_thread

#: Equal segments of the cubic P-spline on (0, 1) (23 basis functions).
N_SEGMENTS = 20
#: Equal segments per input within a group (fewer: the group's fit stays small).
N_SEGMENTS_GROUP = 8
#: Largest group whose pairwise products enter the smoother (beyond it: additive only).
MAX_PAIRWISE = 5
#: Fewest bootstrap resamples of a group larger than MAX_PAIRWISE.
LARGE_GROUP_MIN_BOOT = 25
#: Bootstrap resamples for standard errors.
DEFAULT_BOOTSTRAP = 100
#: Smoothing parameters tried by GCV, relative to trace(B'B) / trace(P).
_LAMBDA_GRID = 10.0 ** np.arange(-6.0, 4.01, 0.5)


@dataclass(frozen=True)
class InfoValue:
    """An EVPI or EVPPI estimate.

    Attributes
    ----------
    name : str
        The input, group, or ``"all (EVPI)"``.
    members : tuple of str
        Inputs it covers.
    value : float
        The estimate [currency].
    se : float
        Bootstrap standard error [currency].
    low, high : float
        2.5 % and 97.5 % bootstrap percentiles [currency].
    below_se : bool
        The estimate is below its standard error: not distinguishable from zero.
    n_trials : int
        Trials used (all of them; none is dropped).
    edf : float
        Effective degrees of freedom of the fit (summed over options); NaN for EVPI.
    """

    name: str
    members: tuple
    value: float
    se: float
    low: float
    high: float
    below_se: bool
    n_trials: int
    edf: float = float("nan")

    def to_dict(self, per_kwh: float | None = None) -> dict:
        """Plain dict; with ``per_kwh`` (kWh) also the values divided by it [currency/kWh]."""
        out = {"name": self.name, "members": list(self.members), "value": self.value,
               "se": self.se, "low": self.low, "high": self.high,
               "below_se": self.below_se, "n_trials": self.n_trials, "edf": self.edf}
        if per_kwh:
            out.update(value_per_kwh=self.value / per_kwh, se_per_kwh=self.se / per_kwh)
        return out


def _check_values(values) -> np.ndarray:
    v = np.asarray(values, dtype=float)
    if v.ndim != 2 or v.shape[1] < 2:
        raise ValueError(f"values: shape {v.shape}: expected (n_trials, n_options) with at "
                         f"least two options (a decision needs a choice)")
    if v.shape[0] < 2:
        raise ValueError(f"values: {v.shape[0]} trial(s): expected at least 2")
    if not np.all(np.isfinite(v)):
        raise ValueError("values: non-finite entries: every trial must have a value")
    return v


def _decision_loss(nb: np.ndarray, w: np.ndarray | None = None) -> float:
    """``mean(max_k nb_k) - max_k mean(nb_k)`` with optional trial weights (n,).

    nb (n, K) holds the (incremental) net benefit of every option [currency].
    """
    best = nb[:, 0].copy()
    for j in range(1, nb.shape[1]):  # K is small: a loop over options beats max(axis=1)
        np.maximum(best, nb[:, j], out=best)
    if w is None:
        return float(best.mean() - np.max(nb.mean(axis=0)))
    tot = w.sum()  # plain products and sums: BLAS dot was erratic on a loaded machine
    return float(((w * best).sum() - np.max((w[:, None] * nb).sum(axis=0))) / tot)


def _bootstrap_weights(n: int, n_boot: int, rng: np.random.Generator) -> np.ndarray:
    """(n_boot, n) counts: how often each trial appears in each bootstrap resample."""
    picks = rng.integers(0, n, size=(n_boot, n)) + n * np.arange(n_boot)[:, None]
    return np.bincount(picks.ravel(), minlength=n_boot * n).reshape(n_boot, n).astype(float)


def _summary(name, members, value, reps, n, edf=float("nan")) -> InfoValue:
    se = float(np.std(reps, ddof=1)) if reps.size > 1 else float("nan")
    lo, hi = (np.quantile(reps, (0.025, 0.975)) if reps.size > 1 else (np.nan, np.nan))
    return InfoValue(name=name, members=tuple(members), value=value, se=se, low=float(lo),
                     high=float(hi), below_se=bool(value < se) if np.isfinite(se) else False,
                     n_trials=n, edf=float(edf))


def evpi(values, n_boot: int = DEFAULT_BOOTSTRAP, seed=None) -> InfoValue:
    """Expected value of perfect information from per-trial option values.

    Parameters
    ----------
    values : array_like, shape (n, K)
        Value of each of K >= 2 options in each trial [currency]; higher is better.
    n_boot : int
        Bootstrap resamples for the standard error (0: none).
    seed : int, Generator or None

    Returns
    -------
    InfoValue
        ``EVPI = E[max_k value_k] - max_k E[value_k]`` [currency].

    References
    ----------
    .. [1] H. Raiffa and R. Schlaifer, Applied Statistical Decision Theory, 1961.
    """
    v = _check_values(values)
    rng = make_rng(seed)
    est = _decision_loss(v)
    reps = np.array([_decision_loss(v, w) for w in _bootstrap_weights(v.shape[0], n_boot, rng)])
    return _summary("all (EVPI)", (), est, reps, v.shape[0])


def normal_evpi(mean, sd):
    """EVPI of a choice between two options whose incremental value is N(mean, sd).

    Parameters
    ----------
    mean, sd : float or array_like
        Mean and standard deviation of value_B - value_A [currency], sd >= 0.

    Returns
    -------
    float or numpy.ndarray
        ``sd phi(m/sd) - |m| Phi(-|m|/sd)`` [currency] (the unit normal loss integral times
        sd); ``0`` when sd = 0.

    References
    ----------
    .. [1] H. Raiffa and R. Schlaifer, Applied Statistical Decision Theory, 1961.
    """
    m, s = np.asarray(mean, dtype=float), np.asarray(sd, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = m / s  # normal density and cdf as scipy.stats.norm writes them
        out = np.where(s > 0, s * (np.exp(-z ** 2 / 2.0) / np.sqrt(2.0 * np.pi)) -
                       np.abs(m) * ndtr(-np.abs(m) / s), 0.0)
    return out[()] if out.ndim == 0 else out


# --------------------------------------------------------------------------------------------
# the smoother
# --------------------------------------------------------------------------------------------
def rank_transform(x) -> np.ndarray:
    """Empirical CDF of each column, ``(rank - 0.5) / n`` in (0, 1); ties share their rank.

    Parameters
    ----------
    x : array_like, shape (n,) or (n, g)

    Returns
    -------
    numpy.ndarray, shape (n, g)
    """
    x = np.asarray(x, dtype=float)
    x = x[:, None] if x.ndim == 1 else x
    n = x.shape[0]
    ranks = np.empty(x.shape)
    for j in range(x.shape[1]):  # average ranks, as scipy.stats.rankdata(method="average")
        order = np.argsort(x[:, j], kind="mergesort")
        v = x[order, j]
        first = np.concatenate(([True], v[1:] != v[:-1]))
        dense = np.cumsum(first)
        bounds = np.concatenate((np.nonzero(first)[0], [n]))
        ranks[order, j] = 0.5 * (bounds[dense] + bounds[dense - 1] + 1)
    return (ranks - 0.5) / n


def spline_basis(u: np.ndarray, n_segments: int = N_SEGMENTS
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Cubic B-spline basis on (0, 1) with equal segments, row by row.

    Parameters
    ----------
    u : numpy.ndarray, shape (n,)
        Points in [0, 1].
    n_segments : int
        Equal segments (``n_segments + 3`` basis functions).

    Returns
    -------
    cols : numpy.ndarray of int, shape (n, 4)
        The four basis functions (of ``N_SEGMENTS + 3``) that are non-zero at each point.
    vals : numpy.ndarray, shape (n, 4)
        Their values (they sum to 1).

    Notes
    -----
    Uniform cubic B-spline pieces at ``t`` in [0, 1) within segment s: ``(1-t)^3/6``,
    ``(3t^3 - 6t^2 + 4)/6``, ``(-3t^3 + 3t^2 + 3t + 1)/6``, ``t^3/6`` for functions s..s+3
    (de Boor, A Practical Guide to Splines, 1978); checked against scipy's BSpline.
    """
    z = np.clip(u, 0.0, 1.0) * n_segments
    s = np.minimum(np.floor(z), n_segments - 1).astype(int)
    t = z - s
    t2, t3 = t * t, t * t * t
    vals = np.column_stack([(1 - t) ** 3, 3 * t3 - 6 * t2 + 4, -3 * t3 + 3 * t2 + 3 * t + 1,
                            t3]) / 6.0
    return s[:, None] + np.arange(4), vals


def _difference_penalty(p: int) -> np.ndarray:
    d = np.diff(np.eye(p), n=2, axis=0)
    return d.T @ d


@dataclass(frozen=True)
class _Design:
    """A design matrix stored row by row: ``B[i, cols[i, a]] = vals[i, a]`` (else 0).

    Every row has the same number r of stored entries, so ``B'WB`` for many weight vectors is
    one sparse product. ``pen`` (p, p) is the roughness penalty.
    """

    cols: np.ndarray
    vals: np.ndarray
    p: int
    pen: np.ndarray

    def matrix(self):
        from scipy import sparse

        n, r = self.cols.shape
        return sparse.csr_matrix((self.vals.ravel(), self.cols.ravel(),
                                  np.arange(0, n * r + 1, r)), shape=(n, self.p))

    def grams(self, w: np.ndarray, chunk: int = 4_000_000) -> np.ndarray:
        """``B' diag(w_b) B`` for every row of w (n_boot, n) -> (n_boot, p, p)."""
        n, r = self.cols.shape
        if np.array_equal(self.cols, self.cols[:, :1] + np.arange(r)):
            return self._banded_grams(w)
        out = np.zeros((w.shape[0], self.p * self.p))
        for a, q in self._outer_products(chunk):
            out += (q.T @ w[:, a:a + q.shape[0]].T).T
        return out.reshape(w.shape[0], self.p, self.p)

    def _outer_products(self, chunk: int) -> list:
        """Rows' outer products ``v_a v_c`` as sparse (m, p*p) blocks with their first row,
        built once per design (the fit and its bootstrap use the same)."""
        from scipy import sparse

        cache = self.__dict__.setdefault("_outer_cache", {})
        if chunk not in cache:
            n, r = self.cols.shape
            step = max(1, chunk // (r * r))
            blocks = []
            for a in range(0, n, step):
                c, v = self.cols[a:a + step], self.vals[a:a + step]
                m = c.shape[0]
                idx = (c[:, :, None] * self.p + c[:, None, :]).ravel()
                blocks.append((a, sparse.csr_matrix(
                    ((v[:, :, None] * v[:, None, :]).ravel(), idx,
                     np.arange(0, m * r * r + 1, r * r)), shape=(m, self.p * self.p))))
            cache[chunk] = blocks
        return cache[chunk]

    def _banded_grams(self, w: np.ndarray) -> np.ndarray:
        """:meth:`grams` of a design whose rows store r neighbouring columns (one input's
        B-spline pieces): rows grouped by their first column, each group one dense product
        ``w[:, rows] @ (v_a v_c)[rows]`` added to its r x r block."""
        n, r = self.cols.shape
        start = self.cols[:, 0]
        order = np.argsort(start, kind="stable")
        firsts, bounds = np.unique(start[order], return_index=True)
        bounds = np.append(bounds, n)
        outer = (self.vals[:, :, None] * self.vals[:, None, :]).reshape(n, r * r)
        out = np.zeros((w.shape[0], self.p, self.p))
        for k, s in enumerate(firsts):
            rows = order[bounds[k]:bounds[k + 1]]
            out[:, s:s + r, s:s + r] += (w[:, rows] @ outer[rows]).reshape(-1, r, r)
        return out


def _design(u: np.ndarray) -> _Design:
    """The smoother's design over rank-transformed inputs u (n, g).

    One B-spline block per input (left uncentred; each spans the constant, so the fitted
    values are unique and :func:`_solve` adds a tiny ridge for the coefficients), then, for
    groups of up to :data:`MAX_PAIRWISE` inputs, the unpenalised products of every pair.
    """
    n, g = u.shape
    segments = N_SEGMENTS if g == 1 else N_SEGMENTS_GROUP
    p_block = segments + 3
    cols, vals = [], []
    for j in range(g):
        c, v = spline_basis(u[:, j], segments)
        cols.append(c + j * p_block)
        vals.append(v)
    c = (u - 0.5) * np.sqrt(12.0)
    pairs = [(i, j) for i in range(g) for j in range(i + 1, g)] if g <= MAX_PAIRWISE else []
    p = g * p_block + len(pairs)
    pen = np.zeros((p, p))
    block = _difference_penalty(p_block)
    for j in range(g):
        pen[j * p_block:(j + 1) * p_block, j * p_block:(j + 1) * p_block] = block
    if pairs:
        cols.append(np.broadcast_to(g * p_block + np.arange(len(pairs)), (n, len(pairs))))
        vals.append(np.column_stack([c[:, i] * c[:, j] for i, j in pairs]))
    return _Design(cols=np.ascontiguousarray(np.hstack(cols)), vals=np.hstack(vals), p=p,
                   pen=pen)


def _solve(gram: np.ndarray, pen: np.ndarray, lam, rhs: np.ndarray) -> np.ndarray:
    """Solve ``(G + lam P + ridge) beta = rhs``; G (..., p, p), lam scalar or (..., 1, 1)."""
    a = gram + lam * pen
    a[..., np.arange(a.shape[-1]), np.arange(a.shape[-1])] += _ridge(gram)
    return np.linalg.solve(a, rhs[..., None])[..., 0]


def _ridge(gram: np.ndarray) -> np.ndarray:
    """Tiny ridge (..., 1) for identifiability of the uncentred blocks (fitted values unchanged)."""
    return 1e-7 * np.trace(gram, axis1=-2, axis2=-1)[..., None] / gram.shape[-1]


def _choose_lambda(gram, pen, bty, yty, n) -> tuple[np.ndarray, np.ndarray]:
    """GCV choice of the smoothing parameter for each response; returns (lam, edf) (m,).

    One Cholesky factor of the Gram matrix and one eigen-decomposition of the transformed
    penalty give every smoothing parameter of the grid at once (Demmler-Reinsch basis):
    ``edf = sum 1/(1 + lam s_i)``, ``RSS = y'y - 2 sum f c^2 + sum f^2 c^2``.
    """
    from scipy.linalg import cholesky, eigh, solve_triangular

    p = gram.shape[0]
    lower = cholesky(gram + _ridge(gram) * np.eye(p), lower=True)
    linv = solve_triangular(lower, np.eye(p), lower=True)
    s, u = eigh(linv @ pen @ linv.T)
    c2 = (u.T @ (linv @ bty)) ** 2  # (p, m)
    scale = np.trace(gram) / max(np.trace(pen), 1e-300)
    lams = _LAMBDA_GRID * scale
    f = 1.0 / (1.0 + lams[:, None] * np.maximum(s, 0.0)[None, :])  # (n_lam, p)
    edf = f.sum(axis=1)
    rss = yty[None, :] - 2 * f @ c2 + (f * f) @ c2  # (n_lam, m)
    gcv = n * np.maximum(rss, 0.0) / np.maximum(n - edf, 1.0)[:, None] ** 2
    k = np.argmin(gcv, axis=0)
    return lams[k], edf[k]


def _fit(y: np.ndarray, u: np.ndarray):
    """Design, GCV smoothing parameters and fitted values of responses y (n, m) on ranks u."""
    d = _design(u)
    b = d.matrix()
    gram = d.grams(np.ones((1, y.shape[0])))[0]
    bty = b.T @ y
    lam, edf = _choose_lambda(gram, d.pen, bty, np.einsum("nm,nm->m", y, y), y.shape[0])
    beta = np.column_stack([_solve(gram, d.pen, lam[j], bty[:, j]) for j in range(y.shape[1])])
    return d, b, lam, edf, b @ beta


def conditional_means(y, x) -> tuple[np.ndarray, float]:
    """Fitted ``E[y | x]`` of each column of y by the smoother of this module.

    Parameters
    ----------
    y : array_like, shape (n,) or (n, m)
        Responses (e.g. incremental net benefits) [any unit].
    x : array_like, shape (n,) or (n, g)
        Inputs conditioned on [any unit; only their ranks matter].

    Returns
    -------
    fitted : numpy.ndarray, shape (n, m)
    edf : float
        Effective degrees of freedom, summed over responses.
    """
    y = np.asarray(y, dtype=float)
    y = y[:, None] if y.ndim == 1 else y
    _, _, _, edf, fitted = _fit(y, rank_transform(x))
    return fitted, float(edf.sum())


def _bootstrap_losses(d: _Design, b, lam, inb: np.ndarray, w: np.ndarray) -> np.ndarray:
    """EVPPI of every bootstrap resample (rows of the count matrix w (n_boot, n))."""
    n = inb.shape[0]
    grams = d.grams(w)
    best = np.zeros((n, w.shape[0]))
    means = [np.zeros(w.shape[0])]
    for j in range(inb.shape[1]):
        rhs = (b.T @ (w.T * inb[:, j:j + 1])).T  # (n_boot, p)
        beta = _solve(grams, d.pen, lam[j], rhs)
        fitted = b @ beta.T  # (n, n_boot)
        np.maximum(best, fitted, out=best)
        means.append((w * fitted.T).sum(axis=1) / n)
    return (w * best.T).sum(axis=1) / n - np.max(means, axis=0)


def evppi(values, x, name: str = "", members=(), n_boot: int = DEFAULT_BOOTSTRAP,
          seed=None, weights: np.ndarray | None = None) -> InfoValue:
    """EVPPI of one input or a group, by regression on the trials (Strong et al. 2014).

    Parameters
    ----------
    values : array_like, shape (n, K)
        Value of each option in each trial [currency]; higher is better.
    x : array_like, shape (n,) or (n, g)
        The input(s) whose value would be learnt, as drawn in the same trials.
    name : str
        Label of the input or group.
    members : sequence of str
        Inputs of the group.
    n_boot : int
        Bootstrap resamples for the standard error.
    seed : int, Generator or None
    weights : numpy.ndarray, optional
        (n_boot, n) bootstrap counts to use instead of drawing them (``n_boot`` and ``seed``
        are then ignored), so that several estimates share their resamples.

    Returns
    -------
    InfoValue
        ``EVPPI = mean_i max_k g_k(x_i) - max_k mean_i g_k(x_i)`` [currency], g_k the fitted
        incremental value of option k over option 0 (g_0 = 0).

    Notes
    -----
    An input that is constant across the trials has EVPPI 0 (nothing to learn). The
    smoothing parameter is chosen by GCV on all trials and kept for the bootstrap refits.

    References
    ----------
    .. [1] M. Strong, J. E. Oakley and A. Brennan, Medical Decision Making 34(3), 311-326,
       2014.
    """
    v = _check_values(values)
    xs = np.asarray(x, dtype=float)
    xs = xs[:, None] if xs.ndim == 1 else xs
    n = v.shape[0]
    if xs.shape[0] != n:
        raise ValueError(f"x: {xs.shape[0]} rows: expected one per trial ({n})")
    members = tuple(members) or (name,)
    keep = np.ptp(xs, axis=0) > 0
    if not keep.any():
        return InfoValue(name=name, members=members, value=0.0, se=0.0, low=0.0, high=0.0,
                         below_se=False, n_trials=n, edf=0.0)
    inb = v[:, 1:] - v[:, :1]
    with _one_blas_thread():
        d, b, lam, edf, fitted = _fit(inb, rank_transform(xs[:, keep]))
        est = _decision_loss(np.column_stack([np.zeros(n), fitted]))
        if weights is None and n_boot > 1:
            weights = _bootstrap_weights(n, n_boot, make_rng(seed))
        reps = _bootstrap_losses(d, b, lam, inb, weights) \
            if weights is not None and weights.shape[0] > 1 else np.array([])
    return _summary(name, members, est, reps, n, edf.sum())


def evppi_table(values, x, names, groups: dict | None = None, n_boot: int = DEFAULT_BOOTSTRAP,
                seed=None) -> list[InfoValue]:
    """EVPPI of every input (columns of x) and of every named group of inputs.

    Parameters
    ----------
    values : array_like, shape (n, K)
        [currency].
    x : array_like, shape (n, d)
        Inputs drawn in the trials.
    names : sequence of str
        Name of each column of x.
    groups : dict of str to sequence of str, optional
        Group name -> member input names (groups of one input are skipped: the input's row
        already covers it).
    n_boot : int
        Bootstrap resamples, shared by every estimate (common resamples); groups of more than
        :data:`MAX_PAIRWISE` inputs use the first quarter of them (at least
        :data:`LARGE_GROUP_MIN_BOOT`), as their refits cost far more.
    seed : int, Generator or None

    Returns
    -------
    list of InfoValue
        Inputs first, then groups, in the given order.
    """
    x = np.asarray(x, dtype=float)
    names = list(names)
    groups = {k: list(m) for k, m in (groups or {}).items() if len(m) > 1}
    w = _bootstrap_weights(x.shape[0], n_boot, make_rng(seed)) if n_boot > 1 else None
    w_large = None if w is None else w[:max(LARGE_GROUP_MIN_BOOT, n_boot // 4)]
    rows = [evppi(values, x[:, j], name, (name,), weights=w) for j, name in enumerate(names)]
    for gname, members in groups.items():
        cols = [names.index(m) for m in members]
        rows.append(evppi(values, x[:, cols], gname, members,
                          weights=w if len(cols) <= MAX_PAIRWISE else w_large))
    return rows


def evppi_nested(option_values: Callable[[np.ndarray, np.ndarray], np.ndarray],
                 draw_focus: Callable[[int, np.random.Generator], np.ndarray],
                 draw_rest: Callable[[int, np.random.Generator], np.ndarray],
                 n_outer: int, n_inner: int, seed=None) -> tuple[float, float]:
    """EVPPI by nested (two-level) Monte Carlo: a reference for checks, not for normal runs.

    Parameters
    ----------
    option_values : callable
        ``option_values(focus, rest) -> (n, K)`` values of the options [currency] for rows of
        the focus input(s) (n, ...) and of the other inputs (n, ...).
    draw_focus, draw_rest : callable
        ``draw(n, rng) -> (n, ...)`` independent draws of the focus and of the other inputs.
    n_outer, n_inner : int
        Outer draws of the focus; inner draws of the rest for each.
    seed : int, Generator or None

    Returns
    -------
    evppi : float
        ``mean_outer max_k mean_inner value_k - max_k mean_all value_k`` [currency].
    se : float
        Standard error from the spread of the outer terms [currency] (it ignores the small
        upward bias of a finite inner sample).
    """
    rng = make_rng(seed)
    focus = draw_focus(n_outer, rng)
    best, means = np.empty(n_outer), []
    for i in range(n_outer):
        rest = draw_rest(n_inner, rng)
        fi = np.repeat(focus[i:i + 1], n_inner, axis=0)
        m = np.asarray(option_values(fi, rest), dtype=float).mean(axis=0)
        best[i] = m.max()
        means.append(m)
    means = np.asarray(means)
    term = best - means[:, int(np.argmax(means.mean(axis=0)))]
    return float(term.mean()), float(term.std(ddof=1) / np.sqrt(n_outer))
