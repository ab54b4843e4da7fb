"""Soiling: dirt on the modules' front, as an hourly loss fraction per sample.

Two models, both written as ``loss = min(coef x base_h, cap)`` so that the hourly history
``base_h`` (shape (n_hours,)) is computed once per site and the per-sample inputs (``coef``,
``cap``, shape (n_samples,)) act vectorised:

* ``monthly``: ``base_h`` = the case's 12 monthly loss fractions at each hour's month,
  ``coef`` = ``plant.soiling.scale``, ``cap`` = 1.
* ``kimber`` (Kimber et al. 2006, pvlib ``soiling.kimber``): dirt builds up at a constant rate
  per day, is washed off by a day with more rain than a threshold, and does not build up on
  damp ground for a grace period after it. ``base_h`` = the model's history at a rate of
  1 per day with no ceiling (the days of build-up), ``coef`` = the rate per day, ``cap`` = the
  largest loss. pvlib's model is exactly this product (it accumulates ``rate x hours / 24``
  and subtracts at cleaning), checked against ``pvlib.soiling.kimber`` in the tests.
"""

from __future__ import annotations

import numpy as np
import pandas as pd


def monthly_history(monthly_loss, month_index) -> np.ndarray:
    """Each hour's soiling loss from a monthly profile [-], (n_hours,).

    Parameters
    ----------
    monthly_loss : sequence of 12 float
        Soiling loss fraction of January ... December [-].
    month_index : array_like of int
        Calendar month of each hour, 1-12.
    """
    prof = np.asarray(monthly_loss, dtype=float)
    if prof.shape != (12,):
        raise ValueError(f"monthly soiling profile has {prof.size} values; expected 12")
    return prof[np.asarray(month_index, dtype=int) - 1]


def kimber_history(rain_mm: pd.Series, cleaning_threshold_mm: float,
                   grace_period_days: float) -> np.ndarray:
    """Days of dirt build-up each hour by Kimber's rule (pvlib at a rate of 1/day) [day].

    Parameters
    ----------
    rain_mm : pandas.Series
        Rain in each hour [mm], hourly DatetimeIndex.
    cleaning_threshold_mm : float
        Rain within 24 h that washes the modules [mm].
    grace_period_days : float
        Days after a washing rain during which no dirt builds up [day].

    Returns
    -------
    numpy.ndarray
        ``loss / rate`` before the ceiling, (n_hours,) [day].

    References
    ----------
    .. [1] A. Kimber, L. Mitchell, S. Nogradi and H. Wenger, "The Effect of Soiling on Large
       Grid-Connected Photovoltaic Systems in California and the Southwest Region of the
       United States", IEEE 4th World Conference on Photovoltaic Energy Conversion, 2006,
       doi:10.1109/WCPEC.2006.279690.
    """
    import pvlib

    s = pvlib.soiling.kimber(rain_mm, cleaning_threshold=cleaning_threshold_mm,
                             soiling_loss_rate=1.0, grace_period=grace_period_days,
                             max_soiling=np.inf)
    return np.asarray(s, dtype=float)


def soiling_loss(history, coef, cap) -> np.ndarray:
    """Hourly soiling loss per sample, ``min(coef x history, cap)`` [-], (n_s, n_h).

    Parameters
    ----------
    history : numpy.ndarray
        (n_h,) monthly fractions or Kimber days of build-up.
    coef : numpy.ndarray
        (n_s, 1) profile multiplier [-] or build-up rate [1/day].
    cap : numpy.ndarray
        (n_s, 1) largest loss [-].
    """
    return np.minimum(coef * history, cap)
