"""Probability distributions of uncertain inputs, read from plain TOML-like tables.

A case file describes each uncertain input by a table whose keys name every parameter
explicitly, for example::

    [uncertain]
    "costs.capex_per_kw" = { dist = "triangular", low = 850, mode = 950, high = 1150 }
    "energy.degradation" = { dist = "lognormal", median = 0.005, sigma = 0.3, high = 0.02 }

:func:`parse_distribution` checks such a table and returns a :class:`Distribution`, whose
:meth:`Distribution.ppf` maps uniforms in (0, 1) to values of the input. Sampling works in
uniform space and goes through ``ppf`` last, so that rank correlation (Iman-Conover) and
Sobol designs can be built once for any mix of distributions.

Supported distributions and their parameters (no parameter changes meaning with another):

============  ==========================  ====================================================
dist          parameters                  notes
============  ==========================  ====================================================
normal        mean, sd                    optional truncation ``low`` / ``high``
lognormal     median, sigma               ``sigma`` is the sd of log(X); optional ``low`` /
                                          ``high`` truncation (``low`` > 0)
triangular    low, mode, high
pert          low, mode, high             Beta-PERT with lambda = 4
uniform       low, high
truncnormal   mean, sd, low, high         normal(mean, sd) restricted to [low, high]
discrete      values, weights             weights >= 0 summing to 1
============  ==========================  ====================================================
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

import numpy as np

from lcoe.case.errors import InputError, did_you_mean

#: Required and optional parameter names of each supported distribution.
DIST_PARAMETERS: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    "normal": (("mean", "sd"), ("low", "high")),
    "lognormal": (("median", "sigma"), ("low", "high")),
    "triangular": (("low", "mode", "high"), ()),
    "pert": (("low", "mode", "high"), ()),
    "uniform": (("low", "high"), ()),
    "truncnormal": (("mean", "sd", "low", "high"), ()),
    "discrete": (("values", "weights"), ()),
}

#: Shape parameter lambda of the Beta-PERT distribution (Malcolm et al. 1959).
PERT_LAMBDA = 4.0

#: Tolerance on the sum of discrete weights.
WEIGHT_SUM_TOL = 1e-9

_TRUNCATABLE = ("normal", "lognormal")


def _key(path: str, param: str | None = None) -> str:
    """Key used in messages, e.g. ``uncertain."costs.capex_per_kw".sd``."""
    base = f'uncertain."{path}"'
    return f"{base}.{param}" if param else base


def _error(source: str, path: str, param: str | None, value, allowed: str) -> InputError:
    return InputError(f"{source}: {_key(path, param)} = {value!r}: expected {allowed}")


def is_real(value) -> bool:
    """True for an int or float (numpy ones included) that is not a bool."""
    return not isinstance(value, bool) and isinstance(value, (int, float, np.integer, np.floating))


def _number(source: str, path: str, param: str, value) -> float:
    """A finite real number, or InputError."""
    if not is_real(value) or not math.isfinite(float(value)):
        raise _error(source, path, param, value, "a finite number")
    return float(value)


def _number_list(source: str, path: str, param: str, value) -> tuple[float, ...]:
    """A non-empty list of finite numbers, or InputError."""
    if isinstance(value, (str, bytes, dict)) or not hasattr(value, "__iter__"):
        raise _error(source, path, param, value, "a non-empty list of finite numbers")
    items = list(value)
    if not items:
        raise _error(source, path, param, value, "a non-empty list of finite numbers")
    for item in items:
        if not is_real(item) or not math.isfinite(float(item)):
            raise _error(source, path, param, value, "a non-empty list of finite numbers")
    return tuple(float(item) for item in items)


def _check_params(
    path: str, dist: str, params: dict, low, high, source: str
) -> tuple[dict, float | None, float | None]:
    """Validate and normalise the parameters of one distribution.

    Returns the normalised parameter dict (floats, or sorted tuples for ``discrete``) and the
    truncation bounds (None when absent or not applicable).
    """
    required = DIST_PARAMETERS[dist][0]
    p: dict[str, Any] = {}
    if dist == "discrete":
        values = _number_list(source, path, "values", params["values"])
        weights = _number_list(source, path, "weights", params["weights"])
        if len(values) != len(weights):
            raise _error(
                source,
                path,
                "weights",
                list(weights),
                f"as many weights as values ({len(values)})",
            )
        if min(weights) < 0.0:
            raise _error(source, path, "weights", list(weights), "weights >= 0")
        total = math.fsum(weights)
        if abs(total - 1.0) > WEIGHT_SUM_TOL:
            raise _error(
                source,
                path,
                "weights",
                list(weights),
                f"weights summing to 1 within {WEIGHT_SUM_TOL:g} (sum is {total!r})",
            )
        order = sorted(range(len(values)), key=lambda i: values[i])
        p["values"] = tuple(values[i] for i in order)
        p["weights"] = tuple(weights[i] for i in order)
        return p, None, None

    for name in required:
        p[name] = _number(source, path, name, params[name])
    if dist in _TRUNCATABLE:
        low = None if low is None else _number(source, path, "low", low)
        high = None if high is None else _number(source, path, "high", high)
    else:
        low, high = p["low"], p["high"]

    if "sd" in p and p["sd"] <= 0.0:
        raise _error(source, path, "sd", p["sd"], "a number > 0")
    if "sigma" in p and p["sigma"] <= 0.0:
        raise _error(source, path, "sigma", p["sigma"], "a number > 0 (sd of log of the value)")
    if "median" in p and p["median"] <= 0.0:
        raise _error(source, path, "median", p["median"], "a number > 0")
    if dist == "lognormal" and low is not None and low <= 0.0:
        raise _error(
            source,
            path,
            "low",
            low,
            "a number > 0 (lognormal values are positive; omit low for no truncation)",
        )
    if dist == "lognormal" and high is not None and high <= 0.0:
        raise _error(
            source,
            path,
            "high",
            high,
            "a number > 0 (lognormal values are positive; omit high for no truncation)",
        )
    if low is not None and high is not None and low >= high:
        raise _error(source, path, "low", low, f"a number < high ({high!r})")
    if "mode" in p and not low <= p["mode"] <= high:
        raise _error(source, path, "mode", p["mode"], f"a number in [low, high] = [{low}, {high}]")

    if dist in _TRUNCATABLE:
        return p, low, high
    return p, None, None


@dataclass(frozen=True)
class Distribution:
    """Distribution of one uncertain input.

    Build it with :func:`parse_distribution` from a case-file table, or directly; the
    constructor checks and normalises the parameters either way (numbers become floats,
    discrete values are sorted with their weights).

    Parameters
    ----------
    name : str
        Dotted path of the input in the case, e.g. ``"costs.capex_per_kw"``.
    dist : str
        One of :data:`DIST_PARAMETERS`.
    params : dict
        Named parameters, see the module table. For triangular, pert, uniform and truncnormal
        ``low`` and ``high`` are parameters (and the support).
    low, high : float or None
        Optional truncation bounds of ``normal`` and ``lognormal`` [unit of the input]; always
        None for the other distributions.
    group : str or None
        Optional Sobol group name; inputs in one group are analysed together.
    """

    name: str
    dist: str
    params: dict = field(default_factory=dict)
    low: float | None = None
    high: float | None = None
    group: str | None = None

    def __post_init__(self):
        source = "Distribution"
        if self.dist not in DIST_PARAMETERS:
            raise _unknown_dist(source, self.name, self.dist)
        required, _ = DIST_PARAMETERS[self.dist]
        missing = [k for k in required if k not in self.params]
        extra = [k for k in self.params if k not in required]
        if missing or extra:
            raise InputError(
                f"{source}: {_key(self.name)}: params {sorted(self.params)}: expected exactly "
                f"{list(required)} for dist {self.dist!r}"
            )
        if self.dist not in _TRUNCATABLE and (self.low is not None or self.high is not None):
            raise InputError(
                f"{source}: {_key(self.name)}: low/high = ({self.low!r}, {self.high!r}): "
                f"truncation applies to normal and lognormal only; {self.dist} takes its "
                "bounds as params"
            )
        params, low, high = _check_params(
            self.name, self.dist, dict(self.params), self.low, self.high, source
        )
        object.__setattr__(self, "params", params)
        object.__setattr__(self, "low", low)
        object.__setattr__(self, "high", high)

    @cached_property
    def _rv(self):
        """The frozen scipy law, built on first use (scipy.stats is slow to import)."""
        return _frozen(self.dist, self.params, self.low, self.high)

    # -- quantiles ---------------------------------------------------------------------------
    def ppf(self, u: np.ndarray) -> np.ndarray:
        """Quantile function: map probabilities to values of the input.

        Parameters
        ----------
        u : array_like
            Probabilities in [0, 1], any shape; samplers supply values strictly inside (0, 1).

        Returns
        -------
        numpy.ndarray
            Values [unit of the input], same shape as ``u``. Truncated distributions map ``u``
            into [F(low), F(high)] of the untruncated one (normal laws by ``ndtri`` from the
            nearer end, in log space for lognormal; scipy's truncnorm only for a window holding
            under 1e-3 of the mass). Discrete: the smallest value whose cumulative weight
            reaches ``u``, so the mapping is monotone.
        """
        u = np.asarray(u, dtype=float)
        if np.any(~((u >= 0.0) & (u <= 1.0))):
            bad = u[~((u >= 0.0) & (u <= 1.0))].ravel()[0]
            raise ValueError(f"ppf of {self.name}: u = {bad!r}: expected probabilities in [0, 1]")
        if self.dist == "discrete":
            values = np.array(self.params["values"])
            weights = np.array(self.params["weights"])
            keep = weights > 0.0
            values, weights = values[keep], weights[keep]
            cum = np.cumsum(weights)
            cum /= cum[-1]
            idx = np.searchsorted(cum, u, side="left")
            return values[np.minimum(idx, values.size - 1)]
        x = self._quantile(u)
        if self.dist == "lognormal":
            x = np.exp(x)
        lo, hi = self.support()
        return np.clip(x, lo, hi)

    def _quantile(self, u: np.ndarray) -> np.ndarray:
        """ppf of the continuous law (of log(X) for lognormal) without scipy's per-value cost.

        Uniform is ``low + u (high - low)``, triangular its closed form; normal laws go
        through ``ndtri`` (truncated ones in the tail where the result is well conditioned,
        :func:`_normal_quantile`); Beta-PERT inverts a cubic Hermite table of the Beta cdf
        (:class:`_BetaTable`). Agreement with ``scipy.stats`` is checked in the tests (within
        1e-12 of the range for Beta-PERT). Anything else uses the frozen scipy law.
        """
        p = self.params
        if self.dist == "uniform":
            return p["low"] + u * (p["high"] - p["low"])
        if self.dist == "pert":
            return p["low"] + self._beta_table.ppf(u) * (p["high"] - p["low"])
        if self.dist == "triangular":  # closed form, as scipy.stats.triang writes it
            width = p["high"] - p["low"]
            c = (p["mode"] - p["low"]) / width
            return p["low"] + width * np.where(u < c, np.sqrt(c * u),
                                               1.0 - np.sqrt((1.0 - c) * (1.0 - u)))
        if self.dist in ("normal", "truncnormal", "lognormal"):
            loc, scale, low, high = _normal_terms(self.dist, p, self.low, self.high)
            alpha, beta = (low - loc) / scale, (high - loc) / scale
            z = _normal_quantile(u, alpha, beta)
            if z is not None:  # to about 1e-16 in the far tails too (50-digit check in
                return loc + scale * z  # the tests; scipy's truncnorm is off by 1e-6 there)
        return self._rv.ppf(u)

    @cached_property
    def _beta_table(self) -> _BetaTable:
        c = (self.params["mode"] - self.params["low"]) / (self.params["high"] -
                                                         self.params["low"])
        return _BetaTable(1.0 + PERT_LAMBDA * c, 1.0 + PERT_LAMBDA * (1.0 - c))

    def percentile(self, q: float) -> float:
        """Value at probability ``q`` in [0, 1] (a fraction: 0.9 is the 90th percentile)."""
        return float(self.ppf(np.asarray(float(q))))

    def median(self) -> float:
        """Median [unit of the input]."""
        return self.percentile(0.5)

    def mean(self) -> float:
        """Mean [unit of the input], including the effect of any truncation."""
        if self.dist == "discrete":
            return float(np.dot(self.params["values"], self.params["weights"]))
        if self.dist == "lognormal":
            return self._lognormal_moment(1)
        return float(self._rv.mean())

    def var(self) -> float:
        """Variance [unit of the input squared], including the effect of any truncation."""
        if self.dist == "discrete":
            v = np.array(self.params["values"])
            w = np.array(self.params["weights"])
            m = float(np.dot(v, w))
            return float(np.dot(w, (v - m) ** 2))
        if self.dist == "lognormal":
            return self._lognormal_moment(2) - self._lognormal_moment(1) ** 2
        return float(self._rv.var())

    def _lognormal_moment(self, k: int) -> float:
        """E[X**k] of a (possibly truncated) lognormal, closed form.

        With mu = log(median), alpha, beta the standardised log bounds and Phi the normal cdf:
        E[X^k] = exp(k mu + k^2 sigma^2 / 2) (Phi(beta - k sigma) - Phi(alpha - k sigma))
        / (Phi(beta) - Phi(alpha)).
        """
        mu, s = math.log(self.params["median"]), self.params["sigma"]
        alpha = -math.inf if self.low is None else (math.log(self.low) - mu) / s
        beta = math.inf if self.high is None else (math.log(self.high) - mu) / s
        from scipy import stats

        phi = stats.norm.cdf
        mass = phi(beta) - phi(alpha)
        part = phi(beta - k * s) - phi(alpha - k * s)
        return float(math.exp(k * mu + 0.5 * (k * s) ** 2) * part / mass)

    def support(self) -> tuple[float, float]:
        """Smallest and largest possible values (``-inf`` / ``inf`` when unbounded)."""
        if self.dist == "discrete":
            return self.params["values"][0], self.params["values"][-1]
        if self.dist in _TRUNCATABLE:
            floor = 0.0 if self.dist == "lognormal" else -math.inf
            lo = floor if self.low is None else self.low
            hi = math.inf if self.high is None else self.high
            return lo, hi
        return self.params["low"], self.params["high"]

    def describe(self) -> str:
        """Short text such as ``triangular(low=850, mode=950, high=1150)`` for reports."""
        parts = [f"{k}={_fmt(v)}" for k, v in self.params.items()]
        if self.low is not None:
            parts.append(f"low={_fmt(self.low)}")
        if self.high is not None:
            parts.append(f"high={_fmt(self.high)}")
        return f"{self.dist}({', '.join(parts)})"


def _fmt(value) -> str:
    if isinstance(value, tuple):
        return "[" + ", ".join(f"{v:g}" for v in value) + "]"
    return f"{value:g}"


def _frozen(dist: str, p: dict, low: float | None, high: float | None):
    """scipy.stats frozen distribution behind a continuous Distribution (None for discrete).

    For lognormal the returned distribution is that of log(X).
    """
    if dist == "discrete":
        return None
    from scipy import stats

    if dist == "lognormal":  # work on log(X) ~ normal(log(median), sigma)
        loc, scale = math.log(p["median"]), p["sigma"]
        low = None if low is None else math.log(low)
        high = None if high is None else math.log(high)
    elif dist in ("normal", "truncnormal"):
        loc, scale = p["mean"], p["sd"]
        if dist == "truncnormal":
            low, high = p["low"], p["high"]
    if dist in ("normal", "truncnormal", "lognormal"):
        if low is None and high is None:
            return stats.norm(loc=loc, scale=scale)
        a = -math.inf if low is None else (low - loc) / scale
        b = math.inf if high is None else (high - loc) / scale
        return stats.truncnorm(a, b, loc=loc, scale=scale)
    lo, hi = p["low"], p["high"]
    if dist == "uniform":
        return stats.uniform(loc=lo, scale=hi - lo)
    c = (p["mode"] - lo) / (hi - lo)
    if dist == "triangular":
        return stats.triang(c, loc=lo, scale=hi - lo)
    # Beta-PERT: alpha = 1 + lambda (mode - low)/(high - low), beta = 1 + lambda (high - mode)/...
    return stats.beta(1.0 + PERT_LAMBDA * c, 1.0 + PERT_LAMBDA * (1.0 - c), loc=lo, scale=hi - lo)


def _normal_terms(dist: str, p: dict, low, high) -> tuple[float, float, float, float]:
    """(loc, scale, low, high) of the normal law behind a normal, truncnormal or lognormal
    (in log space) Distribution; absent bounds are -inf / inf."""
    if dist == "lognormal":
        loc, scale = math.log(p["median"]), p["sigma"]
        low = None if low is None else math.log(low)
        high = None if high is None else math.log(high)
    else:
        loc, scale = p["mean"], p["sd"]
        if dist == "truncnormal":
            low, high = p["low"], p["high"]
    return (loc, scale, -math.inf if low is None else low, math.inf if high is None else high)


#: Standard deviations beyond which a truncation bound of a normal law changes nothing.
FAR_SD = 30.0


def _normal_quantile(u: np.ndarray, alpha: float, beta: float) -> np.ndarray | None:
    """Quantile of the standard normal restricted to [alpha, beta], or None when the window
    holds too little mass for this formula (scipy's truncnorm then).

    Lower half: ``ndtri(Phi(alpha) + u m)``; upper half: ``-ndtri(Phi(-beta) + (1 - u) m)``,
    ``m = Phi(beta) - Phi(alpha)``: each side works with small probabilities, so neither
    loses digits in its tail (``1 - u`` is exact for u >= 1/2).
    """
    from scipy.special import ndtr, ndtri

    if alpha > FAR_SD or beta < -FAR_SD:  # the whole window lies far out in one tail
        return None
    # A bound more than FAR_SD sd out cuts off < 1e-197 of the mass: that side counts as open.
    a_in = -math.inf if alpha < -FAR_SD else alpha
    b_in = math.inf if beta > FAR_SD else beta
    if a_in == -math.inf and b_in == math.inf:
        return np.clip(ndtri(u), alpha, beta)
    lo_tail, hi_tail = float(ndtr(a_in)), float(ndtr(-b_in))
    mass = 1.0 - lo_tail - hi_tail
    if not mass > 1e-3:
        return None
    upper = u > 0.5
    z = np.where(upper, -ndtri(hi_tail + (1.0 - u) * mass), ndtri(lo_tail + u * mass))
    return np.where(u <= 0.0, alpha, np.where(u >= 1.0, beta, np.clip(z, alpha, beta)))


class _BetaTable:
    """Quantiles of Beta(a, b), a, b >= 1, from a table of the cdf: vectorised and exact to
    about 1e-12.

    Each half of the support is tabulated from its own end (x <= 1/2 with the cdf of
    Beta(a, b), 1 - x <= 1/2 with that of Beta(b, a), fed ``1 - u``) on nodes spaced
    1/4096 and, towards the end, geometrically (ratio 1.004, down to 1e-18), where the cdf
    behaves like x^a. On each interval the cdf is the cubic Hermite polynomial through the
    end values and densities; its inverse is found by Newton's method. The last interval
    before each end goes to ``scipy.special.betaincinv``.
    """

    def __init__(self, a: float, b: float):
        self.a, self.b = a, b
        self.lower, self.upper = self._half(a, b), self._half(b, a)

    @staticmethod
    def _half(a: float, b: float, h: float = 1.0 / 4096, ratio: float = 1.004,
              smallest: float = 1e-18):
        from scipy import special

        geo = 0.5 * ratio ** -np.arange(int(math.log(0.5 / smallest) / math.log(ratio)) + 1)
        x = np.unique(np.concatenate(([0.0], geo, np.arange(2049) * h)))
        x = x[x <= 0.5]
        log_x = np.log(np.where(x > 0, x, 1.0))
        dens = np.exp(np.where(x > 0, (a - 1.0) * log_x, 0.0 if a == 1.0 else -np.inf)
                      + (b - 1.0) * np.log1p(-x) - special.betaln(a, b))
        return x, special.betainc(a, b, x), dens

    @staticmethod
    def _invert(u: np.ndarray, table) -> tuple[np.ndarray, np.ndarray]:
        x, cdf, dens = table
        i = np.clip(np.searchsorted(cdf, u, side="right") - 1, 0, x.size - 2)
        h = x[i + 1] - x[i]
        d0, d1 = dens[i] * h, dens[i + 1] * h
        df = cdf[i + 1] - cdf[i]
        c2 = 3.0 * df - 2.0 * d0 - d1
        c3 = d0 + d1 - 2.0 * df
        r = u - cdf[i]
        t = np.clip(r / np.where(df > 0, df, 1.0), 0.0, 1.0)
        with np.errstate(divide="ignore", invalid="ignore"):  # 0/0 only in end intervals
            for _ in range(3):  # Newton on the interval's cubic, from the linear guess
                t = t - (t * (d0 + t * (c2 + t * c3)) - r) / (d0 + t * (2.0 * c2 + 3.0 * t * c3))
        return x[i] + np.clip(t, 0.0, 1.0) * h, u < cdf[1]

    def ppf(self, u: np.ndarray) -> np.ndarray:
        """Quantiles in [0, 1] of probabilities ``u`` (any shape)."""
        u = np.asarray(u, dtype=float)
        flat = u.ravel()
        out = np.empty(flat.shape)
        low = flat <= self.lower[1][-1]  # the cdf at 1/2
        x_lo, edge_lo = self._invert(flat[low], self.lower)
        x_up, edge_up = self._invert(1.0 - flat[~low], self.upper)
        out[low], out[~low] = x_lo, 1.0 - x_up
        edge = np.zeros(flat.shape, dtype=bool)
        edge[low], edge[~low] = edge_lo, edge_up
        if edge.any():
            from scipy.special import betaincinv

            out[edge] = betaincinv(self.a, self.b, flat[edge])
        return out.reshape(u.shape)


def _unknown_dist(source: str, path: str, dist) -> InputError:
    suggestion = did_you_mean(dist, DIST_PARAMETERS)
    return InputError(
        f"{source}: {_key(path, 'dist')} = {dist!r}: expected one of "
        f"{', '.join(DIST_PARAMETERS)}{suggestion}"
    )


def parse_distribution(path: str, spec: dict, source: str) -> Distribution:
    """Check one uncertain-input table and build its :class:`Distribution`.

    Parameters
    ----------
    path : str
        Dotted path of the input, e.g. ``"costs.capex_per_kw"``.
    spec : dict
        The table, e.g. ``{"dist": "triangular", "low": 850, "mode": 950, "high": 1150,
        "group": "costs"}``. Besides ``dist`` and the parameters of that distribution it may
        hold ``group`` (str) and, for normal and lognormal, ``low`` / ``high`` truncation.
    source : str
        File the table came from, used in error messages.

    Returns
    -------
    Distribution

    Raises
    ------
    lcoe.case.errors.InputError
        One line naming ``source``, the key ``uncertain."<path>"``, the value and what is
        allowed: unknown dist (with the closest name), missing or unexpected parameter,
        ``sd``/``sigma``/``median`` <= 0, ``low`` >= ``high``, ``mode`` outside [low, high],
        discrete values/weights empty, of different lengths, non-numeric, weights negative or
        not summing to 1 within 1e-9, non-numeric or non-finite numbers.

    References
    ----------
    .. [1] Malcolm, D. G., Roseboom, J. H., Clark, C. E., Fazar, W. (1959). Application of a
       technique for research and development program evaluation. Operations Research 7(5),
       646-669 (Beta-PERT).
    """
    if not isinstance(spec, dict):
        raise InputError(
            f"{source}: {_key(path)} = {spec!r}: expected a table such as "
            '{ dist = "normal", mean = 1.0, sd = 0.1 }'
        )
    if "dist" not in spec:
        raise InputError(
            f"{source}: {_key(path)} = {spec!r}: missing key 'dist' (one of "
            f"{', '.join(DIST_PARAMETERS)})"
        )
    dist = spec["dist"]
    if not isinstance(dist, str) or dist not in DIST_PARAMETERS:
        raise _unknown_dist(source, path, dist)
    required, optional = DIST_PARAMETERS[dist]
    allowed = set(required) | set(optional) | {"dist", "group"}
    for key, value in spec.items():
        if key not in allowed:
            suggestion = did_you_mean(str(key), sorted(allowed - {"dist"}))
            raise InputError(
                f"{source}: {_key(path, str(key))} = {value!r}: unexpected parameter for "
                f"dist {dist!r} (allowed: {', '.join(sorted(allowed))}){suggestion}"
            )
    for key in required:
        if key not in spec:
            raise InputError(
                f"{source}: {_key(path)} = {spec!r}: missing parameter '{key}' for dist "
                f"{dist!r} (needs {', '.join(required)})"
            )
    group = spec.get("group")
    if group is not None and (not isinstance(group, str) or not group.strip()):
        raise _error(source, path, "group", group, "a non-empty string")
    params = {k: spec[k] for k in required}
    low = spec.get("low") if dist in _TRUNCATABLE else None
    high = spec.get("high") if dist in _TRUNCATABLE else None
    # Validate here so that errors name the real source; the constructor re-checks.
    params, low, high = _check_params(path, dist, params, low, high, source)
    return Distribution(name=path, dist=dist, params=params, low=low, high=high, group=group)
