"""Monte Carlo and sensitivity runs of the one vectorised model.

Every trial is a row. All random numbers of a run are drawn up front from one seeded generator
(the input sample, then the year-to-year weather factors), and the trials are then evaluated in
chunks through :func:`lcoe.model.evaluate`; results are therefore identical for the same seed
whatever the chunk size, and peak memory is bounded by the chunk size.

Energy uncertainty follows lenders' practice: persistent components (long-term resource, yield
model, ...) are drawn once per trial; the year-to-year weather factor is drawn independently for
each operating year of each trial. With a weather file of several calendar years the
year-to-year factor is the ratio of a randomly drawn year's energy to the file's mean (the spread
comes from the file itself); otherwise it is normal with the case's ``interannual_cov``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from scipy.stats import norm

from ..case import Case
from ..errors import InputError
from ..model import ModelOutput, Site, evaluate
from ..rng import make_rng
from .sampling import sample_inputs
from .spec import ENERGY_FACTOR_FLOOR, UncertainSpec

#: Outputs collected from every trial, with their units.
OUTPUTS = {
    "lcoe_real_per_kwh": "currency/kWh",
    "lcoe_nominal_per_kwh": "currency/kWh",
    "npv_costs": "currency",
    "energy_first_year_kwh": "kWh",
}
#: Outputs that Sobol/tornado may target (scalar, no year-to-year noise in those designs).
SENSITIVITY_TARGETS = ("lcoe_real_per_kwh", "lcoe_nominal_per_kwh", "npv_costs",
                       "energy_first_year_kwh")
QUANTILES = (0.05, 0.10, 0.50, 0.90, 0.95)
#: z-scores of the normal method (DOMAIN.md section 4).
Z90 = float(norm.ppf(0.90))
Z99 = float(norm.ppf(0.99))

Collector = Callable[[ModelOutput, dict, slice], dict]


@dataclass(frozen=True)
class Trials:
    """Inputs and outputs of every Monte Carlo trial.

    Attributes
    ----------
    names : list of str
        Sampled input names (columns of ``X``).
    X : numpy.ndarray
        (n, d) sampled input values.
    outputs : dict of str to numpy.ndarray
        :data:`OUTPUTS` and collector outputs, each (n,) or (n, k).
    energy_factors : numpy.ndarray
        (n, N) year-by-year energy multipliers (persistent x year-to-year).
    persistent_factor : numpy.ndarray
        (n,) product of the persistent energy components.
    physics_kwh : numpy.ndarray
        (n,) average-year energy from the hourly physics alone [kWh].
    seed : int or None
    method : str
        Sampling method.
    """

    names: list
    X: np.ndarray
    outputs: dict
    energy_factors: np.ndarray
    persistent_factor: np.ndarray
    physics_kwh: np.ndarray
    seed: int | None
    method: str

    @property
    def n(self) -> int:
        return self.X.shape[0]


def stats(values: np.ndarray) -> dict:
    """Mean, sd and the :data:`QUANTILES` of a sample, keyed ``mean, sd, q05, ...``."""
    v = np.asarray(values, dtype=float)
    out = {"mean": float(v.mean()), "sd": float(v.std(ddof=1)) if v.size > 1 else 0.0}
    for q in QUANTILES:
        out[f"q{int(round(q * 100)):02d}"] = float(np.quantile(v, q))
    return out


def _params_from(spec: UncertainSpec, X: np.ndarray) -> tuple[dict, np.ndarray]:
    """Case-parameter arrays and the persistent energy factor (n,) from sampled rows."""
    params, persist = {}, np.ones(X.shape[0])
    for j, name in enumerate(spec.names):
        if name.startswith("energy."):
            persist = persist * X[:, j]
        else:
            params[name] = X[:, j]
    return params, persist


def _yearly_factors(spec: UncertainSpec, site: Site, case: Case, n: int,
                    rng: np.random.Generator) -> tuple[np.ndarray, str]:
    """(n, N) year-to-year weather factors and a note on where their spread came from."""
    life = int(case["case.lifetime_years"])
    w = site.weather
    if not w.typical_year and w.n_years > 1:
        base = evaluate(case, site)
        yearly = base.energy.yearly_kwh[0]
        ratios = yearly / yearly.mean()
        picks = rng.integers(0, ratios.size, size=(n, life))
        cov = float(ratios.std(ddof=1))
        return ratios[picks], (f"year-to-year weather drawn from the {ratios.size} calendar "
                               f"years of the weather file (CoV {100 * cov:.1f} %)")
    if spec.interannual_cov > 0:
        z = rng.standard_normal((n, life))
        return np.maximum(1.0 + spec.interannual_cov * z, ENERGY_FACTOR_FLOOR), (
            f"year-to-year weather normal with CoV {100 * spec.interannual_cov:.1f} % "
            f"(independent each year)")
    return np.ones((n, life)), "no year-to-year weather variability given"


def interannual_cov(trials: Trials) -> float:
    """Year-to-year CoV actually used (sample estimate over all trial-years) [-]."""
    f = trials.energy_factors / trials.persistent_factor[:, None]
    return float(f.std(ddof=1)) if f.size > 1 else 0.0


def monte_carlo(case: Case, site: Site, spec: UncertainSpec, n: int, seed: int | None,
                method: str = "lhs", chunk_size: int = 1000, collectors: tuple = (),
                progress: Callable[[int, int], None] | None = None) -> tuple[Trials, list]:
    """Run ``n`` trials of the case with its uncertain inputs.

    Parameters
    ----------
    case : Case
    site : Site
    spec : UncertainSpec
    n : int
        Number of trials (>= 2).
    seed : int or None
        Seed of the single generator.
    method : {"lhs", "random"}
        Latin hypercube (default) or plain random sampling.
    chunk_size : int
        Trials per call of the model (memory bound); results do not depend on it.
    collectors : tuple of callables
        ``collector(model_output, params, chunk_slice) -> dict of arrays (n_chunk, ...)``,
        extra per-trial outputs (e.g. the project-finance layer).
    progress : callable, optional
        ``progress(done, total)`` after each chunk.

    Returns
    -------
    trials : Trials
    notes : list of str
    """
    if n < 2:
        raise InputError(f"--samples {n}: expected at least 2 trials")
    rng = make_rng(seed)
    d = len(spec.dists)
    X = sample_inputs(spec.dists, n, rng, spec.corr, method) if d else np.empty((n, 0))
    yearly, note = _yearly_factors(spec, site, case, n, rng)
    params_all, persist = _params_from(spec, X)
    factors = persist[:, None] * yearly
    outputs: dict[str, np.ndarray] = {}
    physics = np.empty(n)
    for start in range(0, n, chunk_size):
        sl = slice(start, min(start + chunk_size, n))
        params = {k: v[sl] for k, v in params_all.items()}
        out = evaluate(case, site, params, weather_factors=factors[sl])
        c = out.cashflow
        chunk = {"lcoe_real_per_kwh": c.lcoe_real, "lcoe_nominal_per_kwh": c.lcoe_nominal,
                 "npv_costs": c.pv_costs, "energy_first_year_kwh": c.energy_kwh[:, 1]}
        for col in collectors:
            chunk.update(col(out, params, sl))
        for k, v in chunk.items():
            if k not in outputs:
                outputs[k] = np.empty((n,) + np.shape(v)[1:])
            outputs[k][sl] = v
        physics[sl] = out.energy.annual_kwh
        if progress:
            progress(sl.stop, n)
    trials = Trials(names=spec.names, X=X, outputs=outputs, energy_factors=factors,
                    persistent_factor=persist, physics_kwh=physics, seed=seed, method=method)
    _check_finite(trials)
    return trials, [note]


def _check_finite(trials: Trials) -> None:
    for key in OUTPUTS:  # collector outputs such as an IRR may legitimately have no value
        v = trials.outputs[key]
        bad = ~np.isfinite(v)
        if bad.any():
            i = int(np.argmax(bad))
            inputs = ", ".join(f"{n} = {x:g}" for n, x in zip(trials.names, trials.X[i]))
            raise InputError(f"trial {i}: {key} is not finite ({v[i]}); inputs: "
                             f"{inputs or 'none'}")


@dataclass(frozen=True)
class EnergyExceedance:
    """P50/P90/P99 of first-year energy for a one-year and a ten-year horizon [kWh].

    Attributes
    ----------
    sampled : dict
        ``p50, p90, p99, p90_10yr, p99_10yr`` from the trials (P90 = exceeded with 90 %
        probability = 10th percentile).
    normal : dict
        The same by the normal method: P_x = P50 (1 - z_x sigma), sigma the root-sum-square
        of the components, year-to-year part divided by sqrt(10) for the ten-year horizon.
    sigma_1yr, sigma_10yr : float
        Relative standard deviations used by the normal method [-].
    components : dict of str to float
        The components' relative standard deviations [-].
    differences : list of str
        Sentences where the two methods differ by more than 1 %.
    """

    sampled: dict
    normal: dict
    sigma_1yr: float
    sigma_10yr: float
    components: dict
    differences: list = field(default_factory=list)


def energy_exceedance(trials: Trials, spec: UncertainSpec) -> EnergyExceedance:
    """P-values of first-year energy, from the samples and by the normal method.

    Degradation is excluded (these are statements about the energy of a year of the plant as
    built): the 1-year value is physics x persistent x one year's weather, the 10-year value
    uses the mean of ten years' weather factors.

    References
    ----------
    .. [1] D. Thevenard and S. Pelland, "Estimating the uncertainty in long-term photovoltaic
       yield predictions", Solar Energy 91, 2013.
    """
    base = trials.physics_kwh * trials.persistent_factor
    yearly = trials.energy_factors / trials.persistent_factor[:, None]
    e1 = base * yearly[:, 0]
    n10 = min(10, yearly.shape[1])
    e10 = base * yearly[:, :n10].mean(axis=1)
    sampled = {"p50": float(np.quantile(e1, 0.5)), "p90": float(np.quantile(e1, 0.10)),
               "p99": float(np.quantile(e1, 0.01)), "p90_10yr": float(np.quantile(e10, 0.10)),
               "p99_10yr": float(np.quantile(e10, 0.01))}
    comps = {f"energy.{k}": v for k, v in spec.energy_components.items()}
    phys_sd = float(np.std(trials.physics_kwh, ddof=1) / np.mean(trials.physics_kwh)) \
        if trials.n > 1 else 0.0
    if phys_sd > 1e-12:
        comps["physics inputs (sampled)"] = phys_sd
    iav = interannual_cov(trials)
    persistent = float(np.sqrt(sum(v ** 2 for v in comps.values())))
    s1 = float(np.sqrt(persistent ** 2 + iav ** 2))
    s10 = float(np.sqrt(persistent ** 2 + iav ** 2 / n10))
    p50 = sampled["p50"]
    normal = {"p50": p50, "p90": p50 * (1 - Z90 * s1), "p99": p50 * (1 - Z99 * s1),
              "p90_10yr": p50 * (1 - Z90 * s10), "p99_10yr": p50 * (1 - Z99 * s10)}
    diffs = []
    for k in ("p90", "p99", "p90_10yr", "p99_10yr"):
        rel = sampled[k] / normal[k] - 1
        if abs(rel) > 0.01:
            diffs.append(f"{k.upper()}: samples {sampled[k]:,.0f} kWh vs normal method "
                         f"{normal[k]:,.0f} kWh ({100 * rel:+.1f} %): the sampled "
                         f"distribution is not normal (skew or truncation of the inputs, "
                         f"multiplicative factors)")
    comps["year-to-year weather"] = iav
    return EnergyExceedance(sampled=sampled, normal=normal, sigma_1yr=s1, sigma_10yr=s10,
                            components=comps, differences=diffs)


def model_function(case: Case, site: Site, spec: UncertainSpec, output: str,
                   chunk_size: int = 1000, progress=None,
                   extra: dict | None = None) -> Callable[[np.ndarray], np.ndarray]:
    """``f(X) -> Y`` for the sensitivity layer: sampled inputs (n, d) -> one output (n,).

    Year-to-year weather is left out of these designs (every year at its mean): Sobol and
    tornado rank the inputs a user can argue about, and a noise term would only blur them.
    ``extra`` adds targets computed from each chunk's model output,
    ``{name: fn(ModelOutput, params) -> (n,)}`` (e.g. the lender's minimum DSCR).
    """
    extra = dict(extra or {})
    if output not in SENSITIVITY_TARGETS and output not in extra:
        raise InputError(f"--sobol-output {output!r}: expected one of "
                         f"{', '.join(SENSITIVITY_TARGETS + tuple(extra))}")
    life = int(case["case.lifetime_years"])

    def f(X: np.ndarray) -> np.ndarray:
        params_all, persist = _params_from(spec, X)
        y = np.empty(X.shape[0])
        for start in range(0, X.shape[0], chunk_size):
            sl = slice(start, min(start + chunk_size, X.shape[0]))
            params = {k: v[sl] for k, v in params_all.items()}
            wf = np.repeat(persist[sl, None], life, axis=1)
            out = evaluate(case, site, params, weather_factors=wf)
            c = out.cashflow
            if output in extra:
                y[sl] = extra[output](out, params)
            else:
                y[sl] = {"lcoe_real_per_kwh": c.lcoe_real, "lcoe_nominal_per_kwh":
                         c.lcoe_nominal, "npv_costs": c.pv_costs,
                         "energy_first_year_kwh": c.energy_kwh[:, 1]}[output]
            if progress:
                progress(sl.stop, X.shape[0])
        return y

    return f
