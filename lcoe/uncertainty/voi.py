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
from scipy.interpolate import BSpline
from scipy.stats import norm, rankdata

from ..rng import make_rng

#: Equal segments of the cubic P-spline on (0, 1) (23 basis functions).
N_SEGMENTS = 20
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
        out = np.where(s > 0, s * norm.pdf(m / s) - np.abs(m) * norm.cdf(-np.abs(m) / s), 0.0)
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
    return (rankdata(x, axis=0, method="average") - 0.5) / x.shape[0]


def _spline_basis(u: np.ndarray):
    """(n, N_SEGMENTS + 3) sparse cubic B-spline basis on (0, 1) with equal segments."""
    h = 1.0 / N_SEGMENTS
    knots = np.arange(-3, N_SEGMENTS + 4) * h
    return BSpline.design_matrix(u, knots, 3).tocsr()


def _difference_penalty(p: int) -> np.ndarray:
    d = np.diff(np.eye(p), n=2, axis=0)
    return d.T @ d


def _design(u: np.ndarray):
    """Sparse design matrix (n, p) and penalty (p, p) of the smoother over ranks u (n, g).

    The B-spline blocks are left uncentred (each spans the constant): the fitted values are
    unique, and :func:`_solve` adds a tiny ridge for the coefficients.
    """
    from scipy import sparse

    g = u.shape[1]
    blocks = [_spline_basis(u[:, j]) for j in range(g)]
    pens = [_difference_penalty(b.shape[1]) for b in blocks]
    c = u - 0.5
    inter = [c[:, i] * c[:, j] * 12.0 for i in range(g) for j in range(i + 1, g)]
    if inter:
        blocks.append(sparse.csr_matrix(np.column_stack(inter)))
        pens.append(np.zeros((len(inter), len(inter))))
    p = sum(q.shape[0] for q in pens)
    pen = np.zeros((p, p))
    k = 0
    for q in pens:
        pen[k:k + q.shape[0], k:k + q.shape[0]] = q
        k += q.shape[0]
    return sparse.hstack(blocks, format="csr"), pen


def _gram(basis, w: np.ndarray | None = None) -> np.ndarray:
    """B'B or B'WB (dense, p x p) of a sparse design."""
    bt = basis.T if w is None else basis.T.multiply(w[None, :])
    return np.asarray((bt @ basis).todense())


def _solve(gram: np.ndarray, pen: np.ndarray, lam: float, rhs: np.ndarray) -> np.ndarray:
    a = gram + lam * pen
    a[np.diag_indices_from(a)] += 1e-10 * np.trace(gram) / a.shape[0]  # identifiability
    return np.linalg.solve(a, rhs)


def _choose_lambda(gram, pen, bty, yty, n) -> tuple[np.ndarray, np.ndarray]:
    """GCV choice of the smoothing parameter for each response; returns (lam, edf) (m,)."""
    scale = np.trace(gram) / max(np.trace(pen), 1e-300)
    m = bty.shape[1]
    best = np.full(m, np.inf)
    lam_out, edf_out = np.zeros(m), np.zeros(m)
    for lam in _LAMBDA_GRID * scale:
        a = gram + lam * pen
        a[np.diag_indices_from(a)] += 1e-10 * np.trace(gram) / a.shape[0]
        beta = np.linalg.solve(a, bty)
        edf = float(np.trace(np.linalg.solve(a, gram)))
        rss = yty - 2 * np.einsum("pm,pm->m", beta, bty) + np.einsum(
            "pm,pq,qm->m", beta, gram, beta)
        gcv = n * np.maximum(rss, 0.0) / max(n - edf, 1.0) ** 2
        better = gcv < best
        best[better], lam_out[better], edf_out[better] = gcv[better], lam, edf
    return lam_out, edf_out


def conditional_means(y, x) -> tuple[np.ndarray, float]:
    """Fitted ``E[y | x]`` of each column of y by the smoother of this module.

    Parameters
    ----------
    y : array_like, shape (n, m)
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
    basis, pen = _design(rank_transform(x))
    gram, bty = _gram(basis), basis.T @ y
    lam, edf = _choose_lambda(gram, pen, bty, np.einsum("nm,nm->m", y, y), y.shape[0])
    beta = np.column_stack([_solve(gram, pen, lam[j], bty[:, j]) for j in range(y.shape[1])])
    return basis @ beta, float(edf.sum())


def evppi(values, x, name: str = "", members=(), n_boot: int = DEFAULT_BOOTSTRAP,
          seed=None) -> InfoValue:
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
    basis, pen = _design(rank_transform(xs[:, keep]))
    gram, bty = _gram(basis), basis.T @ inb
    lam, edf = _choose_lambda(gram, pen, bty, np.einsum("nm,nm->m", inb, inb), n)

    def estimate(w=None):
        g = gram if w is None else _gram(basis, w)
        r = bty if w is None else basis.T @ (inb * w[:, None])
        beta = np.column_stack([_solve(g, pen, lam[j], r[:, j]) for j in range(inb.shape[1])])
        return _decision_loss(np.column_stack([np.zeros(n), basis @ beta]), w)

    est = estimate()
    reps = np.array([estimate(w) for w in _bootstrap_weights(n, n_boot, make_rng(seed))])
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
    seed : int, Generator or None
        One generator for all estimates (each gets its own spawned stream).

    Returns
    -------
    list of InfoValue
        Inputs first, then groups, in the given order.
    """
    x = np.asarray(x, dtype=float)
    names = list(names)
    groups = {k: list(m) for k, m in (groups or {}).items() if len(m) > 1}
    streams = np.random.SeedSequence(make_rng(seed).integers(2 ** 63)).spawn(
        len(names) + len(groups))
    rows = [evppi(values, x[:, j], name, (name,), n_boot, streams[j])
            for j, name in enumerate(names)]
    for i, (gname, members) in enumerate(groups.items()):
        cols = [names.index(m) for m in members]
        rows.append(evppi(values, x[:, cols], gname, members, n_boot, streams[len(names) + i]))
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
