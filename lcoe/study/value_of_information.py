"""Value of information in the studies: what learning an input before deciding is worth.

- comparison (``lcoe compare``): option values ``-LCOE_real x`` the baseline's
  discounted energy, EVPI and EVPPI per input and group (:class:`VoiBlock`);
- sweep (``lcoe sweep --voi``): the choice of technology at each site;
- lender (``lcoe run`` with ``[revenue]``): the debt re-sized for ``resource_sd`` from
  its value to a target.

The estimators themselves are in :mod:`lcoe.uncertainty.voi`.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from lcoe.case.errors import InputError
from lcoe.case.reader import Case
from lcoe.model import ModelOutput
from lcoe.money.finance import npv
from lcoe.money.metrics import BASE_CASE
from lcoe.study.lender_case import sized_finance, sizing_factors
from lcoe.study.spec import UncertainSpec
from lcoe.uncertainty.voi import DEFAULT_BOOTSTRAP, InfoValue, evpi, evppi_table

#: What the value of an option is (printed with every result).
VALUE_BASIS = ("value of a case in a trial = -(its real LCOE) x (the baseline's lifetime "
               "energy discounted at its real rate): minus the present value of the costs of "
               "delivering the same energy")
#: What the value is when every case sells its energy (has a ``[revenue]`` table).
EQUITY_BASIS = ("value of a case in a trial = NPV of its cash flow to equity at the equity's "
                "target IRR, with the loan sized on its deterministic case (every compared "
                "case has a tariff)")
#: Groups by the section of the input's dotted path.
SECTION_GROUPS = {"energy": "persistent energy factors (resource, model, ...)",
                  "costs": "costs", "finance": "finance", "plant": "plant and energy model",
                  "site": "site", "tax": "finance", "debt": "finance"}
#: Readable labels of the groups by section (every case's inputs of that section).
SECTION_LABELS = {"persistent energy factors (resource, model, ...)":
                  "Energy factors of every case",
                  "costs": "Costs of every case", "finance": "Finance of every case",
                  "plant and energy model": "Plant and energy model of every case",
                  "site": "Site of every case", "other": "Other inputs of every case"}
#: Label of the EVPI row (perfect information on everything).
EVPI_LABEL = "Everything (EVPI)"
#: Caution that travels with every value-of-information figure.
CAUTION = ("These values assume the input distributions are right; they are upper bounds on "
           "what a study or test is worth to this decision, not a forecast of its result.")


@dataclass(frozen=True)
class VoiBlock:
    """Value of information of a comparison.

    Attributes
    ----------
    options : list of str
        Case names, baseline first.
    expected_value : numpy.ndarray
        (K,) mean value of each option over the trials [currency].
    best : int
        Index of the option with the highest expected value (the choice made now).
    evpi : InfoValue
        [currency].
    rows : list of InfoValue
        EVPPI of every input, then of every group [currency], sorted by value.
    energy_ref_kwh : float
        Baseline lifetime energy discounted at its real rate [kWh].
    currency : str
    n_trials : int
    basis : str
    notes : list of str
    labels : dict of str to str
        Readable label with unit of each row's name (dotted key of an input, with its case
        when cases draw it apart, or a group's name) for pages, charts and the CLI; JSON and
        the workbook keep the name beside it as the key.
    """

    options: list
    expected_value: np.ndarray
    best: int
    evpi: InfoValue
    rows: list
    energy_ref_kwh: float
    currency: str
    n_trials: int
    basis: str = VALUE_BASIS
    notes: list = field(default_factory=list)
    labels: dict = field(default_factory=dict)

    def label(self, name: str) -> str:
        """Readable label of a row's name or of an input (the name when none is known)."""
        return self.labels.get(name, EVPI_LABEL if name == self.evpi.name else name)

    def spoken(self, name: str) -> str:
        """An input's label for a sentence: without its unit, its case after "of"
        (``"Capex [USD/kW] [Plant A]"`` -> ``"Capex of Plant A"``)."""
        m = _UNIT_AND_CASE.match(self.label(name)) if name in self.labels else None
        if m is None:
            return self.label(name)
        return f"{m['name']} of {m['case']}" if m["case"] else m["name"]

    def row_dict(self, row: InfoValue) -> dict:
        """:meth:`InfoValue.to_dict` per kWh of the baseline, with ``label`` and the members'
        labels."""
        return {**row.to_dict(self.energy_ref_kwh), "label": self.label(row.name),
                "member_labels": [self.label(m) for m in row.members]}

    @property
    def inputs(self) -> list:
        """EVPPI rows of single inputs, highest first."""
        return [r for r in self.rows if len(r.members) == 1]

    def top_sentence(self) -> str:
        """Plain sentence on the input most worth learning."""
        cur = self.currency
        rows = self.inputs
        if not rows or rows[0].below_se:
            return (f"No single uncertain input is worth measurably more than its estimation "
                    f"error to this choice (perfect information on everything: up to "
                    f"{_money(self.evpi.value, cur)}).")
        top, rest = rows[0], rows[1:]
        second = max((r.value for r in rest), default=0.0)
        return (f"Learning {self.spoken(top.name)} before choosing is worth up to "
                f"{_money(top.value, cur)} to this decision "
                f"({1000 * top.value / self.energy_ref_kwh:.3g} {cur}/MWh of "
                f"the baseline's discounted energy); nothing else alone is worth more than "
                f"{_money(max(second, 0.0), cur)}.")

    def to_summary(self) -> dict:
        e = self.energy_ref_kwh
        return {
            "decision": "which case to build", "options": self.options,
            "value_basis": self.basis, "currency": self.currency,
            "energy_ref_kwh": e,
            "energy_ref_definition": "baseline lifetime energy discounted at its real rate",
            "expected_value": dict(zip(self.options, self.expected_value.tolist())),
            "choice_now": self.options[self.best], "n_trials": self.n_trials,
            "evpi": self.row_dict(self.evpi), "evppi": [self.row_dict(r) for r in self.rows],
            "method": "EVPPI by regression on the trials (Strong, Oakley & Brennan 2014): "
                      "penalised cubic spline on the input's ranks, GCV smoothing; groups: "
                      "additive splines plus pairwise products; bootstrap standard errors",
            "top_sentence": self.top_sentence(), "caution": CAUTION, "notes": self.notes,
        }

    def table_lines(self, top: int = 10) -> list[str]:
        cur, e = self.currency, self.energy_ref_kwh
        lines = [f"  Worth up to ... to learn before deciding ({self.n_trials:,} trials; choice "
                 f"now: {self.options[self.best]})",
                 f"    {'input or group':<{W}}{'value ' + cur:>16}{'+/- se':>12}"
                 f"{cur + '/MWh':>11}"]
        shown = [self.evpi] + self.rows[:top]
        for r in shown:
            flag = "  (below its error)" if r.below_se else ""
            v = r.value if abs(r.value) >= 0.5 else 0.0  # print no "-0" for rounding noise
            lines.append(f"    {_clip(self.label(r.name), W - 1):<{W}}{v:>16,.0f}{r.se:>12,.0f}"
                         f"{1000 * v / e:>11.3f}{flag}")
        if len(self.rows) > top:
            lines.append(f"    ... {len(self.rows) - top} more inputs and groups, each worth at "
                         f"most {max(self.rows[top].value, 0.0):,.0f} {cur} (all in the JSON "
                         f"and the workbook)")
        lines += ["    " + self.top_sentence(), f"    note: {CAUTION}"]
        lines += [f"    note: {n}" for n in self.notes]
        return lines


