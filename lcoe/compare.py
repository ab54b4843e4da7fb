"""Several cases side by side with common random numbers, and the test of a vendor's claim.

The first case is the baseline; every other case is a candidate compared with it trial by
trial. Common random numbers: an uncertain input that cases share by name (the same dotted
path in ``[uncertain]`` with the same distribution, or the same persistent energy component
``[uncertain.energy] <name>_sd`` with the same standard deviation) gets one column of uniforms
that every case reads, so a trial draws the same value for it in every case; the year-to-year
weather of a trial is one draw too (the same standard normal scores, or the same years of a
multi-year weather file). Inputs of one case alone get their own columns. All uniforms come
from one Latin hypercube (or random) design drawn from one seed, with the cases' rank
correlations applied to the shared design (Iman & Conover 1982), so a shared column stays
identical across cases. The ratio of two cases' LCOE is then free of the noise of inputs they
share and shows only what differs between them.

Shapes: ``n`` trials, ``D`` columns of the shared design; every per-case array is (n,).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from .case import Case
from .claims import (
    audit_case,
    breakeven_capex_per_kw,
    breakeven_energy_scale,
    breakeven_summary,
    case_facts,
    claims_of,
    energy_scale_terms,
    ratio_stats,
)
from .errors import InputError
from .model import ModelOutput, Site, cash_flow, evaluate, prepare
from .rng import make_rng
from .tech.concentrator_model import cautions
from .uncertainty.distributions import Distribution
from .uncertainty.engine import stats
from .uncertainty.sampling import correlation_matrix, sample_inputs
from .uncertainty.spec import ENERGY_FACTOR_FLOOR, UncertainSpec, read_spec

#: Defaults of a comparison.
DEFAULT_SAMPLES = 2000
DEFAULT_SOBOL_BASE = 512
#: Step of capex per kW used to measure the (exact) slope of the affine LCOE [currency/kW].
CAPEX_STEP = 100.0


@dataclass(frozen=True)
class Column:
    """One column of the shared design.

    Attributes
    ----------
    dist : Distribution
        Its distribution, named for display (the dotted path, or ``path [case]`` when cases
        give the same path different distributions) and with its Sobol group.
    path : str
        The case input (``energy.<name>`` for a persistent energy factor).
    cases : tuple of int
        Indices of the cases that read it (more than one: shared).
    """

    dist: Distribution
    path: str
    cases: tuple

    @property
    def shared(self) -> bool:
        return len(self.cases) > 1


@dataclass(frozen=True)
class Design:
    """Columns of the shared design and which column each case's inputs read.

    Attributes
    ----------
    columns : list of Column
    case_columns : list of list of int
        For case c, the column of each of its uncertain inputs, in the order of
        ``specs[c].dists``.
    specs : list of UncertainSpec
    corr : numpy.ndarray or None
        (D, D) target rank correlation of the columns.
    """

    columns: list
    case_columns: list
    specs: list
    corr: np.ndarray | None

    @property
    def dists(self) -> list:
        return [c.dist for c in self.columns]


def _dist_key(d: Distribution) -> tuple:
    return (d.name, d.dist, tuple(sorted(d.params.items())), d.low, d.high)


def build_design(cases: Sequence[Case], specs: Sequence[UncertainSpec]) -> Design:
    """Merge the cases' uncertain inputs into one design (see the module docstring).

    Raises
    ------
    InputError
        Two cases give different rank correlations for the same pair of shared inputs.
    """
    keys: dict[tuple, int] = {}
    found: list[tuple[Distribution, list[int]]] = []
    case_columns = []
    for c, spec in enumerate(specs):
        cols = []
        for d in spec.dists:
            k = _dist_key(d)
            if k not in keys:
                keys[k] = len(found)
                found.append((d, []))
            found[keys[k]][1].append(c)
            cols.append(keys[k])
        case_columns.append(cols)
    paths = [d.name for d, _ in found]
    columns = []
    for d, users in found:
        clash = paths.count(d.name) > 1
        label = d.name if not clash else f"{d.name} [{', '.join(cases[u].name for u in users)}]"
        group = d.group
        if group and len(users) == 1:
            group = f"{group} [{cases[users[0]].name}]"
        columns.append(Column(dist=replace(d, name=label, group=group), path=d.name,
                              cases=tuple(users)))
    pairs: dict[frozenset, tuple] = {}
    for c, spec in enumerate(specs):
        if spec.corr is None:
            continue
        n_d = len(spec.dists)
        for i in range(n_d):
            for j in range(i + 1, n_d):
                rho = float(spec.corr[i, j])
                if rho == 0.0:
                    continue
                gi, gj = case_columns[c][i], case_columns[c][j]
                key = frozenset((gi, gj))
                if key in pairs and pairs[key][0] != rho:
                    raise InputError(
                        f"{cases[c].source}: correlation between {paths[gi]} and {paths[gj]} "
                        f"= {rho:g}: expected {pairs[key][0]:g} as in {pairs[key][1]}, since "
                        f"the cases share these inputs")
                pairs[key] = (rho, cases[c].source, gi, gj)
    names = [col.dist.name for col in columns]
    corr = None
    if pairs:
        corr = correlation_matrix(names, [(names[gi], names[gj], rho)
                                          for rho, _, gi, gj in pairs.values()],
                                  "compared cases", key="correlation")
    return Design(columns=columns, case_columns=case_columns, specs=list(specs), corr=corr)


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
        Deterministic year used by the audit (see :func:`lcoe.claims.audit_case`).
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
        :func:`lcoe.claims.ratio_stats` and :func:`lcoe.claims.breakeven_summary`.
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
        ``claim_ratio`` (the later case's) and :func:`lcoe.claims.ratio_stats` of
        LCOE_case / LCOE_reference.
    notes : list of str
    provenance : dict
    inputs : numpy.ndarray or None
        (n, D) design rows the trials were run with (columns of ``design``).
    voi : VoiBlock or None
        Value of information of the choice between the cases (:mod:`lcoe.compare_voi`).
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

    @property
    def baseline(self) -> CaseOutcome:
        return self.cases[0]


def share_sites(cases: Sequence[Case]) -> list[Site]:
    """Prepared sites, one per distinct weather and location (read once, POA cache shared)."""
    sites: dict[tuple, Site] = {}
    out = []
    for case in cases:
        key = (str(case.weather_path), repr(sorted((case.monthly or {}).items())),
               case["site.latitude_deg"], case["site.longitude_deg"], case["site.altitude_m"],
               case["site.timezone"], case["site.weather_time_label"])
        if key not in sites:
            sites[key] = prepare(case)
        out.append(sites[key])
    return out


def _case_params(design: Design, c: int, x: np.ndarray) -> tuple[dict, np.ndarray]:
    """Case c's parameter arrays and persistent energy factor from design rows x (n, D)."""
    params, persist = {}, np.ones(x.shape[0])
    for d, col in zip(design.specs[c].dists, design.case_columns[c]):
        if d.name.startswith("energy."):
            persist = persist * x[:, col]
        else:
            params[d.name] = x[:, col]
    return params, persist


