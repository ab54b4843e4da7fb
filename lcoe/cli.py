"""Command line: ``lcoe run | check | new | demo``. Thin: parses, calls the runner, prints.

Bad input of any kind ends with one line on stderr and exit status 2, without a traceback.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from .errors import InputError

#: Folder of the bundled case files (the repository's ``inputs/``).
INPUTS_DIR = Path(__file__).resolve().parent.parent / "inputs"
DEMO_CASE = INPUTS_DIR / "demo_fixed_tilt.toml"


def _fmt_money(x: float) -> str:
    return f"{x:,.4f}"


def format_table(result) -> str:
    """The compact result table printed by ``lcoe run``."""
    case = result.case
    cur = case["case.currency"]
    e, c = result.base.energy, result.base.cashflow
    rows = [
        ("Case", case.name),
        ("Weather", f"{result.site.weather.name or result.site.weather.source} "
                    f"({result.site.weather.fmt}, {result.site.weather.n_hours} h)"),
        ("Plant", f"{case['plant.dc_capacity_kw']:,.0f} kW DC, {case['plant.mount']}, "
                  f"DC/AC {case['plant.dc_ac_ratio']:.2f}"),
        ("First-year energy", f"{e.annual_kwh[0]:,.0f} kWh"),
        ("Specific yield", f"{e.specific_yield_kwh_per_kw[0]:,.1f} kWh/kW"),
        ("Performance ratio", f"{e.performance_ratio[0]:.3f} (IEC 61724-1)"),
        ("Clipping loss", f"{100 * e.clipping_loss_fraction[0]:.2f} % of inverter output"),
        ("NPV of costs", f"{c.pv_costs[0]:,.0f} {cur}"),
        ("LCOE real", f"{_fmt_money(c.lcoe_real[0])} {cur}/kWh "
                      f"(real rate {100 * c.real_rate[0]:.2f} %)"),
        ("LCOE nominal", f"{_fmt_money(c.lcoe_nominal[0])} {cur}/kWh "
                         f"(nominal rate {100 * c.nominal_rate[0]:.2f} %)"),
    ]
    width = max(len(k) for k, _ in rows)
    lines = [f"  {k:<{width}}  {v}" for k, v in rows]
    for block in result.extras.values():
        if hasattr(block, "table_lines"):
            lines += [""] + block.table_lines()
    findings = result.extras.get("audit") or []
    if findings:
        ok = sum(f["verdict"] == "ok" for f in findings)
        lines += ["", f"  Physics audit: {ok} of {len(findings)} checks ok"]
        lines += [f"    {f['verdict'].upper()}: {f['message']}" for f in findings
                  if f["verdict"] != "ok"]
    for n in result.notes:
        lines.append(f"  note: {n}")
    return "\n".join(lines)


class Progress:
    """A progress bar on stderr, shown only once a stage has run for a couple of seconds."""

    def __init__(self, enabled: bool, delay_s: float = 2.0):
        import time

        self.enabled, self.delay_s, self._time = enabled, delay_s, time.monotonic
        self._start: dict[str, float] = {}
        self._shown: set[str] = set()

    def __call__(self, stage: str, done: int, total: int) -> None:
        if not self.enabled:
            return
        now = self._time()
        start = self._start.setdefault(stage, now)
        if now - start < self.delay_s and done < total and stage not in self._shown:
            return
        if done >= total and stage not in self._shown:
            return
        self._shown.add(stage)
        width = 30
        filled = int(width * done / max(total, 1))
        sys.stderr.write(f"\r  {stage:<12} [{'#' * filled}{'.' * (width - filled)}] "
                         f"{done}/{total}")
        if done >= total:
            sys.stderr.write("\n")
        sys.stderr.flush()


def _cmd_run(args) -> int:
    from .output import publish
    from .runner import read_case, run_case, write_outputs

    case = read_case(args.case)  # bad input is refused before the output folder is touched
    out = Path(args.out) if args.out else Path("outputs") / Path(args.case).stem
    with publish(out, force=args.force, replace_own=args.replace_own) as stage:
        result = run_case(case, samples=args.samples, seed=args.seed,
                          sobol_base=args.sobol, sobol_output=args.sobol_output,
                          screen=args.screen, method=args.method,
                          progress=Progress(not args.quiet))
        write_outputs(result, stage)
    if not args.quiet:
        print(format_table(result))
        print(f"  wrote {out}/")
    return 0


def _cmd_check(args) -> int:
    from .case import load_case
    from .model import load_weather_for

    case = load_case(args.case)
    weather = load_weather_for(case)
    print(f"{args.case}: valid")
    print(f"  case     {case.name} ({case['case.lifetime_years']} years, "
          f"{case['case.currency']})")
    print(f"  site     {case['site.latitude_deg']:.4f}, {case['site.longitude_deg']:.4f}, "
          f"{case['site.altitude_m']:.0f} m")
    print(f"  weather  {weather.source} ({weather.fmt}, {weather.n_hours} hours, "
          f"UTC{weather.utc_offset_h:+g} h)")
    print(f"  plant    {case['plant.dc_capacity_kw']:,.0f} kW DC, {case['plant.mount']}, "
          f"{case['plant.transposition']} transposition")
    from .uncertainty.spec import read_spec

    spec = read_spec(case)
    steps = ["hourly energy", f"{case['case.lifetime_years']}-year cash flow", "LCOE"]
    if "revenue" in case.sections:
        steps.append("tax, debt sizing on " + ", ".join(f"{c} @ {m:.2f}x"
                                                         for c, m in case.debt_sizing))
    print(f"  would run: {', '.join(steps)}")
    if not spec.is_empty:
        print(f"  uncertain: {len(spec.case_paths)} inputs, energy components "
              f"{', '.join(spec.energy_components) or 'none'}, year-to-year CoV "
              f"{spec.interannual_cov:g}, {0 if spec.corr is None else 'with'} correlations"
              .replace(", 0 correlations", ", no correlations"))
    return 0


def _cmd_new(args) -> int:
    from .template import template_text

    from .output import publish_file

    path = Path(args.path)
    publish_file(path, template_text().encode("utf-8"), force=args.force)
    print(f"wrote {path} (edit it, then: lcoe check {path})")
    return 0


def _cmd_demo(args) -> int:
    if getattr(args, "compare", False):
        from .compare_cli import run_demo_compare

        return run_demo_compare(args)
    if not DEMO_CASE.is_file():
        raise InputError(f"{DEMO_CASE}: bundled demo case not found (install from a clone of "
                         f"the repository with pip install -e .)")
    args.case = str(DEMO_CASE)
    args.replace_own = args.out is None
    args.out = args.out or str(Path("outputs") / "demo")
    return _cmd_run(args)


def _non_negative_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"{value} is negative; expected >= 0")
    return value


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="lcoe", description="Cost of solar electricity under uncertainty.")
    sub = p.add_subparsers(dest="command", required=True)

    from .runner import DEFAULT_SAMPLES, DEFAULT_SEED, DEFAULT_SOBOL_BASE

    def out_opts(sp, default_help):
        sp.add_argument("--out", help=f"output folder ({default_help})")
        sp.add_argument("--force", action="store_true",
                        help="replace an output folder written by lcoe before, as a whole")
        sp.add_argument("--quiet", action="store_true", help="print nothing but errors")
        sp.add_argument("--samples", type=_non_negative_int, default=None,
                        help=f"Monte Carlo trials (default {DEFAULT_SAMPLES} when the case has "
                             f"[uncertain] tables; 0 = deterministic only)")
        sp.add_argument("--seed", type=_non_negative_int, default=DEFAULT_SEED,
                        help=f"seed of the random generator (default {DEFAULT_SEED})")
        sp.add_argument("--sobol", type=_non_negative_int, default=DEFAULT_SOBOL_BASE,
                        metavar="N", help=f"Sobol base samples, rounded up to a power of two "
                                          f"(default {DEFAULT_SOBOL_BASE}; 0 = skip)")
        sp.add_argument("--sobol-output", default="lcoe_real_per_kwh",
                        choices=("lcoe_real_per_kwh", "lcoe_nominal_per_kwh", "npv_costs",
                                 "energy_first_year_kwh"),
                        help="output whose drivers are ranked (default lcoe_real_per_kwh)")
        sp.add_argument("--screen", action="store_true",
                        help="also run Morris screening (useful with many inputs)")
        sp.add_argument("--method", choices=("lhs", "random"), default="lhs",
                        help="Monte Carlo sampling: Latin hypercube (default) or random")

    r = sub.add_parser("run", help="run a case file and write results")
    r.add_argument("case", help="case file (.toml)")
    out_opts(r, "default outputs/<case name>")
    r.set_defaults(func=_cmd_run, replace_own=False)
    c = sub.add_parser("check", help="validate a case file and say what would run")
    c.add_argument("case")
    c.set_defaults(func=_cmd_check)
    n = sub.add_parser("new", help="write a commented case-file template")
    n.add_argument("path")
    n.add_argument("--force", action="store_true", help="replace an existing file")
    n.set_defaults(func=_cmd_new)
    d = sub.add_parser("demo", help="run the bundled demo case")
    out_opts(d, "default outputs/demo")
    d.add_argument("--compare", action="store_true",
                   help="run the bundled claim test instead (fixed tilt vs single-axis vs a "
                        "vendor's rotating columns) into outputs/demo_compare")
    from .compare_cli import add_options, register

    add_options(d)
    d.set_defaults(func=_cmd_demo)
    register(sub, _non_negative_int, DEFAULT_SEED)
    from .sweep import register_cli

    register_cli(sub)
    return p


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return args.func(args)
    except InputError as exc:
        print(f"lcoe: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("lcoe: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
