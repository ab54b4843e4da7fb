"""Pictures of a run as PNG (matplotlib, Agg canvas; pyplot and its global state are not used).

Each ``fig_*`` function takes plain result blocks and returns a :class:`matplotlib.figure.Figure`;
:func:`render_figures` draws every picture a run supports and returns PNG bytes by file name,
for ``runner.write_outputs`` (PNG files) and :mod:`lcoe.export.report` (embedded images).
The functions draw what the results hold; percentiles, indices and losses are the engine's.

Every picture shares one style (:data:`STYLE`, matplotlib settings applied only while a
picture is built and drawn, never to the caller's matplotlib) and is drawn once: the
constrained layout runs inside that one drawing (``savefig`` would first draw the whole
figure a second time, without output, to place it).
"""

from __future__ import annotations

import functools
import io
from collections.abc import Mapping, Sequence

import numpy as np

from lcoe.export.workbook.layout import MONTHS
from lcoe.plant.energy import LOSS_CHAIN

#: Figure size [inch] and resolution [dot/inch] of every picture (800 x 460 pixels).
FIGSIZE = (8.0, 4.6)
DPI = 100
#: Colours of this project's pictures.
BLUE, ORANGE, GREY, GREEN, RED = "#2f6690", "#d9822b", "#8a8f98", "#3a7d44", "#b23a48"
#: matplotlib settings of every picture: no frame on top and right, a light grid behind the
#: bars, legends without a box, and every text drawn literally (a ``$`` in a currency or a
#: name is a dollar sign, not mathtext).
STYLE = {
    "figure.dpi": DPI,
    "savefig.dpi": DPI,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.axisbelow": True,
    "grid.color": "#dddddd",
    "grid.linewidth": 0.8,
    "legend.frameon": False,
    "legend.fontsize": 9,
    "text.parse_math": False,
}


def styled(build):
    """Run a figure builder (or drawer) with :data:`STYLE` in force, and only then."""

    @functools.wraps(build)
    def run(*args, **kwargs):
        from matplotlib import rc_context

        with rc_context(STYLE):
            return build(*args, **kwargs)

    return run


#: Short labels of the loss-chain stages (the loss *into* each stage), one per stage of
#: :data:`lcoe.plant.energy.LOSS_CHAIN`.
LOSS_LABELS = {
    "poa_kwh": "Nameplate x irradiation",
    "after_row_shading_kwh": "Row shading",
    "after_body_shading_kwh": "Body shading",
    "after_iam_kwh": "Incidence angle",
    "after_soiling_kwh": "Soiling",
    "after_bifacial_kwh": "Rear side",
    "after_temperature_kwh": "Temperature",
    "after_dc_losses_kwh": "DC losses",
    "after_inverter_kwh": "Inverter",
    "after_clipping_kwh": "Clipping",
    "after_ac_losses_kwh": "AC losses",
    "after_availability_kwh": "Availability",
    "delivered_kwh": "Own consumption",
    "after_outages_kwh": "Moving-part outages",
}


#: Readable names of the outputs that sensitivity may target.
OUTPUT_LABELS = {
    "lcoe_real_per_kwh": "LCOE real",
    "lcoe_nominal_per_kwh": "LCOE nominal",
    "npv_costs": "NPV of costs",
    "energy_first_year_kwh": "First-year energy",
    "min_dscr": "Minimum DSCR",
    "equity_irr": "Equity IRR",
    "breakeven_tariff_per_kwh": "Break-even tariff",
}


def output_label(output: str) -> str:
    """Readable name of an output key, e.g. ``lcoe_real_per_kwh`` -> ``LCOE real``."""
    return OUTPUT_LABELS.get(output, output.replace("_", " "))


def _figure(figsize=FIGSIZE):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize, dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def _style(ax, axis: str = "y") -> None:
    """The grid of :data:`STYLE` along ``axis`` (the value axis)."""
    ax.grid(True, axis=axis)


def literal_text(fig):
    """Draw every text of ``fig`` literally and return the figure.

    A ``$`` in a currency, case or site name is a dollar sign, not the start of a formula
    (matplotlib's mathtext would fail on it or garble it). Call just before saving.
    """
    from matplotlib.text import Text

    for text in fig.findobj(Text):
        text.set_parse_math(False)
    return fig


@styled
def figure_png(fig) -> bytes:
    """PNG bytes of a figure, drawn once, its texts drawn literally (:func:`literal_text`)."""
    literal_text(fig)  # also figures built outside STYLE (texts added by a caller)
    buf = io.BytesIO()
    # one drawing, at the figure's own dpi; zlib level 3 compresses these flat-colour pictures
    # as small as the default level 6, 30 % faster
    fig.canvas.print_png(buf, pil_kwargs={"compress_level": 3})
    return buf.getvalue()


