"""Testing a vendor's claim against a baseline: probabilities, break-even values, physics audit.

Everything here works trial by trial on arrays of shape (n_trials,) that :mod:`lcoe.compare`
produced with common random numbers (the same draw of a shared input in every case).

Break-even values. For fixed other inputs of a trial, the candidate's LCOE is

* affine in its capex per kW c: ``LCOE(c) = a + b c`` (capex and insurance are the only cost
  lines that depend on it, both linearly; energy does not), so the capex at which the claim
  holds exactly, ``LCOE(c*) = ratio x LCOE_baseline``, is ``c* = c + (target - LCOE(c)) / b``;
* of the form ``A / s + B`` in a factor s on its energy (every year's energy, and so the
  discounted energy, scales with s; only variable O&M scales with it in the numerator), so the
  energy at which it holds is ``s* = A / (target - B)`` (none when ``target <= B``: the costs
  that do not scale with energy already exceed the target).

Each trial gives one break-even value; the claim holds at a capex c in a trial iff
``c <= c*_i`` (b > 0), so it holds in half the trials at the median of c* and in 90 % of them
at its 10th percentile (and at the 90th percentile of the break-even energy).
"""

from __future__ import annotations

import numpy as np

from .tech.audit import audit, worst_verdict
from .tech.concentrator_model import rated_efficiency

#: A field of bodies is audited against the light on its land from this many bodies up: the
#: land check treats the land as the field's aperture, which neglects light entering through
#: the edges (a design choice of this tool: a 5 x 5 grid).
MIN_BODIES_FOR_LAND_CHECK = 25


def ratio_stats(ratio: np.ndarray, claim_ratio: float) -> dict:
    """Quantiles of a trial-by-trial LCOE ratio and the probability that the claim holds.

    Parameters
    ----------
    ratio : numpy.ndarray
        Candidate LCOE / baseline LCOE per trial [-], (n,).
    claim_ratio : float
        The claim: the ratio is at most this [-].

    Returns
    -------
    dict
        ``q10``, ``q50``, ``q90``, ``mean`` [-] and ``prob_claim_holds`` [fraction of trials].
    """
    r = np.asarray(ratio, dtype=float)
    return {"q10": float(np.quantile(r, 0.10)), "q50": float(np.quantile(r, 0.50)),
            "q90": float(np.quantile(r, 0.90)), "mean": float(r.mean()),
            "prob_claim_holds": float(np.mean(r <= claim_ratio))}


def breakeven_capex_per_kw(lcoe, capex_per_kw, lcoe_slope_per_capex, target_lcoe):
    """Capex per kW at which the candidate's LCOE equals the target, trial by trial.

    Parameters
    ----------
    lcoe : numpy.ndarray
        Candidate LCOE at its sampled capex [currency/kWh], (n,).
    capex_per_kw : numpy.ndarray
        The sampled capex [currency/kW], (n,).
    lcoe_slope_per_capex : numpy.ndarray
        dLCOE/dcapex [currency/kWh per currency/kW], (n,), > 0.
    target_lcoe : numpy.ndarray
        claim ratio x baseline LCOE [currency/kWh], (n,).

    Returns
    -------
    numpy.ndarray
        (n,) [currency/kW]; negative where the claim fails even at zero capex.
    """
    return capex_per_kw + (target_lcoe - lcoe) / lcoe_slope_per_capex


def breakeven_energy_scale(a, b, target_lcoe):
    """Factor on the energy at which ``A / s + B`` equals the target, trial by trial.

    Parameters
    ----------
    a, b : numpy.ndarray
        Terms of ``LCOE(s) = A / s + B`` [currency/kWh], (n,).
    target_lcoe : numpy.ndarray
        [currency/kWh], (n,).

    Returns
    -------
    numpy.ndarray
        (n,) [-]; ``inf`` where no energy is enough (target <= B).
    """
    gap = np.asarray(target_lcoe, dtype=float) - b
    with np.errstate(divide="ignore"):
        return np.where(gap > 0.0, a / np.where(gap > 0.0, gap, 1.0), np.inf)


def energy_scale_terms(lcoe_at_1, lcoe_at_2):
    """``A`` and ``B`` of ``LCOE(s) = A / s + B`` from the LCOE at s = 1 and s = 2.

    ``L1 = A + B`` and ``L2 = A / 2 + B`` give ``A = 2 (L1 - L2)``, ``B = 2 L2 - L1``.
    """
    return 2.0 * (lcoe_at_1 - lcoe_at_2), 2.0 * lcoe_at_2 - lcoe_at_1


