"""``lcoe check``: validate everything ``lcoe run`` would read, then say what it would run.

The case, its weather, the ``[uncertain]`` tables and correlations, the tax and debt-sizing
settings and the claim are all checked before the word "valid" is printed, so a case that
passes here does not stop with an input error in ``lcoe run``. The deterministic model is
evaluated once (one year of hourly energy and the cash flow), which also checks the geometry
of bodies and concentrators; the Monte Carlo is not run.
"""

from __future__ import annotations

from pathlib import Path


def check_case(path: str | Path) -> list[str]:
    """Validate the case file at ``path``; the lines ``lcoe check`` prints.

    Raises
    ------
    InputError
        The first problem found, as one line naming file, key, value and what is allowed.
    """
    from lcoe.case.reader import load_case
    from lcoe.model import evaluate, load_weather_for, prepare
    from lcoe.study.spec import read_spec

    case = load_case(path)
    spec = read_spec(case)
    weather = load_weather_for(case)
    if "revenue" in case.sections:
        _check_tax(case)
    site = prepare(case, weather)
    base = evaluate(case, site)
    from lcoe.study.audit import audit_run

    findings = audit_run(case, site, base)
    lines = [f"{path}: valid",
             f"  case     {case.name} ({case['case.lifetime_years']} years, "
             f"{case['case.currency']})",
             f"  site     {case['site.latitude_deg']:.4f}, {case['site.longitude_deg']:.4f}, "
             f"{case['site.altitude_m']:.0f} m",
             f"  weather  {weather.name or weather.source} ({weather.fmt}, {weather.n_hours} "
             f"hours, UTC{weather.utc_offset_h:+g} h)",
             f"  plant    {case['plant.dc_capacity_kw']:,.0f} kW DC, {case['plant.mount']}, "
             f"{case['plant.transposition']} transposition",
             f"  result   first-year energy {base.energy.annual_kwh[0]:,.0f} kWh, LCOE real "
             f"{base.cashflow.lcoe_real[0]:.4f} {case['case.currency']}/kWh (deterministic)"]
    steps = ["hourly energy", f"{case['case.lifetime_years']}-year cash flow", "LCOE"]
    if "revenue" in case.sections:
        steps.append("tax, debt sized on " + ", ".join(f"{c} at DSCR {m:.2f}"
                                                        for c, m in case.debt_sizing))
    lines.append(f"  would run: {', '.join(steps)}")
    if not spec.is_empty:
        corr = "with rank correlations" if spec.corr is not None else "no correlations"
        lines.append(f"  uncertain: {len(spec.case_paths)} inputs, energy components "
                     f"{', '.join(spec.energy_components) or 'none'}, year-to-year CoV "
                     f"{spec.interannual_cov:g}, {corr}")
    if any(k.startswith("claim.") for k in case.values if case.values[k] is not None):
        worst = [f for f in findings if f["verdict"] != "ok"]
        lines.append(f"  claim:    physics audit {len(findings) - len(worst)} of "
                     f"{len(findings)} checks ok" + "".join(
                         f"\n    {f['verdict'].upper()}: {f['message']}" for f in worst))
    from lcoe.case.plausibility import atypical_inputs

    lines += [f"  warning: {note}" for note in atypical_inputs(case)]
    return lines


def _check_tax(case) -> None:
    """Build the tax depreciation schedule the run would use (raises on a bad combination)."""
    from lcoe.money.tax import depreciation_schedule

    method = case["tax.depreciation"]
    depreciation_schedule(
        method, 1.0, case["case.lifetime_years"],
        years=case["tax.depreciation_years"] if method != "accelerated_5yr" else None,
        rate=case["tax.depreciation_rate"] if method == "declining_balance" else None)