# --------------------------------------------------------------------------------------------
# single pictures
# --------------------------------------------------------------------------------------------
@styled
def fig_lcoe_distribution(values: np.ndarray, stats: Mapping, currency: str,
                          label: str = "LCOE real"):
    """Histogram of the LCOE over the Monte Carlo trials with its 10th, 50th, 90th percentiles.

    Parameters
    ----------
    values : numpy.ndarray
        LCOE of each trial [currency/kWh], (n,).
    stats : mapping
        :func:`lcoe.uncertainty.stats.stats` of ``values`` (keys ``mean, q10, q50, q90``).
    currency : str
    label : str
        Name of the output.
    """
    fig = _figure()
    ax = fig.add_subplot()
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    ax.hist(v, bins=min(60, max(10, int(np.sqrt(v.size)))), color=BLUE, alpha=0.85,
            edgecolor="white", linewidth=0.4)
    ymax = ax.get_ylim()[1]
    for key, name, ls in (("q10", "10th pct", ":"), ("q50", "median", "-"),
                          ("q90", "90th pct", "--")):
        x = stats[key]
        ax.axvline(x, color=ORANGE, linestyle=ls, linewidth=1.8,
                   label=f"{name}: {x:.4f} {currency}/kWh")
    ax.set_ylim(0, ymax * 1.05)
    ax.set_xlabel(f"{label} [{currency}/kWh]")
    ax.set_ylabel("Trials")
    ax.set_title(f"{label} across {v.size:,} Monte Carlo trials")
    ax.legend(loc="upper right", frameon=False, fontsize=9)
    _style(ax)
    return fig


@styled
def fig_sobol(rows: Sequence[Mapping], output: str, top: int = 12, label=str):
    """Sobol first-order (S1) and total (ST) indices with their confidence half-widths.

    Parameters
    ----------
    rows : sequence of mapping
        Sobol rows (``input, S1, S1_conf, ST, ST_conf``), ranked largest ST first.
    output : str
        Name of the analysed output.
    top : int
        Largest number of factors shown.
    label : callable
        Human label with unit of an input or group name (default: the name itself).
    """
    rows = list(rows)[:top]
    fig = _figure((9.0, max(3.0, 0.42 * len(rows) + 1.6)))
    ax = fig.add_subplot()
    y = np.arange(len(rows))
    h = 0.38
    ax.barh(y - h / 2, [r["S1"] for r in rows], height=h, xerr=[r["S1_conf"] for r in rows],
            color=BLUE, label="S1 (first order)", error_kw={"elinewidth": 1, "capsize": 2})
    ax.barh(y + h / 2, [r["ST"] for r in rows], height=h, xerr=[r["ST_conf"] for r in rows],
            color=ORANGE, label="ST (total)", error_kw={"elinewidth": 1, "capsize": 2})
    ax.set_yticks(y, [_short(label(r["input"]), 48) for r in rows])
    ax.invert_yaxis()
    ax.axvline(0, color="black", linewidth=0.8)
    ax.set_xlabel("Share of the output's variance [-] (bars: index, whiskers: confidence)")
    ax.set_title(f"Drivers of {output_label(output)} (Sobol indices)")
    ax.legend(loc="lower right", frameon=False, fontsize=9)
    _style(ax, "x")
    return fig


@styled
def fig_tornado(rows: Sequence[Mapping], output: str, unit: str, top: int = 12, label=str):
    """One-at-a-time swings: the output with each input at its 10th and 90th percentile.

    Parameters
    ----------
    rows : sequence of mapping
        Tornado rows (``input, low_value, high_value, y_low, y_high, y_base``), largest
        swing first.
    output : str
        Name of the output.
    unit : str
        Unit of the output.
    top : int
        Largest number of inputs shown.
    label : callable
        Human label with unit of an input name (default: the name itself).

    Notes
    -----
    When both percentiles move the output the same way from the base case, the two bars are
    drawn side by side (half height each) so that neither hides the other.
    """
    rows = list(rows)[:top]
    fig = _figure((9.0, max(3.0, 0.42 * len(rows) + 1.6)))
    ax = fig.add_subplot()
    base = rows[0]["y_base"] if rows else 0.0
    y = np.arange(len(rows))
    for i, r in enumerate(rows):
        lo, hi = r["y_low"] - base, r["y_high"] - base
        same_side = lo * hi > 0.0
        h, off = (0.3, 0.15) if same_side else (0.6, 0.0)
        ax.barh(i - off, lo, left=base, color=BLUE, height=h,
                label="input at its 10th percentile" if i == 0 else None)
        ax.barh(i + off, hi, left=base, color=ORANGE, height=h,
                label="input at its 90th percentile" if i == 0 else None)
    ax.set_yticks(y, [_short(label(r["input"]), 48) for r in rows])
    ax.invert_yaxis()
    ax.axvline(base, color="black", linewidth=1)
    ax.set_xlabel(f"{output_label(output)} [{unit}] (base case {base:.4g})")
    ax.set_title("Tornado: one input moved at a time, the others at base")
    ax.legend(loc="lower right", frameon=False, fontsize=9)
    _style(ax, "x")
    return fig


