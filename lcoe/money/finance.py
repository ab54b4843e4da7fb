"""Time value of money: rates, discounting, annuities and the levelised cost (the IRR is in
:mod:`lcoe.money.irr`).

Conventions used throughout the package
----------------------------------------
* Cash flows are yearly and end-of-year; column 0 is year 0 = financial close and is not
  discounted (t = 0). A cash-flow array has shape ``(n_samples, n_years + 1)``; the functions of
  this module accept any leading axes and work along the last one, so a 1-D cash flow is one
  sample and gives a scalar result (numpy broadcasting rules).
* Rates are fractions per year (0.07, never 7).

The small helpers :func:`as_flows` and :func:`per_sample` give the finance layer
(:mod:`lcoe.bank`) one way of turning its inputs into a ``(n_samples, n_years + 1)`` array and a
``(n_samples,)`` array.
"""

from __future__ import annotations

import numpy as np

from lcoe.case.errors import field_error

_SMALL = 1e-5  # below this |x|, removable singularities are evaluated by their series


# --------------------------------------------------------------------------------------------
# validation and shape helpers
# --------------------------------------------------------------------------------------------
def check_rate(rate, name: str, source: str, low: float = -1.0) -> np.ndarray:
    """Return ``rate`` as a float array, raising InputError unless every value is > ``low``."""
    arr = np.asarray(rate, dtype=float)
    bad = ~(arr > low)  # also catches NaN
    if np.any(bad):
        raise field_error(source, name, float(arr[bad].flat[0]), f"a number > {low:g}")
    return arr


def check_years(n, name: str, source: str, low: int = 0, high: int | None = None) -> int:
    """Return ``n`` as int, raising InputError unless it is an integer in [low, high]."""
    ok = isinstance(n, (int, np.integer)) or (isinstance(n, float) and float(n).is_integer())
    if not ok or n < low or (high is not None and n > high):
        rng = f"[{low}, {high}]" if high is not None else f">= {low}"
        raise field_error(source, name, n, f"an integer {rng}")
    return int(n)


def as_flows(values, name: str, n_years: int | None = None) -> np.ndarray:
    """Return a yearly array as float ``(n_samples, n_years + 1)``.

    Parameters
    ----------
    values : array_like, shape (n_years + 1,) or (n_samples, n_years + 1)
        Yearly values, column 0 = year 0. A 1-D input is one sample.
    name : str
        Argument name, for the error message.
    n_years : int, optional
        When given, the number of columns must be ``n_years + 1``.

    Returns
    -------
    numpy.ndarray, shape (n_samples, n_years + 1)
        A new array (the input is never modified).
    """
    arr = np.array(values, dtype=float, ndmin=2, copy=True)
    if arr.ndim != 2:
        raise ValueError(f"{name}: expected 1-D or 2-D yearly values, got shape {arr.shape}")
    if n_years is not None and arr.shape[1] != n_years + 1:
        raise ValueError(f"{name}: expected {n_years + 1} yearly columns, got {arr.shape[1]}")
    return arr


def per_sample(values, n_samples: int, name: str) -> np.ndarray:
    """Broadcast a scalar or ``(n_samples,)`` value to a float ``(n_samples,)`` array."""
    arr = np.asarray(values, dtype=float)
    if arr.ndim > 1 or (arr.ndim == 1 and arr.shape[0] not in (1, n_samples)):
        raise ValueError(f"{name}: expected a scalar or shape ({n_samples},), got {arr.shape}")
    return np.broadcast_to(arr, (n_samples,)).copy()


def sign_changes(cashflows) -> np.ndarray:
    """Number of sign changes along the last axis, zeros skipped (Descartes' rule of signs).

    Parameters
    ----------
    cashflows : array_like, shape (..., n_years + 1)

    Returns
    -------
    numpy.ndarray of int, shape (...)
    """
    cf = np.atleast_1d(np.asarray(cashflows, dtype=float))
    s = np.sign(cf)
    pos = np.arange(cf.shape[-1])
    # index of the last non-zero entry at or before each position (zeros inherit its sign)
    last = np.maximum.accumulate(np.where(s != 0, pos, 0), axis=-1)
    filled = np.take_along_axis(s, last, axis=-1)
    return np.sum(filled[..., 1:] * filled[..., :-1] < 0, axis=-1)


