"""Several cases side by side, trial by trial, and the test of a vendor's claim.

The first case is the baseline; every other case is a candidate compared with it trial by
trial. The trials come from the study layer (:mod:`lcoe.study`) with its one sharing rule:
cases at the same site share that site's weather (year-to-year factors and ``resource_sd``);
inputs declared once in a ``--shared`` file are one draw per trial for every case; each case's
own ``[uncertain]`` inputs and energy-model components are its own, independent of the other
cases unless the shared file declares a cross-case rank correlation
(``between = ["<case>/<input>", "<case>/<input>"]``). The ratio of two cases' LCOE then
carries the uncertainty of what differs between them and not the noise of what they share.

Shapes: ``n`` trials; every per-case array is (n,).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from lcoe.case.errors import InputError
from lcoe.case.reader import Case
from lcoe.case.rng import make_rng
from lcoe.model import ModelOutput, cash_flow, evaluate
from lcoe.plant.concentrator import cautions
from lcoe.study import SHARING_RULE
from lcoe.study.audit import audit_case, case_facts, claims_of
from lcoe.study.claim_ratio import (
    breakeven_capex_per_kw,
    breakeven_energy_scale,
    breakeven_summary,
    energy_scale_terms,
    ratio_stats,
)
from lcoe.study.design import TrialDesign
from lcoe.study.design import build_design as build_trial_design
from lcoe.study.shared import NO_SHARED, SharedInputs, apply_shared, resolve_pairs
from lcoe.study.spec import read_spec
from lcoe.study.trials import (
    CHUNK_TRIALS,
    StudyRun,
    evaluate_runs,
    failure_error,
    prepared,
    site_key,
    split_inputs,
)
from lcoe.uncertainty.distributions import Distribution
from lcoe.uncertainty.sampling import uniforms_to_values
from lcoe.uncertainty.stats import stats

#: Defaults of a comparison.
DEFAULT_SAMPLES = 2000
DEFAULT_SOBOL_BASE = 512
#: Step of capex per kW used to measure the (exact) slope of the affine LCOE [currency/kW].
CAPEX_STEP = 100.0


@dataclass(frozen=True)
class Column:
    """One column of the comparison's trial design, for display.

    Attributes
    ----------
    dist : Distribution
        The distribution of its first case, named by the column label (the dotted path, with
        ``[case]`` or ``[site]`` when it is not shared by the whole study).
    path : str
        The case input (``energy.<name>`` for a persistent energy factor).
    cases : tuple of int
        Indices of the cases that read it (more than one: shared).
    kind : str
        ``"study"`` (declared once), ``"site"`` (a site's resource) or ``"run"`` (a case's own).
    """

    dist: Distribution
    path: str
    cases: tuple
    kind: str = "run"

    @property
    def shared(self) -> bool:
        return len(self.cases) > 1


@dataclass(frozen=True)
class Design:
    """The trial design of a comparison and its columns.

    Attributes
    ----------
    trials : TrialDesign
    runs : list of StudyRun
        One per case, baseline first.
    columns : list of Column
    """

    trials: TrialDesign
    runs: list
    columns: list

    @property
    def case_columns(self) -> tuple:
        return self.trials.member_columns


def case_label(case: Case) -> str:
    """The label of a case in cross-case correlations: its file name without the extension."""
    return Path(case.source).stem


def input_labels(result) -> dict:
    """Human label with unit of every uncertain input of a comparison, by design name.

    Keys are the design's column names (``costs.capex_per_kw``, or with the case appended,
    ``costs.capex_per_kw [Case]``, when cases draw it apart) and the dotted paths.
    """
    from lcoe.case.labels import study_labels

    return study_labels(result.design.columns, [o.case for o in result.cases])


def site_name(case: Case) -> str:
    """A short name of a case's site for column labels."""
    if case.monthly is not None:
        return f"{case['site.latitude_deg']:g}, {case['site.longitude_deg']:g}"
    return case.weather_path.name if case.weather_path else "bundled weather"


