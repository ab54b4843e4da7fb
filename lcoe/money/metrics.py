"""Project-finance cash flow: tax, debt, cover ratios and returns, per sample.

:func:`project_finance` turns yearly revenue and operating cost into the lender's and the
equity investor's view: EBITDA, depreciation, interest, tax with loss carry-forward and an
investment tax credit, CFADS, debt service (sized on DSCR constraints or given), DSCR, LLCR,
project and equity IRR, NPV and payback. :func:`breakeven_tariff` finds the flat real tariff
that gives a target equity IRR.

Shapes: yearly arrays ``(n_samples, n_years + 1)``, column 0 = year 0 = financial close;
per-sample values scalars or ``(n_samples,)``; a 1-D yearly input is one sample. Amounts in
currency (nominal or real, as the inputs are), rates as fractions per year.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from lcoe.case.errors import InputError, field_error, unknown_key_error
from lcoe.money.construction import Construction, construction_financing, sources_and_uses
from lcoe.money.debt import DebtSizing, size_debt
from lcoe.money.finance import as_flows, check_rate, npv, per_sample
from lcoe.money.irr import investment_irr
from lcoe.money.repayment import DebtSchedule, cover_ratios_by_year, debt_schedule, dscr, llcr
from lcoe.money.reserves import (
    MaintenanceReserve,
    ServiceReserve,
    maintenance_reserve,
    service_reserve,
)
from lcoe.money.tax import (
    apply_tax_credits,
    basis_after_itc,
    depreciation_schedule,
    investment_tax_credit,
    tax_with_loss_carryforward,
)

#: Name under which the ``revenue`` passed to :func:`project_finance` is known to sizing
#: constraints.
BASE_CASE = "base"


@dataclass(frozen=True)
class FinanceResult:
    """Everything :func:`project_finance` computes.

    Yearly arrays have shape (n_samples, n_years + 1) [currency/year unless noted]; summary
    values have shape (n_samples,).

    Attributes
    ----------
    revenue, opex, ebitda : yearly
        Inputs and EBITDA = revenue - opex.
    depreciation, interest, taxable_income : yearly
        Tax depreciation, loan interest, taxable income = EBITDA - depreciation - interest
        (before loss relief).
    tax, loss_balance, credit_balance : yearly
        Tax paid after loss carry-forward and credits; unused tax losses and unused credit at
        the end of each year [currency].
    cfads : yearly
        Cash flow available for debt service = revenue - opex - tax.
    debt_service, principal, debt_balance : yearly
        Interest + principal, principal, closing loan balance [currency].
    equity_flow : yearly
        Cash flow to equity = CFADS - debt service; year 0 also carries
        -(capex - debt + upfront fee).
    project_flow_pre_tax, project_flow_post_tax : yearly
        -capex at year 0 plus EBITDA (pre-tax) or EBITDA - unlevered tax (post-tax), where the
        unlevered tax is computed without interest.
    dscr : yearly [-]
        CFADS / debt service, NaN where no service is due.
    debt, upfront_fee : (n_samples,) [currency]
    min_dscr, avg_dscr, llcr : (n_samples,) [-]
        Minimum and mean DSCR over the years with debt service; LLCR at financial close.
        NaN without debt.
    project_irr_pre_tax, project_irr_post_tax, equity_irr : (n_samples,) [1/year]
        Investment root or NaN (:func:`lcoe.money.irr.investment_irr`), computed on first use.
    npv_equity, npv_project_post_tax : (n_samples,) [currency]
        NPV of the equity flow and of the post-tax project flow at ``discount_rate``.
    payback_year : (n_samples,) [year]
        First year in which the cumulative equity flow is >= 0; NaN if never.
    iterations : int
        Fixed-point iterations used to make debt, interest and tax consistent.
    sizing : DebtSizing or None
        Debt sizing on the final CFADS (None when ``debt_amount`` was given).
    schedule : DebtSchedule
        The loan schedule.
    cfads_before_reserves : yearly
        Revenue - opex - tax, before maintenance-reserve transfers (``cfads`` is after them;
        the two are equal without a maintenance reserve).
    dscr_before_reserves : yearly [-]
        ``cfads_before_reserves`` / debt service.
    prepaid : yearly
        Principal prepaid by the cash sweep (0 without a sweep).
    llcr_by_year, plcr_by_year : yearly [-]
        LLCR and PLCR at the start of each year of the loan (NaN when nothing is owed).
    mra, dsra : MaintenanceReserve, ServiceReserve or None
        Reserve accounts (None when not used).
    construction : Construction
        Drawdown, interest during construction and fees.
    sources_uses : dict
        Sources and uses of funds to COD (see :func:`lcoe.money.construction.sources_and_uses`).
    """

    revenue: np.ndarray
    opex: np.ndarray
    ebitda: np.ndarray
    depreciation: np.ndarray
    interest: np.ndarray
    taxable_income: np.ndarray
    tax: np.ndarray
    loss_balance: np.ndarray
    credit_balance: np.ndarray
    cfads: np.ndarray
    debt_service: np.ndarray
    principal: np.ndarray
    debt_balance: np.ndarray
    equity_flow: np.ndarray
    project_flow_pre_tax: np.ndarray
    project_flow_post_tax: np.ndarray
    dscr: np.ndarray
    debt: np.ndarray
    upfront_fee: np.ndarray
    min_dscr: np.ndarray
    avg_dscr: np.ndarray
    llcr: np.ndarray
    npv_equity: np.ndarray
    npv_project_post_tax: np.ndarray
    payback_year: np.ndarray
    iterations: int
    sizing: DebtSizing | None
    schedule: DebtSchedule
    cfads_before_reserves: np.ndarray | None = None
    dscr_before_reserves: np.ndarray | None = None
    prepaid: np.ndarray | None = None
    llcr_by_year: np.ndarray | None = None
    plcr_by_year: np.ndarray | None = None
    mra: MaintenanceReserve | None = None
    dsra: ServiceReserve | None = None
    construction: Construction | None = None
    sources_uses: dict | None = None

    # IRRs are computed on first use: the Monte Carlo and the sizing iterations of the
    # break-even tariff need few of them, and each scans a grid of rates for every sample
    @cached_property
    def project_irr_pre_tax(self) -> np.ndarray:
        return investment_irr(self.project_flow_pre_tax)

    @cached_property
    def project_irr_post_tax(self) -> np.ndarray:
        return investment_irr(self.project_flow_post_tax)

    @cached_property
    def equity_irr(self) -> np.ndarray:
        return investment_irr(self.equity_flow)


@dataclass(frozen=True)
class _Operating:
    """Tax and CFADS of one revenue case for a given interest line."""

    ebitda: np.ndarray
    taxable_income: np.ndarray
    tax: np.ndarray
    loss_balance: np.ndarray
    credit_balance: np.ndarray
    cfads: np.ndarray


def _operating(revenue, opex, depreciation, interest, tax_rate, credits) -> _Operating:
    ebitda = revenue - opex
    taxable = ebitda - depreciation - interest
    tax_before, loss = tax_with_loss_carryforward(taxable, tax_rate)
    tax, credit = apply_tax_credits(tax_before, credits)
    return _Operating(ebitda, taxable, tax, loss, credit, ebitda - tax)


def _first_payback_year(equity_flow: np.ndarray) -> np.ndarray:
    reached = np.cumsum(equity_flow, axis=1) >= 0
    first = np.argmax(reached, axis=1).astype(float)
    return np.where(reached.any(axis=1), first, np.nan)


def _dscr_summary(ratios: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Minimum and mean over the non-NaN entries of each row (NaN for an all-NaN row)."""
    has = ~np.isnan(ratios)
    count = has.sum(axis=1)
    low = np.where(has, ratios, np.inf).min(axis=1)
    total = np.where(has, ratios, 0.0).sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = total / count
    return np.where(count > 0, low, np.nan), np.where(count > 0, mean, np.nan)


