"""Command line: ``lcoe run | check | new | demo | compare | sweep``. Thin: parses, calls, prints.

Bad input of any kind ends with one line on stderr and exit status 2, without a traceback.

Start-up is kept fast: this module imports nothing from the scientific stack, and only the
subcommand being run gets its options (and their imports); ``lcoe --help``, ``--version`` and
``lcoe new`` never import numpy, pandas, scipy, pvlib, SALib, matplotlib or openpyxl.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__
from .defaults import DEFAULT_SAMPLES, DEFAULT_SEED, DEFAULT_SOBOL_BASE
from .errors import InputError, collect_warnings
from .progress import Progress, phase

#: Folder of the bundled case files (the repository's ``inputs/``).
INPUTS_DIR = Path(__file__).resolve().parent.parent / "inputs"
DEMO_CASE = INPUTS_DIR / "demo_fixed_tilt.toml"


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
    from .output import publish
    from .runner import read_case, run_case, write_outputs

    case = read_case(args.case)  # bad input is refused before the output folder is touched
    out = Path(args.out) if args.out else Path("outputs") / Path(args.case).stem
    with publish(out, force=args.force, replace_own=args.replace_own) as stage:
        with collect_warnings() as caught:
            result = run_case(case, samples=args.samples, seed=args.seed,
                              sobol_base=args.sobol, sobol_output=args.sobol_output,
                              screen=args.screen, method=args.method, progress=progress,
                              workers=getattr(args, "workers", 1),
                              scheduler=getattr(args, "scheduler", None))
        result.notes.extend(caught)  # library warnings go into the run's notes, not the terminal
        write_outputs(result, stage, progress=progress, hourly=args.hourly)
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
    from .export.hourly import CSV_NAME, hourly_file_name

    if hourly_file_name() == CSV_NAME:
        print("  pyarrow is not installed: hourly table written as CSV "
              "(pip install 'lcoe[hourly]' for Parquet)")


def _cmd_check(args) -> int:
    from .check import check_case

    for line in check_case(args.case):
        print(line)
    return 0


def _cmd_new(args) -> int:
    from .output import publish_file
    from .template import KINDS, sweep_files, sweep_plan_text, template_text

    path = Path(args.path)
    files = {path: template_text(args.kind)}
    if args.kind == "sweep":
        files = {path: sweep_plan_text(path.stem)}
        files.update({path.with_name(n): t for n, t in sweep_files(path.stem).items()})
    for p in files:  # refuse before writing anything
        if p.exists() and not args.force:
            raise InputError(f"{p}: file exists; add --force to replace it")
    for p, text in files.items():
        publish_file(p, text.encode("utf-8"), force=args.force)
    if args.kind == "sweep":
        print(f"wrote {', '.join(map(str, files))} (sweep plan and its technologies; edit "
              f"them, then: lcoe sweep {path})")
    else:
        print(f"wrote {path} ({KINDS[args.kind]}; edit it, then: "
              f"lcoe check {path} && lcoe run {path})")
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
    from .compare_cli import add_execution_options

    add_execution_options(sp)
    sp.set_defaults(func=_cmd_run, replace_own=False)


def _add_check(sp) -> None:
    sp.add_argument("case", help="case file (.toml)")
    sp.set_defaults(func=_cmd_check)


def _add_new(sp) -> None:
    from .template import KINDS

    sp.add_argument("path", help="file to write (.toml)")
    sp.add_argument("--kind", choices=tuple(KINDS), default="fixed",
                    help="what the template describes: " + "; ".join(
                        f"{k} = {v}" for k, v in KINDS.items()) + " (default fixed)")
    sp.add_argument("--force", action="store_true", help="replace an existing file")
    sp.set_defaults(func=_cmd_new)


def _add_demo(sp) -> None:
    _run_options(sp, "default outputs/demo")
    sp.add_argument("--compare", action="store_true",
                    help="run the bundled claim test instead (fixed tilt vs single-axis vs a "
                         "vendor's rotating columns) into outputs/demo_compare")
    from .compare_cli import add_options

    add_options(sp)
    sp.set_defaults(func=_cmd_demo)


def _add_compare(sp) -> None:
    from .compare_cli import add_compare_options

    add_compare_options(sp, _non_negative_int, DEFAULT_SEED)


def _add_sweep(sp) -> None:
    from .sweep import add_sweep_options

    add_sweep_options(sp)


#: The subcommands: name, one-line help, function adding its options. Only the subcommand
#: being run gets its options, so ``lcoe --help`` and ``lcoe new`` import nothing heavy.
COMMANDS = (
    ("run", "run a case file and write results", _add_run),
    ("check", "validate a case file (and its weather, uncertainties, debt) and say what would "
              "run", _add_check),
    ("new", "write a commented case-file template of a chosen kind", _add_new),
    ("demo", "run the bundled demo case (--compare: the bundled claim test)", _add_demo),
    ("compare", "compare cases with common random numbers and test a candidate's claim "
                "against the baseline", _add_compare),
    ("sweep", "run many sites x technologies (common random numbers)", _add_sweep),
)


def _chosen_command(argv) -> str | None:
    """The subcommand named in ``argv`` (the first word that is one), or None."""
    names = {name for name, _, _ in COMMANDS}
    for word in argv:
        if word in names:
            return word
        if not word.startswith("-"):
            return None
    return None


def build_parser(argv=None) -> argparse.ArgumentParser:
    """The argument parser; with ``argv``, only the subcommand named there gets its options."""
    p = argparse.ArgumentParser(
        prog="lcoe", description="What a solar kilowatt-hour really costs, and how sure that "
                                 "number is. Start with: lcoe demo")
    p.add_argument("--version", action="version", version=f"%(prog)s {__version__}")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")
    chosen = _chosen_command(argv) if argv is not None else None
    for name, help_text, add in COMMANDS:
        sp = sub.add_parser(name, help=help_text, description=help_text[0].upper() +
                            help_text[1:] + ".")
        if argv is None or name == chosen:
            add(sp)
    return p


def main(argv=None) -> int:
    """Entry point: any exception ends as one line on stderr, exit 2 (130 on Ctrl-C)."""
    from .errors import run_guarded

    return run_guarded(lambda: _dispatch(argv))


def _dispatch(argv) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    args = build_parser(argv).parse_args(argv)
    return args.func(args)


if __name__ == "__main__":
    sys.exit(main())