@styled
def fig_monthly_energy(monthly_kwh: np.ndarray):
    """Delivered energy by calendar month [MWh].

    Parameters
    ----------
    monthly_kwh : numpy.ndarray
        (12,) delivered energy [kWh].
    """
    fig = _figure()
    ax = fig.add_subplot()
    mwh = np.asarray(monthly_kwh, dtype=float) / 1000.0
    ax.bar(MONTHS, mwh, color=BLUE)
    ax.set_ylabel("Delivered energy [MWh]")
    ax.set_xlabel("Month")
    ax.set_title(f"Delivered energy by month (year total {mwh.sum():,.0f} MWh)")
    _style(ax)
    return fig


@styled
def fig_loss_chain(loss_chain_kwh: Mapping):
    """Waterfall from nameplate x plane-of-array irradiation to delivered energy [MWh/year].

    Parameters
    ----------
    loss_chain_kwh : mapping
        Energy after each stage of :data:`lcoe.plant.energy.LOSS_CHAIN` [kWh/year], scalars.
    """
    keys = [k for k, _ in LOSS_CHAIN if k in loss_chain_kwh]
    vals = np.array([float(loss_chain_kwh[k]) for k in keys]) / 1000.0
    fig = _figure((8.6, 4.8))
    ax = fig.add_subplot()
    x = np.arange(len(keys) + 1)
    ax.bar(x[0], vals[0], color=BLUE)
    ax.text(x[0], vals[0], f"{vals[0]:,.0f}", ha="center", va="bottom", fontsize=8)
    for i in range(1, len(keys)):
        loss = vals[i - 1] - vals[i]
        color = RED if loss >= 0 else GREEN
        ax.bar(x[i], -loss, bottom=vals[i - 1], color=color)
        pct = 100 * loss / vals[i - 1] if vals[i - 1] else 0.0
        text = "none" if abs(pct) < 0.05 else f"{-pct:+.1f} %"
        ax.text(x[i], vals[i - 1], text, ha="center", va="bottom", fontsize=8)
    ax.bar(x[-1], vals[-1], color=GREEN)
    ax.text(x[-1], vals[-1], f"{vals[-1]:,.0f}", ha="center", va="bottom", fontsize=8)
    labels = [LOSS_LABELS[k] for k in keys]
    ax.set_xticks(x, labels + ["Delivered"], rotation=35, ha="right", fontsize=9)
    lo = max(0.0, float(vals.min()) * 0.8)
    ax.set_ylim(lo, float(vals.max()) * 1.06)
    ax.set_ylabel("Energy [MWh/year] (axis does not start at 0)" if lo > 0 else
                  "Energy [MWh/year]")
    ax.yaxis.set_major_formatter("{x:,.0f}")
    ax.set_title("Loss chain: from plane-of-array irradiation to delivered AC energy")
    _style(ax)
    return fig