#: A label with unit and, when cases draw the input apart, the case: "Name [unit] [Case]".
_UNIT_AND_CASE = re.compile(r"^(?P<name>.*?) \[[^\[\]]*\](?: \[(?P<case>.*)\])?$")
#: Width of the label column of the CLI table [characters].
W = 66


def _clip(text: str, n: int) -> str:
    """``text`` cut to n characters with an ellipsis in the middle (keeps the case name)."""
    if len(text) <= n:
        return text
    half = (n - 3) // 2
    return text[:half] + "..." + text[-(n - 3 - half):]


def _money(x: float, cur: str) -> str:
    a = abs(x)
    if a >= 1e6:
        return f"{x / 1e6:.2f} M {cur}"
    if a >= 1e3:
        return f"{x / 1e3:.1f} k {cur}"
    return f"{x:,.0f} {cur}"


def option_values(lcoe_real: Sequence[np.ndarray], energy_ref_kwh: float) -> np.ndarray:
    """(n, K) values of the options [currency]: ``-LCOE_real_k x E_ref`` (see module doc)."""
    return -np.column_stack([np.asarray(v, dtype=float) for v in lcoe_real]) * energy_ref_kwh


def input_groups(names: Sequence[str], paths: Sequence[str],
                 sobol_groups: Sequence[str | None]) -> dict:
    """Groups of inputs: by section of the dotted path, and the cases' own Sobol groups.

    Only groups with at least two members are kept.
    """
    groups: dict[str, list] = {}
    for name, path, sg in zip(names, paths, sobol_groups):
        groups.setdefault(SECTION_GROUPS.get(path.split(".", 1)[0], "other"), []).append(name)
        if sg:
            groups.setdefault(f"group {sg}", []).append(name)
    return {k: v for k, v in groups.items() if len(v) > 1 and len(v) < len(names)}