def study_runs(cases: Sequence[Case], shared: SharedInputs = NO_SHARED,
               collectors: Callable | None = None, equity: bool = False) -> list[StudyRun]:
    """The runs of a comparison: each case at its site with the shared inputs merged in.

    ``collectors(case)`` gives a run's collector; with ``equity`` every run also collects the
    project-finance outputs of its loan (the equity NPV at the target IRR feeds the value of
    information, :mod:`lcoe.study.value_of_information`).
    """
    merged, used = apply_shared(cases, shared)
    sites: dict[str, str] = {}
    runs = []
    for case, own_shared in zip(merged, used):
        key = site_key(case)
        sites.setdefault(key, site_name(case))
        spec = read_spec(case)
        cols = (collectors(case),) if collectors else ()
        if equity:
            from lcoe.study.bankability import run_bankability

            site = prepared(case)[0]
            cols += (run_bankability(case, evaluate(case, site), spec).collector(case),)
        runs.append(StudyRun(label=case.name, case_label=case_label(case), site=sites[key],
                             case=case, spec=spec, shared=own_shared, collectors=cols))
    return runs


def build_design(runs: Sequence[StudyRun], samples: int, seed: int, method: str = "lhs",
                 shared: SharedInputs = NO_SHARED) -> Design:
    """The comparison's trial design (:func:`lcoe.study.design.build_design`) with its columns.

    Raises
    ------
    InputError
        Conflicting or unknown correlations (see :mod:`lcoe.study.shared`).
    """
    members = [r.member() for r in runs]
    cross = resolve_pairs(shared.pairs, members, shared.source or "--shared")
    td = build_trial_design(members, samples, seed, method, cross,
                            source=shared.source or "compared cases")
    columns = []
    for j, label in enumerate(td.columns):
        users = tuple(m for m, cols in enumerate(td.member_columns) if j in cols)
        first = users[0]
        d = runs[first].spec.dists[td.member_columns[first].index(j)]
        group = d.group
        if group and td.kinds[j] == "run":
            group = f"{group} [{runs[first].label}]"
        columns.append(Column(dist=replace(d, name=label, group=group), path=d.name,
                              cases=users, kind=td.kinds[j]))
    return Design(trials=td, runs=list(runs), columns=columns)


@dataclass(frozen=True)
class CaseTrials:
    """Per-trial results of one case, each (n,).

    Attributes
    ----------
    lcoe_real, lcoe_nominal : numpy.ndarray
        [currency/kWh].
    energy_per_kw_kwh, energy_per_cell_m2_kwh, energy_per_land_m2_kwh : numpy.ndarray
        Long-term average-year energy (physics x persistent factors) per kW of nameplate, per
        m2 of cells and per m2 of land [kWh/kW, kWh/m2, kWh/m2].
    capex_per_kw : numpy.ndarray
        The trial's capex [currency/kW].
    lcoe_slope_per_capex : numpy.ndarray
        dLCOE_real/dcapex [currency/kWh per currency/kW].
    energy_scale_a, energy_scale_b : numpy.ndarray
        Terms of ``LCOE_real(s) = A / s + B`` for a factor s on the energy [currency/kWh].
    equity_npv : numpy.ndarray or None
        NPV of the cash flow to equity at its target IRR, with the loan sized on the
        deterministic case [currency]; only when every compared case has ``[revenue]``.
    """

    lcoe_real: np.ndarray
    lcoe_nominal: np.ndarray
    energy_per_kw_kwh: np.ndarray
    energy_per_cell_m2_kwh: np.ndarray
    energy_per_land_m2_kwh: np.ndarray
    capex_per_kw: np.ndarray
    lcoe_slope_per_capex: np.ndarray
    energy_scale_a: np.ndarray
    energy_scale_b: np.ndarray
    equity_npv: np.ndarray | None = None


@dataclass(frozen=True)
class CaseOutcome:
    """One case of a comparison.

    Attributes
    ----------
    case : Case
    site : Site
    base : ModelOutput
        The deterministic run at the case's values.
    trials : CaseTrials
    facts : dict
        Deterministic year used by the audit (see :func:`lcoe.study.audit.audit_case`).
    audit : list of dict
        Findings ``{check, verdict, message}``.
    cautions : list of str
        Safety cautions that travel with the results (e.g. concentrated sunlight).
    """

    case: Case
    site: Site
    base: ModelOutput
    trials: CaseTrials
    facts: dict
    audit: list
    cautions: list = field(default_factory=list)

    @property
    def name(self) -> str:
        return self.case.name


