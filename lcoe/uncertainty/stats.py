"""Summary statistics of Monte Carlo trials; every statistic states the trials it used."""

from __future__ import annotations

import numpy as np
from scipy.special import ndtri

#: Percentiles reported by :func:`stats` (fractions of 1).
QUANTILES = (0.05, 0.10, 0.50, 0.90, 0.95)
#: z-scores of the normal method (DOMAIN.md section 4).
Z90 = float(ndtri(0.90))  # scipy.stats' norm.ppf is ndtri; scipy.stats costs ~0.25 s to import
Z99 = float(ndtri(0.99))


def stats(values) -> dict:
    """Mean, sd, the :data:`QUANTILES` and the number of trials used.

    Parameters
    ----------
    values : array_like
        (n,) one value per trial.

    Returns
    -------
    dict
        ``mean, sd, q05, q10, q50, q90, q95`` over the finite values, ``n`` (trials used) and,
        when some values are not finite (e.g. no IRR exists in a trial), ``n_excluded``: the
        caller must say why in its notes. All None when fewer than one finite value.
    """
    v = np.asarray(values, dtype=float).ravel()
    ok = np.isfinite(v)
    used = v[ok]
    out: dict = {"n": int(used.size)}
    if used.size:
        out.update({"mean": float(used.mean()),
                    "sd": float(used.std(ddof=1)) if used.size > 1 else 0.0})
        for q in QUANTILES:
            out[f"q{int(round(q * 100)):02d}"] = float(np.quantile(used, q))
    else:
        out.update({"mean": None, "sd": None,
                    **{f"q{int(round(q * 100)):02d}": None for q in QUANTILES}})
    if not ok.all():
        out["n_excluded"] = int((~ok).sum())
    return out
