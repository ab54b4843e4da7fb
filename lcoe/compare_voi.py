"""Value of information of a comparison: which uncertainty is worth resolving before choosing.

The decision is which of the compared cases to build. The value of each case in a trial is
minus its net present value of costs for the same delivered energy: minus its real LCOE times
the baseline's lifetime energy discounted at the baseline's real discount rate,
``value_k = -LCOE_real_k x E_ref`` [currency]. Cases of different size are thus compared per
kWh delivered, and a figure in currency divides back to currency per kWh by ``E_ref``. When
every case sells its energy (a ``[revenue]`` table), the value is instead the NPV of the
cash flow to equity at the equity's target IRR (the project as built, whatever its size);
:data:`VoiBlock.basis` states which.

EVPI and the EVPPI of every sampled input and group of inputs come from the trials already
run (:mod:`lcoe.uncertainty.voi`); nothing is re-simulated. Orchestration only: it builds the
value matrix and the groups, and holds the result for the exporters.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from .errors import InputError
from .uncertainty.voi import DEFAULT_BOOTSTRAP, InfoValue, evpi, evppi_table

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
    from .labels import group_label

    shown = {n: (labels or {}).get(n, n) for n in input_names}
    shown.update({g: group_label(SECTION_LABELS.get(g, g.removeprefix("group ")), len(m))
                  for g, m in groups.items()})
    return VoiBlock(options=list(names), expected_value=mean, best=int(np.argmax(mean)),
                    evpi=whole, rows=rows, energy_ref_kwh=float(energy_ref_kwh),
                    currency=currencies[0], n_trials=values.shape[0], basis=basis,
                    notes=notes, labels=shown)


def comparison_voi(result, n_boot: int = DEFAULT_BOOTSTRAP, seed=None) -> VoiBlock:
    """:func:`value_of_information` of a :class:`lcoe.compare.ComparisonResult`.

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
    from .labels import study_labels

    return value_of_information(
        [o.name for o in result.cases], [o.case["case.currency"] for o in result.cases],
        values, e_ref, x, [c.dist.name for c in cols], [c.path for c in cols],
        [c.dist.group for c in cols], n_boot, result.seed if seed is None else seed,
        source="lcoe compare", basis=basis,
        labels=study_labels(cols, [o.case for o in result.cases]))