@dataclass(frozen=True)
class ClaimOutcome:
    """The claim test of one candidate against the baseline.

    Attributes
    ----------
    index : int
        Index of the candidate among the cases.
    claim_ratio : float
        The claimed upper bound on LCOE_candidate / LCOE_baseline [-].
    claim_ratio_source : str
        Where it came from (command line, the case's ``[claim]``, or the default 1).
    ratio : numpy.ndarray
        LCOE_real ratio per trial [-], (n,).
    stats : dict
        :func:`lcoe.study.claim_ratio.ratio_stats` and
        :func:`lcoe.study.claim_ratio.breakeven_summary`.
    capex_star, energy_star : numpy.ndarray
        Break-even capex per kW [currency/kW] and energy per kW [kWh/kW] per trial, (n,).
    sobol : SobolResult or None
        Indices of the ratio.
    sobol_notes : list of str
    """

    index: int
    claim_ratio: float
    claim_ratio_source: str
    ratio: np.ndarray
    stats: dict
    capex_star: np.ndarray
    energy_star: np.ndarray
    sobol: object = None
    sobol_notes: list = field(default_factory=list)


@dataclass(frozen=True)
class ComparisonResult:
    """Everything ``lcoe compare`` produced; exporters read it and compute nothing.

    Attributes
    ----------
    cases : list of CaseOutcome
        Baseline first.
    claims : list of ClaimOutcome
        One per candidate.
    design : Design
    samples, seed : int
    method : str
        Sampling method.
    currency : str
    pairs : list of dict
        Every later case against every earlier one: ``case``, ``reference`` (names),
        ``claim_ratio`` (the later case's) and :func:`lcoe.study.claim_ratio.ratio_stats` of
        LCOE_case / LCOE_reference.
    notes : list of str
    provenance : dict
    inputs : numpy.ndarray or None
        (n, D) design rows the trials were run with (columns of ``design``).
    voi : VoiBlock or None
        Value of information of the choice between the cases
        (:mod:`lcoe.study.value_of_information`).
    execution : str
        How the trials ran (does not change the numbers).
    """

    cases: list
    claims: list
    design: Design
    samples: int
    seed: int
    method: str
    currency: str
    pairs: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)
    inputs: np.ndarray | None = None
    voi: object = None
    execution: str = "serial (in process)"

    @property
    def baseline(self) -> CaseOutcome:
        return self.cases[0]


class ComparisonProbes:
    """Per-trial collector: the finance probes that give exact break-even values.

    LCOE is affine in capex and of the form A / s + B in a factor s on the energy, so one
    probe of each gives the slope and the two terms exactly.
    """

    def __init__(self, case: Case):
        self.case = case

    def __call__(self, out: ModelOutput, params: dict, sl) -> dict:
        case, full, e, factors = self.case, out.params, out.energy, out.weather_factors
        capex = full["costs.capex_per_kw"]
        probe = dict(full, **{"costs.capex_per_kw": capex + CAPEX_STEP})
        slope = (cash_flow(case, probe, e, factors).lcoe_real - out.cashflow.lcoe_real) \
            / CAPEX_STEP
        doubled = replace(e, annual_kwh=2.0 * e.annual_kwh)
        a, b = energy_scale_terms(out.cashflow.lcoe_real,
                                  cash_flow(case, full, doubled, factors).lcoe_real)
        return {"capex_per_kw": np.broadcast_to(capex, (sl.stop - sl.start,)).astype(float),
                "lcoe_slope_per_capex": slope, "energy_scale_a": a, "energy_scale_b": b}


