"""The lender's value of information: what a measurement campaign on the resource is worth.

Lenders size debt on downside energy cases (P90/P99) whose distance from P50 grows with the
energy sigma (:func:`lcoe.bankability.sizing_factors`). An on-site measurement campaign
narrows the long-term resource uncertainty ``resource_sd``; the debt the project can carry,
and so the value to its equity, change with it. This module re-sizes the debt with the
project's own sizing (:func:`lcoe.bankability.sized_finance`, the one
:func:`lcoe.bankability.run_bankability` uses) for ``resource_sd`` from its
value down to a target, and reports the debt capacity and equity value gained in total and
per 0.01 of sigma. Orchestration only: it computes nothing but differences.

Equity value is the NPV of the cash flow to equity at the equity's target IRR (its required
return), so a larger loan at a lower interest rate shows as a gain; the NPV at the case's
discount rate is reported beside it.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from .bank.metrics import BASE_CASE
from .bankability import sized_finance, sizing_factors
from .case import Case
from .errors import InputError
from .finance import npv
from .model import ModelOutput
from .uncertainty.spec import UncertainSpec

#: Default target: a campaign that halves the resource sigma.
DEFAULT_FRACTION = 0.5
#: Points of the sigma grid between the current value and the target (inclusive).
DEFAULT_POINTS = 6


@dataclass(frozen=True)
class ResourceInfoBlock:
    """Debt and equity value against ``resource_sd``.

    Attributes
    ----------
    sigma : numpy.ndarray
        (m,) resource sigmas, from the case's value down to the target [-].
    debt : numpy.ndarray
        (m,) debt sized on the case's constraints [currency].
    equity_value : numpy.ndarray
        (m,) NPV of the equity flow at the equity's target IRR [currency].
    equity_npv_discount : numpy.ndarray
        (m,) NPV of the equity flow at ``finance.discount_rate`` [currency].
    binding : list of str
        Binding sizing constraint at each sigma.
    sigma_1yr : numpy.ndarray
        (m,) total one-year energy sigma used for sizing [-].
    target_irr : float
    currency : str
    notes : list of str
    """

    sigma: np.ndarray
    debt: np.ndarray
    equity_value: np.ndarray
    equity_npv_discount: np.ndarray
    binding: list
    sigma_1yr: np.ndarray
    target_irr: float
    currency: str
    notes: list = field(default_factory=list)

    @property
    def reduction(self) -> float:
        """Reduction of sigma from the case's value to the target [-]."""
        return float(self.sigma[0] - self.sigma[-1])

    def gains(self) -> dict:
        """Debt and equity value gained at the target, in total and per 0.01 of sigma."""
        steps = self.reduction / 0.01 if self.reduction > 0 else np.nan
        d, e, w = (float(self.debt[-1] - self.debt[0]),
                   float(self.equity_value[-1] - self.equity_value[0]),
                   float(self.equity_npv_discount[-1] - self.equity_npv_discount[0]))
        return {"debt": d, "equity_value": e, "equity_npv_discount": w,
                "debt_per_0_01_sigma": d / steps, "equity_value_per_0_01_sigma": e / steps}

    def to_summary(self) -> dict:
        return {
            "question": "value of narrowing the long-term resource uncertainty (resource_sd) "
                        "before debt is sized",
            "resource_sd_from": float(self.sigma[0]), "resource_sd_to": float(self.sigma[-1]),
            "gained": self.gains(),
            "equity_value_definition": f"NPV of the cash flow to equity at its target IRR "
                                       f"({100 * self.target_irr:.1f} %)",
            "curve": [{"resource_sd": s, "sigma_1yr": s1, "debt": d, "equity_value": e,
                       "equity_npv_at_discount_rate": w, "binding": b}
                      for s, s1, d, e, w, b in zip(self.sigma.tolist(), self.sigma_1yr.tolist(),
                                                   self.debt.tolist(),
                                                   self.equity_value.tolist(),
                                                   self.equity_npv_discount.tolist(),
                                                   self.binding)],
            "caution": "Assumes the campaign delivers the stated sigma and leaves the P50 "
                       "unchanged; a campaign can also move the P50 either way.",
            "notes": self.notes,
        }

    def table_lines(self) -> list[str]:
        cur, g = self.currency, self.gains()
        lines = [f"  Worth paying to measure the resource: long-term resource sd "
                 f"{100 * self.sigma[0]:.1f} % -> {100 * self.sigma[-1]:.1f} %, debt re-sized "
                 f"each time",
                 f"    {'resource sd':>12}{'1-yr sd':>12}{'debt ' + cur:>18}"
                 f"{'equity value ' + cur:>22}  binding"]
        for s, s1, d, e, b in zip(self.sigma, self.sigma_1yr, self.debt, self.equity_value,
                                  self.binding):
            lines.append(f"    {100 * s:>10.2f} %{100 * s1:>10.2f} %{d:>18,.0f}{e:>22,.0f}  {b}")
        lines += [f"    Gained: debt {g['debt']:+,.0f} {cur} ({g['debt_per_0_01_sigma']:+,.0f} "
                  f"per 0.01 of sd); equity value {g['equity_value']:+,.0f} {cur} "
                  f"({g['equity_value_per_0_01_sigma']:+,.0f} per 0.01), at the equity's "
                  f"target IRR {100 * self.target_irr:.1f} %",
                  "    note: assumes the campaign delivers the stated sigma and leaves the "
                  "P50 unchanged"]
        lines += [f"    note: {n}" for n in self.notes]
        return lines


