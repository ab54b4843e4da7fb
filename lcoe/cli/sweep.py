"""Command line of ``lcoe sweep``. Thin: parses, runs, prints."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from lcoe.study.sweep import SweepResult




def format_table(result: SweepResult) -> str:
    """The compact table printed by ``lcoe sweep``."""
    cur = result.plan.currency
    head = (f"  {'site':<24} {'technology':<24} {'LCOE real P10-P50-P90 ' + cur + '/kWh':>34} "
            f"{'P(cheapest)':>12}")
    lines = [head]
    for r in result.rows:
        band = f"{r.lcoe_real_q10:.4f} {r.lcoe_real_q50:.4f} {r.lcoe_real_q90:.4f}"
        lines.append(f"  {r.site[:24]:<24} {r.technology[:24]:<24} {band:>34} "
                     f"{r.prob_cheapest:>12.3f}")
    return "\n".join(lines)


def _cmd_sweep(args) -> int:
    from lcoe.case.errors import collect_warnings
    from lcoe.cli.progress import Progress
    from lcoe.export.staging import publish
    from lcoe.export.sweep_outputs import write_sweep_outputs
    from lcoe.study.plan import load_plan
    from lcoe.study.sweep import run_sweep

    plan = load_plan(args.plan)
    out_path = Path(args.out) if args.out else Path("outputs") / Path(args.plan).stem
    bar = Progress(not args.quiet)
    with publish(out_path, force=args.force) as stage:  # refuses or locks before the run
        with collect_warnings() as caught:
            result = run_sweep(plan, workers=args.workers, scheduler=args.scheduler,
                               progress=lambda done, total: bar("sweep", done, total))
            if args.voi:  # value of information per site, on the trials already run
                from dataclasses import replace

                from lcoe.study.value_of_information import sweep_site_voi

                result = replace(result, voi=sweep_site_voi(result, seed=plan.seed))
        result.notes.extend(n for n in caught if n not in result.notes)
        write_sweep_outputs(result, stage)
    if not args.quiet:
        print(format_table(result))
        if result.voi:
            from lcoe.study.value_of_information import table_lines

            print("\n".join(table_lines(result.voi, plan.currency)))
        from lcoe.case.labels import humanize, schema_labels

        labels = schema_labels(plan.currency)
        for note in result.notes:
            print(f"  note: {humanize(note, labels)}")
        print(f"  ran {len(plan.runs)} site x technology runs of {plan.samples} trials "
              f"({result.execution}, {result.elapsed_s:.1f} s); wrote {out_path}/")
    for f in result.failures:
        print(f"lcoe: failed: site '{f.site}', technology '{f.technology}' (chunk {f.chunk}, "
              f"{f.attempts} attempts): {f.error}", file=sys.stderr)
    return 1 if result.failures else 0


def add_sweep_options(s) -> None:
    """Arguments and options of ``lcoe sweep`` on its subparser ``s``."""
    from lcoe.cli.options import add_execution_options

    s.description = ("Run every site x technology of a sweep plan with its full Monte Carlo. "
                     "Exit status 2 for bad input (nothing written), 1 when some runs failed "
                     "(the rest is written).")
    s.add_argument("plan", help="sweep plan (.toml)")
    s.add_argument("--out", help="output folder (default outputs/<plan name>)")
    add_execution_options(s)
    s.add_argument("--force", action="store_true",
                   help="replace an output folder written by lcoe before, as a whole")
    s.add_argument("--quiet", action="store_true", help="print nothing but errors")
    s.add_argument("--voi", action="store_true",
                   help="also the value of information per site: what learning each input "
                        "before choosing the technology is worth per kWh")
    s.set_defaults(func=_cmd_sweep)


def _add_sweep(sp) -> None:

    add_sweep_options(sp)
