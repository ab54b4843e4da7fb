"""Analytic test functions with known Sobol indices (Ishigami, Sobol's g-function, a
linear model), for checking the estimators of :mod:`lcoe.uncertainty.sensitivity`.
"""

from __future__ import annotations

import numpy as np


# -- analytic test functions ------------------------------------------------------------------
def ishigami(X: np.ndarray, a: float = 7.0, b: float = 0.1) -> np.ndarray:
    """Ishigami function sin(x1) + a sin(x2)^2 + b x3^4 sin(x1).

    Parameters
    ----------
    X : numpy.ndarray
        Shape (n, 3); the usual inputs are independent U(-pi, pi).
    a, b : float, optional

    Returns
    -------
    numpy.ndarray
        Shape (n,).

    References
    ----------
    .. [1] Ishigami, T., Homma, T. (1990). An importance quantification technique in
       uncertainty analysis for computer models. Proceedings of ISUMA '90, 398-403.
    """
    X = np.asarray(X, dtype=float)
    if X.ndim != 2 or X.shape[1] != 3:
        raise ValueError(f"X has shape {X.shape}: expected (n, 3)")
    x1, x2, x3 = X.T
    return np.sin(x1) + a * np.sin(x2) ** 2 + b * x3**4 * np.sin(x1)


def ishigami_indices(a: float = 7.0, b: float = 0.1) -> dict:
    """Closed-form Sobol indices of :func:`ishigami` with x_i ~ U(-pi, pi).

    Returns
    -------
    dict
        ``S1`` and ``ST`` arrays of shape (3,) and the output ``variance``.

    Notes
    -----
    V1 = 1/2 + b pi^4/5 + b^2 pi^8/50, V2 = a^2/8, V3 = 0, V13 = b^2 pi^8 (1/18 - 1/50),
    V = V1 + V2 + V13; ST1 = (V1 + V13)/V, ST2 = V2/V, ST3 = V13/V.

    References
    ----------
    .. [1] Ishigami, T., Homma, T. (1990). ISUMA '90, 398-403.
    .. [2] Saltelli, A. et al. (2008). Global Sensitivity Analysis. The Primer. Wiley.
    """
    pi4, pi8 = np.pi**4, np.pi**8
    v1 = 0.5 + b * pi4 / 5.0 + b**2 * pi8 / 50.0
    v2 = a**2 / 8.0
    v13 = b**2 * pi8 * (1.0 / 18.0 - 1.0 / 50.0)
    v = v1 + v2 + v13
    return {
        "S1": np.array([v1, v2, 0.0]) / v,
        "ST": np.array([v1 + v13, v2, v13]) / v,
        "variance": float(v),
    }


def g_function(X: np.ndarray, a: np.ndarray) -> np.ndarray:
    """Sobol G-function prod_i (|4 x_i - 2| + a_i) / (1 + a_i).

    Parameters
    ----------
    X : numpy.ndarray
        Shape (n, d), inputs in [0, 1] (independent U(0, 1)).
    a : array_like
        Shape (d,), a_i >= 0; small a_i means an important input.

    Returns
    -------
    numpy.ndarray
        Shape (n,).

    References
    ----------
    .. [1] Saltelli, A., Sobol', I. M. (1995). About the use of rank transformation in
       sensitivity analysis of model output. Reliability Engineering & System Safety 50(3),
       225-239.
    """
    X = np.asarray(X, dtype=float)
    a = _g_coefficients(a)
    if X.ndim != 2 or X.shape[1] != a.size:
        raise ValueError(f"X has shape {X.shape}: expected (n, {a.size})")
    return np.prod((np.abs(4.0 * X - 2.0) + a) / (1.0 + a), axis=1)


def _g_coefficients(a) -> np.ndarray:
    a = np.atleast_1d(np.asarray(a, dtype=float))
    if a.ndim != 1 or np.any(~(a >= 0.0)):
        raise ValueError(f"a = {a!r}: expected a 1-d array of numbers >= 0")
    return a


def g_function_indices(a: np.ndarray) -> dict:
    """Closed-form Sobol indices of :func:`g_function`.

    Returns
    -------
    dict
        ``S1`` and ``ST`` arrays of shape (d,) and the output ``variance``.

    Notes
    -----
    V_i = (1/3)/(1 + a_i)^2, V = prod(1 + V_i) - 1, S_i = V_i / V,
    ST_i = V_i prod_{j != i}(1 + V_j) / V (Saltelli & Sobol 1995).
    """
    a = _g_coefficients(a)
    vi = (1.0 / 3.0) / (1.0 + a) ** 2
    v = np.prod(1.0 + vi) - 1.0
    st = vi * np.prod(1.0 + vi) / (1.0 + vi) / v
    return {"S1": vi / v, "ST": st, "variance": float(v)}


def linear(X: np.ndarray, coeffs: np.ndarray) -> np.ndarray:
    """Linear model X @ coeffs; X of shape (n, d), coeffs (d,); returns (n,)."""
    X = np.asarray(X, dtype=float)
    coeffs = np.asarray(coeffs, dtype=float)
    if X.ndim != 2 or coeffs.shape != (X.shape[1],):
        raise ValueError(f"X shape {X.shape}, coeffs shape {coeffs.shape}: expected (n, d), (d,)")
    return X @ coeffs


def linear_indices(coeffs: np.ndarray, variances: np.ndarray) -> dict:
    """Closed-form Sobol indices of :func:`linear` with independent inputs.

    S_i = ST_i = a_i^2 Var(X_i) / sum_j a_j^2 Var(X_j) (no interactions).

    Parameters
    ----------
    coeffs : array_like
        Shape (d,) coefficients a_i.
    variances : array_like
        Shape (d,) input variances Var(X_i) > 0 [input unit squared].

    Returns
    -------
    dict
        ``S1`` and ``ST`` arrays of shape (d,) and the output ``variance``.
    """
    coeffs = np.asarray(coeffs, dtype=float)
    variances = np.asarray(variances, dtype=float)
    if coeffs.ndim != 1 or variances.shape != coeffs.shape or np.any(~(variances > 0.0)):
        raise ValueError("coeffs, variances: expected two 1-d arrays of one length, variances > 0")
    parts = coeffs**2 * variances
    total = parts.sum()
    return {"S1": parts / total, "ST": parts / total, "variance": float(total)}