# --------------------------------------------------------------------------------------------
# rates and discounting
# --------------------------------------------------------------------------------------------
def real_rate(nominal, inflation):
    """Real rate from a nominal rate and inflation (Fisher relation).

    Parameters
    ----------
    nominal : float or array_like
        Nominal rate [1/year], > -1.
    inflation : float or array_like
        Inflation rate [1/year], > -1.

    Returns
    -------
    float or numpy.ndarray
        Real rate [1/year].

    Notes
    -----
    ``real = (1 + nominal) / (1 + inflation) - 1``.

    References
    ----------
    .. [1] Fisher, I. (1930). The Theory of Interest. Macmillan.
    .. [2] Short, W., Packey, D. J. and Holt, T. (1995). A Manual for the Economic Evaluation of
       Energy Efficiency and Renewable Energy Technologies. NREL/TP-462-5173.
    """
    n = check_rate(nominal, "nominal", "real_rate")
    i = check_rate(inflation, "inflation", "real_rate")
    return (1.0 + n) / (1.0 + i) - 1.0


def nominal_rate(real, inflation):
    """Nominal rate from a real rate and inflation (Fisher relation).

    Parameters
    ----------
    real : float or array_like
        Real rate [1/year], > -1.
    inflation : float or array_like
        Inflation rate [1/year], > -1.

    Returns
    -------
    float or numpy.ndarray
        Nominal rate [1/year]: ``(1 + real) * (1 + inflation) - 1``.

    References
    ----------
    .. [1] Short, W., Packey, D. J. and Holt, T. (1995). NREL/TP-462-5173.
    """
    r = check_rate(real, "real", "nominal_rate")
    i = check_rate(inflation, "inflation", "nominal_rate")
    return (1.0 + r) * (1.0 + i) - 1.0


def discount_factors(rate, n_years: int) -> np.ndarray:
    """Discount factors ``(1 + rate)**-t`` for t = 0 .. n_years (t = 0 at financial close).

    Parameters
    ----------
    rate : float or array_like, shape (n_samples,)
        Discount rate [1/year], > -1.
    n_years : int
        Number of years after financial close, >= 0.

    Returns
    -------
    numpy.ndarray, shape (n_years + 1,) for a scalar rate, (n_samples, n_years + 1) otherwise
        Discount factors [-]; column 0 is 1.
    """
    r = check_rate(rate, "rate", "discount_factors")
    n = check_years(n_years, "n_years", "discount_factors")
    t = np.arange(n + 1, dtype=float)
    return np.exp(-t * np.log1p(r)[..., None])


def npv(rate, cashflows):
    """Net present value with the first flow at t = 0 (undiscounted).

    Parameters
    ----------
    rate : float or array_like, shape (n_samples,)
        Discount rate [1/year], > -1.
    cashflows : array_like, shape (n_years + 1,) or (n_samples, n_years + 1)
        Yearly cash flows [currency], column 0 = year 0 = financial close.

    Returns
    -------
    float or numpy.ndarray, shape (n_samples,)
        ``sum_t CF_t / (1 + rate)**t`` [currency].

    Notes
    -----
    Same convention as ``numpy_financial.npv``. A spreadsheet's ``NPV()`` discounts every flow
    it is given, including the first, so the spreadsheet equivalent of this function is
    ``=CF0 + NPV(r, CF1:CFn)``.

    References
    ----------
    .. [1] Short, W., Packey, D. J. and Holt, T. (1995). NREL/TP-462-5173, section 4.
    """
    cf = np.asarray(cashflows, dtype=float)
    if cf.ndim == 0:
        raise ValueError("npv: cashflows must have at least one year (t = 0)")
    df = discount_factors(rate, cf.shape[-1] - 1)
    return np.sum(cf * df, axis=-1)


def _ratio_over_log1p(r: np.ndarray) -> np.ndarray:
    """``r / log(1 + r)``, equal to 1 at r = 0 (series below |r| < 1e-5)."""
    small = np.abs(r) < _SMALL
    safe = np.where(small, 1.0, r)
    series = 1.0 + r / 2.0 - r**2 / 12.0 + r**3 / 24.0
    return np.where(small, series, safe / np.log1p(safe))


