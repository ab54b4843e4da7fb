"""Command line: ``lcoe run | check | new | demo | compare | sweep``. Thin: parses, calls, prints.

Bad input of any kind ends with one line on stderr and exit status 2, without a traceback.

Start-up is kept fast: the command line imports nothing from the scientific stack, and
only the subcommand being run gets its options (and their imports); ``lcoe --help``,
``--version`` and ``lcoe new`` never import numpy, pandas, scipy, pvlib, SALib,
matplotlib or openpyxl.
"""

from __future__ import annotations

import argparse
import sys

from lcoe import __version__
from lcoe.cli.check import _add_check
from lcoe.cli.compare import _add_compare
from lcoe.cli.demo import _add_demo
from lcoe.cli.new import _add_new
from lcoe.cli.run import _add_run
from lcoe.cli.sweep import _add_sweep

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
    from lcoe.cli.guard import run_guarded

    return run_guarded(lambda: _dispatch(argv))


def _dispatch(argv) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    args = build_parser(argv).parse_args(argv)
    return args.func(args)

