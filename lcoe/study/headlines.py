"""Sentences that keep a run's headlines consistent with its own trials.

Two checks, each a plain sentence carried in the CLI table, ``summary.json`` notes and the
report: the deterministic LCOE outside the 10th-90th percentile band of its own trials, and the
energy the debt was sized on beside the P-values the run reports (the loan is sized on the
deterministic case and the normal method, as lenders do; the Monte Carlo samples the same
uncertainty, so both are stated with the reason they differ).
"""

from __future__ import annotations

import numpy as np

#: Sampled exceedance key of each debt-sizing case.
SAMPLED_KEY = {"P90_1yr": "p90", "P99_1yr": "p99", "P90_10yr": "p90_10yr",
               "P99_10yr": "p99_10yr"}


def deterministic_outside_band(value: float, trials: np.ndarray, label: str,
                               unit: str) -> str | None:
    """One sentence when ``value`` lies outside the 10th-90th percentiles of ``trials``.

    Parameters
    ----------
    value : float
        The deterministic case's value [unit].
    trials : numpy.ndarray
        (n,) the same output in every trial [unit].
    label, unit : str
        Plain name and unit for the sentence.
    """
    t = np.asarray(trials, dtype=float)
    q10, q50, q90 = np.quantile(t, (0.10, 0.50, 0.90))
    if q10 <= value <= q90:
        return None
    side = "below the 10th" if value < q10 else "above the 90th"
    share = float(np.mean(t < value))
    return (f"The deterministic {label} ({value:.4g} {unit}) lies {side} percentile of its own "
            f"{t.size} trials (P10 {q10:.4g}, median {q50:.4g}, P90 {q90:.4g}; "
            f"{100 * share:.1f} % of trials are lower): the uncertain inputs are not centred on "
            f"the case's values, so read the distribution rather than the single number.")


def sizing_against_sampled(det_energy_kwh: float, factors: dict, sampled: dict,
                           sizing_cases) -> str:
    """The energy the debt was sized on beside the P-values the run reports, in one sentence.

    Parameters
    ----------
    det_energy_kwh : float
        First-year energy of the deterministic case (no degradation) [kWh].
    factors : dict
        Energy factor of each sizing case (``P50`` = 1; normal method otherwise) [-].
    sampled : dict
        The run's sampled exceedance values ``p50, p90, p99, p90_10yr, p99_10yr`` [kWh].
    sizing_cases : iterable of str
        The sizing cases of the loan.
    """
    parts = [f"P50 {det_energy_kwh / 1e6:,.2f} GWh (deterministic case; sampled P50 "
             f"{sampled['p50'] / 1e6:,.2f} GWh)"]
    for case in sizing_cases:
        if case in SAMPLED_KEY:
            parts.append(f"{case} {det_energy_kwh * factors[case] / 1e6:,.2f} GWh (normal "
                         f"method; sampled {sampled[SAMPLED_KEY[case]] / 1e6:,.2f} GWh)")
    return ("Debt is sized on the deterministic case and the normal method, as lenders do: "
            + "; ".join(parts) + ". The sampled values come from the same uncertainty but "
            "include the skew and truncation of the inputs and the spread of the physics "
            "inputs, so they differ slightly.")
