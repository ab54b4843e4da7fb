"""Command line of ``lcoe run``: options, the run, the printed table."""

from __future__ import annotations

from pathlib import Path

from lcoe.case.errors import collect_warnings
from lcoe.cli.options import _non_negative_int
from lcoe.cli.progress import Progress
from lcoe.study.defaults import DEFAULT_SAMPLES, DEFAULT_SEED, DEFAULT_SOBOL_BASE
from lcoe.study.progress import phase


def _fmt_money(x: float) -> str:
    return f"{x:,.4f}"


#: Short names of the loss-chain steps on the light before it reaches the cells.
_STEP_NAMES = {"after_row_shading_kwh": "rows", "after_body_shading_kwh": "bodies",
               "after_iam_kwh": "angle", "after_soiling_kwh": "soiling",
               "after_bifacial_kwh": "rear side"}


def _light_steps(energy) -> str:
    """``rows -2.0 %, angle -3.0 %, ...``: the steps from open-field light to the cells."""
    ch = energy.step_changes()
    parts = [f"{_STEP_NAMES[k]} {100 * v[0]:+.1f} %" for k, v in ch.items()
             if v[0] != 0.0 or k in ("after_soiling_kwh", "after_bifacial_kwh")]
    return ", ".join(parts)


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
        ("Light steps", _light_steps(e)),
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
    for n in result.notes:  # unusual inputs are warnings; the notes keep them as notes
        lines.append(f"  warning: {n[15:]}" if n.startswith("unusual input: ") else
                     f"  note: {n}")
    return "\n".join(lines)


def _cmd_run(args) -> int:
    progress = Progress(not args.quiet)
    phase(progress, "reading case")
    from lcoe.export.run_outputs import picture_maker, write_outputs
    from lcoe.export.staging import publish
    from lcoe.study.run import read_case, run_case

    case = read_case(args.case)  # bad input is refused before the output folder is touched
    out = Path(args.out) if args.out else Path("outputs") / Path(args.case).stem
    # the pictures' child imports matplotlib while the case is computed (on a spare core)
    with publish(out, force=args.force, replace_own=args.replace_own) as stage, \
            picture_maker() as pictures:
        with collect_warnings() as caught:
            result = run_case(case, samples=args.samples, seed=args.seed,
                              sobol_base=args.sobol, sobol_output=args.sobol_output,
                              screen=args.screen, method=args.method, progress=progress,
                              workers=getattr(args, "workers", 1),
                              scheduler=getattr(args, "scheduler", None))
        result.notes.extend(caught)  # library warnings go into the run's notes, not the terminal
        write_outputs(result, stage, progress=progress, hourly=args.hourly,
                      pictures=pictures)
    progress.close()
    if not args.quiet:
        print(format_table(result))
        _hourly_note(args.hourly)
        print(f"  wrote {out}/")
    return 0


def _hourly_note(hourly: bool) -> None:
    """Say which hourly file was written (CSV when pyarrow is missing)."""
    if not hourly:
        return
    from lcoe.export.hourly import CSV_NAME, hourly_file_name

    if hourly_file_name() == CSV_NAME:
        print("  pyarrow is not installed: hourly table written as CSV "
              "(pip install 'lcoe[hourly]' for Parquet)")


def _run_options(sp, default_help: str) -> None:
    """Options shared by ``run`` and ``demo``."""
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
                             "energy_first_year_kwh", "min_dscr", "equity_irr",
                             "breakeven_tariff_per_kwh"),
                    help="output whose drivers are ranked (default lcoe_real_per_kwh; "
                         "min_dscr, equity_irr and breakeven_tariff_per_kwh need [revenue])")
    sp.add_argument("--screen", action="store_true",
                    help="also run Morris screening (useful with many inputs)")
    sp.add_argument("--method", choices=("lhs", "random"), default="lhs",
                    help="Monte Carlo sampling: Latin hypercube (default) or random")
    sp.add_argument("--hourly", action="store_true",
                    help="also write every hour of the deterministic case (sun, weather, plane "
                         "of array, cell temperature, DC, clipping, AC, losses) to "
                         "hourly.parquet (hourly.csv without pyarrow)")


def _add_run(sp) -> None:
    sp.add_argument("case", help="case file (.toml) or an edited workbook (.xlsx)")
    _run_options(sp, "default outputs/<case name>")
    from lcoe.cli.options import add_execution_options

    add_execution_options(sp)
    sp.set_defaults(func=_cmd_run, replace_own=False)
