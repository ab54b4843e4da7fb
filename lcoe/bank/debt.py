"""Senior debt: sizing on cover ratios, repayment schedule, DSCR and LLCR.

Shapes: yearly arrays are ``(n_samples, n_years + 1)`` with column 0 = year 0 = financial
close, when the loan is drawn in full; debt service runs over years 1..tenor_years. A 1-D yearly
input is one sample and results keep the samples axis (``n_samples = 1``). Per-sample values
(debt, rates, targets) are scalars or ``(n_samples,)``. Amounts in currency, rates as fractions
per year, cover ratios as plain multiples (1.30 for "1.30x").

CFADS (cash flow available for debt service) = revenue - opex - tax; see
:mod:`lcoe.bank.metrics`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from lcoe.errors import InputError, did_you_mean, field_error
from lcoe.finance import as_flows, check_rate, check_years, crf, discount_factors, per_sample

__all__ = [
    "REPAYMENT_TYPES",
    "DebtSchedule",
    "DebtSizing",
    "constraint_label",
    "debt_schedule",
    "dscr",
    "llcr",
    "cover_ratios_by_year",
    "size_annuity",
    "size_debt",
    "size_sculpted",
    "zero_debt_reason",
]

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


def _targets(source: str, dscr_target, n_samples: int) -> np.ndarray:
    target = np.asarray(dscr_target, dtype=float)
    if np.any(~(target > 0)):
        raise field_error(source, "dscr_target", float(np.min(target)), "a number > 0")
    return per_sample(target, n_samples, "dscr_target")


def _check_repayment(source: str, repayment: str) -> str:
    if repayment not in REPAYMENT_TYPES:
        raise field_error(source, "repayment", repayment, " or ".join(REPAYMENT_TYPES))
    return repayment


def _tenor_discount(rate: np.ndarray, tenor: int) -> np.ndarray:
    """Discount factors of years 1..tenor at the loan rate, shape (n_samples, tenor)."""
    return discount_factors(rate, tenor)[:, 1:]


def constraint_label(case_name: str, min_dscr: float) -> str:
    """Name of a sizing constraint, e.g. ``"P99_1yr @ 1.00x"``."""
    return f"{case_name} @ {min_dscr:.2f}x"


# --------------------------------------------------------------------------------------------
# single-case sizing
# --------------------------------------------------------------------------------------------
def size_sculpted(cfads, dscr_target, interest_rate, tenor_years) -> np.ndarray:
    """Largest sculpted loan whose service keeps DSCR at the target in every tenor year.

    Parameters
    ----------
    cfads : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Cash flow available for debt service [currency/year], column 0 = year 0.
    dscr_target : float or array_like, shape (n_samples,)
        Target debt service cover ratio [-], > 0.
    interest_rate : float or array_like, shape (n_samples,)
        Loan interest rate [1/year], >= 0.
    tenor_years : int
        Loan tenor [year] in [1, n_years].

    Returns
    -------
    numpy.ndarray, shape (n_samples,)
        Debt [currency], >= 0.

    Notes
    -----
    ``DS_t = max(CFADS_t, 0) / DSCR_target`` and ``debt = sum_{t=1..tenor} DS_t / (1 + i)**t``.
    A year with non-positive CFADS carries no debt service (no negative service is assumed),
    so the debt is zero when CFADS is non-positive in every tenor year.

    References
    ----------
    .. [1] Debt sculpting to a constant DSCR: common practice of project-finance lending.
    """
    cf = as_flows(cfads, "cfads")
    rate, tenor = _loan_terms(
        "size_sculpted", interest_rate, tenor_years, cf.shape[1] - 1, cf.shape[0]
    )
    target = _targets("size_sculpted", dscr_target, cf.shape[0])
    service = np.maximum(cf[:, 1 : tenor + 1], 0.0) / target[:, None]
    return np.sum(service * _tenor_discount(rate, tenor), axis=1)


def size_annuity(cfads, dscr_target, interest_rate, tenor_years) -> np.ndarray:
    """Largest annuity loan whose level payment keeps DSCR >= target in every tenor year.

    Parameters
    ----------
    cfads, dscr_target, interest_rate, tenor_years
        As in :func:`size_sculpted`.

    Returns
    -------
    numpy.ndarray, shape (n_samples,)
        Debt [currency], >= 0: ``payment / CRF(i, tenor)`` with
        ``payment = max(min_{t=1..tenor} CFADS_t / DSCR_target, 0)``.

    References
    ----------
    .. [1] Short, W., Packey, D. J. and Holt, T. (1995). NREL/TP-462-5173 (capital recovery
       factor).
    """
    cf = as_flows(cfads, "cfads")
    rate, tenor = _loan_terms(
        "size_annuity", interest_rate, tenor_years, cf.shape[1] - 1, cf.shape[0]
    )
    target = _targets("size_annuity", dscr_target, cf.shape[0])
    payment = np.maximum(np.min(cf[:, 1 : tenor + 1], axis=1) / target, 0.0)
    return payment / crf(rate, tenor)


# --------------------------------------------------------------------------------------------
# multi-constraint sizing
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class DebtSizing:
    """Result of :func:`size_debt`.

    Attributes
    ----------
    debt : numpy.ndarray, shape (n_samples,)
        Debt amount [currency], >= 0.
    binding : numpy.ndarray of str, shape (n_samples,)
        The constraint that limits the debt, e.g. ``"P99_1yr @ 1.00x"`` or
        ``"gearing cap 80 %"``.
    candidates : dict of str to numpy.ndarray, shape (n_samples,)
        Debt each constraint would allow on its own [currency] (the gearing cap included).
    service : numpy.ndarray, shape (n_samples, n_years + 1)
        Debt service of the sized loan [currency/year], zero outside years 1..tenor.
    shape_case : numpy.ndarray of str, shape (n_samples,)
        Sculpted repayment: the case whose CFADS / target gives the service profile; annuity:
        empty strings.
    reason : numpy.ndarray of str, shape (n_samples,)
        Why the debt is zero (empty where it is positive).
    repayment : str
        ``"sculpted"`` or ``"annuity"``.
    cfads : dict of str to numpy.ndarray, shape (n_samples, n_years + 1)
        The CFADS of each case the debt was sized on [currency/year] (for audit: the
        workbook re-derives the debt from them).
    """

    debt: np.ndarray
    binding: np.ndarray
    candidates: dict[str, np.ndarray]
    service: np.ndarray
    shape_case: np.ndarray
    reason: np.ndarray
    repayment: str
    cfads: dict | None = None


def size_debt(
    cases: Mapping[str, np.ndarray],
    constraints: Sequence[tuple[str, float]],
    interest_rate,
    tenor_years: int,
    repayment: str,
    capex,
    max_gearing: float,
) -> DebtSizing:
    """Largest debt that meets every DSCR constraint and the gearing cap.

    Parameters
    ----------
    cases : mapping of str to array_like, each (n_years + 1,) or (n_samples, n_years + 1)
        CFADS of each named case [currency/year], e.g. ``{"P50": ..., "P99_1yr": ...}``.
    constraints : sequence of (case_name, min_dscr)
        Each a case name from ``cases`` and its minimum DSCR [-] (> 0).
    interest_rate : float or array_like, shape (n_samples,)
        Loan interest rate [1/year], >= 0.
    tenor_years : int
        Loan tenor [year] in [1, n_years].
    repayment : {"sculpted", "annuity"}
        Repayment profile.
    capex : float or array_like, shape (n_samples,)
        Capital cost at financial close [currency], >= 0.
    max_gearing : float
        Largest debt / capex [-] in [0, 1].

    Returns
    -------
    DebtSizing

    Notes
    -----
    Annuity: each constraint c allows a level payment ``min_t CFADS_c,t / target_c``; the debt
    is the smallest payment over the constraints divided by CRF(i, tenor), capped at
    ``max_gearing * capex``.

    Sculpted: one service profile must satisfy every constraint. For each constraint s the
    candidate profile is ``p_s,t = max(CFADS_s,t, 0) / target_s``; its largest feasible scale
    is ``k_s = min_c min_{t: p_s,t > 0} (max(CFADS_c,t, 0) / target_c) / p_s,t`` (<= 1, and 1
    when s itself binds), giving debt ``k_s * PV(p_s)``. The debt is the largest of these over
    s, then capped at ``max_gearing * capex`` by scaling the chosen profile down. When the
    constraint of the profile's own case binds, DSCR on that case equals its target in every
    tenor year; ``binding`` names the constraint with the smallest scale (or the gearing cap).
    A pointwise-minimum profile ``min_c CFADS_c,t / target_c`` could carry slightly more debt
    when cases differ in shape; the single-case profile is kept because lenders expect a flat
    DSCR on the sizing case.

    References
    ----------
    .. [1] Sizing on several cover-ratio constraints and a gearing cap, taking the smallest
       debt and reporting the binding one: common practice of project-finance lending.
    """
    src = "size_debt"
    _check_repayment(src, repayment)
    if not constraints:
        raise InputError(f"{src}: constraints is empty: expected at least one (case, min_dscr)")
    flows = {name: as_flows(cf, f"cases[{name!r}]") for name, cf in cases.items()}
    for name, target in constraints:
        if name not in flows:
            suggestion = did_you_mean(name, list(flows))
            raise InputError(
                f"{src}: unknown case {name!r} in constraints{suggestion} "
                f"(cases: {', '.join(flows)})"
            )
        if not float(target) > 0:
            raise field_error(src, f"constraints[{name!r}].min_dscr", target, "a number > 0")
    shapes = {cf.shape[1] for cf in flows.values()}
    if len(shapes) != 1:
        raise ValueError(f"{src}: all cases need the same number of years, got {sorted(shapes)}")
    n_years = shapes.pop() - 1
    n_s = max(cf.shape[0] for cf in flows.values())
    flows = {k: np.broadcast_to(v, (n_s, n_years + 1)) for k, v in flows.items()}
    rate, tenor = _loan_terms(src, interest_rate, tenor_years, n_years, n_s)
    if not 0.0 <= float(max_gearing) <= 1.0:
        raise field_error(src, "max_gearing", max_gearing, "a number in [0, 1]")
    cap_amount = float(max_gearing) * per_sample(capex, n_s, "capex")
    if np.any(~(cap_amount >= 0)):
        raise field_error(src, "capex", capex, "a number >= 0")
    cap_label = f"gearing cap {float(max_gearing) * 100:g} %"

    labels = [constraint_label(name, float(t)) for name, t in constraints]
    # limit[j]: largest service constraint j allows in each tenor year, (n_s, tenor)
    limit = np.stack(
        [np.maximum(flows[name][:, 1 : tenor + 1], 0.0) / float(t) for name, t in constraints]
    )
    disc = _tenor_discount(rate, tenor)

    if repayment == "annuity":
        payments = np.min(limit, axis=2)  # (n_c, n_s)
        j_bind = np.argmin(payments, axis=0)
        factor = crf(rate, tenor)
        candidates = {lab: payments[j] / factor for j, lab in enumerate(labels)}
        debt = np.take_along_axis(payments, j_bind[None, :], 0)[0] / factor
        shape_case = np.full(n_s, "", dtype=object)
        profile = np.ones((n_s, tenor))
        pv_profile = np.sum(profile * disc, axis=1)
    else:
        candidates = {lab: np.sum(limit[j] * disc, axis=1) for j, lab in enumerate(labels)}
        # scale[s, c, n]: largest k with k * limit[s] <= limit[c] in every year
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(limit[:, None] > 0, limit[None, :] / limit[:, None], np.inf)
        scale = np.min(ratio, axis=3)  # (n_shape, n_c, n_s)
        scale = np.where(np.isfinite(scale), scale, 0.0)
        k = np.min(scale, axis=1)  # (n_shape, n_s)
        bind_of_shape = np.argmin(scale, axis=1)  # (n_shape, n_s)
        # on a tie, name the profile's own constraint (its DSCR is at target every year)
        idx = np.arange(len(labels))
        bind_of_shape = np.where(scale[idx, idx] <= k, idx[:, None], bind_of_shape)
        debt_of_shape = k * np.stack(list(candidates.values()))
        best = np.argmax(debt_of_shape, axis=0)  # (n_s,)
        cols = np.arange(n_s)
        debt = debt_of_shape[best, cols]
        j_bind = bind_of_shape[best, cols]
        shape_case = np.array([constraints[b][0] for b in best], dtype=object)
        profile = limit[best, cols]  # (n_s, tenor)
        pv_profile = np.sum(profile * disc, axis=1)

    binding = np.array([labels[j] for j in j_bind], dtype=object)
    capped = cap_amount < debt
    debt = np.where(capped, cap_amount, debt)
    binding[capped] = cap_label
    candidates[cap_label] = cap_amount

    service = np.zeros((n_s, n_years + 1))
    with np.errstate(divide="ignore", invalid="ignore"):
        scale_to_debt = np.where(pv_profile > 0, debt / pv_profile, 0.0)
    service[:, 1 : tenor + 1] = profile * scale_to_debt[:, None]
    reason = np.array(
        [
            "" if debt[i] > 0 else zero_debt_reason(flows, constraints, int(j_bind[i]), i, tenor,
                                                     capped[i], cap_label)
            for i in range(n_s)
        ],
        dtype=object,
    )
    return DebtSizing(debt, binding, candidates, service, shape_case, reason, repayment,
                      {name: np.array(cf) for name, cf in flows.items()})


def zero_debt_reason(flows, constraints, j_bind: int, sample: int, tenor: int,
                     capped: bool = False, cap_label: str = "") -> str:
    """Plain sentence saying why no debt can be carried, for one sample.

    Parameters
    ----------
    flows : mapping of str to numpy.ndarray, each (n_samples, n_years + 1)
        CFADS of each sizing case [currency/year].
    constraints : sequence of (case_name, min_dscr)
    j_bind : int
        Index of the binding constraint in ``constraints``.
    sample : int
        Row of ``flows`` to explain.
    tenor : int
        Loan tenor [year].
    capped, cap_label
        Whether the gearing cap is what binds, and its label.

    Returns
    -------
    str
        E.g. ``"no debt can be carried at 1.30x on P50: CFADS in year 3 is negative
        (-12,345)"``.
    """
    if capped:
        return f"no debt can be carried: the {cap_label} allows none"
    name, target = constraints[j_bind]
    shown = "P50" if name == "base" else name
    cf = np.asarray(flows[name])[sample, 1 : tenor + 1]
    head = f"no debt can be carried at {float(target):.2f}x on {shown}"
    low = np.nonzero(cf <= 0)[0]
    if low.size == 0:
        return f"{head}: no debt service profile meets every constraint"
    year = int(low[0]) + 1
    sign = "negative" if cf[low[0]] < 0 else "zero"
    more = "" if low.size == 1 else f" ({low.size} of the {tenor} tenor years have CFADS <= 0)"
    return f"{head}: CFADS in year {year} is {sign} ({cf[low[0]]:,.0f}){more}"


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
