"""The lender's case from a case file: yearly revenue and operating cost from the case and
its cash flow, the energy factors of the sizing cases (``P90_1yr``, ``P99_1yr``, ...; the
normal method of DOMAIN.md section 4) and the deterministic finance with the loan sized
once on them (:func:`sized_finance`), which :mod:`lcoe.study.bankability` and the value
of information reuse.
"""

from __future__ import annotations

import numpy as np

from lcoe.case.reader import Case
from lcoe.model import ModelOutput
from lcoe.money.metrics import BASE_CASE, FinanceResult, project_finance
from lcoe.study.spec import UncertainSpec
from lcoe.uncertainty.stats import Z90, Z99

#: DSCR below which a year counts as a payment default (common practice).
DEFAULT_DSCR = 1.00
#: Financing features switched off for the unlevered after-tax LCOE.
UNLEVERED = {"mra_years_ahead": 0, "dsra_months": 0.0, "construction_shares": (),
             "sweep_share": 0.0}


def sizing_factors(spec: UncertainSpec) -> tuple[dict, float, float]:
    """Energy multipliers of the sizing cases, and sigma for one and ten years [-].

    Returns
    -------
    factors : dict of str to float
        ``{"P50": 1, "P90_1yr": 1 - 1.28155 s1, ...}``.
    sigma_1yr, sigma_10yr : float
    """
    persistent = float(np.sqrt(sum(v ** 2 for v in spec.energy_components.values())))
    iav = spec.interannual_cov
    s1 = float(np.sqrt(persistent ** 2 + iav ** 2))
    s10 = float(np.sqrt(persistent ** 2 + iav ** 2 / 10))
    return ({"P50": 1.0, "P90_1yr": 1 - Z90 * s1, "P99_1yr": 1 - Z99 * s1,
             "P90_10yr": 1 - Z90 * s10, "P99_10yr": 1 - Z99 * s10}, s1, s10)


def price_by_year(case: Case, n_years: int) -> np.ndarray:
    """Price of energy sold in each year [currency/kWh], shape (n_years + 1,), 0 in year 0.

    Contract price ``tariff (1 + e)^(t-1)`` for t = 1..contract_years, then the merchant price
    ``merchant (1 + e_m)^(t-1)``.
    """
    t = np.arange(n_years + 1, dtype=float)
    contract = case["revenue.contract_years"] or n_years
    tariff = case["revenue.tariff_per_kwh"] * (1 + case["revenue.tariff_escalation"]) ** (t - 1)
    merchant = case["revenue.merchant_price_per_kwh"] * \
        (1 + case["revenue.merchant_escalation"]) ** (t - 1)
    price = np.where(t <= contract, tariff, merchant)
    price[0] = 0.0
    return price


def finance_inputs(case: Case, out: ModelOutput) -> dict:
    """Revenue, opex and capex arrays of every sample of a model output.

    Returns
    -------
    dict
        ``energy_sold_kwh``, ``revenue``, ``opex``, ``renewals`` (n_s, N + 1) [kWh, currency]
        and ``capex`` (n_s,) [currency]. Opex = every cost line but capex (O&M, insurance,
        lease, replacements, decommissioning less salvage); renewals = scheduled replacements
        and moving-part renewals (part of opex, accrued by a maintenance reserve).
    """
    c = out.cashflow
    n = c.energy_kwh.shape[1] - 1
    sold = c.energy_kwh * (1.0 - case["revenue.curtailment_fraction"])
    capex_line = c.lines["capex"]
    renewals = c.lines["replacements"] + c.lines.get("moving_parts", 0.0)
    return {"energy_sold_kwh": sold, "revenue": sold * price_by_year(case, n),
            "opex": c.total_cost - capex_line, "capex": capex_line[:, 0],
            "renewals": np.maximum(renewals, 0.0)}


def _tax_debt_kwargs(case: Case) -> dict:
    return dict(tax_rate=case["tax.rate"], depreciation_method=case["tax.depreciation"],
                depreciation_years=(case["tax.depreciation_years"]
                                    if case["tax.depreciation"] != "accelerated_5yr" else None),
                depreciation_rate=(case["tax.depreciation_rate"]
                                   if case["tax.depreciation"] == "declining_balance" else None),
                itc_fraction=case["tax.itc_fraction"],
                interest_rate=case["debt.interest_rate"], tenor_years=case["debt.tenor_years"],
                repayment=case["debt.repayment"],
                upfront_fee_fraction=case["debt.upfront_fee_fraction"],
                mra_years_ahead=case["debt.mra_years_ahead"],
                dsra_months=case["debt.dsra_months"],
                dsra_at_close=case["debt.dsra_funding"] == "close",
                construction_shares=case.drawdown, construction_period=case["construction.period"],
                idc_capitalised=case["construction.idc"] == "capitalised",
                commitment_fee_fraction=case["construction.commitment_fee_fraction"],
                sweep_share=case["debt.sweep_share"],
                sweep_above_dscr=case["debt.sweep_above_dscr"])


def sized_finance(case: Case, base: ModelOutput, factors: dict) -> FinanceResult:
    """The deterministic finance with debt sized on the case's constraints.

    Parameters
    ----------
    case : Case
        With ``[revenue]`` and ``[debt]`` tables.
    base : ModelOutput
        The deterministic run (one sample).
    factors : dict
        Energy multipliers of the sizing cases (:func:`sizing_factors`).

    Returns
    -------
    FinanceResult
        One sample; ``debt`` is the sized loan [currency].
    """
    fi = finance_inputs(case, base)
    constraints = [(BASE_CASE if c == "P50" else c, m) for c, m in case.debt_sizing]
    sizing_rev = {c: fi["revenue"] * factors[c] for c, _ in case.debt_sizing if c != "P50"}
    return project_finance(revenue=fi["revenue"], opex=fi["opex"], capex=fi["capex"],
                           renewals=fi["renewals"],
                           dscr_constraints=constraints, sizing_revenue=sizing_rev or None,
                           max_gearing=case["debt.max_gearing"],
                           discount_rate=case["finance.discount_rate"], **_tax_debt_kwargs(case))