def value_of_information(names: Sequence[str], currencies: Sequence[str],
                         values: np.ndarray, energy_ref_kwh: float,
                         x: np.ndarray, input_names: Sequence[str], paths: Sequence[str],
                         sobol_groups: Sequence[str | None] = (),
                         n_boot: int = DEFAULT_BOOTSTRAP, seed=None,
                         source: str = "value of information",
                         basis: str = VALUE_BASIS, labels: dict | None = None) -> VoiBlock:
    """EVPI and EVPPI of the choice between compared cases.

    Parameters
    ----------
    names, currencies : sequence of str
        The options (cases), baseline first, and their currencies.
    values : numpy.ndarray
        (n, K) value of each option per trial [currency], common random numbers (e.g.
        :func:`option_values`).
    energy_ref_kwh : float
        Baseline lifetime energy discounted at its real rate [kWh] (for per-kWh figures).
    x : numpy.ndarray
        (n, d) sampled inputs of the same trials.
    input_names, paths : sequence of str
        Display name and dotted path of each column of x.
    sobol_groups : sequence of str or None
        The cases' Sobol group of each column, if any.
    n_boot : int
        Bootstrap resamples for standard errors.
    seed : int, SeedSequence, Generator or None
    labels : dict of str to str, optional
        Readable label with unit by input name (see :attr:`VoiBlock.labels`); groups are
        labelled from their names.

    Raises
    ------
    InputError
        Fewer than two options, or options in different currencies (one line).
    """
    if len(names) < 2:
        raise InputError(f"{source}: {len(names)} option(s) ({', '.join(names) or 'none'}): "
                         f"expected at least two cases to choose between")
    if len(set(currencies)) > 1:
        raise InputError(f"{source}: case.currency = {sorted(set(currencies))}: expected one "
                         f"currency for every option")
    if not energy_ref_kwh > 0:
        raise InputError(f"{source}: baseline discounted energy = {energy_ref_kwh}: expected "
                         f"> 0 kWh")
    values = np.asarray(values, dtype=float).reshape(-1, len(names))
    seq = np.random.SeedSequence(seed) if not isinstance(seed, np.random.SeedSequence) else seed
    s_evpi, s_rows = seq.spawn(2)
    whole = evpi(values, n_boot, np.random.default_rng(s_evpi))
    notes = []
    x = np.asarray(x, dtype=float).reshape(values.shape[0], -1)
    varying = [j for j in range(x.shape[1]) if np.ptp(x[:, j]) > 0]
    names_in = [input_names[j] for j in varying]
    groups = input_groups(names_in, [paths[j] for j in varying],
                          [sobol_groups[j] if j < len(sobol_groups) else None for j in varying])
    rows = evppi_table(values, x[:, varying], names_in, groups, n_boot,
                       np.random.default_rng(s_rows)) if varying else []
    rows.sort(key=lambda r: -r.value)
    notes.append("EVPI also counts the year-to-year weather; the inputs' EVPPI does not (it "
                 "cannot be learnt before building).")
    if len(names_in) < len(input_names):
        notes.append(f"{len(input_names) - len(names_in)} sampled input(s) constant across "
                     f"the trials: EVPPI 0, not listed.")
    mean = values.mean(axis=0)
    from lcoe.case.labels import group_label

    shown = {n: (labels or {}).get(n, n) for n in input_names}
    shown.update({g: group_label(SECTION_LABELS.get(g, g.removeprefix("group ")), len(m))
                  for g, m in groups.items()})
    return VoiBlock(options=list(names), expected_value=mean, best=int(np.argmax(mean)),
                    evpi=whole, rows=rows, energy_ref_kwh=float(energy_ref_kwh),
                    currency=currencies[0], n_trials=values.shape[0], basis=basis,
                    notes=notes, labels=shown)


