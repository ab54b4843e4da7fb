"""Income tax of a project: depreciation, loss carry-forward and investment tax credit.

Shapes: yearly arrays are ``(n_samples, n_years + 1)`` with column 0 = year 0 = financial
close; per-sample values are scalars or ``(n_samples,)``. A 1-D yearly input is one sample and
results keep the samples axis (``n_samples = 1``). Amounts are in currency, rates are fractions.

Choices documented here and in each function:

* Depreciation starts in year 1 (the first operating year); column 0 is always 0.
* Tax losses are carried forward without expiry and offset later taxable income in full; tax is
  never negative (no refund and no group relief for a loss).
* An investment tax credit (ITC) arises in year 1, reduces that year's tax, and any unused part
  is carried forward without expiry; it is never paid out as cash. The depreciable basis is
  reduced by a fraction of the credit (see :func:`basis_after_itc`).
"""

from __future__ import annotations

import numpy as np

from lcoe.case.errors import InputError, did_you_mean, field_error
from lcoe.money.finance import as_flows, check_years, per_sample

__all__ = [
    "DEPRECIATION_METHODS",
    "MACRS_5YR_HALF_YEAR",
    "apply_tax_credits",
    "basis_after_itc",
    "depreciation_schedule",
    "investment_tax_credit",
    "tax_with_loss_carryforward",
]

#: Fractions of the basis deducted in tax years 1..6 for 5-year property, half-year convention.
#: Published: IRS Publication 946, Table A-1 (General Depreciation System, 200 % declining
#: balance switching to straight line, half-year convention), 5-year column:
#: 20.00, 32.00, 19.20, 11.52, 11.52, 5.76 %. Hard-coded, not recomputed.
MACRS_5YR_HALF_YEAR = (0.20, 0.32, 0.192, 0.1152, 0.1152, 0.0576)

#: Depreciation methods accepted by :func:`depreciation_schedule`.
DEPRECIATION_METHODS = ("straight_line", "declining_balance", "accelerated_5yr")

_SRC = "depreciation_schedule"


def _check_fraction(value, name: str, source: str, low_open: bool, high: float, high_open: bool):
    """Per-sample fraction check: low bound 0 (open or closed), high bound ``high``."""
    arr = np.asarray(value, dtype=float)
    low_ok = arr > 0 if low_open else arr >= 0
    high_ok = arr < high if high_open else arr <= high
    bad = ~(low_ok & high_ok)
    if np.any(bad):
        lo, hi = ("(" if low_open else "["), (")" if high_open else "]")
        raise field_error(source, name, float(arr[bad].flat[0]), f"a number in {lo}0, {high:g}{hi}")
    return arr


def _unit_schedule(method: str, n_years: int, years, rate) -> np.ndarray:
    """Deduction fractions of a unit basis for years 0..n_years, shape (n_years + 1,)."""
    out = np.zeros(n_years + 1)
    if method == "accelerated_5yr":
        table = np.asarray(MACRS_5YR_HALF_YEAR)
        if years is not None or rate is not None:
            raise InputError(
                f"{_SRC}: accelerated_5yr takes neither years nor rate "
                f"(the published table fixes both); got years={years!r}, rate={rate!r}"
            )
        if n_years < table.size:
            raise field_error(
                _SRC, "n_years", n_years, f">= {table.size} for accelerated_5yr (6 tax years)"
            )
        out[1 : table.size + 1] = table
        return out
    if years is None:
        raise field_error(_SRC, "years", None, f"an integer in [1, {n_years}] for {method}")
    if isinstance(years, (int, np.integer)) and years > n_years:
        raise field_error(_SRC, "years", years, f"years longer than project life ({n_years})")
    years = check_years(years, "years", _SRC, low=1, high=n_years)
    if method == "straight_line":
        if rate is not None:
            raise field_error(_SRC, "rate", rate, "None for straight_line")
        out[1 : years + 1] = 1.0 / years
        return out
    if rate is None:
        raise field_error(_SRC, "rate", None, "a number in (0, 1] for declining_balance")
    rate = float(_check_fraction(rate, "rate", _SRC, low_open=True, high=1.0, high_open=False))
    remaining = 1.0
    # sequential: each year's deduction depends on the book value left by the previous years
    for k in range(1, years + 1):
        straight = remaining / (years - k + 1)
        d = max(rate * remaining, straight)
        out[k] = d
        remaining -= d
    return out