def keep_case_trials(res: dict, task) -> dict:
    """What a comparison keeps of a chunk (its runs' ``finish``): the fields of
    :class:`CaseTrials`, computed where the chunk is evaluated; the sampled inputs and the
    yearly energy factors are not kept (the value of information reads the design's uniforms).
    """
    long_term = res["physics_kwh"] * res["persistent_factor"]
    kept = {"lcoe_real": res["lcoe_real_per_kwh"], "lcoe_nominal": res["lcoe_nominal_per_kwh"],
            "energy_per_kw_kwh": long_term / res["dc_capacity_kw"],
            "energy_per_cell_m2_kwh": long_term / res["cell_area_m2"],
            "energy_per_land_m2_kwh": long_term / res["land_area_m2"],
            "capex_per_kw": res["capex_per_kw"],
            "lcoe_slope_per_capex": res["lcoe_slope_per_capex"],
            "energy_scale_a": res["energy_scale_a"], "energy_scale_b": res["energy_scale_b"]}
    if "equity_npv_at_target" in res:
        kept["equity_npv"] = res["equity_npv_at_target"]
    # a view would hold the whole array it was cut from
    return {k: v.copy() if v.base is not None else v for k, v in kept.items()}


def run_comparison(cases: Sequence[Case], samples: int = DEFAULT_SAMPLES, seed: int = 1,
                   claim_ratio: float | None = None, sobol_base: int = DEFAULT_SOBOL_BASE,
                   method: str = "lhs", chunk_size: int = CHUNK_TRIALS,
                   progress: Callable[[str, int, int], None] | None = None,
                   shared: SharedInputs = NO_SHARED, workers: int = 1,
                   scheduler: str | None = None, voi_bootstrap: int = 100
                   ) -> ComparisonResult:
    """Compare cases with common random numbers and test each candidate's claim.

    Parameters
    ----------
    cases : sequence of Case
        Baseline first, then one or more candidates; one currency.
    samples : int
        Monte Carlo trials (>= 2).
    seed : int
        Seed of the study: the trial blocks use ``SeedSequence(seed, spawn_key=(0, b))``,
        the Sobol designs child 1.
    claim_ratio : float, optional
        Claimed bound on candidate / baseline LCOE for every candidate; None: each
        candidate's ``claim.lcoe_ratio``, or 1 (as cheap as the baseline) when it states none.
    sobol_base : int
        Sobol base samples N per candidate (0 skips the drivers of the ratio).
    method : {"lhs", "random"}
    chunk_size : int
        Trials per task (memory bound; results do not depend on it).
    progress : callable, optional
        ``progress(stage, done, total)``.
    voi_bootstrap : int
        Bootstrap resamples of the value-of-information step (0 skips it).
    shared : SharedInputs
        Inputs declared once for the comparison and cross-case correlations.
    workers, scheduler
        Where the trials run (see :func:`lcoe.study.trials.evaluate_runs`).

    Returns
    -------
    ComparisonResult
    """
    if len(cases) < 2:
        raise InputError("lcoe compare: expected a baseline and at least one candidate case")
    if samples < 2:
        raise InputError(f"--samples {samples}: expected at least 2 trials")
    currencies = {c["case.currency"] for c in cases}
    if len(currencies) > 1:
        raise InputError(f"{cases[1].source}: case.currency = {cases[1]['case.currency']!r}: "
                         f"expected the baseline's {cases[0]['case.currency']!r} (one currency "
                         f"per comparison)")
    names = [c.name for c in cases]
    if len(set(names)) < len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise InputError(f"case.name = {dup!r} is used by two compared cases: expected distinct "
                         f"names (they label every output)")
    with_equity = bool(voi_bootstrap) and all("revenue" in c.sections for c in cases)
    runs = [replace(r, finish=keep_case_trials)
            for r in study_runs(cases, shared, ComparisonProbes, equity=with_equity)]
    design = build_design(runs, samples, seed, method, shared)
    _, sobol_seq = np.random.SeedSequence(seed).spawn(2)
    tick = (lambda d, t: progress("trials", d, t)) if progress else None
    res = evaluate_runs(design.trials, runs, chunk_size, workers, scheduler, tick)
    err = failure_error(res, runs)
    if err is not None:
        raise err
    outcomes = []
    for run, out in zip(runs, res.outputs):
        site = prepared(run.case)[0]
        outcomes.append((run.case, site, evaluate(run.case, site), CaseTrials(**out)))
    cases = [r.case for r in runs]
    sites = [o[1] for o in outcomes]

    base_facts = case_facts(outcomes[0][0], outcomes[0][1], outcomes[0][2])
    claims, results = [], []
    for c, (case, site, base, trials) in enumerate(outcomes):
        facts = base_facts if c == 0 else case_facts(case, site, base)
        claim = None
        if c > 0:
            claim = _claim_test(c, case, trials, outcomes[0][3], claim_ratio)
            claims.append(claim)
        findings = audit_case(facts, claims_of(case), None if c == 0 else base_facts,
                              None if claim is None else claim.stats["q50"])
        results.append(CaseOutcome(case=case, site=site, base=base, trials=trials, facts=facts,
                                   audit=findings, cautions=cautions(case)))
    if sobol_base:
        seqs = sobol_seq.spawn(len(claims))
        claims = [_with_sobol(claim, design, sobol_base, sq, chunk_size, progress)
                  for claim, sq in zip(claims, seqs)]
    pairs = []
    for claim in claims:
        for ref in range(1, claim.index):
            ratio = results[claim.index].trials.lcoe_real / results[ref].trials.lcoe_real
            pairs.append({"case": results[claim.index].name, "reference": results[ref].name,
                          "claim_ratio": claim.claim_ratio,
                          **ratio_stats(ratio, claim.claim_ratio)})
    notes = _design_notes(design) + res.notes
    result = ComparisonResult(cases=results, claims=claims, design=design, samples=samples,
                              seed=seed, method=method, currency=cases[0]["case.currency"],
                              pairs=pairs, notes=notes, execution=res.execution)
    if voi_bootstrap:  # value of information: a separate step on the trials already run
        from lcoe.study.value_of_information import comparison_voi

        result = replace(result, voi=comparison_voi(result, voi_bootstrap))
    return result


