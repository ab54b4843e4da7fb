"""Command line of ``lcoe check``."""

from __future__ import annotations


def _cmd_check(args) -> int:
    from lcoe.study.check import check_case

    for line in check_case(args.case):
        print(line)
    return 0


def _add_check(sp) -> None:
    sp.add_argument("case", help="case file (.toml)")
    sp.set_defaults(func=_cmd_check)