def depreciation_schedule(method: str, depreciable_basis, n_years: int, years=None, rate=None):
    """Yearly tax depreciation.

    Parameters
    ----------
    method : {"straight_line", "declining_balance", "accelerated_5yr"}
        ``straight_line``: basis / years in each of years 1..years.
        ``declining_balance``: ``rate`` times the remaining basis each year, switching to
        straight line on the remaining basis over the remaining years when that is larger, so
        the basis is fully depreciated by ``years`` (full-year convention).
        ``accelerated_5yr``: the published 5-year half-year table
        :data:`MACRS_5YR_HALF_YEAR` over tax years 1..6.
    depreciable_basis : float or array_like, shape (n_samples,)
        Amount to depreciate [currency], >= 0.
    n_years : int
        Project life [year], >= 1.
    years : int, optional
        Recovery period [year] in [1, n_years] for straight_line and declining_balance; a
        period longer than the project life is an error (not clipped). Must be None for
        accelerated_5yr.
    rate : float, optional
        Declining-balance rate [1/year] in (0, 1], e.g. 2 / years for double declining
        balance. Only for declining_balance.

    Returns
    -------
    numpy.ndarray, shape (n_samples, n_years + 1)
        Deductions [currency/year]; column 0 is 0; each row sums to the basis.

    References
    ----------
    .. [1] Internal Revenue Service. Publication 946, How To Depreciate Property, Appendix A,
       Table A-1 (5-year property, half-year convention).
    """
    if method not in DEPRECIATION_METHODS:
        suggestion = did_you_mean(method, DEPRECIATION_METHODS)
        raise InputError(
            f"{_SRC}: method = {method!r}: expected one of {', '.join(DEPRECIATION_METHODS)}"
            f"{suggestion}"
        )
    n_years = check_years(n_years, "n_years", _SRC, low=1)
    basis = np.atleast_1d(np.asarray(depreciable_basis, dtype=float))
    if basis.ndim != 1:
        raise ValueError(f"{_SRC}: depreciable_basis must be a scalar or 1-D, got {basis.shape}")
    bad = ~(basis >= 0) | ~np.isfinite(basis)
    if np.any(bad):
        raise field_error(_SRC, "depreciable_basis", float(basis[bad][0]), "a finite number >= 0")
    return basis[:, None] * _unit_schedule(method, n_years, years, rate)[None, :]


def tax_with_loss_carryforward(taxable_income, tax_rate):
    """Income tax with tax losses carried forward, without expiry and without refunds.

    Parameters
    ----------
    taxable_income : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Taxable income before loss relief [currency/year], column 0 = year 0.
    tax_rate : float or array_like, shape (n_samples,)
        Income tax rate [-] in [0, 1).

    Returns
    -------
    tax : numpy.ndarray, shape (n_samples, n_years + 1)
        Tax due [currency/year], >= 0.
    loss_balance : numpy.ndarray, shape (n_samples, n_years + 1)
        Unused tax losses at the end of each year [currency], >= 0.

    Notes
    -----
    With L the loss brought forward and Y the year's taxable income: ``net = Y - L``,
    ``tax = rate * max(net, 0)``, ``L_next = max(-net, 0)``. A loss is never refunded or used
    elsewhere (stand-alone project company); it offsets later profits in full and never
    expires. Both are simplifications: real regimes may cap the offset or expire losses.
    """
    income = as_flows(taxable_income, "taxable_income")
    rate = per_sample(
        _check_fraction(
            tax_rate,
            "tax_rate",
            "tax_with_loss_carryforward",
            low_open=False,
            high=1.0,
            high_open=True,
        ),
        income.shape[0],
        "tax_rate",
    )
    tax = np.zeros_like(income)
    balance = np.zeros_like(income)
    loss = np.zeros(income.shape[0])
    # sequential over years (the loss brought forward depends on earlier years);
    # vectorised over samples
    for t in range(income.shape[1]):
        net = income[:, t] - loss
        tax[:, t] = rate * np.maximum(net, 0.0)
        loss = np.maximum(-net, 0.0)
        balance[:, t] = loss
    return tax, balance