def resource_information_value(case: Case, base: ModelOutput, spec: UncertainSpec,
                               target_sd: float | None = None,
                               points: int = DEFAULT_POINTS) -> ResourceInfoBlock:
    """Debt capacity and equity value for ``resource_sd`` from the case's value to a target.

    Parameters
    ----------
    case : Case
        With ``[revenue]``, ``[debt]`` and ``[uncertain.energy] resource_sd``.
    base : ModelOutput
        Its deterministic run.
    spec : UncertainSpec
        Its uncertainty (the other energy components stay as they are).
    target_sd : float, optional
        Resource sigma after the campaign [-], in [0, current]; default half the current.
    points : int
        Points of the sigma grid (>= 2).

    Returns
    -------
    ResourceInfoBlock

    Raises
    ------
    InputError
        No ``resource_sd`` in the case, or a target outside [0, current].
    """
    comps = dict(spec.energy_components)
    now = float(comps.get("resource", 0.0))
    if now <= 0:
        raise InputError(f"{case.source}: uncertain.energy.resource_sd is not set: expected "
                         f"a resource sigma > 0 to value narrowing it")
    target = now * DEFAULT_FRACTION if target_sd is None else float(target_sd)
    if not 0.0 <= target <= now:
        raise InputError(f"{case.source}: resource_sd target = {target:g}: expected a value "
                         f"in [0, {now:g}] (the case's resource_sd)")
    sigmas = np.linspace(now, target, max(int(points), 2))
    debt, value, at_rate, binding, s1 = [], [], [], [], []
    irr = float(case["equity.target_irr"])
    for s in sigmas:
        factors, sigma_1yr, _ = sizing_factors(replace(spec, energy_components={
            **comps, "resource": s}))
        f = sized_finance(case, base, factors)
        debt.append(float(f.debt[0]))
        value.append(float(npv(irr, f.equity_flow[0])))
        at_rate.append(float(f.npv_equity[0]))
        b = "" if f.sizing is None else str(np.asarray(f.sizing.binding).reshape(-1)[0])
        binding.append(b.replace(BASE_CASE, "P50") or "-")
        s1.append(sigma_1yr)
    notes = []
    if all(b.startswith("P50") for b in binding):
        notes.append("the P50 cover ratio binds at every sigma: narrowing the resource "
                     "uncertainty barely changes the debt this case can carry")
    if len(set(binding)) > 1:
        notes.append("the binding constraint changes along the way: the gain is not "
                     "proportional to the reduction in sigma")
    return ResourceInfoBlock(sigma=sigmas, debt=np.array(debt), equity_value=np.array(value),
                             equity_npv_discount=np.array(at_rate), binding=binding,
                             sigma_1yr=np.array(s1), target_irr=irr,
                             currency=case["case.currency"], notes=notes)
