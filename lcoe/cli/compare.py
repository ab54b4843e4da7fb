"""Command line of ``lcoe compare`` and ``lcoe demo --compare``. Thin: parses, runs, prints."""

from __future__ import annotations

import argparse
from pathlib import Path

from lcoe.case.errors import InputError
from lcoe.cli.options import _non_negative_int, add_execution_options
from lcoe.study.defaults import DEFAULT_SEED

#: The bundled comparison demo: baseline first (fixed tilt), then the candidates.
DEMO_COMPARE = ("demo_fixed_tilt.toml", "compare_single_axis.toml",
                "compare_rotating_columns.toml")
#: Inputs declared once for the bundled comparison (one market: discount rate and inflation).
DEMO_SHARED = "compare_shared.toml"


def _claim_ratio(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
    if not 0.0 < value <= 10.0:
        raise argparse.ArgumentTypeError(f"{value} is outside (0, 10]; e.g. 0.667 for "
                                         f"'a third cheaper'")
    return value


def add_options(p, samples_default: bool = True) -> None:
    """Options of a comparison (shared by ``compare`` and ``demo --compare``)."""
    from lcoe.study.compare import DEFAULT_SOBOL_BASE

    p.add_argument("--claim-ratio", type=_claim_ratio, default=None, metavar="R",
                   help="test that each candidate's cost per kWh is at most R times the "
                        "baseline's (e.g. 0.667 = a third cheaper); default: each candidate's "
                        "claim.lcoe_ratio, else 1")
    p.add_argument("--sobol-ratio", type=int, default=DEFAULT_SOBOL_BASE, metavar="N",
                   help=f"Sobol base samples for the drivers of each ratio (default "
                        f"{DEFAULT_SOBOL_BASE}; 0 = skip)")
    add_execution_options(p)


def add_compare_options(p, non_negative_int, default_seed: int) -> None:
    """Arguments and options of ``lcoe compare`` on its subparser ``p``."""
    from lcoe.study.compare import DEFAULT_SAMPLES

    p.add_argument("cases", nargs="+", metavar="CASE.toml",
                   help="the baseline first, then one or more candidates")
    p.add_argument("--out", help="output folder (default outputs/compare_<baseline>)")
    p.add_argument("--samples", type=non_negative_int, default=DEFAULT_SAMPLES,
                   help=f"Monte Carlo trials (default {DEFAULT_SAMPLES})")
    p.add_argument("--seed", type=non_negative_int, default=default_seed,
                   help=f"seed of the random generator (default {default_seed})")
    p.add_argument("--force", action="store_true",
                   help="replace an output folder written by lcoe before, as a whole")
    p.add_argument("--quiet", action="store_true", help="print nothing but errors")
    p.add_argument("--method", choices=("lhs", "random"), default="lhs",
                   help="Monte Carlo sampling: Latin hypercube (default) or random")
    p.add_argument("--shared", metavar="FILE.toml",
                   help="inputs declared once for the whole comparison ([uncertain]: one draw "
                        "per trial for every case) and rank correlations, also between two "
                        "cases' own inputs (between = [\"case/input\", \"case/input\"])")
    add_options(p)
    p.set_defaults(func=cmd_compare, replace_own=False)


def cmd_compare(args) -> int:
    """Run a comparison from parsed arguments and write its outputs."""
    from lcoe.case.reader import load_case
    from lcoe.cli.progress import Progress
    from lcoe.export.compare_outputs import write_compare_outputs
    from lcoe.study.compare import run_comparison
    from lcoe.study.run import provenance

    if len(args.cases) < 2:
        raise InputError("lcoe compare: expected a baseline and at least one candidate "
                         "(lcoe compare BASELINE.toml CANDIDATE.toml ...)")
    from lcoe.case.errors import collect_warnings
    from lcoe.export.staging import publish
    from lcoe.study.shared import NO_SHARED, read_shared

    shared = read_shared(args.shared) if getattr(args, "shared", None) else NO_SHARED
    cases = [load_case(p) for p in args.cases]
    out = Path(args.out) if args.out else Path("outputs") / f"compare_{Path(args.cases[0]).stem}"
    samples = args.samples if args.samples is not None else 2000
    with publish(out, force=args.force, replace_own=args.replace_own) as stage:
        with collect_warnings() as caught:
            result = run_comparison(cases, samples=samples, seed=args.seed,
                                    claim_ratio=args.claim_ratio, sobol_base=args.sobol_ratio,
                                    method=getattr(args, "method", "lhs"),
                                    progress=Progress(not args.quiet), shared=shared,
                                    workers=getattr(args, "workers", 1),
                                    scheduler=getattr(args, "scheduler", None))
        result.notes.extend(caught)  # library warnings go into the notes, not the terminal
        write_compare_outputs(result, stage, provenance={"provenance": provenance(args.seed)})
    if not args.quiet:
        print(format_comparison(result))
        print(f"  wrote {out}/")
    return 0


def run_demo_compare(args) -> int:
    """``lcoe demo --compare``: the bundled claim test into outputs/demo_compare."""
    from lcoe.cli.options import INPUTS_DIR

    paths = [INPUTS_DIR / name for name in DEMO_COMPARE]
    for p in paths:
        if not p.is_file():
            raise InputError(f"{p}: bundled demo case not found (install from a clone of the "
                             f"repository with pip install -e .)")
    args.cases = [str(p) for p in paths]
    args.shared = str(INPUTS_DIR / DEMO_SHARED)
    args.replace_own = args.out is None
    args.out = args.out or str(Path("outputs") / "demo_compare")
    return cmd_compare(args)


def format_comparison(result) -> str:
    """The table printed by ``lcoe compare``."""
    from lcoe.export.compare_outputs import _labelled
    from lcoe.study.audit import audit_sentence
    from lcoe.study.claim_ratio import claim_sentence
    from lcoe.study.compare import drivers, input_labels

    cur = result.currency
    labels = input_labels(result)
    wide = max([34] + [len(o.name) + 1 for o in result.cases])  # whole names, never cut
    lines = [f"  Comparison: {result.samples:,} trials ({result.method}, seed {result.seed}), "
             f"common random numbers; baseline {result.baseline.name}",
             f"  {'case':<{wide}}{'LCOE real ' + cur + '/kWh (P10 / P50 / P90)':>38}"
             f"{'kWh/kW':>9}{'kWh/m2 cells':>14}{'kWh/m2 land':>13}"]
    import numpy as np

    for o in result.cases:
        t = o.trials
        q = np.quantile(t.lcoe_real, (0.1, 0.5, 0.9))
        lines.append(f"  {o.name:<{wide}}{q[0]:>16.4f} /{q[1]:>8.4f} /{q[2]:>8.4f}"
                     f"{np.median(t.energy_per_kw_kwh):>11,.0f}"
                     f"{np.median(t.energy_per_cell_m2_kwh):>14,.1f}"
                     f"{np.median(t.energy_per_land_m2_kwh):>13,.1f}")
    for c in result.claims:
        o = result.cases[c.index]
        lines += ["", "  " + claim_sentence(o.name, result.baseline.name, c.claim_ratio,
                                            c.stats, cur)]
        top = _labelled(drivers(c, top=4), labels)
        if top:
            lines.append("  The ratio depends most on: " + "; ".join(
                f"{d['label']} (ST {d['ST']:.2f})" for d in top) + ".")
    for p in result.pairs:
        lines.append(f"  {p['case']} against {p['reference']}: ratio {p['q50']:.3g} "
                     f"({p['q10']:.3g}-{p['q90']:.3g}); at most {p['claim_ratio']:.3g} in "
                     f"{100 * p['prob_claim_holds']:.1f} % of trials")
    lines += ["", "  Physics audit:"]
    for o in result.cases:
        lines.append(f"  {o.name}: {audit_sentence(o.audit)}")
        lines += [f"    [{f['verdict']}] {f['message']}" for f in o.audit
                  if f["verdict"] != "ok"]
        lines += [f"    caution: {c}" for c in o.cautions]
    from lcoe.case.labels import humanize

    lines += [f"  note: {humanize(n, labels)}" for n in result.notes]
    if result.voi is not None:
        lines += [""] + result.voi.table_lines()
    return "\n".join(lines)


def _add_compare(sp) -> None:

    add_compare_options(sp, _non_negative_int, DEFAULT_SEED)
