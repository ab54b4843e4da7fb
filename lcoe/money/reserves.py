"""Reserve accounts of a project loan: maintenance reserve (MRA) and debt service reserve (DSRA).

Shapes: yearly arrays ``(n_samples, n_years + 1)``, column 0 = year 0 = commercial operation
(the loan is in place); amounts in currency. Reserves earn no interest here (a conservative
simplification).

Waterfall order assumed each operating year t: CFADS (after maintenance-reserve transfers) ->
senior debt service -> cash sweep -> DSRA top-up (or release) -> distributions to equity. A
shortfall of cash after debt service is drawn from the DSRA first.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lcoe.case.errors import field_error
from lcoe.money.finance import as_flows

__all__ = ["MaintenanceReserve", "ServiceReserve", "maintenance_reserve", "service_reserve"]


@dataclass(frozen=True)
class MaintenanceReserve:
    """Result of :func:`maintenance_reserve`; yearly arrays (n_samples, n_years + 1).

    Attributes
    ----------
    contribution : numpy.ndarray
        Cash put into the reserve each year [currency/year], >= 0.
    release : numpy.ndarray
        Cash taken out to pay the renewal of that year [currency/year], >= 0.
    balance : numpy.ndarray
        Balance at the end of each year [currency].
    """

    contribution: np.ndarray
    release: np.ndarray
    balance: np.ndarray

    @property
    def cfads_adjustment(self) -> np.ndarray:
        """``release - contribution``: add it to CFADS to get CFADS after MRA transfers."""
        return self.release - self.contribution


def maintenance_reserve(renewals, years_ahead: int) -> MaintenanceReserve:
    """Maintenance reserve that accrues each renewal evenly over the years before it.

    Parameters
    ----------
    renewals : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Cost of scheduled replacements and moving-part renewals in each year [currency/year],
        >= 0 (these stay in opex; the reserve only moves cash between years).
    years_ahead : int
        Years over which each renewal is accrued before it falls due [year], >= 0 (0: no
        reserve).

    Returns
    -------
    MaintenanceReserve

    Notes
    -----
    A renewal ``R_T`` in year T is accrued in equal parts over years
    ``max(1, T - years_ahead) .. T - 1`` (``m_T = min(years_ahead, T - 1)`` parts of
    ``R_T / m_T``) and released in year T to pay it; with ``m_T = 0`` (a year-1 renewal) it is
    paid from that year's cash. The balance is the sum of accruals not yet released, so a
    replacement year's CFADS after reserve transfers is not hit at once.

    References
    ----------
    .. [1] Maintenance reserve accounts funded ahead of known major maintenance: common
       practice of project-finance lending.
    """
    cost = as_flows(renewals, "renewals")
    if not (isinstance(years_ahead, (int, np.integer)) and years_ahead >= 0):
        raise field_error("maintenance_reserve", "years_ahead", years_ahead, "an integer >= 0")
    if np.any(cost < 0):
        raise field_error("maintenance_reserve", "renewals", float(cost.min()), "costs >= 0")
    n = cost.shape[1] - 1
    contribution = np.zeros_like(cost)
    release = np.zeros_like(cost)
    if years_ahead > 0:
        # loop over renewal years (at most the project life); vectorised over samples
        for big_t in range(2, n + 1):
            m = min(years_ahead, big_t - 1)
            due = cost[:, big_t]
            contribution[:, big_t - m : big_t] += (due / m)[:, None]
            release[:, big_t] = due
    balance = np.cumsum(contribution - release, axis=1)
    return MaintenanceReserve(contribution, release, balance)


@dataclass(frozen=True)
class ServiceReserve:
    """Result of :func:`service_reserve`; yearly arrays (n_samples, n_years + 1).

    Attributes
    ----------
    target : numpy.ndarray
        Required balance at the end of each year = months / 12 x next year's debt service.
    balance : numpy.ndarray
        Balance at the end of each year [currency]; column 0 is the funding at close.
    draw : numpy.ndarray
        Cash drawn to cover a shortfall of cash after debt service [currency/year], >= 0.
    movement : numpy.ndarray
        ``balance_t - balance_{t-1}`` (year 0: the funding at close): cash put into the
        reserve (> 0) or released from it (< 0) [currency/year].
    initial : numpy.ndarray, shape (n_samples,)
        Funding at close [currency] (0 when built from cash flow).
    """

    target: np.ndarray
    balance: np.ndarray
    draw: np.ndarray
    movement: np.ndarray
    initial: np.ndarray


def service_reserve(service, cash_after_service, months: float,
                    funded_at_close: bool = True) -> ServiceReserve:
    """Debt service reserve sized on months of the next year's debt service.

    Parameters
    ----------
    service : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Scheduled debt service [currency/year], 0 outside the tenor.
    cash_after_service : array_like, same shape
        Cash left in each year after debt service (and any cash sweep) [currency/year]; may
        be negative.
    months : float
        Months of next year's debt service to hold [month], >= 0 (6 is common practice).
    funded_at_close : bool
        True: the first target is paid in at close (year 0, a use of funds); False: the
        reserve is built from cash flow from year 1.

    Returns
    -------
    ServiceReserve

    Notes
    -----
    ``target_t = months / 12 x service_{t+1}`` (0 from the last tenor year on, so the balance
    is released at maturity). Sequential in t, vectorised over samples::

        draw_t    = min(max(-cash_t, 0), balance_{t-1})
        after_t   = balance_{t-1} - draw_t
        balance_t = after_t + min(target_t - after_t, max(cash_t, 0))  if after_t < target_t
                  = target_t                                            otherwise (release)

    References
    ----------
    .. [1] Debt service reserve of about six months of debt service, funded at close and
       released at maturity: common practice of project-finance lending.
    """
    ds = as_flows(service, "service")
    cash = as_flows(cash_after_service, "cash_after_service", n_years=ds.shape[1] - 1)
    ds, cash = np.broadcast_arrays(ds, cash)
    if not float(months) >= 0:
        raise field_error("service_reserve", "months", months, "a number >= 0")
    n = ds.shape[1] - 1
    target = np.zeros(ds.shape)
    target[:, :n] = float(months) / 12.0 * ds[:, 1:]
    balance = np.zeros(ds.shape)
    draw = np.zeros(ds.shape)
    balance[:, 0] = target[:, 0] if funded_at_close else 0.0
    # sequential: each year's balance starts from the previous one
    for t in range(1, n + 1):
        prev = balance[:, t - 1]
        draw[:, t] = np.minimum(np.maximum(-cash[:, t], 0.0), prev)
        after = prev - draw[:, t]
        top_up = np.minimum(target[:, t] - after, np.maximum(cash[:, t], 0.0))
        balance[:, t] = np.where(after < target[:, t], after + top_up, target[:, t])
    movement = np.diff(balance, axis=1, prepend=0.0)
    return ServiceReserve(target, balance, draw, movement, balance[:, 0].copy())