def _yearly_factors(case: Case, site: Site, spec: UncertainSpec, z: np.ndarray,
                    u_year: np.ndarray) -> np.ndarray:
    """(n, N) year-to-year factors of a case from the shared draws ``z`` and ``u_year``."""
    life = int(case["case.lifetime_years"])
    w = site.weather
    if not w.typical_year and w.n_years > 1:
        yearly = evaluate(case, site).energy.yearly_kwh[0]
        ratios = yearly / yearly.mean()
        return ratios[np.minimum((u_year[:, :life] * ratios.size).astype(int), ratios.size - 1)]
    if spec.interannual_cov > 0:
        return np.maximum(1.0 + spec.interannual_cov * z[:, :life], ENERGY_FACTOR_FLOOR)
    return np.ones((z.shape[0], life))


def _evaluate_rows(case: Case, site: Site, params: dict, factors: np.ndarray,
                   persist: np.ndarray, collect=None) -> dict:
    """Model outputs of one chunk of trials, with the finance probes for break-even values.

    ``collect``: a bankability collector; its equity NPV at the target IRR is kept.
    """
    out = evaluate(case, site, params, weather_factors=factors)
    extra = {} if collect is None else {
        "equity_npv": collect(out, out.params, slice(None))["equity_npv_at_target"]}
    full, e = out.params, out.energy
    capex = full["costs.capex_per_kw"]
    probe = dict(full, **{"costs.capex_per_kw": capex + CAPEX_STEP})
    slope = (cash_flow(case, probe, e, factors).lcoe_real - out.cashflow.lcoe_real) / CAPEX_STEP
    doubled = replace(e, annual_kwh=2.0 * e.annual_kwh)
    a, b = energy_scale_terms(out.cashflow.lcoe_real,
                              cash_flow(case, full, doubled, factors).lcoe_real)
    long_term = e.annual_kwh * persist
    return {"lcoe_real": out.cashflow.lcoe_real, "lcoe_nominal": out.cashflow.lcoe_nominal,
            "energy_per_kw_kwh": long_term / e.dc_capacity_kw,
            "energy_per_cell_m2_kwh": long_term / e.cell_area_m2,
            "energy_per_land_m2_kwh": long_term / e.land_area_m2,
            "capex_per_kw": capex, "lcoe_slope_per_capex": slope,
            "energy_scale_a": a, "energy_scale_b": b, **extra}