def breakeven_summary(capex_star: np.ndarray, energy_star: np.ndarray) -> dict:
    """Median and 90 %-probability break-even values.

    Parameters
    ----------
    capex_star : numpy.ndarray
        Break-even capex per trial [currency/kW], (n,).
    energy_star : numpy.ndarray
        Break-even energy per kW per trial [kWh/kW/year], (n,) (inf: unreachable).

    Returns
    -------
    dict
        ``breakeven_capex_per_kw_median`` and ``breakeven_capex_per_kw_p90`` (the claim holds
        in 50 % / 90 % of trials at or below it: the 50th / 10th percentile of ``capex_star``);
        ``breakeven_energy_per_kw_kwh_median`` and ``breakeven_energy_per_kw_kwh_p90`` (at or
        above it: the 50th / 90th percentile of ``energy_star``; None when unreachable).
    """
    def finite_or_none(x):
        return float(x) if np.isfinite(x) else None

    return {
        "breakeven_capex_per_kw_median": float(np.quantile(capex_star, 0.5)),
        "breakeven_capex_per_kw_p90": float(np.quantile(capex_star, 0.1)),
        "breakeven_energy_per_kw_kwh_median": finite_or_none(np.quantile(energy_star, 0.5)),
        "breakeven_energy_per_kw_kwh_p90": finite_or_none(np.quantile(energy_star, 0.9)),
    }


def case_facts(case, site, base) -> dict:
    """The deterministic year of a case as :func:`audit_case` reads it.

    Parameters
    ----------
    case : lcoe.case.Case
    site : lcoe.model.Site
    base : lcoe.model.ModelOutput
        The run at the case's values (one sample).

    Returns
    -------
    dict
        See :func:`audit_case`. For a concentrator the "cells" are its aperture (rated at
        optical x cell efficiency on direct normal light), as :func:`lcoe.tech.audit.audit`
        expects.
    """
    e = base.energy
    w = site.weather
    concentrating = case["plant.mount"] == "concentrator"
    facts = {"energy_kwh": float(e.annual_kwh[0]), "cell_area_m2": float(e.cell_area_m2[0]),
             "poa_kwh_m2": float(e.poa_kwh_m2[0]),
             "module_efficiency": rated_efficiency(case) if concentrating else
             float(case["plant.module_efficiency"]),
             "land_area_m2": float(e.land_area_m2[0]),
             "ghi_kwh_m2": float(w.data["ghi"].sum() / 1000.0 / w.n_years),
             "dni_kwh_m2": float(w.data["dni"].sum() / 1000.0 / w.n_years),
             "n_bodies": None if e.n_bodies is None else float(e.n_bodies[0]),
             "concentrating": concentrating,
             "aperture_area_m2": float(e.cell_area_m2[0]) if concentrating else None}
    return facts


def claims_of(case) -> dict:
    """The ``[claim]`` numbers of a case by key (None where not claimed)."""
    return {k: case[f"claim.{k}"] for k in ("energy_per_kw_kwh", "energy_per_m2_kwh",
                                             "energy_ratio", "lcoe_ratio")}


def audit_run(case, site, base) -> list[dict]:
    """Audit of a single run (no baseline): its modelled year and its per-kW, per-m2 claims.

    For ``lcoe run`` (e.g. ``RunResult.extras["audit"]``, which the report shows).
    """
    return audit_case(case_facts(case, site, base), claims_of(case))


