"""Command line of ``lcoe demo`` (and ``lcoe demo --compare``)."""

from __future__ import annotations

from pathlib import Path

from lcoe.case.errors import InputError
from lcoe.cli.options import DEMO_CASE
from lcoe.cli.run import _cmd_run, _run_options


def _cmd_demo(args) -> int:
    if getattr(args, "compare", False):
        from lcoe.cli.compare import run_demo_compare

        return run_demo_compare(args)
    if not DEMO_CASE.is_file():
        raise InputError(f"{DEMO_CASE}: bundled demo case not found (install from a clone of "
                         f"the repository with pip install -e .)")
    args.case = str(DEMO_CASE)
    args.replace_own = args.out is None
    args.out = args.out or str(Path("outputs") / "demo")
    return _cmd_run(args)


def _add_demo(sp) -> None:
    _run_options(sp, "default outputs/demo")
    sp.add_argument("--compare", action="store_true",
                    help="run the bundled claim test instead (fixed tilt vs single-axis vs a "
                         "vendor's rotating columns) into outputs/demo_compare")
    from lcoe.cli.compare import add_options

    add_options(sp)
    sp.set_defaults(func=_cmd_demo)