def _x_over_one_minus_exp(x: np.ndarray) -> np.ndarray:
    """``x / (1 - exp(-x))``, equal to 1 at x = 0 (series below |x| < 1e-5)."""
    small = np.abs(x) < _SMALL
    safe = np.where(small, 1.0, x)
    series = 1.0 + x / 2.0 + x**2 / 12.0
    return np.where(small, series, safe / -np.expm1(-safe))


def crf(rate, n_years):
    """Capital recovery factor: the level yearly payment that repays 1 over ``n_years``.

    Parameters
    ----------
    rate : float or array_like
        Interest or discount rate [1/year], > -1.
    n_years : int or array_like of int
        Number of payments [year], >= 1.

    Returns
    -------
    float or numpy.ndarray
        CRF [1/year], broadcast over ``rate`` and ``n_years``.

    Notes
    -----
    ``CRF = r (1 + r)**n / ((1 + r)**n - 1) = r / (1 - exp(-n log(1 + r)))``. It is evaluated
    as ``[r / log(1 + r)] * [x / (1 - exp(-x))] / n`` with ``x = n log(1 + r)``: both brackets
    are removable singularities equal to 1 at r = 0 and are evaluated from their Taylor series
    for tiny arguments, so r -> 0 gives 1/n without 0/0.

    References
    ----------
    .. [1] Short, W., Packey, D. J. and Holt, T. (1995). NREL/TP-462-5173, eq. for the capital
       recovery factor.
    """
    r = check_rate(rate, "rate", "crf")
    n = np.asarray(n_years)
    if not np.issubdtype(n.dtype, np.number) or np.any(n < 1) or np.any(n != np.round(n)):
        raise field_error("crf", "n_years", n_years, "integers >= 1")
    n = n.astype(float)
    x = n * np.log1p(r)
    out = _ratio_over_log1p(r) * _x_over_one_minus_exp(x) / n
    return out[()] if np.ndim(out) == 0 else out


def annuity_payment(rate, n_periods, principal):
    """Level payment per period that repays ``principal`` over ``n_periods`` at ``rate``.

    Parameters
    ----------
    rate : float or array_like
        Interest rate per period [1/period], > -1.
    n_periods : int or array_like of int
        Number of payments, >= 1.
    principal : float or array_like
        Amount borrowed [currency].

    Returns
    -------
    float or numpy.ndarray
        Payment per period [currency], positive for a positive principal (numpy-financial's
        ``pmt`` returns the same amount with a negative sign).

    References
    ----------
    .. [1] Short, W., Packey, D. J. and Holt, T. (1995). NREL/TP-462-5173.
    """
    return np.asarray(principal, dtype=float) * crf(rate, n_periods)


_GRID_WEIGHTS: dict = {}


# --------------------------------------------------------------------------------------------
# levelised cost
# --------------------------------------------------------------------------------------------
def lcoe_from_flows(costs, energy_kwh, rate):
    """Levelised cost of energy from yearly costs and yearly energy.

    Parameters
    ----------
    costs : array_like, shape (n_years + 1,) or (n_samples, n_years + 1)
        Yearly costs [currency]: capex, O&M, replacements, minus salvage; column 0 = year 0.
    energy_kwh : array_like, same shape as ``costs`` (or broadcastable)
        Yearly delivered energy [kWh], degradation and availability included.
    rate : float or array_like, shape (n_samples,)
        Discount rate [1/year], > -1 (real rate for a real LCOE, nominal for a nominal one).

    Returns
    -------
    float or numpy.ndarray, shape (n_samples,)
        LCOE [currency/kWh].

    Notes
    -----
    ``LCOE = sum_t C_t / (1 + r)**t / sum_t E_t / (1 + r)**t`` with t = 0 at financial close.
    With a single capex C_0 at t = 0 and level O&M and energy from year 1 to n this equals
    ``(C_0 * CRF(r, n) + O&M) / E``.

    References
    ----------
    .. [1] Short, W., Packey, D. J. and Holt, T. (1995). A Manual for the Economic Evaluation
       of Energy Efficiency and Renewable Energy Technologies. NREL/TP-462-5173, section 4.
    """
    pv_energy = npv(rate, energy_kwh)
    if np.any(~(np.asarray(pv_energy) > 0)):
        raise ValueError("lcoe_from_flows: discounted energy must be > 0 for every sample")
    return npv(rate, costs) / pv_energy
