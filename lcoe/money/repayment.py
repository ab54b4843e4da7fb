"""The loan's yearly schedule once its amount is known: interest, principal (sculpted or
annuity), cash sweep, and the cover ratios DSCR, LLCR and PLCR.

Shapes: yearly arrays are ``(n_samples, n_years + 1)`` with column 0 = year 0 = financial
close, when the loan is drawn in full; debt service runs over years 1..tenor_years.
Amounts in currency, rates as fractions per year, cover ratios as plain multiples (1.30
for "1.30x"). Sizing the loan is :mod:`lcoe.money.debt`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lcoe.case.errors import InputError, field_error
from lcoe.money.finance import as_flows, check_rate, check_years, crf, discount_factors, per_sample

#: Repayment profiles: ``sculpted`` (service follows CFADS / target DSCR) or ``annuity``
#: (level payment of interest plus principal).
REPAYMENT_TYPES = ("sculpted", "annuity")


# --------------------------------------------------------------------------------------------
# checks
# --------------------------------------------------------------------------------------------
def _loan_terms(source: str, interest_rate, tenor_years, n_years: int, n_samples: int):
    """Validated (interest_rate (n_samples,), tenor_years int)."""
    rate = check_rate(interest_rate, "interest_rate", source, low=-1.0)
    if np.any(rate < 0):
        raise field_error(source, "interest_rate", float(rate.min()), "a number >= 0")
    tenor = check_years(tenor_years, "tenor_years", source, low=1, high=n_years)
    return per_sample(rate, n_samples, "interest_rate"), tenor


def _check_repayment(source: str, repayment: str) -> str:
    if repayment not in REPAYMENT_TYPES:
        raise field_error(source, "repayment", repayment, " or ".join(REPAYMENT_TYPES))
    return repayment


def _tenor_discount(rate: np.ndarray, tenor: int) -> np.ndarray:
    """Discount factors of years 1..tenor at the loan rate, shape (n_samples, tenor)."""
    return discount_factors(rate, tenor)[:, 1:]


# --------------------------------------------------------------------------------------------
# schedule and cover ratios
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class DebtSchedule:
    """Loan schedule from :func:`debt_schedule`; yearly arrays (n_samples, n_years + 1).

    Attributes
    ----------
    debt : numpy.ndarray, shape (n_samples,)
        Amount drawn at financial close [currency].
    opening, interest, principal, closing, service : numpy.ndarray
        Balance at the start of the year, interest, principal repaid, balance at the end of
        the year, and interest + principal [currency, currency/year]. Column 0: the drawdown,
        ``closing[:, 0] = debt``, everything else 0.
    upfront_fee : numpy.ndarray, shape (n_samples,)
        Arrangement fee paid at year 0 [currency].
    prepaid : numpy.ndarray or None
        Cash sweep: principal prepaid at the end of each year [currency/year] (None: no
        sweep).
    """

    debt: np.ndarray
    opening: np.ndarray
    interest: np.ndarray
    principal: np.ndarray
    closing: np.ndarray
    service: np.ndarray
    upfront_fee: np.ndarray
    prepaid: np.ndarray | None = None


def debt_schedule(
    debt,
    interest_rate,
    tenor_years: int,
    n_years: int,
    repayment: str,
    service_profile=None,
    upfront_fee_fraction: float = 0.0,
    sweep_cfads=None,
    sweep_share: float = 0.0,
    sweep_above_dscr: float = 1.0,
) -> DebtSchedule:
    """Year-by-year loan schedule: opening balance, interest, principal, closing balance.

    Parameters
    ----------
    debt : float or array_like, shape (n_samples,)
        Amount drawn at financial close [currency], >= 0.
    interest_rate : float or array_like, shape (n_samples,)
        Interest rate [1/year], >= 0, on the opening balance of each year.
    tenor_years : int
        Tenor [year] in [1, n_years].
    n_years : int
        Project life [year], >= 1.
    repayment : {"sculpted", "annuity"}
        ``annuity``: level service ``debt * CRF(i, tenor)``. ``sculpted``: service proportional
        to ``service_profile`` over years 1..tenor, scaled so that its present value at the
        loan rate equals the debt.
    service_profile : array_like, shape (n_samples, n_years + 1) or (n_years + 1,), optional
        Shape of the debt service (>= 0), required for ``sculpted``; only years 1..tenor are
        used and any positive scale will do (e.g. CFADS / target DSCR).
    upfront_fee_fraction : float
        Arrangement fee as a fraction of the debt [-] in [0, 1), paid at year 0.
    sweep_cfads : array_like, shape (n_samples, n_years + 1) or (n_years + 1,), optional
        CFADS [currency/year] from which a cash sweep prepays the loan (None: no sweep).
    sweep_share : float
        Share of the cash above ``sweep_above_dscr x service`` that prepays [-] in [0, 1].
    sweep_above_dscr : float
        DSCR level above which cash is swept [-], >= 1 (1: a fixed share of all cash left
        after debt service).

    Returns
    -------
    DebtSchedule

    Notes
    -----
    ``interest_t = opening_t * i``, ``principal_t = service_t - interest_t``,
    ``closing_t = opening_t - principal_t``; in the last tenor year the principal is the
    opening balance, so the loan ends at exactly zero (the service of that year then differs
    from the profile only by rounding). A sculpted year with little service can repay negative
    principal (interest is capitalised); the balance stays >= 0 because it equals the present
    value of the remaining service.

    Cash sweep: the contractual principal of each year is that of the schedule without a
    sweep, limited to the balance; after the year's service
    ``prepaid_t = min(share x max(CFADS_t - level x service_t, 0), balance left)``, so the loan
    is repaid early and later interest falls (DSCR is on the scheduled service, the prepayment
    is below it).
    """
    src = "debt_schedule"
    _check_repayment(src, repayment)
    n_years = check_years(n_years, "n_years", src, low=1)
    amount = np.atleast_1d(np.asarray(debt, dtype=float))
    if amount.ndim != 1 or np.any(~(amount >= 0)) or np.any(~np.isfinite(amount)):
        raise field_error(src, "debt", debt, "finite numbers >= 0")
    if not 0.0 <= float(upfront_fee_fraction) < 1.0:
        raise field_error(src, "upfront_fee_fraction", upfront_fee_fraction, "a number in [0, 1)")
    n_s = amount.size
    if repayment == "sculpted":
        if service_profile is None:
            raise InputError(f"{src}: repayment = 'sculpted' needs a service_profile")
        prof = as_flows(service_profile, "service_profile", n_years=n_years)
        n_s = max(n_s, prof.shape[0])
    rate, tenor = _loan_terms(src, interest_rate, tenor_years, n_years, n_s)
    amount = per_sample(amount, n_s, "debt")

    disc = _tenor_discount(rate, tenor)
    if repayment == "annuity":
        planned = (amount * crf(rate, tenor))[:, None] * np.ones((1, tenor))
    else:
        shape = np.broadcast_to(prof, (n_s, n_years + 1))[:, 1 : tenor + 1]
        if np.any(shape < 0) or not np.all(np.isfinite(shape)):
            raise ValueError(f"{src}: service_profile must be finite and >= 0")
        pv_shape = np.sum(shape * disc, axis=1)
        if np.any((pv_shape <= 0) & (amount > 0)):
            raise ValueError(f"{src}: service_profile is zero over the tenor but debt > 0")
        with np.errstate(divide="ignore", invalid="ignore"):
            planned = shape * np.where(pv_shape > 0, amount / pv_shape, 0.0)[:, None]

    shape2 = (n_s, n_years + 1)
    opening, interest = np.zeros(shape2), np.zeros(shape2)
    principal, closing, service = np.zeros(shape2), np.zeros(shape2), np.zeros(shape2)
    closing[:, 0] = amount
    balance = amount.copy()
    # sequential: each year's interest depends on the balance left by the previous year;
    # vectorised over samples
    for t in range(1, tenor + 1):
        opening[:, t] = balance
        interest[:, t] = balance * rate
        if t < tenor:
            principal[:, t] = planned[:, t - 1] - interest[:, t]
        else:
            principal[:, t] = balance
        service[:, t] = interest[:, t] + principal[:, t]
        balance = balance - principal[:, t]
        closing[:, t] = balance
    closing[:, tenor] = 0.0
    fee = float(upfront_fee_fraction) * amount
    if sweep_cfads is None or float(sweep_share) == 0.0:
        return DebtSchedule(amount, opening, interest, principal, closing, service, fee)
    if not 0.0 <= float(sweep_share) <= 1.0:
        raise field_error(src, "sweep_share", sweep_share, "a number in [0, 1]")
    if not float(sweep_above_dscr) >= 1.0:
        raise field_error(src, "sweep_above_dscr", sweep_above_dscr, "a number >= 1")
    cf = np.broadcast_to(as_flows(sweep_cfads, "sweep_cfads", n_years=n_years), shape2)
    contractual = principal
    opening, interest = np.zeros(shape2), np.zeros(shape2)
    principal, closing, service = np.zeros(shape2), np.zeros(shape2), np.zeros(shape2)
    prepaid = np.zeros(shape2)
    closing[:, 0] = amount
    balance = amount.copy()
    # sequential: the sweep of each year changes the balance the next year starts from
    for t in range(1, tenor + 1):
        opening[:, t] = balance
        interest[:, t] = balance * rate
        principal[:, t] = balance if t == tenor else np.minimum(contractual[:, t], balance)
        service[:, t] = interest[:, t] + principal[:, t]
        left = balance - principal[:, t]
        excess = np.maximum(cf[:, t] - float(sweep_above_dscr) * service[:, t], 0.0)
        prepaid[:, t] = np.clip(float(sweep_share) * excess, 0.0, np.maximum(left, 0.0))
        balance = left - prepaid[:, t]
        closing[:, t] = balance
    closing[:, tenor] = 0.0
    return DebtSchedule(amount, opening, interest, principal, closing, service, fee, prepaid)


def dscr(cfads, service) -> np.ndarray:
    """Debt service cover ratio by year.

    Parameters
    ----------
    cfads : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Cash flow available for debt service [currency/year].
    service : array_like, same shape
        Debt service [currency/year].

    Returns
    -------
    numpy.ndarray, shape (n_samples, n_years + 1)
        ``CFADS_t / service_t`` [-] where the service is positive, NaN elsewhere (outside the
        tenor, year 0, and any tenor year without service).
    """
    cf = as_flows(cfads, "cfads")
    ds = as_flows(service, "service", n_years=cf.shape[1] - 1)
    cf, ds = np.broadcast_arrays(cf, ds)
    out = np.full(cf.shape, np.nan)
    paid = ds > 0
    out[paid] = cf[paid] / ds[paid]
    return out


def llcr(cfads, debt_outstanding, interest_rate, tenor_years) -> np.ndarray:
    """Loan life cover ratio at financial close.

    Parameters
    ----------
    cfads : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Cash flow available for debt service [currency/year], column 0 = year 0.
    debt_outstanding : float or array_like, shape (n_samples,)
        Debt outstanding at financial close [currency].
    interest_rate : float or array_like, shape (n_samples,)
        Loan interest rate [1/year], >= 0, used as the discount rate.
    tenor_years : int
        Loan tenor [year] in [1, n_years].

    Returns
    -------
    numpy.ndarray, shape (n_samples,)
        ``sum_{t=1..tenor} CFADS_t / (1 + i)**t / debt`` [-]; NaN where the debt is 0.

    References
    ----------
    .. [1] Loan life cover ratio: common practice of project-finance lending.
    """
    cf = as_flows(cfads, "cfads")
    n_s = max(cf.shape[0], np.size(debt_outstanding))
    rate, tenor = _loan_terms("llcr", interest_rate, tenor_years, cf.shape[1] - 1, n_s)
    d = per_sample(debt_outstanding, n_s, "debt_outstanding")
    pv = np.sum(cf[:, 1 : tenor + 1] * _tenor_discount(rate, tenor), axis=1)
    pv = np.broadcast_to(pv, (n_s,))
    out = np.full(n_s, np.nan)
    out[d > 0] = pv[d > 0] / d[d > 0]
    return out


def cover_ratios_by_year(cfads, opening_balance, interest_rate, tenor_years):
    """LLCR and PLCR in each year of the loan.

    Parameters
    ----------
    cfads : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        CFADS [currency/year], column 0 = year 0.
    opening_balance : array_like, same shape
        Loan outstanding at the start of each year [currency] (0 outside the loan).
    interest_rate : float or array_like, shape (n_samples,)
        Loan rate [1/year], >= 0, used as the discount rate.
    tenor_years : int
        Loan tenor [year].

    Returns
    -------
    llcr, plcr : numpy.ndarray, shape (n_samples, n_years + 1)
        ``LLCR_t = sum_{s=t..tenor} CFADS_s / (1 + i)**(s - t + 1) / opening_t`` and PLCR the
        same sum to the end of the project life [-]; NaN where nothing is outstanding. At
        t = 1 LLCR equals :func:`llcr` (the opening balance of year 1 is the debt).

    References
    ----------
    .. [1] Loan and project life cover ratios by year: common practice of project-finance
       lending (DOMAIN.md section 8).
    """
    cf = as_flows(cfads, "cfads")
    bal = as_flows(opening_balance, "opening_balance", n_years=cf.shape[1] - 1)
    cf, bal = np.broadcast_arrays(cf, bal)
    n_s, width = cf.shape
    rate, tenor = _loan_terms("cover_ratios_by_year", interest_rate, tenor_years, width - 1,
                              n_s)
    llcr_t, plcr_t = np.full(cf.shape, np.nan), np.full(cf.shape, np.nan)
    pv_loan = np.zeros(n_s)
    pv_life = np.zeros(n_s)
    v = 1.0 / (1.0 + rate)
    # backward recursion: PV at the start of t = (CFADS_t + PV at the start of t + 1) / (1 + i)
    for t in range(width - 1, 0, -1):
        pv_life = (cf[:, t] + pv_life) * v
        if t <= tenor:
            pv_loan = (cf[:, t] + pv_loan) * v
        owed = bal[:, t] > 0
        with np.errstate(divide="ignore", invalid="ignore"):
            llcr_t[:, t] = np.where(owed, pv_loan / bal[:, t], np.nan)
            plcr_t[:, t] = np.where(owed, pv_life / bal[:, t], np.nan)
    return llcr_t, plcr_t
