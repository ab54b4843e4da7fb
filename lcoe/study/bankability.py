"""The lender's view of a case: revenue, tax, debt sized on downside cases, cover ratios, returns.

Orchestration only: it builds yearly revenue and operating cost from a case and its cash flow,
and calls the pure project-finance functions of :mod:`lcoe.bank`. Debt is sized once on the
deterministic sizing cases (as lenders do); every Monte Carlo trial then runs with that loan and
its contractual debt-service schedule, under its own energy and costs.

Sizing cases: ``P50`` is the deterministic case; ``P90_1yr``, ``P99_1yr``, ``P90_10yr`` and
``P99_10yr`` scale its energy in every operating year by ``1 - z sigma`` (normal method of
DOMAIN.md section 4), with sigma the root-sum-square of the case's ``[uncertain.energy]``
components (the year-to-year part divided by sqrt(10) for ten-year cases).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from lcoe.case.errors import InputError
from lcoe.case.reader import Case
from lcoe.model import ModelOutput
from lcoe.money.breakeven import breakeven_tariff
from lcoe.money.finance import npv
from lcoe.money.irr import IrrResult, investment_irr, irr, irr_text, mirr
from lcoe.money.metrics import BASE_CASE, FinanceResult, project_finance
from lcoe.study.lender_case import (
    DEFAULT_DSCR,
    UNLEVERED,
    _tax_debt_kwargs,
    finance_inputs,
    price_by_year,
    sized_finance,
    sizing_factors,
)
from lcoe.study.spec import UncertainSpec
from lcoe.uncertainty.stats import QUANTILES, stats


@dataclass
class BankabilityBlock:
    """Deterministic finance and, after a Monte Carlo, the odds of covenant breaches.

    Attributes
    ----------
    finance : FinanceResult
        The deterministic case (one sample) with the sized loan.
    factors : dict
        Energy multipliers of the sizing cases.
    sigma_1yr, sigma_10yr : float
        Energy sigmas used for sizing [-].
    constraints : list of (str, float)
        Sizing constraints as given (case, min DSCR).
    breakeven_tariff : float
        Flat real tariff (year-0 money, escalating with inflation) giving the equity its target
        IRR, with debt sized on the same constraints [currency/kWh].
    breakeven_contract : float
        Year-1 contract price, escalating at the contract's own rate (merchant price after
        the contract as in the case), that gives the equity its target IRR [currency/kWh]:
        the number to set beside ``tariff``.
    tariff, tariff_escalation : float
        The case's contract price in year 1 [currency/kWh] and its escalation [1/year].
    after_tax_lcoe : float
        Flat real tariff giving the unlevered post-tax project flow NPV zero at the case's
        discount rate (the WACC definition) [currency/kWh].
    target_irr, lockup_dscr, discount_rate : float
    loan_rate : float
        Loan interest rate [1/year]: the finance rate of the MIRR (reinvestment at the
        discount rate).
    currency : str
    mc : dict or None
        Monte Carlo statistics (see :meth:`add_trials`).
    notes : list of str
    """

    finance: FinanceResult
    factors: dict
    sigma_1yr: float
    sigma_10yr: float
    constraints: list
    breakeven_tariff: float
    after_tax_lcoe: float
    target_irr: float
    lockup_dscr: float
    discount_rate: float
    currency: str
    contract_years: int = 0
    tenor_years: int = 0
    breakeven_contract: float = float("nan")
    tariff: float = float("nan")
    tariff_escalation: float = 0.0
    mc: dict | None = None
    notes: list = field(default_factory=list)
    loan_rate: float = 0.0

    @property
    def gearing(self) -> float:
        capex = -self.finance.project_flow_pre_tax[0, 0]
        return float(self.finance.debt[0] / capex) if capex > 0 else 0.0

    @property
    def binding(self) -> str:
        s = self.finance.sizing
        if s is None:
            return ""
        b = s.binding[0] if isinstance(s.binding, (list, tuple, np.ndarray)) else s.binding
        return str(b).replace(BASE_CASE, "P50")

    @property
    def no_debt_reason(self) -> str:
        """Plain sentence saying why the debt is zero ('' when there is debt)."""
        s = self.finance.sizing
        if self.finance.debt[0] > 0:
            return ""
        if s is None:
            return "no debt: a zero loan was given"
        return str(s.reason[0]) or "no debt can be carried under the sizing constraints"

    def sizing_table(self) -> list[dict]:
        """The debt each sizing constraint and the gearing cap would allow on its own.

        Returns
        -------
        list of dict
            ``constraint`` (e.g. ``"P99_1yr @ 1.00x"``), ``debt`` [currency] the constraint
            alone allows, ``gearing`` [-] that debt / capex, ``binding`` (bool; exactly one
            entry is True).
        """
        s = self.finance.sizing
        if s is None:
            return []
        capex = -self.finance.project_flow_pre_tax[0, 0]
        binding = str(s.binding[0])
        rows = []
        for label, amount in s.candidates.items():
            a = float(np.asarray(amount).reshape(-1)[0])
            rows.append({"constraint": label.replace(BASE_CASE, "P50"), "debt": a,
                         "gearing": a / capex if capex > 0 else None,
                         "binding": label == binding})
        return rows

    @property
    def tail_years(self) -> int:
        """Contract years after the loan's maturity [year]."""
        return int(self.contract_years - self.tenor_years)

    def by_year(self) -> dict:
        """Yearly lender metrics of the deterministic case (lists over years 0..N).

        Keys: ``year``, ``cfads`` (after MRA transfers), ``cfads_before_reserves``,
        ``debt_service``, ``prepaid``, ``dscr``, ``dscr_before_reserves``, ``llcr``, ``plcr``
        (None where no loan is outstanding), ``debt_balance``, ``dsra_balance``,
        ``mra_balance``, ``equity_flow`` [currency or -].
        """
        f = self.finance
        zeros = np.zeros_like(f.cfads[0])

        def row(a):
            return [None if not np.isfinite(v) else float(v) for v in np.asarray(a)]

        return {"year": list(range(f.cfads.shape[1])), "cfads": row(f.cfads[0]),
                "cfads_before_reserves": row(f.cfads_before_reserves[0]),
                "debt_service": row(f.debt_service[0]), "prepaid": row(f.prepaid[0]),
                "dscr": row(f.dscr[0]), "dscr_before_reserves": row(f.dscr_before_reserves[0]),
                "llcr": row(f.llcr_by_year[0]), "plcr": row(f.plcr_by_year[0]),
                "debt_balance": row(f.debt_balance[0]),
                "dsra_balance": row(f.dsra.balance[0] if f.dsra is not None else zeros),
                "mra_balance": row(f.mra.balance[0] if f.mra is not None else zeros),
                "equity_flow": row(f.equity_flow[0])}

    def irr_results(self) -> dict:
        """IRRs of the deterministic flows with every root (several roots are all reported)."""
        f = self.finance
        return {"project_post_tax": irr(f.project_flow_post_tax[0]),
                "project_pre_tax": irr(f.project_flow_pre_tax[0]),
                "equity": irr(f.equity_flow[0])}

    def mirr(self, which: str) -> float:
        """MIRR of the deterministic ``"project"`` (post-tax) or ``"equity"`` flow [1/year]."""
        f = self.finance
        flow = f.project_flow_post_tax if which == "project" else f.equity_flow
        return float(mirr(flow[0], self.loan_rate, self.discount_rate)[0])

    def trial_finance(self, case: Case):
        """``fn(model_output, params) -> FinanceResult`` of trials run with the sized loan."""
        debt = float(self.finance.debt[0])
        # the schedule's last year can round to -1e-9 (repays the exact balance): not a profile
        service = np.maximum(self.finance.debt_service[0], 0.0)
        kwargs = _tax_debt_kwargs(case)

        def run(out: ModelOutput, params: dict) -> FinanceResult:
            fi = finance_inputs(case, out)
            d = np.minimum(debt, fi["capex"])
            return project_finance(revenue=fi["revenue"], opex=fi["opex"], capex=fi["capex"],
                                   renewals=fi["renewals"],
                                   debt_amount=d, service_profile=service, max_gearing=1.0,
                                   discount_rate=np.asarray(params.get(
                                       "finance.discount_rate",
                                       case["finance.discount_rate"])),
                                   **kwargs)

        return run

    def collector(self, case: Case):
        """Per-trial collector for :func:`lcoe.study.single.monte_carlo`."""
        run = self.trial_finance(case)
        target = self.target_irr
        loan_rate = float(case["debt.interest_rate"])

        def fr_rate(params: dict):
            return np.asarray(params.get("finance.discount_rate", case["finance.discount_rate"]))

        def collect(out: ModelOutput, params: dict, sl) -> dict:
            fr = run(out, params)
            return {"min_dscr": fr.min_dscr, "dscr_by_year": fr.dscr,
                    "equity_irr": fr.equity_irr,
                    "equity_mirr": mirr(fr.equity_flow, loan_rate, fr_rate(params)),
                    "equity_npv_at_target": npv(target, fr.equity_flow)}

        return collect

    def sensitivity_targets(self, case: Case) -> dict:
        """Lender's outputs Sobol and the tornado may rank (``--sobol-output``).

        Returns
        -------
        dict of str to callable
            ``min_dscr`` (the sized loan kept, as in the Monte Carlo), ``equity_irr`` (the
            investment root, :func:`lcoe.money.irr.investment_irr`) and
            ``breakeven_tariff_per_kwh`` (flat real, debt re-sized on the same constraints
            for each run), each ``fn(ModelOutput, params) -> (n,)``.
        """
        run = self.trial_finance(case)
        kwargs = _tax_debt_kwargs(case)
        constraints = [(BASE_CASE if c == "P50" else c, m) for c, m in self.constraints]
        factors = self.factors

        def min_dscr(out, params):
            value = run(out, params).min_dscr
            if np.any(~np.isfinite(value)):
                raise InputError("--sobol-output min_dscr: the case carries no debt service; "
                                 "rank equity_irr or breakeven_tariff_per_kwh instead")
            return value

        def equity_irr(out, params):
            value = investment_irr(run(out, params).equity_flow)
            bad = np.flatnonzero(~np.isfinite(value))
            if bad.size:
                raise InputError(f"--sobol-output equity_irr: the equity cash flow of run "
                                 f"{bad[0]} ({bad.size} in all) has no single investment "
                                 f"root; rank min_dscr or breakeven_tariff_per_kwh instead")
            return value

        def breakeven(out, params):
            fi = finance_inputs(case, out)
            value = breakeven_tariff(
                energy_kwh=fi["energy_sold_kwh"], inflation=case["finance.inflation"],
                target_equity_irr=case["equity.target_irr"],
                sizing_energy_kwh={c: fi["energy_sold_kwh"] * factors[c]
                                   for c, _ in self.constraints if c != "P50"} or None,
                opex=fi["opex"], capex=fi["capex"], renewals=fi["renewals"],
                dscr_constraints=constraints, max_gearing=case["debt.max_gearing"], **kwargs)
            bad = np.flatnonzero(~np.isfinite(value))
            if bad.size:
                raise InputError(f"--sobol-output breakeven_tariff_per_kwh: no break-even "
                                 f"tariff in run {bad[0]} ({bad.size} in all)")
            return value

        return {"min_dscr": min_dscr, "equity_irr": equity_irr,
                "breakeven_tariff_per_kwh": breakeven}

    def add_trials(self, outputs: dict) -> None:
        """Summarise per-trial outputs of :meth:`collector` into :attr:`mc`."""
        dscr_y = outputs["dscr_by_year"]
        tenor = int(np.sum(np.isfinite(self.finance.dscr[0])))
        served = np.isfinite(self.finance.dscr[0])
        d = dscr_y[:, served]
        worst = np.nanmin(np.where(np.isfinite(d), d, np.inf), axis=1) if d.size else \
            np.full(dscr_y.shape[0], np.nan)
        years = np.nonzero(served)[0]
        fan = {f"q{int(round(q * 100)):02d}": np.nanquantile(d, q, axis=0).tolist()
               for q in QUANTILES} if d.size else {}
        self.mc = {
            "trials": int(dscr_y.shape[0]),
            "min_dscr": stats(worst) if d.size else None,
            "prob_dscr_below_1": float(np.mean(worst < DEFAULT_DSCR)) if d.size else 0.0,
            "prob_lockup": float(np.mean(worst < self.lockup_dscr)) if d.size else 0.0,
            "prob_equity_below_target": float(np.mean(outputs["equity_npv_at_target"] < 0)),
            "equity_irr": stats(outputs["equity_irr"]),
            "equity_mirr": stats(outputs["equity_mirr"]) if "equity_mirr" in outputs else None,
            "dscr_fan": {"years": years.tolist(), **fan}, "tenor_years": tenor,
        }
        missing = np.flatnonzero(~np.isfinite(outputs["equity_irr"]))
        if missing.size:
            shown = ", ".join(str(i) for i in missing[:10]) + (" ..." if missing.size > 10
                                                               else "")
            self.notes.append(f"Monte Carlo equity IRR: {missing.size} of {dscr_y.shape[0]} "
                              f"trials have no investment root (the NPV never falls through "
                              f"zero as the rate rises) and are left out of its statistics "
                              f"(trials {shown}); every other trial is used")

    def to_summary(self) -> dict:
        f = self.finance
        irrs = self.irr_results()
        out = {
            "debt": f.debt[0], "gearing": self.gearing, "binding_constraint": self.binding,
            "sizing_constraints": [{"case": c, "min_dscr": m} for c, m in self.constraints],
            "sizing_energy_factors": self.factors, "sigma_1yr": self.sigma_1yr,
            "sigma_10yr": self.sigma_10yr,
            "sizing_table": self.sizing_table(),
            "no_debt_reason": self.no_debt_reason or None,
            "min_dscr": f.min_dscr[0], "avg_dscr": f.avg_dscr[0], "llcr": f.llcr[0],
            "project_irr": _irr_value(irrs["project_post_tax"]),
            "project_irr_pre_tax": _irr_value(irrs["project_pre_tax"]),
            "equity_irr": _irr_value(irrs["equity"]),
            "irr_roots": {k: {"roots": v.roots, "sign_changes": v.sign_changes,
                              "reason": v.reason} for k, v in irrs.items()},
            "equity_npv_at_discount_rate": f.npv_equity[0],
            "equity_npv_at_target_irr": float(npv(self.target_irr, f.equity_flow[0])),
            "equity_npv_definitions": {
                "equity_npv_at_discount_rate": "NPV of the cash flow to equity at "
                                               "finance.discount_rate",
                "equity_npv_at_target_irr": "NPV of the cash flow to equity at "
                                            "equity.target_irr (>= 0: the target is met)"},
            "breakeven_contract_price_per_kwh": self.breakeven_contract,
            "breakeven_contract_definition": "year-1 contract price escalating at "
                                             "revenue.tariff_escalation (merchant price after "
                                             "the contract as in the case) that gives the "
                                             "equity its target IRR; compare with "
                                             "revenue.tariff_per_kwh",
            "dscr_definition": "CFADS after maintenance-reserve transfers and before DSRA "
                               "movements, over the scheduled debt service (the lender's "
                               "definition); dscr_before_reserves uses CFADS before any "
                               "reserve transfer",
            "tail_years": self.tail_years,
            "sources_and_uses": {side: {k: float(v[0]) for k, v in f.sources_uses[side].items()}
                                 for side in ("uses", "sources")},
            "by_year": self.by_year(),
            "irr_rule": IRR_RULE,
            "project_mirr": _finite_or_none(self.mirr("project")),
            "equity_mirr": _finite_or_none(self.mirr("equity")),
            "mirr_rates": {"finance_rate": self.loan_rate,
                           "reinvest_rate": self.discount_rate},
            "payback_year": f.payback_year[0],
            "breakeven_tariff_per_kwh": self.breakeven_tariff,
            "breakeven_definition": "flat real tariff (year-0 money, escalating with "
                                    "inflation) that gives the equity its target IRR, debt "
                                    "sized on the same constraints",
            "after_tax_lcoe_per_kwh": self.after_tax_lcoe,
            "after_tax_lcoe_definition": "flat real tariff at which the unlevered post-tax "
                                         "project cash flow has NPV zero at finance."
                                         "discount_rate (WACC)",
            "target_equity_irr": self.target_irr, "lockup_dscr": self.lockup_dscr,
            "cfads": f.cfads[0], "dscr_by_year": f.dscr[0], "debt_service": f.debt_service[0],
            "notes": self.notes,
        }
        mc = self.mc or {}
        out["prob_dscr_below_1"] = mc.get("prob_dscr_below_1")
        out["prob_lockup"] = mc.get("prob_lockup")
        out["prob_equity_below_target"] = mc.get("prob_equity_below_target")
        if mc:
            out["monte_carlo"] = mc
        return out

    def table_lines(self) -> list[str]:
        f, cur = self.finance, self.currency
        irrs = self.irr_results()
        sizing = ", ".join(f"{c} @ {m:.2f}x" for c, m in self.constraints)
        lines = [f"  Bankability (debt sized on {sizing})",
                 f"    Debt               {f.debt[0]:,.0f} {cur} (gearing "
                 f"{100 * self.gearing:.1f} %; binding: {self.binding or '-'})"]
        for row in self.sizing_table():
            mark = "  <- binds" if row["binding"] else ""
            lines.append(f"      {row['constraint']:<22} allows {row['debt']:>16,.0f} {cur}"
                         f"{mark}")
        if f.debt[0] > 0:
            lines.append(f"    DSCR               min {f.min_dscr[0]:.2f}x, average "
                         f"{f.avg_dscr[0]:.2f}x, LLCR {f.llcr[0]:.2f}x")
        else:
            lines.append(f"    DSCR               none: {self.no_debt_reason}")
        su = f.sources_uses
        uses = ", ".join(f"{k} {v[0]:,.0f}" for k, v in su["uses"].items() if v[0])
        lines.append(f"    Sources and uses   {uses} = debt {su['sources']['senior debt'][0]:,.0f}"
                     f" + equity {su['sources']['equity'][0]:,.0f} {cur}")
        reserves = []
        if f.dsra is not None:
            reserves.append(f"DSRA {f.dsra.initial[0]:,.0f} at close")
        if f.mra is not None:
            reserves.append(f"MRA up to {f.mra.balance[0].max():,.0f}")
        if np.any(f.prepaid[0] > 0):
            reserves.append(f"cash sweep prepays {f.prepaid[0].sum():,.0f}")
        if reserves:
            lines.append("    Reserves, sweep    " + "; ".join(reserves) + f" {cur}; DSCR on "
                         "CFADS after MRA transfers, before DSRA movements")
        payback = "never" if not np.isfinite(f.payback_year[0]) else \
            f"{f.payback_year[0]:.0f}"
        lines += [
                 f"    IRR                project {_irr_text(irrs['project_post_tax'])} "
                 f"post-tax ({_irr_text(irrs['project_pre_tax'])} pre-tax)",
                 f"    Equity IRR         {_irr_text(irrs['equity'])} (target "
                 f"{100 * self.target_irr:.1f} %)",
                 f"    Equity NPV         {f.npv_equity[0]:,.0f} {cur} at the discount rate "
                 f"{100 * self.discount_rate:.2f} %; "
                 f"{float(npv(self.target_irr, f.equity_flow[0])):,.0f} {cur} at the target "
                 f"IRR; payback year {payback}",
                 f"    Break-even tariff  {self.breakeven_tariff:.4f} {cur}/kWh flat real "
                 f"(year-0 money, rising with inflation); as a year-1 contract price "
                 f"escalating {100 * self.tariff_escalation:.1f} %/yr: "
                 f"{self.breakeven_contract:.4f} {cur}/kWh (case: {self.tariff:.4f})",
                 f"    After-tax LCOE     {self.after_tax_lcoe:.4f} {cur}/kWh (flat real, NPV 0 "
                 f"at WACC {100 * self.discount_rate:.2f} %)"]
        if self.mc and f.debt[0] <= 0:
            lines.append(f"    Monte Carlo        no debt service in any trial; P(equity IRR < "
                         f"target) {100 * self.mc['prob_equity_below_target']:.1f} %")
        elif self.mc:
            m = self.mc
            lines.append(f"    Monte Carlo        P(DSCR < 1.00 in any year) "
                         f"{100 * m['prob_dscr_below_1']:.1f} %, P(lock-up < "
                         f"{self.lockup_dscr:.2f}x) {100 * m['prob_lockup']:.1f} %, "
                         f"P(equity IRR < target) {100 * m['prob_equity_below_target']:.1f} %")
            if m["min_dscr"]:
                lines.append(f"    Min DSCR           P10 {m['min_dscr']['q10']:.2f}x, P50 "
                             f"{m['min_dscr']['q50']:.2f}x, P90 {m['min_dscr']['q90']:.2f}x")
        lines.append(f"    MIRR               project {_mirr_text(self.mirr('project'))}, "
                     f"equity {_mirr_text(self.mirr('equity'))} (outflows at the loan rate "
                     f"{100 * self.loan_rate:.2f} %, inflows reinvested at the discount rate "
                     f"{100 * self.discount_rate:.2f} %)")
        if self.mc and self.mc.get("equity_irr") and self.mc["equity_irr"]["n"]:
            e = self.mc["equity_irr"]
            lines.append(f"    Equity IRR trials  P10 {100 * e['q10']:.2f} %, P50 "
                         f"{100 * e['q50']:.2f} %, P90 {100 * e['q90']:.2f} %, mean "
                         f"{100 * e['mean']:.2f} % ({e['n']} of {self.mc['trials']} trials)")
        if any(len(r.roots) > 1 for r in irrs.values()):
            lines.append(f"    note: {IRR_RULE}")
        lines += [f"    note: {n}" for n in self.notes]
        return lines


