"""The claim test of a comparison: statistics of the LCOE ratio against a claimed ratio,
break-even capex and energy, and the sentence that states the result.
"""

from __future__ import annotations

import numpy as np


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
