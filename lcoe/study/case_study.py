"""An uncertainty study of one case: Monte Carlo, energy exceedance, Sobol, tornado, Morris.

:func:`run_study` composes the engine and the sensitivity layer and returns two result blocks
(:class:`UncertaintyBlock`, :class:`SensitivityBlock`) that the exporters read.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from lcoe.case.reader import Case
from lcoe.case.rng import make_rng
from lcoe.model import Site, base_params
from lcoe.study.single import (
    OUTPUTS,
    EnergyExceedance,
    Trials,
    energy_exceedance,
    model_function,
    monte_carlo,
)
from lcoe.study.spec import UncertainSpec
from lcoe.uncertainty.sensitivity import (
    SobolResult,
    morris_screen,
    sobol_analyze,
    sobol_sample,
    tornado,
)
from lcoe.uncertainty.stats import stats

#: Plain names of the outputs, for sentences.
OUTPUT_LABELS = {"lcoe_real_per_kwh": "the real cost per kWh (LCOE)",
                 "lcoe_nominal_per_kwh": "the nominal cost per kWh (LCOE)",
                 "npv_costs": "the present value of costs",
                 "energy_first_year_kwh": "the first-year energy"}


@dataclass(frozen=True)
class UncertaintyBlock:
    """Monte Carlo results of a case.

    Attributes
    ----------
    trials : Trials
    spec : UncertainSpec
    exceedance : EnergyExceedance
    stats : dict of str to dict
        :func:`lcoe.uncertainty.stats.stats` of every scalar output.
    currency : str
    seed : int
        The run's seed (the trial design's blocks are its children).
    notes : list of str
    """

    trials: Trials
    spec: UncertainSpec
    exceedance: EnergyExceedance
    stats: dict
    currency: str
    seed: int
    notes: list = field(default_factory=list)

    def to_summary(self) -> dict:
        ex = self.exceedance
        return {
            "samples": self.trials.n, "seed": self.seed, "method": self.trials.method,
            "inputs": [{"input": d.name, "distribution": d.describe(), "group": d.group}
                       for d in self.spec.dists],
            "lcoe_real_per_kwh": self.stats["lcoe_real_per_kwh"],
            "lcoe_nominal_per_kwh": self.stats["lcoe_nominal_per_kwh"],
            "npv_costs": self.stats["npv_costs"],
            "energy_first_year_kwh": {**self.stats["energy_first_year_kwh"], **ex.sampled,
                                      "normal_method": ex.normal,
                                      "sigma_1yr": ex.sigma_1yr, "sigma_10yr": ex.sigma_10yr,
                                      "components_sd": ex.components,
                                      "differences": ex.differences},
            "notes": self.notes,
        }

    def table_lines(self) -> list[str]:
        s, cur, ex = self.stats, self.currency, self.exceedance
        lines = [f"  Uncertainty: {self.trials.n} trials ({self.trials.method}, seed "
                 f"{self.seed})",
                 f"  {'':<22}{'mean':>10}{'P10':>10}{'P50':>10}{'P90':>10}  (percentiles)"]
        for key, label in (("lcoe_real_per_kwh", f"LCOE real {cur}/kWh"),
                           ("lcoe_nominal_per_kwh", f"LCOE nominal {cur}/kWh")):
            v = s[key]
            lines.append(f"  {label:<22}{v['mean']:>10.4f}{v['q10']:>10.4f}{v['q50']:>10.4f}"
                         f"{v['q90']:>10.4f}")
        e = ex.sampled
        lines.append(f"  First-year energy: P50 {e['p50'] / 1e6:,.2f} GWh, P90 "
                     f"{e['p90'] / 1e6:,.2f} (1 yr) / {e['p90_10yr'] / 1e6:,.2f} (10 yr), P99 "
                     f"{e['p99'] / 1e6:,.2f} / {e['p99_10yr'] / 1e6:,.2f} GWh")
        lines.append(f"  Normal method: P90 {ex.normal['p90'] / 1e6:,.2f} / "
                     f"{ex.normal['p90_10yr'] / 1e6:,.2f} GWh (sigma {100 * ex.sigma_1yr:.1f} % "
                     f"1 yr, {100 * ex.sigma_10yr:.1f} % 10 yr)")
        lines += [f"  note: {d}" for d in ex.differences]
        return lines


@dataclass(frozen=True)
class SensitivityBlock:
    """Drivers of one output.

    Attributes
    ----------
    sobol : SobolResult or None
    tornado : list of dict
        One-at-a-time swings (P10/P90 of each input, others at base).
    morris : list of dict or None
    output : str
    notes : list of str
    """

    sobol: SobolResult | None
    tornado: list
    morris: list | None
    output: str
    notes: list = field(default_factory=list)
    labels: dict = field(default_factory=dict)

    def label(self, name: str) -> str:
        """Human label with unit of an input or group (the dotted key when unknown)."""
        return self.labels.get(name, name)

    def to_summary(self) -> dict:
        out = {"output": self.output, "notes": self.notes, "labels": self.labels,
               "tornado": self.tornado}
        if self.sobol is not None:
            s = self.sobol
            out.update({"method": s.method, "base_samples": s.base_samples,
                        "runs": s.n_runs, "conf_level": s.conf_level,
                        "indices": [{k: r[k] for k in ("input", "members", "S1", "S1_conf",
                                                       "ST", "ST_conf", "S1_includes_zero",
                                                       "ST_includes_zero", "wide")}
                                    for r in s.rows],
                        "warnings": s.warnings})
        if self.morris is not None:
            out["morris"] = self.morris
        return out

    def ranked(self) -> list[dict]:
        """Sobol rows sorted by total index, largest first."""
        return sorted(self.sobol.rows, key=lambda r: -r["ST"]) if self.sobol else []

    def plain_words(self) -> str:
        """One sentence on the main drivers, e.g. for the report."""
        rows = self.ranked()
        if not rows:
            return ""
        top, share = [], 0.0
        for r in rows:
            top.append(self.label(r["input"]))
            share += max(r["S1"], 0.0)
            if share >= 0.6 or len(top) == 3:
                break
        names = " and ".join([", ".join(top[:-1]), top[-1]] if len(top) > 1 else top)
        label = OUTPUT_LABELS.get(self.output, self.output.replace("_", " "))
        names = names[:1].upper() + names[1:]
        return (f"{names} explain about {100 * min(share, 1.0):.0f} % of the variance of "
                f"{label} on their own (first-order Sobol indices).")

    def table_lines(self) -> list[str]:
        if self.sobol is None:
            lines = [f"  Drivers of {OUTPUT_LABELS.get(self.output, self.output)} (one at a "
                     f"time, P10 to P90 of each input):"]
            for r in self.tornado[:8]:
                lines.append(f"    {self.label(r['input'])[:46]:<46} swing {r['swing']:.4g}")
            return lines
        lines = [f"  Drivers of {OUTPUT_LABELS.get(self.output, self.output)} (Sobol, "
                 f"N = {self.sobol.base_samples}):"]
        for r in self.ranked()[:8]:
            flag = " (interval includes 0)" if r["ST_includes_zero"] else ""
            lines.append(f"    {self.label(r['input'])[:46]:<46} S1 {r['S1']:6.3f} ± "
                         f"{r['S1_conf']:.3f}   "
                         f"ST {r['ST']:6.3f} ± {r['ST_conf']:.3f}{flag}")
        if self.sobol:
            wide = [w for w in self.sobol.warnings if "wide interval" in w]
            from lcoe.case.labels import humanize

            lines += [f"  note: {humanize(w, self.labels)}" for w in self.sobol.warnings
                      if "wide interval" not in w]
            if wide:
                lines.append(f"  note: {len(wide)} indices have a confidence half-width above "
                             f"10 % of the index; raise --sobol for tighter intervals")
        return lines


def run_study(case: Case, site: Site, spec: UncertainSpec, samples: int, seed: int,
              sobol_base: int = 256, sobol_output: str = "lcoe_real_per_kwh",
              screen: bool = False, chunk_size: int = 1000, method: str = "lhs",
              collectors: tuple = (), progress=None, targets: dict | None = None,
              workers: int = 1, scheduler: str | None = None):
    """Monte Carlo, exceedance, Sobol, tornado (and Morris when ``screen``) for a case.

    Parameters
    ----------
    case, site, spec
        The case, its prepared site and its uncertainty tables.
    samples : int
        Monte Carlo trials.
    seed : int
        Seed of the one generator; the Sobol and Morris designs use generators spawned from it.
    sobol_base : int
        Sobol base samples N (rounded up to a power of two; 0 skips Sobol).
    sobol_output : str
        Output the drivers are computed for (see engine.SENSITIVITY_TARGETS).
    screen : bool
        Also run Morris screening (useful with many inputs).
    chunk_size : int
        Trials per model call.
    method : {"lhs", "random"}
    collectors : tuple
        Extra per-trial outputs (see :func:`lcoe.study.single.monte_carlo`).
    progress : callable, optional
        ``progress(stage, done, total)``.
    targets : dict, optional
        Further sensitivity targets (see :func:`lcoe.study.single.model_function`).
    workers, scheduler
        Where the Monte Carlo trials run (see :func:`lcoe.study.single.monte_carlo`).

    Returns
    -------
    UncertaintyBlock, SensitivityBlock or None
    """
    # The trial blocks use SeedSequence(seed, spawn_key=(0, b)); Sobol and Morris children 1, 2.
    _, sobol_seq, morris_seq = np.random.SeedSequence(seed).spawn(3)

    def stage(name):
        return (lambda d, t: progress(name, d, t)) if progress else None

    trials, notes = monte_carlo(case, site, spec, samples, seed, method, chunk_size,
                                collectors, stage("Monte Carlo"), workers, scheduler)
    st = {k: stats(trials.outputs[k]) for k in OUTPUTS}
    unc = UncertaintyBlock(trials=trials, spec=spec, exceedance=energy_exceedance(trials, spec),
                           stats=st, currency=case["case.currency"], seed=seed, notes=notes)
    if not spec.dists:
        return unc, None
    f_tornado = model_function(case, site, spec, sobol_output, chunk_size, extra=targets)
    base_values = {d.name: (1.0 if d.name.startswith("energy.") else
                            _case_value(case, d.name)) for d in spec.dists}
    if progress:
        progress("tornado (one input at a time)", 0, 0)
    torn = tornado(spec.dists, f_tornado, base_values)
    sens_notes = []
    sob = None
    if sobol_base and sobol_base > 0:
        # corr=None: the caveat on correlated inputs comes once, from sobol_analyze below.
        _, x, note = sobol_sample(spec.dists, sobol_base, make_rng(sobol_seq), None)
        if note:
            sens_notes.append(note)
        f = model_function(case, site, spec, sobol_output, chunk_size, stage("Sobol"),
                           extra=targets)
        y = f(x)
        sob = sobol_analyze(spec.dists, y, sobol_base, make_rng(sobol_seq.spawn(1)[0]),
                            corr=spec.corr, output=sobol_output)
        sens_notes.append("Year-to-year weather is left out of the Sobol design (every year at "
                          "its mean); persistent energy components are included.")
    morris = None
    if screen:
        if progress:
            progress("Morris screening", 0, 0)
        morris = morris_screen(spec.dists, model_function(case, site, spec, sobol_output,
                                                          chunk_size, extra=targets),
                               20, make_rng(morris_seq), num_levels=6)
    return unc, SensitivityBlock(sobol=sob, tornado=torn, morris=morris, output=sobol_output,
                                 notes=sens_notes, labels=input_labels(case, spec.dists))


def input_labels(case: Case, dists) -> dict:
    """Human labels with units of the uncertain inputs and Sobol groups of ``case``."""
    from lcoe.case.labels import group_label, labeller

    label = labeller(case)
    out = {d.name: label(d.name) for d in dists}
    groups: dict = {}
    for d in dists:
        if d.group:
            groups.setdefault(d.group, []).append(d.name)
    for g, members in groups.items():
        out[g] = group_label(g, len(members))
    return out


def _case_value(case: Case, path: str) -> float:
    if path in case.values:
        return float(case[path])
    return float(base_params(case)[path][0])  # list tables, e.g. costs.moving_part[0].units