def _claim_test(c: int, case: Case, trials: CaseTrials, base: CaseTrials,
                claim_ratio: float | None) -> ClaimOutcome:
    if claim_ratio is not None:
        ratio_bound, source = float(claim_ratio), "--claim-ratio"
    elif case["claim.lcoe_ratio"] is not None:
        ratio_bound, source = float(case["claim.lcoe_ratio"]), f"{case.source} [claim]"
    else:
        ratio_bound, source = 1.0, "default: at least as cheap as the baseline"
    ratio = trials.lcoe_real / base.lcoe_real
    target = ratio_bound * base.lcoe_real
    capex_star = breakeven_capex_per_kw(trials.lcoe_real, trials.capex_per_kw,
                                        trials.lcoe_slope_per_capex, target)
    energy_star = breakeven_energy_scale(trials.energy_scale_a, trials.energy_scale_b,
                                         target) * trials.energy_per_kw_kwh
    st = {**ratio_stats(ratio, ratio_bound), **breakeven_summary(capex_star, energy_star),
          "lcoe_real": stats(trials.lcoe_real), "baseline_lcoe_real": stats(base.lcoe_real)}
    return ClaimOutcome(index=c, claim_ratio=ratio_bound, claim_ratio_source=source,
                        ratio=ratio, stats=st, capex_star=capex_star, energy_star=energy_star)


def ratio_model(design: Design, c: int, columns: Sequence[int],
                chunk_size: int = CHUNK_TRIALS, progress=None
                ) -> Callable[[np.ndarray], np.ndarray]:
    """``f(U) -> Y``: LCOE_real of case c over the baseline's, both on the same rows.

    ``U`` (n, len(columns)) holds uniforms of the given design columns; each case maps them
    through its own distributions. Year-to-year weather is left out (every year at its mean,
    as in :func:`lcoe.study.single.model_function`), persistent energy factors are in.
    """
    def f(us: np.ndarray) -> np.ndarray:
        full = np.full((us.shape[0], len(design.columns)), 0.5)
        full[:, list(columns)] = us
        out = np.ones(us.shape[0])
        for k, sign in ((0, -1.0), (c, 1.0)):
            run = design.runs[k]
            site = prepared(run.case)[0]
            cols = list(design.case_columns[k])
            X = uniforms_to_values(run.spec.dists, full[:, cols]) if cols else \
                np.empty((us.shape[0], 0))
            params_all, persist = split_inputs(run.spec, X)
            life = int(run.case["case.lifetime_years"])
            for start in range(0, us.shape[0], chunk_size):
                sl = slice(start, min(start + chunk_size, us.shape[0]))
                params = {p: v[sl] for p, v in params_all.items()}
                wf = np.repeat(persist[sl, None], life, axis=1)
                out[sl] *= evaluate(run.case, site, params,
                                    weather_factors=wf).cashflow.lcoe_real ** sign
                if progress:
                    progress(sl.stop + (us.shape[0] if k else 0), 2 * us.shape[0])
        return out

    return f