def comparison_voi(result, n_boot: int = DEFAULT_BOOTSTRAP, seed=None) -> VoiBlock:
    """:func:`value_of_information` of a :class:`lcoe.study.compare.ComparisonResult`.

    Conditions on ``result.inputs`` (the (n, D) design rows the trials were run with) or, for
    a design that keeps only its uniforms, on those: EVPPI uses only the inputs' ranks.
    """
    cols = result.design.columns
    e_ref = float(result.baseline.base.cashflow.pv_energy_real_kwh[0])
    x = getattr(result, "inputs", None)
    if x is None and hasattr(result.design, "trials"):  # a study-engine design: its uniforms
        x = result.design.trials.draws(0, result.samples)[0]  # (ranks = the inputs' ranks)
    if x is None:
        x = np.empty((result.samples, 0))
    equity = [o.trials.equity_npv for o in result.cases]
    if all(v is not None for v in equity):
        values, basis = np.column_stack(equity), EQUITY_BASIS
    else:
        values = option_values([o.trials.lcoe_real for o in result.cases], e_ref)
        basis = VALUE_BASIS
    from lcoe.case.labels import study_labels

    return value_of_information(
        [o.name for o in result.cases], [o.case["case.currency"] for o in result.cases],
        values, e_ref, x, [c.dist.name for c in cols], [c.path for c in cols],
        [c.dist.group for c in cols], n_boot, result.seed if seed is None else seed,
        source="lcoe compare", basis=basis,
        labels=study_labels(cols, [o.case for o in result.cases]))


#: What the value of a technology is (printed with every result).
SWEEP_BASIS = ("value of a technology in a trial = -(its real LCOE): minus the cost of "
               "delivering one kWh; figures in currency per kWh")


