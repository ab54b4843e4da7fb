"""Lifetime cost cash flow and the levelised cost of energy, vectorised over samples.

Arrays have shape (n_samples, n_years + 1); column 0 is year 0 (financial close, capex paid),
columns 1..N are operating years. Money is nominal (year-t currency) unless named ``_real``.

LCOE (Short, Packey & Holt 1995)::

    LCOE = sum_t (capex_t + O&M_t + replacements_t + decommissioning_t - salvage_t) / (1+r)^t
           / sum_t E_t / (1+r)^t

The numerator is the same in real and nominal terms (real flows at the real rate equal nominal
flows at the nominal rate); the real LCOE discounts energy at the real rate
``(1 + nominal) / (1 + inflation) - 1`` (Fisher), the nominal LCOE at the nominal rate.

References
----------
.. [1] W. Short, D. J. Packey and T. Holt, "A Manual for the Economic Evaluation of Energy
   Efficiency and Renewable Energy Technologies", NREL/TP-462-5173, 1995.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from lcoe.case.threads import sample_product
from lcoe.money.finance import discount_factors, real_rate

LCOE_FORMULA = (
    "LCOE = sum_t (capex_t + O&M_t + replacements_t + decommissioning_t - salvage_t)/(1+r)^t "
    "/ sum_t E_t/(1+r)^t   (Short, Packey & Holt 1995, NREL/TP-462-5173); "
    "real: r = (1+nominal)/(1+inflation)-1 on energy, nominal: r = nominal"
)

#: Cost lines of the cash flow, in the order they are shown.
COST_LINES = ("capex", "fixed_om", "variable_om", "insurance", "land_lease", "replacements",
              "decommissioning", "salvage")


@dataclass(frozen=True)
class CashFlow:
    """Annual cash flow of costs and energy.

    Attributes
    ----------
    years : numpy.ndarray
        0..N, shape (n_y + 1,).
    lines : dict of str to numpy.ndarray
        Nominal cost lines of :data:`COST_LINES` [currency], each (n_s, n_y + 1); salvage is
        stored as a negative cost.
    total_cost : numpy.ndarray
        Sum of the lines [currency], (n_s, n_y + 1).
    energy_kwh : numpy.ndarray
        Delivered energy by year [kWh], (n_s, n_y + 1), 0 in year 0.
    nominal_rate, real_rate, inflation : numpy.ndarray
        Rates [1/year], (n_s,).
    pv_costs : numpy.ndarray
        Present value of costs at the nominal rate [currency], (n_s,).
    pv_energy_real_kwh, pv_energy_nominal_kwh : numpy.ndarray
        Discounted energy at the real and the nominal rate [kWh], (n_s,).
    lcoe_real, lcoe_nominal : numpy.ndarray
        Levelised cost [currency/kWh], (n_s,).
    outage_loss_fraction : numpy.ndarray or None
        Share of each year's energy lost while moving parts are down [-], (n_s, n_y + 1);
        None when the case has no moving parts (``energy_kwh`` already includes the loss).
    """

    years: np.ndarray
    lines: dict
    total_cost: np.ndarray
    energy_kwh: np.ndarray
    nominal_rate: np.ndarray
    real_rate: np.ndarray
    inflation: np.ndarray
    pv_costs: np.ndarray
    pv_energy_real_kwh: np.ndarray
    pv_energy_nominal_kwh: np.ndarray
    lcoe_real: np.ndarray
    lcoe_nominal: np.ndarray
    outage_loss_fraction: np.ndarray | None = None


def energy_by_year(first_year_kwh, degradation_per_year, lifetime_years: int,
                   weather_factors=None) -> np.ndarray:
    """Delivered energy by year with linear degradation [kWh], shape (n_s, N + 1).

    ``E_t = E_1 * max(0, 1 - d (t - 1)) * w_t`` for t = 1..N, and 0 in year 0.

    Parameters
    ----------
    first_year_kwh : array_like
        Year-1 energy [kWh], (n_s,).
    degradation_per_year : array_like
        Linear degradation rate d [1/year], (n_s,) (Jordan & Kurtz 2013 report rates as linear
        %/year).
    lifetime_years : int
        N [years].
    weather_factors : numpy.ndarray, optional
        Multiplicative factor per operating year, (n_s, N) (year-to-year weather and other
        energy uncertainty); 1 when omitted.
    """
    e1 = np.atleast_1d(np.asarray(first_year_kwh, dtype=float))
    d = np.broadcast_to(np.asarray(degradation_per_year, dtype=float), e1.shape)
    t = np.arange(1, lifetime_years + 1)
    factor = np.maximum(0.0, 1.0 - d[:, None] * (t[None, :] - 1))
    out = np.zeros((e1.shape[0], lifetime_years + 1))
    out[:, 1:] = e1[:, None] * factor
    if weather_factors is not None:
        out[:, 1:] *= weather_factors
    return out


def build_cashflow(params: dict, replacements: Sequence, lifetime_years: int,
                   energy_kwh: np.ndarray, extra_cost_lines: dict | None = None) -> CashFlow:
    """Nominal cost lines, discounting and LCOE for every sample.

    Parameters
    ----------
    params : dict of str to array_like
        Case values by dotted path, scalars or (n_s,): ``plant.dc_capacity_kw`` [kW],
        ``costs.capex_per_kw`` [currency/kW], ``costs.fixed_om_per_kw_year``
        [currency/kW/year], ``costs.variable_om_per_kwh`` [currency/kWh],
        ``costs.decommissioning_per_kw``, ``costs.salvage_per_kw`` [currency/kW],
        ``costs.insurance_fraction_per_year`` [1/year, of capex], ``costs.land_lease_per_year``
        [currency/year],
        ``finance.discount_rate`` (nominal), ``finance.inflation`` [1/year]; and for each
        replacement i, optionally ``costs.replacement[i].cost_per_kw``.
    replacements : sequence of Replacement
        Scheduled replacements; one happens at every multiple of ``every_years`` below N.
    lifetime_years : int
        N [years].
    energy_kwh : numpy.ndarray
        Delivered energy by year [kWh], (n_s, N + 1) (see :func:`energy_by_year`).
    extra_cost_lines : dict of str to numpy.ndarray, optional
        Further nominal cost lines (n_s, N + 1) [currency], e.g. moving-part failures.

    Returns
    -------
    CashFlow
    """
    n_s = energy_kwh.shape[0]
    n = lifetime_years

    def p(key):
        return np.broadcast_to(np.asarray(params[key], dtype=float), (n_s,))

    t = np.arange(n + 1)
    infl = p("finance.inflation")
    esc = (1.0 + infl[:, None]) ** t[None, :]  # year-0 money -> year-t money
    kw = p("plant.dc_capacity_kw")
    capex = p("costs.capex_per_kw") * kw
    operating, last = (t >= 1).astype(float), (t == n).astype(float)
    # Each line = (its year-0 amount per sample) x (its years) x escalation: the amounts
    # (n_s, k) times the schedule of years (k, N + 1) is one matrix product over the lines.
    amounts = {"capex": (capex, t == 0), "fixed_om": (p("costs.fixed_om_per_kw_year") * kw,
                                                      operating),
               "insurance": (p("costs.insurance_fraction_per_year") * capex, operating),
               "land_lease": (p("costs.land_lease_per_year"), operating),
               "decommissioning": (p("costs.decommissioning_per_kw") * kw, last),
               "salvage": (-p("costs.salvage_per_kw") * kw, last)}
    reps = []
    for i, r in enumerate(replacements):
        key = f"costs.replacement[{i}].cost_per_kw"
        cost = p(key) if key in params else np.full(n_s, r.cost_per_kw)
        reps.append((cost * kw, ((t % r.every_years == 0) & (t > 0) & (t < n)).astype(float)))
    names = list(amounts)
    coef = np.stack([amounts[k][0] for k in names] + [c for c, _ in reps], axis=1)
    years = np.stack([np.asarray(amounts[k][1], dtype=float) for k in names] +
                     [w for _, w in reps])
    lines = {k: coef[:, j, None] * years[j] * esc for j, k in enumerate(names)}
    lines["replacements"] = sample_product(coef[:, len(names):], years[len(names):]) * esc
    lines["variable_om"] = p("costs.variable_om_per_kwh")[:, None] * energy_kwh * esc
    for name, line in (extra_cost_lines or {}).items():
        lines[name] = np.broadcast_to(line, (n_s, n + 1)).astype(float)
    lines = {k: lines[k] for k in COST_LINES + tuple(extra_cost_lines or ())}
    total = sample_product(coef, years) * esc + lines["variable_om"]
    for name in extra_cost_lines or ():
        total = total + lines[name]
    r_nom = p("finance.discount_rate")
    r_real = real_rate(r_nom, infl)
    df_nom = discount_factors(r_nom, n)
    df_real = discount_factors(r_real, n)
    pv_costs = np.einsum("sy,sy->s", total, df_nom)
    pv_e_real = np.einsum("sy,sy->s", energy_kwh, df_real)
    pv_e_nom = np.einsum("sy,sy->s", energy_kwh, df_nom)
    with np.errstate(divide="ignore", invalid="ignore"):
        lcoe_real = pv_costs / pv_e_real
        lcoe_nom = pv_costs / pv_e_nom
    return CashFlow(years=np.arange(n + 1), lines=lines, total_cost=total,
                    energy_kwh=energy_kwh, nominal_rate=r_nom, real_rate=r_real,
                    inflation=np.array(infl), pv_costs=pv_costs, pv_energy_real_kwh=pv_e_real,
                    pv_energy_nominal_kwh=pv_e_nom, lcoe_real=lcoe_real, lcoe_nominal=lcoe_nom)