#: The IRR rule, stated wherever several roots appear.
IRR_RULE = ("Cash flows that turn negative again late in life (replacements, decommissioning) "
            "can have several IRRs: the IRR reported is the investment root, the rate at which "
            "the NPV turns from positive to negative as the rate rises; all roots are listed "
            "beside it, and the MIRR (outflows at the loan rate, inflows reinvested at the "
            "discount rate) is single-valued.")


def _finite_or_none(x: float):
    return float(x) if np.isfinite(x) else None


def _mirr_text(x: float) -> str:
    return f"{100 * x:.2f} %" if np.isfinite(x) else "none (no positive or no negative flow)"


def _irr_value(r: IrrResult):
    """The investment root (see :func:`lcoe.money.irr.irr`), or None when there is none."""
    return float(r.value) if np.isfinite(r.value) else None


def _irr_text(r: IrrResult) -> str:
    return irr_text(r.value, r.roots, r.reason)


def run_bankability(case: Case, base: ModelOutput, spec: UncertainSpec) -> BankabilityBlock:
    """Size the debt on the case's constraints and compute the deterministic metrics.

    Parameters
    ----------
    case : Case
        With a ``[revenue]`` table.
    base : ModelOutput
        The deterministic run (one sample).
    spec : UncertainSpec
        Supplies the energy sigmas of the sizing cases.
    """
    factors, s1, s10 = sizing_factors(spec)
    notes = []
    if s1 == 0 and any(c != "P50" for c, _ in case.debt_sizing):
        notes.append("no [uncertain.energy] components given: downside sizing cases equal P50")
    notes.append("sizing cases scale energy and revenue; operating costs are those of P50")
    fi = finance_inputs(case, base)
    constraints = [(BASE_CASE if c == "P50" else c, m) for c, m in case.debt_sizing]
    kwargs = _tax_debt_kwargs(case)
    r = case["finance.discount_rate"]
    fr = sized_finance(case, base, factors)
    if fr.debt[0] <= 0:
        reason = str(fr.sizing.reason[0]) if fr.sizing is not None else ""
        notes.append(reason or "no debt can be carried under the sizing constraints")
    else:
        low = np.nonzero(fr.cfads[0, 1:case["debt.tenor_years"] + 1] < 0)[0]
        if low.size:
            notes.append(f"CFADS is negative in year {int(low[0]) + 1}"
                         + (f" and {low.size - 1} more tenor year(s)" if low.size > 1 else "")
                         + ": no debt service is scheduled there and the shortfall falls on "
                           "equity")
    tail = (case["revenue.contract_years"] or case["case.lifetime_years"]) - \
        case["debt.tenor_years"]
    if tail < case["debt.min_tail_years"]:
        notes.append(f"the contract tail after loan maturity is {tail} year(s), shorter than "
                     f"debt.min_tail_years = {case['debt.min_tail_years']}")
    infl = case["finance.inflation"]
    sizing_energy = {c: fi["energy_sold_kwh"] * factors[c] for c, _ in case.debt_sizing
                     if c != "P50"}
    be = breakeven_tariff(energy_kwh=fi["energy_sold_kwh"], inflation=infl,
                          target_equity_irr=case["equity.target_irr"],
                          sizing_energy_kwh=sizing_energy or None, opex=fi["opex"],
                          capex=fi["capex"], renewals=fi["renewals"],
                          dscr_constraints=constraints,
                          max_gearing=case["debt.max_gearing"], **kwargs)
    t = np.arange(fi["energy_sold_kwh"].shape[1])
    contract = case["revenue.contract_years"] or case["case.lifetime_years"]
    in_contract = (t >= 1) & (t <= contract)
    be_contract = breakeven_tariff(
        energy_kwh=fi["energy_sold_kwh"], inflation=infl,
        target_equity_irr=case["equity.target_irr"], sizing_energy_kwh=sizing_energy or None,
        opex=fi["opex"], capex=fi["capex"], renewals=fi["renewals"],
        dscr_constraints=constraints, max_gearing=case["debt.max_gearing"],
        price_index=np.where(in_contract, (1 + case["revenue.tariff_escalation"]) ** (t - 1.0),
                             0.0),
        fixed_price=np.where(in_contract | (t == 0), 0.0, price_by_year(case, t.size - 1)),
        **kwargs)
    at = breakeven_tariff(energy_kwh=fi["energy_sold_kwh"], inflation=infl,
                          target_equity_irr=r, opex=fi["opex"], capex=fi["capex"],
                          renewals=fi["renewals"], debt_amount=0.0,
                          **{**kwargs, **UNLEVERED})
    pretty = [(("P50" if c == BASE_CASE else c), m) for c, m in constraints]
    return BankabilityBlock(finance=fr, factors=factors, sigma_1yr=s1, sigma_10yr=s10,
                            constraints=pretty, breakeven_tariff=float(be[0]),
                            breakeven_contract=float(be_contract[0]),
                            contract_years=int(contract),
                            tenor_years=int(case["debt.tenor_years"]),
                            tariff=case["revenue.tariff_per_kwh"],
                            tariff_escalation=case["revenue.tariff_escalation"],
                            after_tax_lcoe=float(at[0]), target_irr=case["equity.target_irr"],
                            lockup_dscr=case["debt.lockup_dscr"], discount_rate=r,
                            currency=case["case.currency"], notes=notes,
                            loan_rate=float(case["debt.interest_rate"]))
