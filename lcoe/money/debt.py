"""Senior debt: sizing on cover ratios, repayment schedule, DSCR and LLCR.

Shapes: yearly arrays are ``(n_samples, n_years + 1)`` with column 0 = year 0 = financial
close, when the loan is drawn in full; debt service runs over years 1..tenor_years. A 1-D yearly
input is one sample and results keep the samples axis (``n_samples = 1``). Per-sample values
(debt, rates, targets) are scalars or ``(n_samples,)``. Amounts in currency, rates as fractions
per year, cover ratios as plain multiples (1.30 for "1.30x").

CFADS (cash flow available for debt service) = revenue - opex - tax; see
:mod:`lcoe.money.metrics`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from lcoe.case.errors import InputError, did_you_mean, field_error
from lcoe.money.finance import as_flows, crf, per_sample
from lcoe.money.repayment import _check_repayment, _loan_terms, _tenor_discount


def _targets(source: str, dscr_target, n_samples: int) -> np.ndarray:
    target = np.asarray(dscr_target, dtype=float)
    if np.any(~(target > 0)):
        raise field_error(source, "dscr_target", float(np.min(target)), "a number > 0")
    return per_sample(target, n_samples, "dscr_target")


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
