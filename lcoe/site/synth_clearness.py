"""Clearness-index models for synthetic weather: days from a month, hours from a day.

Pure functions on numpy arrays, each a published model or a stated modelling choice:

- daily clearness index: the distribution of Bendt, Collares-Pereira & Rabl (1981);
- day-to-day persistence: a Gaussian AR(1) copula, with the days of each month stratified;
- hourly clearness within a day: TAG, Aguiar & Collares-Pereira (1992).

Used by :mod:`lcoe.site.synth_weather`.
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import brentq
from scipy.special import ndtr

from lcoe.case.errors import InputError

#: Bendt, Collares-Pereira & Rabl (1981) distribution constants (from memory):
#: K_min = 0.05 and K_max = 0.6313 + 0.267 Kbar - 11.9 (Kbar - 0.75)^8.
BCR_K_MIN = 0.05
BCR_K_MAX_COEFFS = (0.6313, 0.267, -11.9, 0.75, 8)

#: Hourly clearness within a day: the TAG model of Aguiar & Collares-Pereira (1992), constants
#: from memory. Mean hourly clearness ``lambda + epsilon exp(-kappa / sin(alt))`` with
#: ``lambda = a0 + a1 K + a2 exp(a3 K)``, ``epsilon = e0 + e1 (K - e2)^2``,
#: ``kappa = k0 + k2 K^2 + k3 K^3`` (K the daily clearness index).
TAG_LAMBDA = (-0.19, 1.12, 0.24, -8.0)
TAG_EPSILON = (0.32, -1.6, 0.5)
TAG_KAPPA = (0.19, 2.27, -2.51)
#: TAG lag-1 autocorrelation of the hourly residual, ``phi = sum c_i K^i`` (from memory).
TAG_PHI = (0.148, 2.356, -5.195, 3.758)
#: TAG standard deviation of the hourly residual, ``s0 exp(s1 (K - s2)^2) + s3`` (from memory).
TAG_SIGMA = (0.32, -50.0, 0.4, 0.002)
#: Redraws of an hourly innovation that falls outside [0, clear sky] before it is clipped
#: (modelling choice; fewer than 1 in 1000 hours reach the limit).
TAG_MAX_REDRAWS = 20

_GAMMA_LIMIT = 300.0  # |gamma| beyond which the BCR distribution is a point mass at an end


# --------------------------------------------------------------------------------------------
# Daily clearness index: Bendt, Collares-Pereira & Rabl (1981)
# --------------------------------------------------------------------------------------------


def bcr_k_max(kt_mean):
    """Upper limit of the daily clearness index for a monthly mean [-].

    Parameters
    ----------
    kt_mean : float or array_like
        Monthly mean clearness index :math:`\\bar K_T` [-].

    Returns
    -------
    float or numpy.ndarray
        :math:`K_{max} = 0.6313 + 0.267\\bar K_T - 11.9(\\bar K_T - 0.75)^8` [-] (constants
        from memory).

    References
    ----------
    .. [1] Bendt, P., Collares-Pereira, M. and Rabl, A. (1981), The frequency distribution of
       daily insolation values, Solar Energy 27(1), 1-5.
    """
    a, b, c, k0, p = BCR_K_MAX_COEFFS
    k = np.asarray(kt_mean, dtype=float)
    return a + b * k + c * (k - k0) ** p


def bcr_mean(gamma, k_min, k_max):
    """Mean of the Bendt-Collares-Pereira-Rabl distribution for a given ``gamma`` [-].

    Parameters
    ----------
    gamma : float
        Shape parameter [-]; 0 gives the uniform distribution on [k_min, k_max].
    k_min, k_max : float
        Lower and upper limits of the daily clearness index [-].

    Returns
    -------
    float
        Mean daily clearness index [-].

    Notes
    -----
    The published form
    :math:`\\bar K = \\frac{(K_{min}-1/\\gamma)e^{\\gamma K_{min}} - (K_{max}-1/\\gamma)
    e^{\\gamma K_{max}}}{e^{\\gamma K_{min}} - e^{\\gamma K_{max}}}` is evaluated in the
    algebraically equal, overflow-free form
    :math:`\\bar K = K_{max} - 1/\\gamma + \\Delta / (e^{\\gamma\\Delta} - 1)`,
    :math:`\\Delta = K_{max} - K_{min}`, with its series :math:`K_{min} + \\Delta/2 +
    \\gamma\\Delta^2/12` near :math:`\\gamma = 0`.

    References
    ----------
    .. [1] Bendt, P., Collares-Pereira, M. and Rabl, A. (1981), Solar Energy 27(1), 1-5.
    """
    delta = k_max - k_min
    x = gamma * delta
    if abs(x) < 1e-6:
        return k_min + delta / 2.0 + gamma * delta**2 / 12.0
    return k_max - 1.0 / gamma + delta / np.expm1(x)


def bcr_quantile(u, gamma, k_min, k_max):
    """Inverse cumulative distribution of the daily clearness index.

    Parameters
    ----------
    u : array_like
        Probabilities in [0, 1] [-].
    gamma : float
        Shape parameter [-].
    k_min, k_max : float
        Limits of the daily clearness index [-].

    Returns
    -------
    numpy.ndarray
        Daily clearness index for each ``u`` [-], in [k_min, k_max].

    Notes
    -----
    The distribution function is
    :math:`F(K) = \\frac{e^{\\gamma K_{min}} - e^{\\gamma K}}{e^{\\gamma K_{min}} -
    e^{\\gamma K_{max}}}` on :math:`[K_{min}, K_{max}]`, so
    :math:`K = K_{min} + \\ln(1 + u(e^{\\gamma\\Delta} - 1))/\\gamma` for :math:`\\gamma > 0`
    and, equivalently and without overflow,
    :math:`K = K_{max} + \\ln(1 + (1-u)(e^{-\\gamma\\Delta} - 1))/\\gamma` for
    :math:`\\gamma < 0`.

    References
    ----------
    .. [1] Bendt, P., Collares-Pereira, M. and Rabl, A. (1981), Solar Energy 27(1), 1-5.
    """
    u = np.clip(np.asarray(u, dtype=float), 0.0, 1.0)
    delta = k_max - k_min
    x = gamma * delta
    if abs(x) < 1e-9:
        k = k_min + u * delta
    elif gamma > 0:
        k = k_min + np.log1p(u * np.expm1(x)) / gamma
    else:
        k = k_max + np.log1p((1.0 - u) * np.expm1(-x)) / gamma
    return np.clip(k, k_min, k_max)


def bcr_gamma_from_mean(kt_mean: float, k_min: float = BCR_K_MIN, k_max: float | None = None):
    """Solve the BCR shape parameter that gives the monthly mean clearness index.

    Parameters
    ----------
    kt_mean : float
        Monthly mean clearness index, strictly between k_min and k_max [-].
    k_min : float
        Lower limit [-] (BCR: 0.05, from memory).
    k_max : float or None
        Upper limit [-]; None uses :func:`bcr_k_max`.

    Returns
    -------
    float
        ``gamma`` [-] such that :func:`bcr_mean` equals ``kt_mean``.

    References
    ----------
    .. [1] Bendt, P., Collares-Pereira, M. and Rabl, A. (1981), Solar Energy 27(1), 1-5.
    """
    if k_max is None:
        k_max = float(bcr_k_max(kt_mean))
    if not k_min < kt_mean < k_max:
        raise InputError(
            f"kt_mean = {kt_mean!r}: expected a value strictly between k_min = {k_min:g} and "
            f"k_max = {k_max:g}"
        )
    return brentq(
        lambda g: bcr_mean(g, k_min, k_max) - kt_mean, -_GAMMA_LIMIT, _GAMMA_LIMIT, xtol=1e-12
    )


def ar1_uniforms(n: int, rho: float, rng: np.random.Generator) -> np.ndarray:
    """Uniform variates with lag-1 dependence through a Gaussian AR(1) copula.

    Parameters
    ----------
    n : int
        Number of consecutive days.
    rho : float
        Lag-1 correlation of the underlying standard normal series, in (-1, 1) [-].
    rng : numpy.random.Generator
        Source of randomness.

    Returns
    -------
    numpy.ndarray
        Shape (n,): :math:`u_t = \\Phi(z_t)` with :math:`z_0 \\sim N(0, 1)` and
        :math:`z_t = \\rho z_{t-1} + \\sqrt{1-\\rho^2}\\,\\varepsilon_t`, which is stationary
        with unit variance [-].

    References
    ----------
    .. [1] Nelsen, R.B. (2006), An Introduction to Copulas, 2nd ed., Springer (Gaussian
       copula).
    """
    eps = rng.standard_normal(n)
    z = np.empty(n)
    z[0] = eps[0]
    scale = np.sqrt(1.0 - rho * rho)
    for t in range(1, n):  # sequential by nature: each day depends on the previous one
        z[t] = rho * z[t - 1] + scale * eps[t]
    return ndtr(z)


def match_month(u, h0_day_wh, kt_mean):
    """Daily clearness indices for one month whose H0-weighted mean equals ``kt_mean``.

    The copula uniforms ``u`` are kept and the BCR shape parameter is solved on the sample
    (the sample analogue of BCR's gamma-mean relation), so every day stays in [K_min, K_max].

    Parameters
    ----------
    u : numpy.ndarray
        Shape (n_days,): quantile levels of the month's days, in [0, 1] [-].
    h0_day_wh : numpy.ndarray
        Shape (n_days,): daily extraterrestrial horizontal irradiation [Wh/m2].
    kt_mean : float
        Monthly mean clearness index [-].

    Returns
    -------
    numpy.ndarray
        Shape (n_days,): daily clearness index [-].

    References
    ----------
    .. [1] Bendt, P., Collares-Pereira, M. and Rabl, A. (1981), Solar Energy 27(1), 1-5.
    """
    k_max = float(bcr_k_max(kt_mean))
    if kt_mean <= BCR_K_MIN + 1e-6 or np.sum(h0_day_wh) <= 0.0:
        return np.full(u.shape, kt_mean)
    weights = h0_day_wh / np.sum(h0_day_wh)

    def excess(g):
        return float(np.dot(weights, bcr_quantile(u, g, BCR_K_MIN, k_max))) - kt_mean

    lo, hi = excess(-_GAMMA_LIMIT), excess(_GAMMA_LIMIT)
    if lo >= 0.0:
        gamma = -_GAMMA_LIMIT
    elif hi <= 0.0:
        gamma = _GAMMA_LIMIT
    else:
        gamma = brentq(excess, -_GAMMA_LIMIT, _GAMMA_LIMIT, xtol=1e-10)
    return bcr_quantile(u, gamma, BCR_K_MIN, k_max)


def stratified_uniforms(u) -> np.ndarray:
    """Replace uniforms by the mid-rank plotting positions of their ranks.

    Parameters
    ----------
    u : array_like
        Shape (n,): uniforms in [0, 1], e.g. from :func:`ar1_uniforms` [-].

    Returns
    -------
    numpy.ndarray
        Shape (n,): :math:`(r_i + 1/2) / n` with :math:`r_i` the rank of :math:`u_i` (0-based).
        The values are the n evenly spaced quantile levels (stratified, as in Latin hypercube
        sampling), in the order of ``u``, so the copula's day-to-day dependence is kept while
        a month of ~30 days samples the distribution without clustering [-].

    References
    ----------
    .. [1] McKay, M.D., Beckman, R.J. and Conover, W.J. (1979), A comparison of three methods
       for selecting values of input variables in the analysis of output from a computer
       code, Technometrics 21(2), 239-245.
    """
    u = np.asarray(u, dtype=float)
    ranks = np.argsort(np.argsort(u, kind="stable"), kind="stable")
    return (ranks + 0.5) / max(u.size, 1)


def tag_mean_hourly_clearness(kt_day, sin_altitude):
    """Expected hourly clearness index given the day's clearness and the sun's height.

    Parameters
    ----------
    kt_day : array_like
        Daily clearness index K [-].
    sin_altitude : array_like
        Sine of the solar altitude at the middle of the hour, > 0 [-].

    Returns
    -------
    numpy.ndarray
        :math:`k_{tm} = \\lambda + \\varepsilon\\exp(-\\kappa / \\sin\\alpha)` [-].

    Notes
    -----
    .. math:: \\lambda = -0.19 + 1.12K + 0.24 e^{-8K},\\quad
              \\varepsilon = 0.32 - 1.6 (K - 0.5)^2,\\quad
              \\kappa = 0.19 + 2.27 K^2 - 2.51 K^3

    (constants from memory: :data:`TAG_LAMBDA`, :data:`TAG_EPSILON`, :data:`TAG_KAPPA`).

    References
    ----------
    .. [1] Aguiar, R. and Collares-Pereira, M. (1992), TAG: a time-dependent, autoregressive,
       Gaussian model for generating synthetic hourly radiation, Solar Energy 49(3), 167-174.
    """
    k = np.asarray(kt_day, dtype=float)
    a0, a1, a2, a3 = TAG_LAMBDA
    e0, e1, e2 = TAG_EPSILON
    k0, k2, k3 = TAG_KAPPA
    lam = a0 + a1 * k + a2 * np.exp(a3 * k)
    eps = e0 + e1 * (k - e2) ** 2
    kap = k0 + k2 * k**2 + k3 * k**3
    sin_a = np.maximum(np.asarray(sin_altitude, dtype=float), 1e-6)
    return lam + eps * np.exp(-kap / sin_a)


def tag_residual_parameters(kt_day):
    """Lag-1 autocorrelation and standard deviation of the TAG hourly residual.

    Parameters
    ----------
    kt_day : array_like
        Daily clearness index K [-].

    Returns
    -------
    phi, sigma : numpy.ndarray
        :math:`\\phi = 0.148 + 2.356K - 5.195K^2 + 3.758K^3` [-] and
        :math:`\\sigma = 0.32 e^{-50 (K - 0.4)^2} + 0.002` [-] (constants from memory:
        :data:`TAG_PHI`, :data:`TAG_SIGMA`).

    References
    ----------
    .. [1] Aguiar, R. and Collares-Pereira, M. (1992), Solar Energy 49(3), 167-174.
    """
    k = np.asarray(kt_day, dtype=float)
    phi = np.polynomial.polynomial.polyval(k, TAG_PHI)
    s0, s1, s2, s3 = TAG_SIGMA
    return np.clip(phi, 0.0, 0.99), s0 * np.exp(s1 * (k - s2) ** 2) + s3


def tag_residuals(day_key, phi, sigma, rng: np.random.Generator, low=None, high=None,
                  max_redraws: int = TAG_MAX_REDRAWS) -> np.ndarray:
    """Gaussian AR(1) residual of the hourly clearness index, restarted each day, truncated.

    Parameters
    ----------
    day_key : numpy.ndarray
        Shape (n,): day number of each hour, non-decreasing (consecutive hours of a day).
    phi, sigma : numpy.ndarray
        Shape (n,): lag-1 autocorrelation and stationary standard deviation of each hour [-].
    rng : numpy.random.Generator
        Source of randomness.
    low, high : numpy.ndarray, optional
        Shape (n,): bounds of each hour's residual [-] (e.g. ``-k_tm`` and
        ``k_t,clear - k_tm`` so the hourly clearness stays in [0, clear sky]); None: unbounded.
    max_redraws : int
        Innovations drawn again at most this many times per hour before clipping.

    Returns
    -------
    numpy.ndarray
        Shape (n,): :math:`y_h = \\phi y_{h-1} + \\sigma\\sqrt{1-\\phi^2}\\,r_h`,
        :math:`r_h \\sim N(0, 1)`, and :math:`y = \\sigma r` at each day's first hour [-]. An
        innovation that would put :math:`y_h` outside its bounds is drawn again (the Gaussian
        truncated to the physical range rather than censored at it, so no probability piles
        up at exactly clear-sky hours; TAG bounds the hourly clearness to [0, clear sky], the
        redraw is our reading, from memory), and clipped after ``max_redraws`` failures.

    References
    ----------
    .. [1] Aguiar, R. and Collares-Pereira, M. (1992), Solar Energy 49(3), 167-174.
    """
    n = np.size(day_key)
    r = rng.standard_normal(n)
    y = np.empty(n)
    scale = sigma * np.sqrt(1.0 - phi * phi)
    lo = np.full(n, -np.inf) if low is None else np.asarray(low, dtype=float)
    hi = np.full(n, np.inf) if high is None else np.asarray(high, dtype=float)
    for h in range(n):  # sequential by nature: each hour depends on the previous one
        first = h == 0 or day_key[h] != day_key[h - 1]
        base = 0.0 if first else phi[h] * y[h - 1]
        sd = sigma[h] if first else scale[h]
        v = base + sd * r[h]
        tries = 0
        while (v < lo[h] or v > hi[h]) and tries < max_redraws:
            v = base + sd * rng.standard_normal()
            tries += 1
        y[h] = min(max(v, lo[h]), hi[h])
    return y
