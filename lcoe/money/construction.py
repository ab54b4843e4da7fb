"""Construction period and financial close: capex drawdown, interest during construction, fees,
sources and uses.

Time: construction runs over ``n`` equal periods (months or quarters) before commercial
operation (COD, year 0 of the operating cash flow). Capex share ``s_k`` is drawn at the start of
period ``k = 0..n-1``; interest for a period accrues on the loan balance after that period's
draw at ``rate x period length``. Debt funds each draw pro rata (the same share of every draw),
so the loan at COD equals the debt sized on the operating cash flow. Amounts in currency, rates
per year, period lengths in years.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lcoe.case.errors import field_error
from lcoe.money.finance import per_sample

__all__ = ["PERIOD_YEARS", "Construction", "construction_financing", "sources_and_uses"]

#: Length of a drawdown period [year].
PERIOD_YEARS = {"month": 1.0 / 12.0, "quarter": 0.25}


@dataclass(frozen=True)
class Construction:
    """Result of :func:`construction_financing`.

    Attributes
    ----------
    draws : numpy.ndarray, shape (n_samples, n_periods)
        Capex paid in each period [currency].
    debt_draws : numpy.ndarray, shape (n_samples, n_periods)
        Loan principal drawn for capex in each period [currency].
    idc : numpy.ndarray, shape (n_samples,)
        Interest during construction [currency] (capitalised into the loan or paid by equity).
    commitment_fee : numpy.ndarray, shape (n_samples,)
        Fee on the undrawn commitment over the construction period [currency].
    upfront_fee : numpy.ndarray, shape (n_samples,)
        Arrangement fee on the loan at COD [currency].
    debt_share : numpy.ndarray, shape (n_samples,)
        Share of each capex draw funded by the loan [-].
    idc_capitalised : bool
    period_years : float
        Length of one period [year].
    """

    draws: np.ndarray
    debt_draws: np.ndarray
    idc: np.ndarray
    commitment_fee: np.ndarray
    upfront_fee: np.ndarray
    debt_share: np.ndarray
    idc_capitalised: bool
    period_years: float


def construction_financing(capex, debt, interest_rate, shares, period: str = "quarter",
                           idc_capitalised: bool = True, commitment_fee_fraction: float = 0.0,
                           upfront_fee_fraction: float = 0.0) -> Construction:
    """Drawdown, interest during construction and fees of a loan worth ``debt`` at COD.

    Parameters
    ----------
    capex : float or array_like, shape (n_samples,)
        Capital cost [currency], >= 0.
    debt : float or array_like, shape (n_samples,)
        Loan balance at COD [currency], >= 0 (the debt sized on the operating cash flow).
    interest_rate : float or array_like, shape (n_samples,)
        Loan rate [1/year], >= 0.
    shares : sequence of float
        Share of capex drawn at the start of each period [-], >= 0, summing to 1; an empty
        sequence means no construction period (everything at COD, no interest).
    period : {"month", "quarter"}
        Length of a period.
    idc_capitalised : bool
        True: interest is added to the loan each period (compounding per period), so the
        principal drawn for capex is the COD balance less the interest; False: interest is
        paid by equity as it falls due (simple interest on the drawn balance).
    commitment_fee_fraction : float
        Fee per year on the undrawn part of the principal [1/year], >= 0.
    upfront_fee_fraction : float
        Arrangement fee as a fraction of the COD loan [-].

    Returns
    -------
    Construction

    Notes
    -----
    With ``n`` periods of length ``d`` and ``j = rate x d``, a draw at the start of period k
    bears interest for ``n - k`` periods. Capitalised: ``D = g capex sum_k s_k (1 + j)^(n-k)``
    gives the debt share g, and ``IDC = D - g capex``. Paid by equity: ``g = D / capex`` and
    ``IDC = sum_k j (n - k) g capex s_k``. Commitment fee ``= f d sum_k (P - drawn_k)`` with
    ``P = g capex`` the principal committed and ``drawn_k`` the principal drawn after the
    period-k draw.

    References
    ----------
    .. [1] Interest during construction on each drawn tranche to COD, capitalised or paid by
       equity; commitment fees on undrawn amounts: common practice of project-finance lending.
    """
    src = "construction_financing"
    if period not in PERIOD_YEARS:
        raise field_error(src, "period", period, " or ".join(PERIOD_YEARS))
    s = np.asarray(list(shares), dtype=float)
    if s.ndim != 1 or np.any(~(s >= 0)) or (s.size and abs(s.sum() - 1.0) > 1e-9):
        raise field_error(src, "shares", list(s), "shares >= 0 that sum to 1")
    d_years = PERIOD_YEARS[period]
    cap = np.atleast_1d(np.asarray(capex, dtype=float))
    n_s = max(cap.size, np.size(debt), np.size(interest_rate))
    cap = per_sample(cap, n_s, "capex")
    loan = per_sample(debt, n_s, "debt")
    rate = per_sample(interest_rate, n_s, "interest_rate")
    if np.any(cap < 0) or np.any(loan < 0) or np.any(rate < 0):
        raise field_error(src, "capex/debt/interest_rate", "negative", "numbers >= 0")
    if s.size == 0:
        s = np.ones(1)
        n = 0
    else:
        n = s.size
    draws = cap[:, None] * s[None, :]
    j = rate * d_years
    periods_left = n - np.arange(s.size)
    with np.errstate(divide="ignore", invalid="ignore"):
        if idc_capitalised:
            growth = np.sum(s[None, :] * (1.0 + j[:, None]) ** periods_left[None, :], axis=1)
            share = np.where(cap > 0, loan / (cap * growth), 0.0)
        else:
            share = np.where(cap > 0, loan / cap, 0.0)
    debt_draws = share[:, None] * draws
    if idc_capitalised:
        idc = loan - share * cap
    else:
        idc = np.sum(debt_draws * j[:, None] * periods_left[None, :], axis=1)
    committed = share * cap
    drawn = np.cumsum(debt_draws, axis=1)
    fee = float(commitment_fee_fraction) * d_years * np.sum(committed[:, None] - drawn, axis=1) \
        if n else np.zeros(n_s)
    return Construction(draws, debt_draws, idc, fee, float(upfront_fee_fraction) * loan, share,
                        bool(idc_capitalised), d_years)


def sources_and_uses(capex, debt, construction: Construction | None, dsra_initial) -> dict:
    """Sources and uses of funds to COD, per sample.

    Parameters
    ----------
    capex, debt : float or array_like, shape (n_samples,)
        Capital cost and loan at COD [currency].
    construction : Construction or None
        Interest during construction and fees (None: none).
    dsra_initial : float or array_like, shape (n_samples,)
        Debt service reserve funded at close [currency].

    Returns
    -------
    dict
        ``uses`` and ``sources``: dicts of name -> numpy.ndarray (n_samples,) [currency]; equity
        is the balancing source, so both total the same.
    """
    n_s = max(np.size(capex), np.size(debt), np.size(dsra_initial),
              construction.idc.size if construction is not None else 1)
    zero = np.zeros(n_s)
    uses = {"capex": per_sample(capex, n_s, "capex"),
            "interest during construction": construction.idc if construction else zero,
            "upfront fee": construction.upfront_fee if construction else zero,
            "commitment fee": construction.commitment_fee if construction else zero,
            "DSRA funded at close": per_sample(dsra_initial, n_s, "dsra_initial")}
    total = sum(uses.values())
    loan = per_sample(debt, n_s, "debt")
    return {"uses": uses, "sources": {"senior debt": loan, "equity": total - loan},
            "total": total}