def site_inputs(trials: dict, techs: list, readable=None) -> tuple[np.ndarray, list, list]:
    """Distinct sampled inputs of a site's runs: (n, d) values, their names and labels.

    Parameters
    ----------
    trials : dict
        technology -> object with ``names`` (tuple of str) and ``X`` (n, d).
    techs : list of str
    readable : callable, optional
        ``readable(name, technology)`` -> (label of the input, name of the technology) for the
        labels; default: the names as they are.

    Returns
    -------
    x : numpy.ndarray
        (n, d) values.
    names : list of str
        Dotted key, with ``[technology]`` when technologies draw it apart (the JSON's key).
    labels : list of str
        Readable label with unit, with the technology's case name when drawn apart.
    """
    found: list[tuple[str, str, np.ndarray]] = []  # (name, first technology, values)
    for t in techs:
        for j, name in enumerate(trials[t].names):
            col = np.asarray(trials[t].X[:, j], dtype=float)
            if not any(n == name and np.array_equal(c, col) for n, _, c in found):
                found.append((name, t, col))  # a shared draw is listed once
    names = [n for n, _, _ in found]
    readable = readable or (lambda n, t: (n, t))
    keys, labels = [], []
    for n, t, _ in found:
        text, tech = readable(n, t)
        apart = names.count(n) > 1
        keys.append(f"{n} [{t}]" if apart else n)
        labels.append(f"{text} [{tech}]" if apart else text)
    n_trials = len(trials[techs[0]].lcoe_real)
    x = np.column_stack([c for _, _, c in found]) if found else np.empty((n_trials, 0))
    return x, keys, labels


def sweep_site_voi(result, n_boot: int = DEFAULT_BOOTSTRAP, seed: int = 1,
                   top: int = 3) -> list[dict]:
    """EVPI and the top EVPPI rows of every site with at least two completed technologies.

    Parameters
    ----------
    result : SweepResult
        Its ``trials`` ((site, technology) -> RunTrials) and ``sites``.
    n_boot : int
        Bootstrap resamples.
    seed : int
    top : int
        EVPPI rows kept per site (largest first).

    Returns
    -------
    list of dict
        ``site``, ``options``, ``choice_now``, ``evpi_per_kwh``, ``evpi_se_per_kwh``,
        ``evppi`` (list of :meth:`InfoValue.to_dict` with values in currency/kWh, and
        ``label``: the input's readable label with unit),
        ``n_trials``, ``basis``. Sites with fewer than two completed technologies are left
        out (nothing to choose).
    """
    from lcoe.case.labels import input_label

    cases = {t.label: t.case_name for t in result.plan.technologies}

    def readable(name: str, tech: str) -> tuple[str, str]:
        return input_label(name, result.plan.currency), cases.get(tech, tech)

    out = []
    seqs = np.random.SeedSequence(seed).spawn(max(len(result.sites), 1))
    for site, sq in zip(result.sites, seqs):
        techs = [t for (s, t) in result.trials if s == site.name]
        if len(techs) < 2:
            continue
        runs = {t: result.trials[(site.name, t)] for t in techs}
        values = -np.column_stack([runs[t].lcoe_real for t in techs])
        s_evpi, s_rows = sq.spawn(2)
        whole = evpi(values, n_boot, np.random.default_rng(s_evpi))
        x, keys, labels = site_inputs(runs, techs, readable)
        keep = [j for j in range(x.shape[1]) if np.ptp(x[:, j]) > 0]
        rows = evppi_table(values, x[:, keep], [keys[j] for j in keep], None, n_boot,
                           np.random.default_rng(s_rows)) if keep else []
        rows.sort(key=lambda r: -r.value)
        label_of = dict(zip(keys, labels))
        mean = values.mean(axis=0)
        out.append({"site": site.name, "options": techs,
                    "choice_now": techs[int(np.argmax(mean))],
                    "evpi_per_kwh": whole.value, "evpi_se_per_kwh": whole.se,
                    "evppi": [{**r.to_dict(), "label": label_of[r.name]} for r in rows[:top]],
                    "n_trials": whole.n_trials,
                    "basis": SWEEP_BASIS})
    return out