def apply_tax_credits(tax_before_credits, credits):
    """Offset tax credits against tax due, carrying unused credit forward without expiry.

    Parameters
    ----------
    tax_before_credits : array_like, shape (n_samples, n_years + 1)
        Tax due before credits [currency/year], >= 0 (e.g. from
        :func:`tax_with_loss_carryforward`).
    credits : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Credits arising in each year [currency/year], >= 0.

    Returns
    -------
    tax : numpy.ndarray, shape (n_samples, n_years + 1)
        Tax due after credits [currency/year], >= 0; a credit is never paid out as cash.
    credit_balance : numpy.ndarray, shape (n_samples, n_years + 1)
        Unused credit at the end of each year [currency].
    """
    tax_in = as_flows(tax_before_credits, "tax_before_credits")
    cred = as_flows(credits, "credits", n_years=tax_in.shape[1] - 1)
    if np.any(tax_in < 0) or np.any(cred < 0):
        raise ValueError("apply_tax_credits: tax and credits must be >= 0")
    cred = np.broadcast_to(cred, tax_in.shape)
    tax = np.zeros_like(tax_in)
    balance = np.zeros_like(tax_in)
    available = np.zeros(tax_in.shape[0])
    # sequential over years (unused credit carries forward); vectorised over samples
    for t in range(tax_in.shape[1]):
        available = available + cred[:, t]
        used = np.minimum(available, tax_in[:, t])
        tax[:, t] = tax_in[:, t] - used
        available = available - used
        balance[:, t] = available
    return tax, balance


def investment_tax_credit(eligible_capex, itc_fraction, n_years: int):
    """Investment tax credit arising in year 1.

    Parameters
    ----------
    eligible_capex : float or array_like, shape (n_samples,)
        Capital cost eligible for the credit [currency], >= 0.
    itc_fraction : float or array_like, shape (n_samples,)
        Credit as a fraction of eligible capex [-] in [0, 1].
    n_years : int
        Project life [year], >= 1.

    Returns
    -------
    numpy.ndarray, shape (n_samples, n_years + 1)
        Credit [currency], all in column 1 (the first operating year); pass it to
        :func:`apply_tax_credits`, which carries unused credit forward.
    """
    n_years = check_years(n_years, "n_years", "investment_tax_credit", low=1)
    capex = np.atleast_1d(np.asarray(eligible_capex, dtype=float))
    if np.any(~(capex >= 0)):
        raise field_error("investment_tax_credit", "eligible_capex", eligible_capex, ">= 0")
    frac = _check_fraction(itc_fraction, "itc_fraction", "investment_tax_credit", False, 1.0, False)
    amount = np.atleast_1d(capex * frac)
    out = np.zeros((amount.size, n_years + 1))
    out[:, 1] = amount
    return out


def basis_after_itc(capex, itc_fraction, itc_eligible_fraction=1.0, basis_reduction_fraction=0.5):
    """Depreciable basis after the reduction that goes with an investment tax credit.

    Parameters
    ----------
    capex : float or array_like, shape (n_samples,)
        Capital cost [currency], >= 0.
    itc_fraction : float or array_like, shape (n_samples,)
        Credit as a fraction of eligible capex [-] in [0, 1].
    itc_eligible_fraction : float or array_like, shape (n_samples,)
        Share of capex eligible for the credit [-] in [0, 1].
    basis_reduction_fraction : float
        Share of the credit taken off the depreciable basis [-] in [0, 1]. The default 0.5 is
        the US rule for the energy credit (basis reduced by half the credit; from memory, US
        Internal Revenue Code section 50(c), not re-checked); use 0 where no such rule applies.

    Returns
    -------
    float or numpy.ndarray, shape (n_samples,)
        ``capex - basis_reduction_fraction * itc_fraction * itc_eligible_fraction * capex``
        [currency].
    """
    src = "basis_after_itc"
    c = np.asarray(capex, dtype=float)
    if np.any(~(c >= 0)):
        raise field_error(src, "capex", capex, ">= 0")
    f = _check_fraction(itc_fraction, "itc_fraction", src, False, 1.0, False)
    e = _check_fraction(itc_eligible_fraction, "itc_eligible_fraction", src, False, 1.0, False)
    b = _check_fraction(
        basis_reduction_fraction, "basis_reduction_fraction", src, False, 1.0, False
    )
    return c - b * f * e * c