@styled
def fig_dscr_fan(years: np.ndarray, bands: Mapping[float, np.ndarray],
                 lockup: float | None = None, default: float = 1.0,
                 deterministic: np.ndarray | None = None):
    """DSCR by year: median and percentile bands over Monte Carlo trials.

    Parameters
    ----------
    years : numpy.ndarray
        Operating years with debt service [year], (k,).
    bands : mapping of float to numpy.ndarray
        DSCR percentile by year, keyed by probability (e.g. 0.01, 0.1, 0.5, 0.9, 0.99) [-],
        each (k,). Symmetric pairs are shaded, 0.5 is drawn as a line.
    lockup : float, optional
        Lock-up threshold [-] drawn as a line.
    default : float
        Default threshold [-] drawn as a line.
    deterministic : numpy.ndarray, optional
        DSCR of the deterministic case by year [-], (k,).
    """
    fig = _figure()
    ax = fig.add_subplot()
    qs = sorted(bands)
    pairs = [(lo, hi) for lo, hi in zip(qs, reversed(qs)) if lo < hi]
    for j, (lo, hi) in enumerate(pairs):
        ax.fill_between(years, bands[lo], bands[hi], color=BLUE, alpha=0.18 + 0.17 * j,
                        linewidth=0, label=f"{100 * lo:g}th-{100 * hi:g}th percentile")
    if 0.5 in bands:
        ax.plot(years, bands[0.5], color=BLUE, linewidth=2, label="median of trials")
    if deterministic is not None:
        ax.plot(years, deterministic, color="black", linewidth=1.2, linestyle="--",
                label="deterministic case")
    if lockup is not None:
        ax.axhline(lockup, color=ORANGE, linewidth=1.2, label=f"lock-up {lockup:.2f}x")
    ax.axhline(default, color=RED, linewidth=1.2, label=f"default {default:.2f}x")
    from matplotlib.ticker import MaxNLocator

    every = np.concatenate([np.ravel(b) for b in bands.values()])
    every = every[np.isfinite(every)]
    if every.size:
        top = max(1.5 * float(np.percentile(every, 90)), (lockup or default) * 1.3)
        if every.max() > top:  # a year with little debt service would flatten the rest
            ax.set_ylim(0, top)
            worst = int(years[int(np.nanargmax(np.nanmax(np.vstack(list(bands.values())),
                                                         axis=0)))])
            ax.annotate(f"off scale: up to {every.max():.1f}x (year {worst})",
                        xy=(worst, top), xytext=(-14, -14), textcoords="offset points",
                        ha="right", fontsize=8, color="#333333",
                        bbox={"fc": "white", "ec": "none", "alpha": 0.9})
        else:
            ax.set_ylim(0, top)
    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    ax.set_xlabel("Operating year")
    ax.set_ylabel("DSCR = CFADS / debt service [-]")
    ax.set_title("Debt service cover ratio by year across the trials")
    ax.legend(loc="upper left", frameon=False, fontsize=8, ncol=2)
    _style(ax)
    return fig


#: Colours of cases, in order: case i of a command keeps CASE_COLORS[i] in every chart.
CASE_COLORS = (BLUE, ORANGE, GREEN, RED, GREY, "#6b4c9a", "#1b998b", "#c05746")


@styled
def fig_cumulative(curves: Mapping[str, np.ndarray], xlabel: str,
                   title: str = "Cumulative distribution", colors: Sequence[str] | None = None):
    """Empirical cumulative distributions of several runs (e.g. the LCOE of compared cases).

    Parameters
    ----------
    curves : mapping of str to numpy.ndarray
        Label -> values of the trials, (n_i,).
    xlabel : str
        Axis label with unit, e.g. ``"LCOE real [USD/kWh]"``.
    title : str
    colors : sequence of str, optional
        Colour of each curve, in order (default :data:`CASE_COLORS`).
    """
    fig = _figure()
    ax = fig.add_subplot()
    colors = tuple(colors) if colors else CASE_COLORS
    for i, (label, values) in enumerate(curves.items()):
        v = np.sort(np.asarray(values, dtype=float)[np.isfinite(values)])
        if v.size == 0:
            continue
        p = (np.arange(1, v.size + 1) - 0.5) / v.size
        ax.plot(v, p, color=colors[i % len(colors)], linewidth=2,
                label=f"{_short(label, 80)} (median {np.median(v):.4g})")
    for q in (0.1, 0.5, 0.9):
        ax.axhline(q, color=GREY, linewidth=0.7, linestyle=":")
    ax.set_ylim(0, 1)
    ax.set_xlabel(xlabel)
    ax.set_ylabel("Share of trials at or below [-]")
    ax.set_title(title)
    ax.legend(loc="lower right", frameon=False, fontsize=9)
    _style(ax)
    return fig


def _short(text: str, n: int = 32) -> str:
    text = str(text)
    return text if len(text) <= n else text[: n - 1] + "…"


# --------------------------------------------------------------------------------------------
# every picture of a run
# --------------------------------------------------------------------------------------------
#: File names of the pictures, in the order the report shows them.
PICTURES = ("lcoe_distribution.png", "sobol_indices.png", "tornado.png", "monthly_energy.png",
            "loss_chain.png", "dscr_fan.png")