def table_lines(rows: list[dict], currency: str) -> list[str]:
    """Lines for the CLI: per site, EVPI and the input most worth learning [currency/MWh]."""
    if not rows:
        return []

    def mwh(x: float) -> str:
        return f"{max(1000 * x, 0.0):.3f}"  # no "-0.000" from rounding noise

    lines = [f"  Worth up to ... to learn before choosing the technology ({currency}/MWh "
             f"delivered; EVPI = everything, +/- standard error)"]
    for r in rows:
        top = r["evppi"][0] if r["evppi"] else None
        best = (f"; most: {top.get('label', top['name'])} {mwh(top['value'])} (+/- {mwh(top['se'])})"
                + (", below its error" if top["below_se"] else "")) if top else ""
        lines.append(f"  {r['site'][:24]:<24} EVPI {mwh(r['evpi_per_kwh'])} (+/- "
                     f"{mwh(r['evpi_se_per_kwh'])}){best}")
    return lines


#: Default target: a campaign that halves the resource sigma.
DEFAULT_FRACTION = 0.5
#: Points of the sigma grid between the current value and the target (inclusive).
DEFAULT_POINTS = 6


@dataclass(frozen=True)
class ResourceInfoBlock:
    """Debt and equity value against ``resource_sd``.

    Attributes
    ----------
    sigma : numpy.ndarray
        (m,) resource sigmas, from the case's value down to the target [-].
    debt : numpy.ndarray
        (m,) debt sized on the case's constraints [currency].
    equity_value : numpy.ndarray
        (m,) NPV of the equity flow at the equity's target IRR [currency].
    equity_npv_discount : numpy.ndarray
        (m,) NPV of the equity flow at ``finance.discount_rate`` [currency].
    binding : list of str
        Binding sizing constraint at each sigma.
    sigma_1yr : numpy.ndarray
        (m,) total one-year energy sigma used for sizing [-].
    target_irr : float
    currency : str
    notes : list of str
    """

    sigma: np.ndarray
    debt: np.ndarray
    equity_value: np.ndarray
    equity_npv_discount: np.ndarray
    binding: list
    sigma_1yr: np.ndarray
    target_irr: float
    currency: str
    notes: list = field(default_factory=list)

    @property
    def reduction(self) -> float:
        """Reduction of sigma from the case's value to the target [-]."""
        return float(self.sigma[0] - self.sigma[-1])

    def gains(self) -> dict:
        """Debt and equity value gained at the target, in total and per 0.01 of sigma."""
        steps = self.reduction / 0.01 if self.reduction > 0 else np.nan
        d, e, w = (float(self.debt[-1] - self.debt[0]),
                   float(self.equity_value[-1] - self.equity_value[0]),
                   float(self.equity_npv_discount[-1] - self.equity_npv_discount[0]))
        return {"debt": d, "equity_value": e, "equity_npv_discount": w,
                "debt_per_0_01_sigma": d / steps, "equity_value_per_0_01_sigma": e / steps}

    def to_summary(self) -> dict:
        return {
            "question": "value of narrowing the long-term resource uncertainty (resource_sd) "
                        "before debt is sized",
            "resource_sd_from": float(self.sigma[0]), "resource_sd_to": float(self.sigma[-1]),
            "gained": self.gains(),
            "equity_value_definition": f"NPV of the cash flow to equity at its target IRR "
                                       f"({100 * self.target_irr:.1f} %)",
            "curve": [{"resource_sd": s, "sigma_1yr": s1, "debt": d, "equity_value": e,
                       "equity_npv_at_discount_rate": w, "binding": b}
                      for s, s1, d, e, w, b in zip(self.sigma.tolist(), self.sigma_1yr.tolist(),
                                                   self.debt.tolist(),
                                                   self.equity_value.tolist(),
                                                   self.equity_npv_discount.tolist(),
                                                   self.binding)],
            "caution": "Assumes the campaign delivers the stated sigma and leaves the P50 "
                       "unchanged; a campaign can also move the P50 either way.",
            "notes": self.notes,
        }

    def table_lines(self) -> list[str]:
        cur, g = self.currency, self.gains()
        lines = [f"  Worth paying to measure the resource: long-term resource sd "
                 f"{100 * self.sigma[0]:.1f} % -> {100 * self.sigma[-1]:.1f} %, debt re-sized "
                 f"each time",
                 f"    {'resource sd':>12}{'1-yr sd':>12}{'debt ' + cur:>18}"
                 f"{'equity value ' + cur:>22}  binding"]
        for s, s1, d, e, b in zip(self.sigma, self.sigma_1yr, self.debt, self.equity_value,
                                  self.binding):
            lines.append(f"    {100 * s:>10.2f} %{100 * s1:>10.2f} %{d:>18,.0f}{e:>22,.0f}  {b}")
        lines += [f"    Gained: debt {g['debt']:+,.0f} {cur} ({g['debt_per_0_01_sigma']:+,.0f} "
                  f"per 0.01 of sd); equity value {g['equity_value']:+,.0f} {cur} "
                  f"({g['equity_value_per_0_01_sigma']:+,.0f} per 0.01), at the equity's "
                  f"target IRR {100 * self.target_irr:.1f} %",
                  "    note: assumes the campaign delivers the stated sigma and leaves the "
                  "P50 unchanged"]
        lines += [f"    note: {n}" for n in self.notes]
        return lines