def audit_case(facts: dict, claims: dict, baseline: dict | None = None,
               model_lcoe_ratio: float | None = None) -> list[dict]:
    """Physics audit of one case's modelled year and of its stated claims.

    Maps a case onto :func:`lcoe.tech.audit.audit`, whose keyword names differ from the case
    file's ``[claim]`` keys: ``energy_per_kw_kwh`` -> ``claim_energy_per_kw_kwh``,
    ``energy_per_m2_kwh`` -> ``claim_energy_per_cell_m2_kwh``, ``energy_ratio`` ->
    ``claim_energy_ratio`` (against the baseline's light, efficiency and modelled energy per m2
    of cells), ``lcoe_ratio`` -> ``claim_lcoe_ratio`` (against this tool's median ratio).

    Parameters
    ----------
    facts : dict
        The case's deterministic year: ``energy_kwh`` [kWh], ``cell_area_m2`` [m2],
        ``poa_kwh_m2`` (irradiation on the cells, mean) [kWh/m2], ``module_efficiency`` [-],
        ``land_area_m2`` [m2], ``ghi_kwh_m2`` [kWh/m2], ``n_bodies`` (None for flat mounts),
        ``concentrating`` (bool), and for a concentrator ``aperture_area_m2`` and
        ``dni_kwh_m2`` [m2, kWh/m2].
    claims : dict
        The case's ``[claim]`` numbers by key (absent or None: not claimed).
    baseline : dict, optional
        The baseline's ``facts``; needed for ``energy_ratio``. None for the baseline itself
        (its ratio claims are then not tested).
    model_lcoe_ratio : float, optional
        Median candidate / baseline LCOE ratio from the trials.

    Returns
    -------
    list of dict
        Findings ``{check, verdict, message}``.
    """
    kwargs = dict(energy_kwh=max(facts["energy_kwh"], 0.0), cell_area_m2=facts["cell_area_m2"],
                  irradiation_on_cells_kwh_m2=facts["poa_kwh_m2"],
                  rated_efficiency=facts["module_efficiency"],
                  concentrating=bool(facts.get("concentrating", False)))
    if facts.get("aperture_area_m2") is not None:
        kwargs.update(aperture_area_m2=facts["aperture_area_m2"],
                      irradiation_on_aperture_kwh_m2=facts["dni_kwh_m2"])
    n_bodies = facts.get("n_bodies")
    if n_bodies is None or n_bodies >= MIN_BODIES_FOR_LAND_CHECK:
        kwargs.update(land_area_m2=facts["land_area_m2"],
                      irradiation_on_land_kwh_m2=facts["ghi_kwh_m2"])
    if claims.get("energy_per_kw_kwh") is not None:
        kwargs["claim_energy_per_kw_kwh"] = claims["energy_per_kw_kwh"]
    if claims.get("energy_per_m2_kwh") is not None:
        kwargs["claim_energy_per_cell_m2_kwh"] = claims["energy_per_m2_kwh"]
    if baseline is not None and claims.get("energy_ratio") is not None:
        kwargs.update(claim_energy_ratio=claims["energy_ratio"],
                      baseline_irradiation_on_cells_kwh_m2=baseline["poa_kwh_m2"],
                      baseline_rated_efficiency=baseline["module_efficiency"],
                      baseline_energy_kwh=baseline["energy_kwh"],
                      baseline_cell_area_m2=baseline["cell_area_m2"])
    if baseline is not None and claims.get("lcoe_ratio") is not None and \
            model_lcoe_ratio is not None:
        kwargs.update(claim_lcoe_ratio=claims["lcoe_ratio"], model_lcoe_ratio=model_lcoe_ratio)
    return audit(**kwargs)


def audit_sentence(findings: list[dict]) -> str:
    """One line: the worst verdict and how many findings of each kind."""
    counts = {v: sum(f["verdict"] == v for f in findings) for v in ("ok", "doubtful",
                                                                    "impossible")}
    parts = [f"{n} {v}" for v, n in counts.items() if n]
    return f"worst verdict {worst_verdict(findings)} ({', '.join(parts) or 'no checks'})"


def claim_sentence(name: str, baseline: str, claim_ratio: float, st: dict,
                   currency: str) -> str:
    """The claim test of one candidate in plain words, with its numbers.

    Parameters
    ----------
    name, baseline : str
        Case names.
    claim_ratio : float
        Claimed bound on the LCOE ratio [-].
    st : dict
        :func:`ratio_stats` and :func:`breakeven_summary` of the candidate.
    currency : str
    """
    text = (f"{name}: the claim that its cost per kWh is at most {claim_ratio:.3g} times "
            f"{baseline}'s holds in {100 * st['prob_claim_holds']:.1f} % of the trials; its "
            f"LCOE is {st['q50']:.3g} times the baseline's (10th-90th percentile "
            f"{st['q10']:.3g}-{st['q90']:.3g}).")
    med, p90 = st["breakeven_capex_per_kw_median"], st["breakeven_capex_per_kw_p90"]
    if med <= 0:
        text += (f" No capex makes it hold in half the trials: even at zero capex the other "
                 f"costs and the energy miss the target (break-even capex {med:,.0f} "
                 f"{currency}/kW at the median).")
    else:
        text += (f" It would hold in half the trials at a capex of {med:,.0f} {currency}/kW "
                 f"or less, and in 90 % at {p90:,.0f} {currency}/kW or less"
                 + (" (negative: not at any capex)." if p90 <= 0 else "."))
    e_med = st["breakeven_energy_per_kw_kwh_median"]
    e_p90 = st["breakeven_energy_per_kw_kwh_p90"]
    if e_med is None:
        text += " No amount of energy would make it hold at its sampled costs."
    else:
        tail = "" if e_p90 is None else f", in 90 % at {e_p90:,.0f} kWh/kW"
        text += (f" At its sampled costs it would need {e_med:,.0f} kWh/kW a year to hold "
                 f"in half the trials{tail}.")
    return text