def project_finance(
    *,
    revenue,
    opex,
    capex,
    tax_rate,
    depreciation_method: str,
    depreciation_years: int | None = None,
    depreciation_rate: float | None = None,
    itc_fraction=0.0,
    itc_eligible_fraction=1.0,
    itc_basis_reduction_fraction: float = 0.5,
    interest_rate,
    tenor_years: int,
    repayment: str = "sculpted",
    upfront_fee_fraction: float = 0.0,
    debt_amount=None,
    dscr_constraints: Sequence[tuple[str, float]] | None = None,
    sizing_revenue: Mapping[str, np.ndarray] | None = None,
    max_gearing: float = 1.0,
    discount_rate,
    max_iterations: int = 200,
    tolerance: float = 1e-9,
    service_profile=None,
    renewals=None,
    mra_years_ahead: int = 0,
    dsra_months: float = 0.0,
    dsra_at_close: bool = True,
    construction_shares=(),
    construction_period: str = "quarter",
    idc_capitalised: bool = True,
    commitment_fee_fraction: float = 0.0,
    sweep_share: float = 0.0,
    sweep_above_dscr: float = 1.0,
) -> FinanceResult:
    """Project-finance cash flow of a project company, vectorised over samples.

    Parameters
    ----------
    revenue : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Revenue [currency/year], column 0 = year 0 (normally 0).
    opex : array_like, same shape as ``revenue``
        All operating costs [currency/year]: O&M, insurance, land lease, and mid-life
        replacements, which are treated as opex (expensed for tax in the year paid, not
        capitalised). Decommissioning cost (positive) or salvage (negative) may sit in the
        last year.
    capex : float or array_like, shape (n_samples,)
        Capital cost paid at financial close (year 0) [currency], >= 0.
    tax_rate : float or array_like, shape (n_samples,)
        Income tax rate [-] in [0, 1).
    depreciation_method : {"straight_line", "declining_balance", "accelerated_5yr"}
        See :func:`lcoe.money.tax.depreciation_schedule`; depreciation starts in year 1.
    depreciation_years : int, optional
        Recovery period [year] for straight_line and declining_balance.
    depreciation_rate : float, optional
        Declining-balance rate [1/year] for declining_balance.
    itc_fraction : float or array_like, shape (n_samples,)
        Investment tax credit as a fraction of eligible capex [-] in [0, 1]; credited in
        year 1, unused credit carried forward, never paid out.
    itc_eligible_fraction : float or array_like, shape (n_samples,)
        Share of capex eligible for the credit [-] in [0, 1].
    itc_basis_reduction_fraction : float
        Share of the credit taken off the depreciable basis [-] (0.5: US rule, from memory).
    interest_rate : float or array_like, shape (n_samples,)
        Loan interest rate [1/year], >= 0.
    tenor_years : int
        Loan tenor [year] in [1, n_years].
    repayment : {"sculpted", "annuity"}
        Repayment profile of the loan.
    upfront_fee_fraction : float
        Arrangement fee [-] of the debt, paid by equity at year 0 and not deducted for tax.
    debt_amount : float or array_like, shape (n_samples,), optional
        A given debt [currency] (0 for an all-equity project). With ``sculpted`` repayment the
        service follows the base-case CFADS. Give either this or ``dscr_constraints``.
    dscr_constraints : sequence of (case_name, min_dscr), optional
        Size the debt as the largest that meets every constraint and the gearing cap
        (:func:`lcoe.money.debt.size_debt`). ``"base"`` names the ``revenue`` case.
    sizing_revenue : mapping of str to array_like, optional
        Revenue of further cases used only for sizing, e.g. ``{"P99_1yr": ...}``
        [currency/year]; they share opex, depreciation, tax rules and the loan.
    max_gearing : float
        Largest debt / capex [-] in [0, 1]; a given ``debt_amount`` must respect it too.
    discount_rate : float or array_like, shape (n_samples,)
        Rate [1/year] for ``npv_equity`` and ``npv_project_post_tax``.
    service_profile : array_like, shape (n_samples, n_years + 1) or (n_years + 1,), optional
        With a given ``debt_amount`` and sculpted repayment: the contractual debt-service
        profile (e.g. the schedule sized on the deterministic case), instead of re-sculpting on
        this case's CFADS. This is how a loan sized once is tested in Monte Carlo trials.
    renewals : array_like, shape (n_samples, n_years + 1) or (n_years + 1,), optional
        The part of ``opex`` that is scheduled replacements and moving-part renewals
        [currency/year]; with ``mra_years_ahead`` > 0 a maintenance reserve accrues it ahead
        (:func:`lcoe.money.reserves.maintenance_reserve`).
    mra_years_ahead : int
        Years over which each renewal is accrued [year] (0: no maintenance reserve).
    dsra_months : float
        Debt service reserve: months of next year's service held [month] (0: none).
    dsra_at_close : bool
        True: the reserve is funded at close (a use of funds paid by equity); False: built
        from cash flow.
    construction_shares : sequence of float
        Share of capex drawn at the start of each construction period (empty: none).
    construction_period : {"month", "quarter"}
    idc_capitalised : bool
        Interest during construction added to the loan (True) or paid by equity (False).
    commitment_fee_fraction : float
        Fee per year on the undrawn loan during construction [1/year].
    sweep_share, sweep_above_dscr : float
        Cash sweep: the share [-] of CFADS above ``sweep_above_dscr x service`` that prepays
        the loan (0: no sweep); see :func:`lcoe.money.repayment.debt_schedule`.
    max_iterations : int
        Largest number of fixed-point iterations.
    tolerance : float
        Convergence threshold on the relative change of debt and debt service.

    Returns
    -------
    FinanceResult

    Raises
    ------
    lcoe.case.errors.InputError
        For invalid inputs.
    RuntimeError
        When the fixed point does not converge in ``max_iterations``.

    Notes
    -----
    Yearly lines, t = 1..n (t = 0 only for close)::

        EBITDA_t        = revenue_t - opex_t
        taxable_t       = EBITDA_t - depreciation_t - interest_t
        tax_t           = tax after loss carry-forward, then credits (no refunds)
        CFADS_t         = revenue_t - opex_t - tax_t + MRA release_t - MRA contribution_t
        equity_t        = CFADS_t - service_t - prepaid_t - DSRA movement_t
        equity_0        = CFADS_0 - (uses of funds - debt)
        uses of funds   = capex + IDC + upfront fee + commitment fee + DSRA funded at close

    DSCR follows the lender's definition: CFADS after maintenance-reserve transfers (a
    replacement is paid from the reserve built for it) and before DSRA movements, over the
    scheduled service; ``dscr_before_reserves`` uses CFADS before any reserve transfer. The
    debt is sized on CFADS after maintenance-reserve transfers. Construction: the debt sized
    here is the loan at COD; interest during construction and fees are uses of funds at
    year 0 (contributions during construction are counted at COD, without time value), and
    neither is depreciated for tax (conservative).

    Interest is deductible, so tax depends on the loan and, with sizing or sculpting, the loan
    depends on CFADS. The two are made consistent by fixed-point iteration: interest = 0 ->
    tax -> CFADS -> size (or shape) the loan -> schedule -> interest -> ... until the debt and
    the debt service change by less than ``tolerance`` relative to max(debt, 1). After
    convergence tax and CFADS are recomputed once with the final interest. The post-tax
    project IRR uses unlevered tax (no interest deduction), so it does not depend on the
    financing.

    References
    ----------
    .. [1] Short, W., Packey, D. J. and Holt, T. (1995). NREL/TP-462-5173 (cash-flow
       conventions, after-tax analysis).
    .. [2] Cover ratios (DSCR, LLCR), debt sculpting and multi-constraint sizing: common
       practice of project-finance lending.
    """
    src = "project_finance"
    rev = as_flows(revenue, "revenue")
    n_years = rev.shape[1] - 1
    cost = as_flows(opex, "opex", n_years=n_years)
    n_s = max(rev.shape[0], cost.shape[0], np.size(capex))
    rev = np.broadcast_to(rev, (n_s, n_years + 1))
    cost = np.broadcast_to(cost, (n_s, n_years + 1))
    capex_arr = per_sample(capex, n_s, "capex")
    if np.any(~(capex_arr >= 0)):
        raise field_error(src, "capex", float(capex_arr.min()), "a number >= 0")
    check_rate(discount_rate, "discount_rate", src)
    if (debt_amount is None) == (dscr_constraints is None):
        raise InputError(f"{src}: give exactly one of debt_amount and dscr_constraints")
    if not 0.0 <= float(max_gearing) <= 1.0:
        raise field_error(src, "max_gearing", max_gearing, "a number in [0, 1]")
    if not (isinstance(max_iterations, int) and max_iterations >= 2):
        raise field_error(src, "max_iterations", max_iterations, "an integer >= 2")

    cases = {BASE_CASE: rev}
    for name, values in (sizing_revenue or {}).items():
        if name == BASE_CASE:
            raise field_error(src, "sizing_revenue", name, f"case names other than '{BASE_CASE}'")
        cases[name] = np.broadcast_to(
            as_flows(values, f"sizing_revenue[{name!r}]", n_years=n_years), (n_s, n_years + 1)
        )
    fixed_debt = None
    if debt_amount is not None:
        fixed_debt = per_sample(debt_amount, n_s, "debt_amount")
        if np.any(~(fixed_debt >= 0)):
            raise field_error(src, "debt_amount", float(fixed_debt.min()), "a number >= 0")
        if np.any(fixed_debt > float(max_gearing) * capex_arr * (1 + 1e-12)):
            raise field_error(
                src,
                "debt_amount",
                float(fixed_debt.max()),
                f"at most max_gearing * capex ({float(max_gearing):g} * capex)",
            )
        sizing_cases = [BASE_CASE]
    else:
        sizing_cases = list(dict.fromkeys(name for name, _ in dscr_constraints))
        for name in sizing_cases:
            if name not in cases:
                raise unknown_key_error(src, f"dscr_constraints.{name}", list(cases))

    itc_frac = per_sample(itc_fraction, n_s, "itc_fraction")
    eligible = per_sample(itc_eligible_fraction, n_s, "itc_eligible_fraction")
    credits = investment_tax_credit(capex_arr * eligible, itc_frac, n_years)
    basis = basis_after_itc(capex_arr, itc_frac, eligible, itc_basis_reduction_fraction)
    depreciation = depreciation_schedule(
        depreciation_method, basis, n_years, years=depreciation_years, rate=depreciation_rate
    )
    rate = per_sample(interest_rate, n_s, "interest_rate")
    mra = None
    adjust = np.zeros((n_s, n_years + 1))
    if renewals is not None and int(mra_years_ahead) > 0:
        mra = maintenance_reserve(
            np.broadcast_to(as_flows(renewals, "renewals", n_years=n_years), (n_s, n_years + 1)),
            int(mra_years_ahead),
        )
        adjust = mra.cfads_adjustment
    sweep = float(sweep_share) > 0

    interest = np.zeros((n_s, n_years + 1))
    prev_debt = prev_service = None
    sizing = None
    change = np.inf
    iterations = 0
    # sequential by nature: each pass needs the interest of the previous one
    while change > tolerance:
        if iterations == max_iterations:
            raise RuntimeError(
                f"{src}: debt and tax did not converge in {max_iterations} iterations "
                f"(last relative change {change:.3g}, tolerance {tolerance:g})"
            )
        iterations += 1
        cfads = {
            name: _operating(cases[name], cost, depreciation, interest, tax_rate,
                             credits).cfads + adjust
            for name in dict.fromkeys(sizing_cases + [BASE_CASE])
        }
        if fixed_debt is None:
            sizing = size_debt(
                {k: cfads[k] for k in sizing_cases}, dscr_constraints, rate, tenor_years,
                repayment, capex_arr, max_gearing
            )
            new_debt, profile = sizing.debt, sizing.service
        else:
            new_debt = fixed_debt
            if repayment != "sculpted":
                profile = None
            elif service_profile is not None:
                profile = np.broadcast_to(as_flows(service_profile, "service_profile",
                                                   n_years=n_years), (n_s, n_years + 1))
            else:
                profile = np.maximum(cfads[BASE_CASE], 0.0)
        schedule = debt_schedule(
            new_debt,
            rate,
            tenor_years,
            n_years,
            repayment,
            service_profile=profile,
            upfront_fee_fraction=upfront_fee_fraction,
            sweep_cfads=cfads[BASE_CASE] if sweep else None,
            sweep_share=sweep_share,
            sweep_above_dscr=sweep_above_dscr,
        )
        if prev_debt is not None:
            scale = np.maximum(np.abs(new_debt), 1.0)
            change = max(
                float(np.max(np.abs(new_debt - prev_debt) / scale)),
                float(np.max(np.abs(schedule.service - prev_service).max(axis=1) / scale)),
            )
        prev_debt, prev_service = new_debt, schedule.service
        # Plain substitution converges in a few passes in most cases; when tax losses and
        # sculpting make it oscillate, under-relaxing the interest (same fixed point) damps it.
        interest = schedule.interest if iterations <= 10 else \
            0.5 * (interest + schedule.interest)

    op = _operating(rev, cost, depreciation, schedule.interest, tax_rate, credits)
    unlevered = _operating(rev, cost, depreciation, np.zeros_like(interest), tax_rate, credits)
    service = schedule.service
    cfads_lender = op.cfads + adjust
    prepaid = schedule.prepaid if schedule.prepaid is not None else np.zeros_like(service)
    cash = cfads_lender - service - prepaid
    dsra = service_reserve(service, cash, dsra_months, dsra_at_close) \
        if float(dsra_months) > 0 else None
    build = construction_financing(capex_arr, schedule.debt, rate, construction_shares,
                                   construction_period, idc_capitalised,
                                   commitment_fee_fraction, upfront_fee_fraction)
    funds = sources_and_uses(capex_arr, schedule.debt, build,
                             dsra.initial if dsra is not None else 0.0)
    equity = cash - (dsra.movement if dsra is not None else 0.0)
    equity[:, 0] = cfads_lender[:, 0] - funds["sources"]["equity"]
    pre_tax = op.ebitda.copy()
    pre_tax[:, 0] -= capex_arr
    post_tax = unlevered.cfads.copy()
    post_tax[:, 0] -= capex_arr
    ratios = dscr(cfads_lender, service)
    min_dscr, avg_dscr = _dscr_summary(ratios)
    llcr_t, plcr_t = cover_ratios_by_year(cfads_lender, schedule.opening, rate, tenor_years)

    return FinanceResult(
        revenue=np.array(rev),
        opex=np.array(cost),
        ebitda=op.ebitda,
        depreciation=depreciation,
        interest=schedule.interest,
        taxable_income=op.taxable_income,
        tax=op.tax,
        loss_balance=op.loss_balance,
        credit_balance=op.credit_balance,
        cfads=cfads_lender,
        debt_service=service,
        principal=schedule.principal,
        debt_balance=schedule.closing,
        equity_flow=equity,
        project_flow_pre_tax=pre_tax,
        project_flow_post_tax=post_tax,
        dscr=ratios,
        debt=schedule.debt,
        upfront_fee=schedule.upfront_fee,
        min_dscr=min_dscr,
        avg_dscr=avg_dscr,
        llcr=llcr(cfads_lender, schedule.debt, rate, tenor_years),
        npv_equity=np.broadcast_to(npv(discount_rate, equity), (n_s,)).copy(),
        npv_project_post_tax=np.broadcast_to(npv(discount_rate, post_tax), (n_s,)).copy(),
        payback_year=_first_payback_year(equity),
        iterations=iterations,
        sizing=sizing,
        schedule=schedule,
        cfads_before_reserves=op.cfads,
        dscr_before_reserves=dscr(op.cfads, service),
        prepaid=prepaid,
        llcr_by_year=llcr_t,
        plcr_by_year=plcr_t,
        mra=mra,
        dsra=dsra,
        construction=build,
        sources_uses=funds,
    )
