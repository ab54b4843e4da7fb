"""The break-even tariff: the flat real tariff, escalating with inflation, at which the
equity earns its target IRR; found by bisection over
:func:`lcoe.money.metrics.project_finance`, vectorised over samples.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from lcoe.case.errors import InputError
from lcoe.money.finance import as_flows, check_rate
from lcoe.money.metrics import project_finance


def breakeven_tariff(
    *,
    energy_kwh,
    inflation,
    target_equity_irr,
    sizing_energy_kwh: Mapping[str, np.ndarray] | None = None,
    tariff_high: float = 1.0,
    xtol: float = 1e-12,
    price_index=None,
    fixed_price=None,
    **finance_kwargs,
) -> np.ndarray:
    """Flat real tariff, escalating with inflation, that gives a target equity IRR.

    Parameters
    ----------
    energy_kwh : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Energy sold each year [kWh], column 0 = year 0 (normally 0).
    inflation : float or array_like, shape (n_samples,)
        Yearly tariff escalation [1/year], > -1.
    target_equity_irr : float or array_like, shape (n_samples,)
        Target equity IRR [1/year], > -1 (nominal if the other inputs are nominal).
    sizing_energy_kwh : mapping of str to array_like, optional
        Energy of the sizing cases [kWh/year]; their revenue uses the same tariff.
    tariff_high : float
        Initial upper bracket [currency/kWh]; doubled (up to 40 times) until the equity NPV at
        the target rate is positive.
    xtol : float
        Bracket width at which the search stops, relative to the upper bracket [-].
    price_index : array_like, shape (n_years + 1,), optional
        Price of each year per unit of the tariff [-], instead of ``(1 + inflation)**t``;
        e.g. a contract's own escalation ``(1 + e)**(t - 1)`` while the contract runs and 0
        after it.
    fixed_price : array_like, shape (n_years + 1,), optional
        A price that does not move with the tariff [currency/kWh] (e.g. the merchant price
        after the contract), added to it.
    **finance_kwargs
        Every other keyword of :func:`project_finance` except ``revenue``,
        ``sizing_revenue`` and ``discount_rate``.

    Returns
    -------
    numpy.ndarray, shape (n_samples,)
        Tariff in year-0 money [currency/kWh]: revenue_t = tariff * (1 + inflation)**t *
        E_t. NaN where the equity NPV at the target rate is already >= 0 at tariff 0 or
        never turns positive.

    Notes
    -----
    The root of ``NPV_equity(target rate; tariff) = 0`` is found by bisection, vectorised over
    samples (each sample's root is independent; the equity NPV rises with the tariff). Where
    the equity flow has a unique IRR this root is the tariff at which IRR = target; the NPV is
    used instead of the IRR because it is defined for every tariff.
    """
    for key in ("revenue", "sizing_revenue", "discount_rate"):
        if key in finance_kwargs:
            raise InputError(f"breakeven_tariff: {key} is set by the tariff search; remove it")
    energy = as_flows(energy_kwh, "energy_kwh")
    n_years = energy.shape[1] - 1
    target = check_rate(target_equity_irr, "target_equity_irr", "breakeven_tariff")
    infl = check_rate(inflation, "inflation", "breakeven_tariff")
    if price_index is None:
        growth = np.exp(np.arange(n_years + 1) * np.log1p(infl)[..., None])
    else:
        growth = np.asarray(price_index, dtype=float)[None, :]
    fixed = 0.0 if fixed_price is None else np.asarray(fixed_price, dtype=float)[None, :]
    others = {
        name: as_flows(e, f"sizing_energy_kwh[{name!r}]", n_years=n_years)
        for name, e in (sizing_energy_kwh or {}).items()
    }
    n_s = max(
        [energy.shape[0], np.size(target), np.size(infl)] + [e.shape[0] for e in others.values()]
    )

    def equity_npv(tariff: np.ndarray) -> np.ndarray:
        price = tariff[:, None] * growth + fixed
        result = project_finance(
            revenue=price * energy,
            sizing_revenue={name: price * e for name, e in others.items()} or None,
            discount_rate=target,
            **finance_kwargs,
        )
        return result.npv_equity

    lo = np.zeros(n_s)
    hi = np.full(n_s, float(tariff_high))
    f_lo = equity_npv(lo)
    f_hi = equity_npv(hi)
    # expanding the bracket is sequential; each step is vectorised over samples
    for _ in range(40):
        short = f_hi <= 0
        if not np.any(short):
            break
        hi = np.where(short, 2.0 * hi, hi)
        f_hi = np.where(short, equity_npv(hi), f_hi)
    valid = (f_lo < 0) & (f_hi > 0)
    # bisection is sequential; each step is vectorised over samples
    for _ in range(200):
        if np.all((hi - lo) <= xtol * hi):
            break
        mid = 0.5 * (lo + hi)
        f_mid = equity_npv(mid)
        below = f_mid < 0
        lo = np.where(below, mid, lo)
        hi = np.where(below, hi, mid)
    return np.where(valid, 0.5 * (lo + hi), np.nan)