def _with_sobol(claim: ClaimOutcome, design: Design, sobol_base: int,
                seq: np.random.SeedSequence, chunk_size: int, progress) -> ClaimOutcome:
    """Sobol indices of the candidate's LCOE ratio over the design columns of the two cases.

    The Sobol design is drawn in uniform space (each column uniform on (0, 1)); each case maps
    a column through its own distribution, as in the Monte Carlo.
    """
    from lcoe.uncertainty.sensitivity import sobol_analyze, sobol_sample

    c = claim.index
    columns = sorted(set(design.case_columns[0]) | set(design.case_columns[c]))
    if not columns:
        return replace(claim, sobol_notes=["No uncertain inputs: no drivers to rank."])
    dists = [Distribution(name=design.columns[j].dist.name, dist="uniform",
                          params={"low": 0.0, "high": 1.0}, group=design.columns[j].dist.group)
             for j in columns]
    corr = None if design.trials.corr is None else design.trials.corr[np.ix_(columns, columns)]
    design_seq, analyze_seq = seq.spawn(2)
    # corr=None: the caveat on correlated inputs comes once, from sobol_analyze below.
    _, us, note = sobol_sample(dists, sobol_base, make_rng(design_seq), None)
    stage = (lambda d, t: progress(f"Sobol {c}", d, t)) if progress else None
    y = ratio_model(design, c, columns, chunk_size, stage)(us)
    notes = [note] if note else []
    if np.ptp(y) == 0.0:
        return replace(claim, sobol_notes=notes + ["The ratio does not vary: no drivers."])
    sob = sobol_analyze(dists, y, sobol_base, make_rng(analyze_seq), corr=corr,
                        output="lcoe_ratio")
    notes.append("Year-to-year weather is left out of the Sobol design (every year at its "
                 "mean); persistent energy components are included.")
    return replace(claim, sobol=sob, sobol_notes=notes)


def _design_notes(design: Design) -> list[str]:
    study = [col.dist.name for col in design.columns if col.kind == "study"]
    site = [col.dist.name for col in design.columns if col.kind == "site" and col.shared]
    notes = [SHARING_RULE]
    if study:
        notes.append("Declared once for the comparison (one draw per trial for every case "
                     "that has it): " + ", ".join(study) + ".")
    if site:
        notes.append("Shared by the cases at one site: " + ", ".join(site) +
                     " and the year-to-year weather.")
    if not study:
        notes.append("No input is declared for the whole comparison (--shared): each case's "
                     "own inputs are drawn independently of the other cases.")
    finance = [col.dist.name for col in design.columns
               if col.kind == "run" and col.path.startswith("finance.")]
    if finance:
        notes.append("Finance inputs drawn for each case apart: " + ", ".join(finance) +
                     ". One market moves rates for every case alike; drawn apart they add "
                     "spread to the ratio that no technology causes, and can top its drivers. "
                     "Declare them once in a --shared file to draw them for every case.")
    return notes


def drivers(claim: ClaimOutcome, top: int = 5) -> list[dict]:
    """The inputs the ratio depends on most: Sobol rows sorted by total index."""
    if claim.sobol is None:
        return []
    rows = sorted(claim.sobol.rows, key=lambda r: -r["ST"])
    return [{k: r[k] for k in ("input", "members", "S1", "S1_conf", "ST", "ST_conf",
                               "ST_includes_zero")} for r in rows[:top]]
