"""Moving parts (drives, motors, bearings, actuators) by renewal theory.

A failed part is replaced at once by a new one, so the failures of one position form a renewal
process. The expected number of failures by time ``t`` is the renewal function ``M(t)``:

* exponential lives of mean ``m``: ``M(t) = t / m`` exactly;
* Weibull lives (shape ``k``, scale ``lambda``): ``M`` solves the renewal equation
  ``M(t) = F(t) + int_0^t M(t - x) dF(x)`` and is computed numerically here.

Shapes: sampled parameters have shape (n_samples,); yearly results (n_samples, n_years).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from lcoe.case.errors import InputError
from lcoe.case.rng import make_rng

#: Default number of grid steps per Weibull scale for :func:`renewal_function_weibull`.
STEPS_PER_SCALE = 400

#: Largest grid used by :func:`renewal_function_weibull` (beyond it the step grows).
MAX_STEPS = 2**17

#: Days per year used to turn repair days into lost energy. [days]
DAYS_PER_YEAR = 365.0

# Bound on samples x FFT length handled at once (memory only).
_FFT_BLOCK = 2**22


def _positive_array(name: str, value) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    bad = ~np.isfinite(arr) | (arr <= 0.0)
    if np.any(bad):
        first = arr[bad].ravel()[0] if arr.ndim else float(arr)
        raise InputError(f"{name} = {first!r}: expected numbers > 0")
    return arr


def _years(name: str, value) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
        raise InputError(f"{name} = {value!r}: expected an integer >= 1")
    return int(value)


# --------------------------------------------------------------------------------------------
# Exponential lives
# --------------------------------------------------------------------------------------------


def expected_failures_exponential(mean_years, horizon_years) -> np.ndarray | float:
    """Expected failures per unit over ``horizon_years`` with exponential lives: ``T / m``.

    Parameters
    ----------
    mean_years : float or array_like (n_samples,)
        Mean life of the part. [years]
    horizon_years : float or array_like
        Length of the period. [years]

    Returns
    -------
    float or numpy.ndarray
        Broadcast shape of the inputs. [failures per unit]
    """
    m = _positive_array("mean_years", mean_years)
    t = np.asarray(horizon_years, dtype=float)
    if np.any(~np.isfinite(t) | (t < 0.0)):
        raise InputError(f"horizon_years = {horizon_years!r}: expected numbers >= 0")
    out = t / m
    return float(out) if out.ndim == 0 else out


def yearly_failures_exponential(mean_years, n_years: int) -> np.ndarray:
    """Expected failures per unit in each year with exponential lives: ``1/m`` every year.

    Parameters
    ----------
    mean_years : array_like, shape (n_samples,)
        Mean life. [years]
    n_years : int
        Number of years.

    Returns
    -------
    numpy.ndarray, shape (n_samples, n_years)
        [failures per unit per year]
    """
    m = np.atleast_1d(_positive_array("mean_years", mean_years))
    n = _years("n_years", n_years)
    return np.repeat((1.0 / m)[:, None], n, axis=1)


# --------------------------------------------------------------------------------------------
# Weibull lives: renewal equation
# --------------------------------------------------------------------------------------------


def _fft_len(n: int) -> int:
    return 1 << max(int(n - 1).bit_length(), 1)


def _series_product(a: np.ndarray, b: np.ndarray, n: int) -> np.ndarray:
    """First ``n`` coefficients of the row-wise power-series product ``a * b``."""
    size = _fft_len(a.shape[1] + b.shape[1] - 1)
    prod = np.fft.irfft(np.fft.rfft(a, size, axis=1) * np.fft.rfft(b, size, axis=1), size, axis=1)
    return prod[:, :n]


def _series_inverse(a: np.ndarray) -> np.ndarray:
    """Row-wise power-series inverse ``1/a`` to ``a.shape[1]`` terms by Newton iteration.

    ``g <- g (2 - a g)`` doubles the number of correct terms each pass (needs ``a[:, 0] != 0``).
    """
    n = a.shape[1]
    g = 1.0 / a[:, :1]
    length = 1
    while length < n:
        new = min(2 * length, n)
        ag = _series_product(a[:, :new], g, new)
        corr = _series_product(g, ag, new)
        g_new = -corr
        g_new[:, :length] += 2.0 * g
        g, length = g_new, new
    return g


def _renewal_on_grid(shape: np.ndarray, scale: np.ndarray, horizon: float, n_steps: int):
    """Renewal function on the grid ``t_i = i * horizon / n_steps``, shape (n_s, n_steps+1).

    Discretisation (Riemann-Stieltjes with the trapezoid rule in M): on ``t_i = i h``::

        M_i = F_i + sum_{j=1..i} (M_{i-j+1} + M_{i-j}) / 2 * (F_j - F_{j-1})

    i.e. ``M = F + c * M`` (a truncated convolution) with ``c_0 = dF_1 / 2`` and
    ``c_d = (dF_d + dF_{d+1}) / 2``; hence ``M = F / (1 - c)`` as power series, evaluated with
    FFT-based Newton inversion in O(n log n) per sample instead of the O(n^2) recursion.
    """
    t = np.linspace(0.0, horizon, n_steps + 1)
    u = t[None, :] / scale[:, None]
    cdf = -np.expm1(-(u ** shape[:, None]))
    d_f = np.diff(cdf, axis=1)  # dF_1 .. dF_n, shape (n_s, n)
    c = np.zeros_like(cdf)
    c[:, 0] = 0.5 * d_f[:, 0]
    c[:, 1:-1] = 0.5 * (d_f[:, :-1] + d_f[:, 1:])
    c[:, -1] = 0.5 * d_f[:, -1]  # dF_{n+1} is never used by M_0..M_n; this term is harmless
    one_minus_c = -c
    one_minus_c[:, 0] += 1.0
    g = _series_inverse(one_minus_c)
    m = _series_product(cdf, g, n_steps + 1)
    m[:, 0] = 0.0  # M(0) = F(0) = 0 exactly; the FFT leaves round-off of order 1e-16 there
    return t, m


def renewal_function_weibull(
    shape, scale_years, t_years, steps_per_scale: int = STEPS_PER_SCALE
) -> np.ndarray:
    """Renewal function ``M(t)`` (expected failures by ``t``) for Weibull lives.

    Parameters
    ----------
    shape : array_like, shape (n_samples,)
        Weibull shape ``k`` (1 = exponential; > 1 wear-out). [unitless]
    scale_years : array_like, shape (n_samples,)
        Weibull scale ``lambda``. [years]
    t_years : array_like, shape (n_t,)
        Times at which ``M`` is wanted (>= 0). [years]
    steps_per_scale : int
        Grid steps per Weibull scale; the step is ``max(t) / n`` with
        ``n = ceil(steps_per_scale * max(t) / min(scale))``, capped at ``MAX_STEPS``.

    Returns
    -------
    numpy.ndarray, shape (n_samples, n_t)
        Expected number of failures (renewals) per unit by each time, the part new at t = 0.
        [failures per unit]

    Notes
    -----
    The renewal equation ``M(t) = F(t) + int_0^t M(t - x) dF(x)`` with
    ``F(t) = 1 - exp(-(t/lambda)^k)`` is discretised as a Riemann-Stieltjes sum using the
    increments of ``F`` on each step and the trapezoid rule in ``M`` (the scheme of Xie 1989),
    which is second order in the step. ``M`` is then interpolated linearly at ``t_years``.
    ``M`` depends on ``k`` and ``t/lambda`` only, so the error depends on the step in units
    of the scale. Measured with the default 400 steps per scale (horizon 25 scales): for
    ``k = 1``, where the exact answer is ``t/lambda``, the relative error is 5e-7; for
    ``k = 2.5`` and ``k = 4`` a grid four times finer changes ``M`` by less than 2e-6 absolute;
    for ``k = 0.7`` (infant mortality: infinite life density at 0, slower convergence) by 2e-5.
    Against the asymptote ``t/mu - 1/2 + CV^2/2`` at ``t = 150`` years (``k = 2.5``,
    ``lambda = 8`` years) the difference is 1.3e-6.

    References
    ----------
    .. [1] Xie, M. (1989). On the solution of renewal-type integral equations. Communications
       in Statistics - Simulation and Computation 18(1), 281-293.
    .. [2] Cox, D. R. (1962). Renewal Theory. Methuen, London.
    """
    k = np.atleast_1d(_positive_array("shape", shape)).ravel()
    lam = np.atleast_1d(_positive_array("scale_years", scale_years)).ravel()
    if k.size != lam.size:
        if k.size == 1:
            k = np.full(lam.size, k[0])
        elif lam.size == 1:
            lam = np.full(k.size, lam[0])
        else:
            raise InputError(
                f"shape has {k.size} values and scale_years {lam.size}: expected equal lengths"
            )
    t = np.atleast_1d(np.asarray(t_years, dtype=float)).ravel()
    if np.any(~np.isfinite(t) | (t < 0.0)):
        raise InputError(f"t_years = {t_years!r}: expected numbers >= 0")
    if isinstance(steps_per_scale, bool) or not isinstance(steps_per_scale, (int, np.integer)):
        raise InputError(f"steps_per_scale = {steps_per_scale!r}: expected an integer >= 10")
    if steps_per_scale < 10:
        raise InputError(f"steps_per_scale = {steps_per_scale!r}: expected an integer >= 10")
    horizon = float(t.max()) if t.size else 0.0
    out = np.zeros((k.size, t.size))
    if horizon == 0.0:
        return out
    n_steps = int(min(MAX_STEPS, max(16, np.ceil(steps_per_scale * horizon / lam.min()))))
    block = max(1, _FFT_BLOCK // (4 * _fft_len(n_steps + 1)))
    for start in range(0, k.size, block):  # blocks only bound memory
        sl = slice(start, start + block)
        grid, m = _renewal_on_grid(k[sl], lam[sl], horizon, n_steps)
        for row in range(m.shape[0]):  # np.interp is 1-D
            out[start + row] = np.interp(t, grid, m[row])
    return out


def yearly_failures_weibull(shape, scale_years, n_years: int, **kwargs) -> np.ndarray:
    """Expected failures per unit in each year, ``M(y) - M(y - 1)``, for Weibull lives.

    Parameters
    ----------
    shape : array_like, shape (n_samples,)
        Weibull shape. [unitless]
    scale_years : array_like, shape (n_samples,)
        Weibull scale. [years]
    n_years : int
        Number of years; year ``y`` covers ``(y - 1, y]``.
    **kwargs
        Passed to :func:`renewal_function_weibull` (``steps_per_scale``).

    Returns
    -------
    numpy.ndarray, shape (n_samples, n_years)
        [failures per unit per year]
    """
    n = _years("n_years", n_years)
    m = renewal_function_weibull(shape, scale_years, np.arange(n + 1, dtype=float), **kwargs)
    return np.diff(m, axis=1)


def weibull_mean_years(shape, scale_years) -> np.ndarray | float:
    """Mean Weibull life ``lambda * Gamma(1 + 1/k)``. [years]"""
    from scipy.special import gamma

    k = _positive_array("shape", shape)
    lam = _positive_array("scale_years", scale_years)
    out = lam * gamma(1.0 + 1.0 / k)
    return float(out) if np.ndim(out) == 0 else out


def renewal_asymptote(shape, scale_years, t_years) -> np.ndarray:
    """Large-t expansion ``M(t) ~ t/mu - 1/2 + CV^2/2`` of the renewal function (Cox 1962).

    Parameters
    ----------
    shape, scale_years : array_like, shape (n_samples,)
        Weibull shape [unitless] and scale [years].
    t_years : array_like, shape (n_t,)
        Times. [years]

    Returns
    -------
    numpy.ndarray, shape (n_samples, n_t)
        [failures per unit]
    """
    from scipy.special import gamma

    k = np.atleast_1d(_positive_array("shape", shape)).ravel()[:, None]
    lam = np.atleast_1d(_positive_array("scale_years", scale_years)).ravel()[:, None]
    t = np.atleast_1d(np.asarray(t_years, dtype=float)).ravel()[None, :]
    mu = lam * gamma(1.0 + 1.0 / k)
    var = lam**2 * gamma(1.0 + 2.0 / k) - mu**2
    return t / mu - 0.5 + 0.5 * var / mu**2


def simulate_failures(
    shape: float, scale_years: float, n_years: int, n_units: int, rng
) -> np.ndarray:
    """Direct Monte Carlo of a renewal process with Weibull lives: failures per unit and year.

    Each unit starts new at t = 0; at each failure a new part with a fresh Weibull life is
    fitted at once.

    Parameters
    ----------
    shape : float
        Weibull shape. [unitless]
    scale_years : float
        Weibull scale. [years]
    n_years : int
        Years simulated; year ``y`` covers ``[y - 1, y)``.
    n_units : int
        Number of independent units.
    rng : int, numpy.random.Generator or None
        Seed or generator (passed through :func:`lcoe.case.rng.make_rng`).

    Returns
    -------
    numpy.ndarray of int, shape (n_units, n_years)
        Number of failures of each unit in each year.
    """
    k = float(_positive_array("shape", shape))
    lam = float(_positive_array("scale_years", scale_years))
    n_y = _years("n_years", n_years)
    n_u = _years("n_units", n_units)
    gen = make_rng(rng)
    horizon = float(n_y)
    mean = float(weibull_mean_years(k, lam))
    n_draw = int(np.ceil(2.0 * horizon / mean)) + 8
    times = np.cumsum(gen.weibull(k, size=(n_u, n_draw)) * lam, axis=1)
    while np.any(times[:, -1] < horizon):  # extend until every unit has passed the horizon
        more = np.cumsum(gen.weibull(k, size=(n_u, n_draw)) * lam, axis=1)
        times = np.concatenate((times, times[:, -1:] + more), axis=1)
    unit, pos = np.nonzero(times < horizon)
    year = np.floor(times[unit, pos]).astype(int)
    counts = np.bincount(unit * n_y + year, minlength=n_u * n_y)
    return counts.reshape(n_u, n_y)


# --------------------------------------------------------------------------------------------
# Costs
# --------------------------------------------------------------------------------------------


def moving_part_costs(
    n_units,
    failures_per_unit_year,
    cost_each,
    repair_days,
    damage_fraction,
    unit_capex,
    energy_per_unit_kwh_year=None,
) -> dict[str, np.ndarray]:
    """Yearly replacement cost, lost energy and damage cost of failing moving parts.

    Parameters
    ----------
    n_units : float or array_like (n_samples, 1)
        Number of identical units (positions holding one such part) in the plant.
    failures_per_unit_year : array_like, shape (n_samples, n_years)
        Expected failures per unit in each year (e.g. :func:`yearly_failures_weibull`).
    cost_each : float or array_like (n_samples, 1)
        Cost of one replacement, parts and labour. [currency]
    repair_days : float or array_like (n_samples, 1)
        Days a unit produces nothing after a failure. [days]
    damage_fraction : float or array_like (n_samples, 1)
        Expected share of the unit's capital cost destroyed per failure (probability of damage
        times the share lost when it happens), e.g. cells burnt when a drive stops. [fraction]
    unit_capex : float or array_like (n_samples, 1)
        Capital cost of the equipment one part serves and protects. [currency]
    energy_per_unit_kwh_year : array_like (n_samples, n_years), optional
        Energy one unit would deliver in each year without failures. [kWh]

    Returns
    -------
    dict of numpy.ndarray, each shape (n_samples, n_years)
        ``failures`` [count], ``replacement_cost`` [currency], ``damage_cost`` [currency],
        ``lost_energy_fraction`` [fraction of plant energy], and ``lost_energy_kwh`` [kWh] when
        ``energy_per_unit_kwh_year`` is given.

    Notes
    -----
    Assumptions: units are identical and each delivers the same share of the plant's energy,
    spread evenly over the year, so the plant loses ``failures per unit x repair_days / 365``
    of its energy (capped at 1). Downtime does not delay the next life (renewal theory with
    instant replacement), which is accurate while repair days are small next to the mean life.
    Damage is an expected cost per failure.
    """
    units = _positive_array("n_units", n_units)
    rate = np.asarray(failures_per_unit_year, dtype=float)
    if rate.ndim != 2 or np.any(~np.isfinite(rate) | (rate < 0.0)):
        raise InputError(
            "failures_per_unit_year: expected a (n_samples, n_years) array of numbers >= 0"
        )
    cost = np.asarray(cost_each, dtype=float)
    days = np.asarray(repair_days, dtype=float)
    dmg = np.asarray(damage_fraction, dtype=float)
    capex = np.asarray(unit_capex, dtype=float)
    for name, arr in (("cost_each", cost), ("repair_days", days), ("unit_capex", capex)):
        bad = ~np.isfinite(arr) | (arr < 0.0)
        if np.any(bad):
            raise InputError(f"{name} = {arr[bad].ravel()[0]!r}: expected numbers >= 0")
    if np.any(days > DAYS_PER_YEAR):
        raise InputError(f"repair_days = {repair_days!r}: expected numbers in [0, 365]")
    if np.any(~np.isfinite(dmg) | (dmg < 0.0) | (dmg > 1.0)):
        raise InputError(f"damage_fraction = {damage_fraction!r}: expected numbers in [0, 1]")
    failures = units * rate
    out = {
        "failures": failures,
        "replacement_cost": failures * cost,
        "damage_cost": failures * dmg * capex,
        "lost_energy_fraction": np.minimum(rate * days / DAYS_PER_YEAR, 1.0),
    }
    if energy_per_unit_kwh_year is not None:
        energy = np.asarray(energy_per_unit_kwh_year, dtype=float)
        if np.any(~np.isfinite(energy) | (energy < 0.0)):
            raise InputError("energy_per_unit_kwh_year: expected numbers >= 0 [kWh]")
        out["lost_energy_kwh"] = out["lost_energy_fraction"] * units * energy
    out = {key: np.broadcast_to(val, rate.shape).copy() for key, val in out.items()}
    return out


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
    parts : sequence of lcoe.case.reader.MovingPart
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