def run_comparison(cases: Sequence[Case], samples: int = DEFAULT_SAMPLES, seed: int = 1,
                   claim_ratio: float | None = None, sobol_base: int = DEFAULT_SOBOL_BASE,
                   method: str = "lhs", chunk_size: int = 1000,
                   progress: Callable[[str, int, int], None] | None = None,
                   voi_bootstrap: int = 100) -> ComparisonResult:
    """Compare cases with common random numbers and test each candidate's claim.

    Parameters
    ----------
    cases : sequence of Case
        Baseline first, then one or more candidates; one currency.
    samples : int
        Monte Carlo trials (>= 2).
    seed : int
        Seed of the one generator; the Monte Carlo and the Sobol designs use generators
        spawned from it.
    claim_ratio : float, optional
        Claimed bound on candidate / baseline LCOE for every candidate; None: each
        candidate's ``claim.lcoe_ratio``, or 1 (as cheap as the baseline) when it states none.
    sobol_base : int
        Sobol base samples N per candidate (0 skips the drivers of the ratio).
    method : {"lhs", "random"}
    chunk_size : int
        Trials per model call (memory bound; results do not depend on it).
    progress : callable, optional
        ``progress(stage, done, total)``.
    voi_bootstrap : int
        Bootstrap resamples of the value-of-information step (0 skips it).

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
    sites = share_sites(cases)
    specs = [read_spec(c) for c in cases]
    design = build_design(cases, specs)
    mc_seq, sobol_seq = np.random.SeedSequence(seed).spawn(2)
    rng = make_rng(mc_seq)
    n_cols = len(design.columns)
    x = sample_inputs(design.dists, samples, rng, design.corr, method) if n_cols else \
        np.empty((samples, 0))
    max_life = max(int(c["case.lifetime_years"]) for c in cases)
    z = rng.standard_normal((samples, max_life))
    u_year = rng.random((samples, max_life))

    outcomes = []
    with_equity = voi_bootstrap and all("revenue" in c.sections for c in cases)
    for c, (case, site, spec) in enumerate(zip(cases, sites, specs)):
        params_all, persist = _case_params(design, c, x)
        factors = persist[:, None] * _yearly_factors(case, site, spec, z, u_year)
        collect = None
        if with_equity:  # value of information on the equity's NPV (lcoe.compare_voi)
            from .bankability import run_bankability

            collect = run_bankability(case, evaluate(case, site), spec).collector(case)
        cols: dict[str, np.ndarray] = {}
        for start in range(0, samples, chunk_size):
            sl = slice(start, min(start + chunk_size, samples))
            chunk = _evaluate_rows(case, site, {k: v[sl] for k, v in params_all.items()},
                                   factors[sl], persist[sl], collect)
            for k, v in chunk.items():
                cols.setdefault(k, np.empty(samples))[sl] = v
            if progress:
                progress(f"case {c + 1}", sl.stop, samples)
        base = evaluate(case, site)
        outcomes.append((case, site, base, CaseTrials(**cols)))

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
        claims = [_with_sobol(claim, design, cases, sites, sobol_base, sq, chunk_size, progress)
                  for claim, sq in zip(claims, seqs)]
    pairs = []
    for claim in claims:
        for ref in range(1, claim.index):
            ratio = results[claim.index].trials.lcoe_real / results[ref].trials.lcoe_real
            pairs.append({"case": results[claim.index].name, "reference": results[ref].name,
                          "claim_ratio": claim.claim_ratio,
                          **ratio_stats(ratio, claim.claim_ratio)})
    notes = _design_notes(design, cases)
    result = ComparisonResult(cases=results, claims=claims, design=design, samples=samples,
                              seed=seed, method=method, currency=cases[0]["case.currency"],
                              pairs=pairs, notes=notes, inputs=x)
    if voi_bootstrap:  # value of information: a separate step on the trials already run
        from .compare_voi import comparison_voi

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


def ratio_model(design: Design, cases: Sequence[Case], sites: Sequence[Site], c: int,
                columns: Sequence[int], chunk_size: int = 1000, progress=None
                ) -> Callable[[np.ndarray], np.ndarray]:
    """``f(X) -> Y``: LCOE_real of case c over the baseline's, both on the same rows.

    ``X`` (n, len(columns)) holds the values of the given design columns; year-to-year weather
    is left out (every year at its mean, as in :func:`lcoe.uncertainty.engine.model_function`),
    persistent energy factors are in.
    """
    def f(xs: np.ndarray) -> np.ndarray:
        full = np.zeros((xs.shape[0], len(design.columns)))
        full[:, list(columns)] = xs
        out = np.ones(xs.shape[0])
        for k, sign in ((0, -1.0), (c, 1.0)):
            case, site = cases[k], sites[k]
            params_all, persist = _case_params(design, k, full)
            life = int(case["case.lifetime_years"])
            for start in range(0, xs.shape[0], chunk_size):
                sl = slice(start, min(start + chunk_size, xs.shape[0]))
                params = {p: v[sl] for p, v in params_all.items()}
                wf = np.repeat(persist[sl, None], life, axis=1)
                out[sl] *= evaluate(case, site, params, weather_factors=wf).cashflow.lcoe_real \
                    ** sign
                if progress:
                    progress(sl.stop + (xs.shape[0] if k else 0), 2 * xs.shape[0])
        return out

    return f


def _with_sobol(claim: ClaimOutcome, design: Design, cases, sites, sobol_base: int,
                seq: np.random.SeedSequence, chunk_size: int, progress) -> ClaimOutcome:
    """Sobol indices of the candidate's LCOE ratio over the inputs of the two cases."""
    from .uncertainty.sensitivity import sobol_analyze, sobol_sample

    c = claim.index
    columns = sorted(set(design.case_columns[0]) | set(design.case_columns[c]))
    if not columns:
        return replace(claim, sobol_notes=["No uncertain inputs: no drivers to rank."])
    dists = [design.columns[j].dist for j in columns]
    corr = None if design.corr is None else design.corr[np.ix_(columns, columns)]
    design_seq, analyze_seq = seq.spawn(2)
    # corr=None: the caveat on correlated inputs comes once, from sobol_analyze below.
    _, xs, note = sobol_sample(dists, sobol_base, make_rng(design_seq), None)
    stage = (lambda d, t: progress(f"Sobol {c}", d, t)) if progress else None
    y = ratio_model(design, cases, sites, c, columns, chunk_size, stage)(xs)
    notes = [note] if note else []
    if np.ptp(y) == 0.0:
        return replace(claim, sobol_notes=notes + ["The ratio does not vary: no drivers."])
    sob = sobol_analyze(dists, y, sobol_base, make_rng(analyze_seq), corr=corr,
                        output="lcoe_ratio")
    notes.append("Year-to-year weather is left out of the Sobol design (every year at its "
                 "mean); persistent energy components are included.")
    return replace(claim, sobol=sob, sobol_notes=notes)


def _design_notes(design: Design, cases: Sequence[Case]) -> list[str]:
    shared = [col.dist.name for col in design.columns if col.shared]
    notes = [("Common random numbers: " + ", ".join(shared) + " drawn once per trial for "
              "every case that has them.") if shared else
             "No uncertain input is shared by name and distribution: the cases' draws are "
             "independent apart from the year-to-year weather."]
    split = sorted({col.path for col in design.columns if col.dist.name != col.path})
    if split:
        notes.append(f"{', '.join(split)}: different distributions in the cases, so each case "
                     f"draws its own (labelled 'path [case]').")
    return notes


def drivers(claim: ClaimOutcome, top: int = 5) -> list[dict]:
    """The inputs the ratio depends on most: Sobol rows sorted by total index."""
    if claim.sobol is None:
        return []
    rows = sorted(claim.sobol.rows, key=lambda r: -r["ST"])
    return [{k: r[k] for k in ("input", "members", "S1", "S1_conf", "ST", "ST_conf",
                               "ST_includes_zero")} for r in rows[:top]]