def resource_information_value(case: Case, base: ModelOutput, spec: UncertainSpec,
                               target_sd: float | None = None,
                               points: int = DEFAULT_POINTS) -> ResourceInfoBlock:
    """Debt capacity and equity value for ``resource_sd`` from the case's value to a target.

    Parameters
    ----------
    case : Case
        With ``[revenue]``, ``[debt]`` and ``[uncertain.energy] resource_sd``.
    base : ModelOutput
        Its deterministic run.
    spec : UncertainSpec
        Its uncertainty (the other energy components stay as they are).
    target_sd : float, optional
        Resource sigma after the campaign [-], in [0, current]; default half the current.
    points : int
        Points of the sigma grid (>= 2).

    Returns
    -------
    ResourceInfoBlock

    Raises
    ------
    InputError
        No ``resource_sd`` in the case, or a target outside [0, current].
    """
    comps = dict(spec.energy_components)
    now = float(comps.get("resource", 0.0))
    if now <= 0:
        raise InputError(f"{case.source}: uncertain.energy.resource_sd is not set: expected "
                         f"a resource sigma > 0 to value narrowing it")
    target = now * DEFAULT_FRACTION if target_sd is None else float(target_sd)
    if not 0.0 <= target <= now:
        raise InputError(f"{case.source}: resource_sd target = {target:g}: expected a value "
                         f"in [0, {now:g}] (the case's resource_sd)")
    sigmas = np.linspace(now, target, max(int(points), 2))
    debt, value, at_rate, binding, s1 = [], [], [], [], []
    irr = float(case["equity.target_irr"])
    for s in sigmas:
        factors, sigma_1yr, _ = sizing_factors(replace(spec, energy_components={
            **comps, "resource": s}))
        f = sized_finance(case, base, factors)
        debt.append(float(f.debt[0]))
        value.append(float(npv(irr, f.equity_flow[0])))
        at_rate.append(float(f.npv_equity[0]))
        b = "" if f.sizing is None else str(np.asarray(f.sizing.binding).reshape(-1)[0])
        binding.append(b.replace(BASE_CASE, "P50") or "-")
        s1.append(sigma_1yr)
    notes = []
    if all(b.startswith("P50") for b in binding):
        notes.append("the P50 cover ratio binds at every sigma: narrowing the resource "
                     "uncertainty barely changes the debt this case can carry")
    if len(set(binding)) > 1:
        notes.append("the binding constraint changes along the way: the gain is not "
                     "proportional to the reduction in sigma")
    return ResourceInfoBlock(sigma=sigmas, debt=np.array(debt), equity_value=np.array(value),
                             equity_npv_discount=np.array(at_rate), binding=binding,
                             sigma_1yr=np.array(s1), target_irr=irr,
                             currency=case["case.currency"], notes=notes)
