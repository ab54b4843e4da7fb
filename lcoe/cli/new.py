"""Command line of ``lcoe new``: a commented template (or a sweep plan)."""

from __future__ import annotations

from pathlib import Path

from lcoe.case.errors import InputError


def _cmd_new(args) -> int:
    from lcoe.case.template import KINDS, sweep_files, sweep_plan_text, template_text
    from lcoe.export.staging import publish_file

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


def _add_new(sp) -> None:
    from lcoe.case.template import KINDS

    sp.add_argument("path", help="file to write (.toml)")
    sp.add_argument("--kind", choices=tuple(KINDS), default="fixed",
                    help="what the template describes: " + "; ".join(
                        f"{k} = {v}" for k, v in KINDS.items()) + " (default fixed)")
    sp.add_argument("--force", action="store_true", help="replace an existing file")
    sp.set_defaults(func=_cmd_new)
