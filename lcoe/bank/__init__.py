"""Project-finance layer for lenders and equity: tax, debt and returns.

* :mod:`lcoe.bank.tax` - depreciation, tax with loss carry-forward, investment tax credit.
* :mod:`lcoe.bank.debt` - debt sizing on DSCR constraints and a gearing cap, loan schedule,
  DSCR and LLCR.
* :mod:`lcoe.bank.metrics` - the whole project-finance cash flow (:func:`project_finance`) and
  the break-even tariff.

All functions are pure and work on yearly arrays of shape ``(n_samples, n_years + 1)`` with
column 0 = year 0 = financial close.
"""

from lcoe.bank.debt import (
    DebtSchedule,
    DebtSizing,
    debt_schedule,
    dscr,
    llcr,
    size_annuity,
    size_debt,
    size_sculpted,
)
from lcoe.bank.metrics import FinanceResult, breakeven_tariff, project_finance
from lcoe.bank.tax import (
    MACRS_5YR_HALF_YEAR,
    apply_tax_credits,
    basis_after_itc,
    depreciation_schedule,
    investment_tax_credit,
    tax_with_loss_carryforward,
)

__all__ = [
    "MACRS_5YR_HALF_YEAR",
    "DebtSchedule",
    "DebtSizing",
    "FinanceResult",
    "apply_tax_credits",
    "basis_after_itc",
    "breakeven_tariff",
    "debt_schedule",
    "depreciation_schedule",
    "dscr",
    "investment_tax_credit",
    "llcr",
    "project_finance",
    "size_annuity",
    "size_debt",
    "size_sculpted",
    "tax_with_loss_carryforward",
]
