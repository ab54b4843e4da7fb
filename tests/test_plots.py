"""Pictures of a run: every expected PNG is drawn, readable, not blank; no import-time cost."""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest
from conftest import DEMO, INPUTS

from lcoe.export.plots import (
    DPI,
    FIGSIZE,
    PICTURES,
    fig_cumulative,
    fig_dscr_fan,
    figure_png,
    render_figures,
)
from lcoe.export.run_outputs import write_outputs
from lcoe.study.run import run_case

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


@pytest.fixture(scope="module")
def study():
    return run_case(DEMO, samples=128, sobol_base=16)


def _pixels(png: bytes) -> np.ndarray:
    import io

    from matplotlib.image import imread

    return imread(io.BytesIO(png), format="png")


def _assert_picture(png: bytes) -> None:
    assert png.startswith(PNG_SIGNATURE)
    px = _pixels(png)
    assert px.ndim == 3 and px.shape[0] > 200 and px.shape[1] > 400
    # not blank: many distinct grey levels and real contrast
    grey = px[..., :3].mean(axis=2)
    assert grey.std() > 0.05 and np.unique(np.round(grey, 2)).size > 20


def test_render_figures_of_a_study(study):
    figs = render_figures(study)
    expected = {"lcoe_distribution.png", "sobol_indices.png", "tornado.png",
                "monthly_energy.png", "loss_chain.png"}
    assert set(figs) == expected
    assert list(figs) == [p for p in PICTURES if p in figs]
    for png in figs.values():
        _assert_picture(png)
    px = _pixels(figs["monthly_energy.png"])
    assert px.shape[:2] == (round(FIGSIZE[1] * DPI), round(FIGSIZE[0] * DPI))


def test_deterministic_run_has_energy_pictures_only(study):
    import dataclasses

    figs = render_figures(dataclasses.replace(study, extras={}))
    assert set(figs) == {"monthly_energy.png", "loss_chain.png"}


def test_lender_run_has_a_dscr_fan():
    lender = run_case(INPUTS / "lender_single_axis.toml", samples=48, sobol_base=0)
    figs = render_figures(lender)
    assert "dscr_fan.png" in figs
    _assert_picture(figs["dscr_fan.png"])


def test_dscr_fan_and_cumulative_helpers():
    rng = np.random.default_rng(7)
    years = np.arange(1, 19)
    base = 1.35 + 0.01 * years
    bands = {q: base + 0.25 * (q - 0.5) for q in (0.01, 0.1, 0.5, 0.9, 0.99)}
    _assert_picture(figure_png(fig_dscr_fan(years, bands, lockup=1.10, deterministic=base)))
    curves = {"fixed tilt": rng.normal(0.06, 0.005, 500),
              "single axis": rng.normal(0.058, 0.006, 400)}
    _assert_picture(figure_png(fig_cumulative(curves, "LCOE real [USD/kWh]")))


def test_write_outputs_writes_pictures_and_report(study, tmp_path):
    out = write_outputs(study, tmp_path / "out")
    names = {p.name for p in out.iterdir()}
    assert {"summary.json", "workbook.xlsx", "trials.csv", "report.html",
            "lcoe_distribution.png", "loss_chain.png"} <= names
    for p in out.glob("*.png"):
        _assert_picture(p.read_bytes())


def test_no_plotting_or_spreadsheet_library_at_import():
    code = ("import sys, lcoe, lcoe.study.run, lcoe.export.plots, lcoe.export.report, "
            "lcoe.export.workbook.layout, lcoe.export.workbook.book, "
            "lcoe.export.workbook.yearly, lcoe.export.workbook.study_sheets, "
            "lcoe.case.readback; "
            "print(sorted(m for m in ('matplotlib', 'openpyxl') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "[]"


def test_pictures_drawn_once_in_the_shared_style(study):
    """One drawing per picture (savefig would draw twice with a layout engine); the style is
    the pictures' own and leaves the caller's matplotlib settings alone."""
    import matplotlib

    from lcoe.export.plots import STYLE, build_figures

    before = {k: matplotlib.rcParams[k] for k in STYLE}
    figs = build_figures(study)
    draws = {name: [] for name in figs}
    for name, fig in figs.items():
        fig.canvas.mpl_connect("draw_event", lambda event, n=name: draws[n].append(1))
        figure_png(fig)
        ax = fig.axes[0]
        assert not ax.spines["top"].get_visible() and not ax.spines["right"].get_visible()
    assert {name: len(d) for name, d in draws.items()} == {name: 1 for name in figs}
    assert {k: matplotlib.rcParams[k] for k in STYLE} == before


def test_every_loss_chain_stage_has_a_label():
    # the waterfall and the comparison's loss table name each stage, none by its key
    from lcoe.export.plots import LOSS_LABELS
    from lcoe.plant.energy import LOSS_CHAIN

    assert [k for k, _ in LOSS_CHAIN] == list(LOSS_LABELS)
