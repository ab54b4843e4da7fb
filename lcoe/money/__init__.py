"""Money: time value (:mod:`~lcoe.money.finance`: NPV, CRF, IRR), the lifetime cash flow and
LCOE (:mod:`~lcoe.money.cashflow`), moving-part reliability and its costs
(:mod:`~lcoe.money.reliability`), and the project-finance layer: tax, debt, reserves,
construction, project-finance metrics.

All functions are pure and work on yearly arrays of shape ``(n_samples, n_years + 1)``
with column 0 = year 0 = financial close.

May import: :mod:`lcoe.site`, :mod:`lcoe.case`. Never :mod:`lcoe.plant`.
"""
