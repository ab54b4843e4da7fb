"""Files of one ``lcoe run``: ``summary.json``, ``workbook.xlsx``, pictures, ``report.html``,
``trials.csv`` and the optional hourly table, published in one step.
"""

from __future__ import annotations

from pathlib import Path

from lcoe.export.staging import staged
from lcoe.study.results import RunResult


def picture_maker():
    """A context: a child forked now that imports matplotlib at once and draws a run's
    pictures when :func:`write_outputs` hands it what they show (``pictures=``).

    A command enters it before its computation, so the import is done meanwhile (on a spare
    core); see :func:`lcoe.export.parallel.beside`. Without a child the pictures are drawn in
    this process.
    """
    from lcoe.export import plots
    from lcoe.export.parallel import beside

    return beside(plots.render_inputs, preload=plots.preload)


def write_outputs(result: RunResult, out_dir, force: bool = False,
                  replace_own: bool = False, progress=None, hourly: bool = False,
                  pictures=None) -> Path:
    """Write ``summary.json``, ``workbook.xlsx``, the pictures (PNG) and ``report.html``.

    With an uncertainty study also ``trials.csv``; with ``hourly`` also every hour of the
    deterministic case (``hourly.parquet``, or ``hourly.csv`` when pyarrow is missing).
    The pictures are drawn in a forked process while the other files are written, where one
    can be forked (:func:`lcoe.export.parallel.beside`; the files are the same either way):
    the child of ``pictures`` (from :func:`picture_maker`, started by a command before its
    computation), else one forked here.
    ``out_dir`` is a folder, published whole in one rename (:func:`lcoe.export.staging.publish`; a
    non-empty folder is refused unless
    ``force``), or the :class:`lcoe.export.staging.Stage` of a command that already holds it.
    """
    from lcoe.study.progress import phase

    phase(progress, "writing outputs")
    from contextlib import nullcontext

    from lcoe.export import plots
    from lcoe.export.parallel import beside
    from lcoe.export.report import write_report
    from lcoe.export.summary import summary_json
    from lcoe.export.workbook.book import write_workbook

    # without a child forked earlier, one forked now (it reads what to draw at once, then
    # imports matplotlib and draws while this process writes the other files)
    with staged(out_dir, force=force, replace_own=replace_own) as out, \
            (beside(plots.render_inputs) if pictures is None else nullcontext(pictures)) as job:
        job.submit(plots.figure_inputs(result))
        out.write_text("summary.json", summary_json(result))
        out.write_with("workbook.xlsx", lambda p: write_workbook(result, p))
        if "uncertainty" in result.extras:
            from lcoe.export.trials_csv import write_trials_csv

            out.write_with("trials.csv", lambda p: write_trials_csv(result, p))
        figures = job.result()
        for name, png in figures.items():
            out.write_with(name, lambda p, png=png: p.write_bytes(png))
        out.write_with("report.html", lambda p: write_report(result, p, figures))
        if hourly:
            from lcoe.export.hourly import hourly_file_name, write_hourly

            out.write_with(hourly_file_name(), lambda p: write_hourly(result, p))
    return out.target