def dscr_bands(result):
    """DSCR fan data of a run's bankability block, or None.

    Returns
    -------
    tuple or None
        ``(years, bands, lockup, deterministic)`` when the block's Monte Carlo summary
        (``mc["dscr_fan"]``: ``years`` and percentiles ``q05, q10, ...`` by year) is present:
        years (k,), bands {probability: (k,) DSCR}, the lock-up DSCR and the deterministic
        DSCR of those years.
    """
    bank = result.extras.get("bankability")
    fan = (getattr(bank, "mc", None) or {}).get("dscr_fan") if bank is not None else None
    if not fan or not fan.get("years"):
        return None
    years = np.asarray(fan["years"], dtype=int)
    bands = {int(k[1:]) / 100.0: np.asarray(v, dtype=float) for k, v in fan.items()
             if k.startswith("q") and k[1:].isdigit()}
    if not bands:
        return None
    det = np.asarray(bank.finance.dscr[0], dtype=float)[years]
    return years, bands, getattr(bank, "lockup_dscr", None), det


def render_figures(result) -> dict[str, bytes]:
    """Every picture the run supports, as PNG bytes by file name (see :data:`PICTURES`).

    Parameters
    ----------
    result : RunResult

    Returns
    -------
    dict of str to bytes
    """
    return render_inputs(figure_inputs(result))


def render_inputs(inputs: Mapping) -> dict[str, bytes]:
    """PNG bytes by file name of the pictures described by :func:`figure_inputs`."""
    figs = draw_figures(inputs)
    return {name: figure_png(figs[name]) for name in PICTURES if name in figs}


def build_figures(result) -> dict:
    """Every picture the run supports, as matplotlib Figures by file name."""
    return draw_figures(figure_inputs(result))


def figure_inputs(result) -> dict:
    """What the pictures of a run show, as plain data (numbers, strings, arrays, dicts).

    Picklable and small next to the run (the LCOE of each trial is the largest part), so the
    pictures can be drawn in another process (:mod:`lcoe.export.parallel`). Labels of inputs
    are looked up here, once per shown row.
    """
    cur = result.case["case.currency"]
    e = result.base.energy
    out = {"currency": cur, "monthly_kwh": np.asarray(e.monthly_kwh[0], dtype=float),
           "loss_chain_kwh": {k: float(v[0]) for k, v in e.loss_chain_kwh.items()}}
    unc = result.extras.get("uncertainty")
    if unc is not None:
        out["lcoe"] = (np.asarray(unc.trials.outputs["lcoe_real_per_kwh"], dtype=float),
                       dict(unc.stats["lcoe_real_per_kwh"]))
    sens = result.extras.get("sensitivity")
    if sens is not None:
        unit = {"min_dscr": "-", "equity_irr": "1/year",
                "breakeven_tariff_per_kwh": f"{cur}/kWh"}.get(sens.output) or (
            f"{cur}/kWh" if "lcoe" in sens.output else (cur if "npv" in sens.output
                                                         else "kWh"))
        sobol = sens.ranked() if sens.sobol is not None and sens.sobol.rows else []
        tornado = list(sens.tornado or [])
        labels = {r["input"]: sens.label(r["input"]) for r in sobol + tornado}
        out["sensitivity"] = {"output": sens.output, "unit": unit, "sobol": sobol,
                              "tornado": tornado, "labels": labels}
    out["dscr_fan"] = dscr_bands(result)
    return out


def draw_figures(inputs: Mapping) -> dict:
    """The pictures described by :func:`figure_inputs`, as matplotlib Figures by file name."""
    figs = {}
    if "lcoe" in inputs:
        values, stats = inputs["lcoe"]
        figs["lcoe_distribution.png"] = fig_lcoe_distribution(values, stats, inputs["currency"])
    sens = inputs.get("sensitivity")
    if sens is not None:
        label = sens["labels"].__getitem__
        if sens["sobol"]:
            figs["sobol_indices.png"] = fig_sobol(sens["sobol"], sens["output"], label=label)
        if sens["tornado"]:
            figs["tornado.png"] = fig_tornado(sens["tornado"], sens["output"], sens["unit"],
                                              label=label)
    figs["monthly_energy.png"] = fig_monthly_energy(inputs["monthly_kwh"])
    figs["loss_chain.png"] = fig_loss_chain(inputs["loss_chain_kwh"])
    if inputs.get("dscr_fan") is not None:
        years, bands, lockup, det = inputs["dscr_fan"]
        figs["dscr_fan.png"] = fig_dscr_fan(years, bands, lockup=lockup, deterministic=det)
    return figs


def preload() -> None:
    """Import what drawing a picture needs (matplotlib's figure, Agg canvas, fonts)."""
    import matplotlib.backends.backend_agg  # noqa: F401
    import matplotlib.figure  # noqa: F401
