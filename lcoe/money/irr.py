"""Internal rate of return: every root of a yearly cash flow, found by bracketing the sign
changes of its NPV on one grid of rates and bisecting; the investment root (the NPV turns
from positive to negative as the rate rises) is the one reported, with every root beside
it. :func:`mirr` is the single-valued companion. Cash-flow conventions as in
:mod:`lcoe.money.finance` (column 0 = year 0, not discounted).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from lcoe.money.finance import _GRID_WEIGHTS, as_flows, check_rate, per_sample, sign_changes

#: Search interval of :func:`irr`, in rate per year: (IRR_LOW, IRR_HIGH].
IRR_LOW = -0.99
IRR_HIGH = 10.0
#: Points of the root-scanning grid of :func:`irr` and :func:`investment_irr` (uniform in
#: log(1 + rate)).
IRR_GRID_POINTS = 2001
#: Most bisection steps refining a root (the bracket reaches one unit in the last place first).
IRR_BISECTIONS = 80


# --------------------------------------------------------------------------------------------
# internal rate of return
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class IrrResult:
    """Every internal rate of return of one cash flow, and the one to report.

    Attributes
    ----------
    roots : list of float
        All rates in (-0.99, 10] [1/year] at which the NPV crosses zero, ascending.
    value : float
        The investment root: the highest rate at which the NPV turns from positive to negative
        as the rate rises (the only root when there is one that way); NaN when there is none.
    reason : str
        Why ``value`` is NaN, or, with several roots, which one ``value`` is (empty for a
        single root).
    sign_changes : int
        Number of sign changes of the cash flow (Descartes: an upper bound on the roots).
    """

    roots: list[float] = field(default_factory=list)
    value: float = float("nan")
    reason: str = ""
    sign_changes: int = 0


#: What ``IrrResult.reason`` says when the investment root is reported among several roots.
SEVERAL_ROOTS = ("several IRRs: the investment root is reported (the NPV turns from positive "
                 "to negative as the rate rises)")
#: ``IrrResult.reason`` when the NPV crosses zero only from negative to positive.
NO_INVESTMENT_ROOT = "no investment root (the NPV only rises through zero as the rate rises)"


def _scaled_npv(u: np.ndarray, cf: np.ndarray) -> np.ndarray:
    """NPV at rate ``exp(u) - 1`` times a positive factor that keeps every exponent <= 0.

    ``cf`` has shape (..., n + 1) and ``u`` broadcasts against ``cf[..., 0]``. For u >= 0 the
    factor is 1; for u < 0 it is ``exp(u n)``, so ``(1 + r)**-t`` never overflows. The result
    is continuous in u and has the sign of the NPV.
    """
    u = np.asarray(u, dtype=float)[..., None]
    n = cf.shape[-1] - 1
    t = np.arange(n + 1, dtype=float)
    shift = np.where(u < 0.0, float(n), 0.0)
    return np.sum(cf * np.exp(u * (shift - t)), axis=-1)


def _irr_grid(n_years: int) -> tuple[np.ndarray, np.ndarray]:
    """The IRR scanning grid in u = log(1 + rate) and its NPV weights (G, n_years + 1).

    ``cf @ weights.T`` is :func:`_scaled_npv` at every grid point; kept per length.
    """
    if n_years not in _GRID_WEIGHTS:
        u = np.linspace(np.log1p(IRR_LOW), np.log1p(IRR_HIGH), IRR_GRID_POINTS)
        t = np.arange(n_years + 1, dtype=float)
        shift = np.where(u < 0.0, float(n_years), 0.0)
        _GRID_WEIGHTS[n_years] = (u, np.exp(u[:, None] * (shift[:, None] - t)))
    return _GRID_WEIGHTS[n_years]


def _crossings(cf: np.ndarray, every: bool = False):
    """Where the NPV of each row crosses zero on the IRR grid.

    Returns ``u`` (G,), ``root`` (None unless ``every``) and ``falling``, both (n_rows, 2 G - 1)
    booleans over positions ``p``: even ``p = 2 k`` is grid point k where the NPV is exactly
    zero (k >= 1), odd ``p = 2 k + 1`` the interval (k, k + 1) over which it changes sign.
    ``falling`` marks the crossings where the NPV turns from positive to negative as the rate
    rises. Positions are in ascending order of the rate.
    """
    u, weights = _irr_grid(cf.shape[-1] - 1)
    from lcoe.case.threads import one_blas_thread, sample_product

    with one_blas_thread():  # a small product: one thread was 2x faster under load, in CPU too
        g = sample_product(cf, weights.T)  # a row's signs never depend on the other rows
    pos, neg = g > 0, g < 0
    falling = np.zeros((g.shape[0], 2 * u.size - 1), dtype=bool)
    falling[:, 1::2] = pos[:, :-1] & neg[:, 1:]
    root = None
    if every:
        root = falling.copy()
        root[:, 1::2] |= neg[:, :-1] & pos[:, 1:]
    zero = ~(pos[:, 1:] | neg[:, 1:])
    if zero.any():
        # falls through zero at grid point k: positive before, negative after (past the last
        # point, taken as crossing)
        after_negative = np.concatenate([neg[:, 2:], pos[:, -2:-1]], axis=1)
        falling[:, 2::2] = zero & pos[:, :-1] & after_negative
        if every:
            root[:, 2::2] = zero
    return u, root, falling


def _refine(cf: np.ndarray, u: np.ndarray, position: np.ndarray) -> np.ndarray:
    """Roots [1/year] of the rows of ``cf`` at crossing positions ``position`` (see
    :func:`_crossings`): grid points as they are, intervals by bisection in u to the last bit.
    """
    k = position // 2
    a, b = u[k], u[np.minimum(k + 1, u.size - 1)]
    inside = position % 2 == 1
    if np.any(inside):
        rows = cf[inside]
        lo, hi = a[inside], b[inside]
        g_lo = _scaled_npv(lo, rows)
        # bisection is sequential by nature; each step is vectorised over the rows
        # (a row whose bracket cannot be halved any more is left as it is, so its root does not
        # depend on the other rows of the call)
        for _ in range(IRR_BISECTIONS):
            m = 0.5 * (lo + hi)
            active = (m > lo) & (m < hi)
            if not np.any(active):
                break
            g_m = _scaled_npv(m, rows)
            left = active & (np.sign(g_m) == np.sign(g_lo))
            right = active & ~left
            lo = np.where(left, m, lo)
            g_lo = np.where(left, g_m, g_lo)
            hi = np.where(right, m, hi)
        a = a.copy()
        a[inside] = 0.5 * (lo + hi)
    return np.expm1(a)


def irr(cashflows) -> IrrResult:
    """All internal rates of return of one cash flow, and the investment root among them.

    Parameters
    ----------
    cashflows : array_like, shape (n_years + 1,)
        Yearly cash flows [currency], column 0 = year 0.

    Returns
    -------
    IrrResult
        ``roots`` lists every root in (-0.99, 10] [1/year]; ``value`` is the investment root
        (see Notes; the same number :func:`investment_irr` gives), or NaN with ``reason`` "no
        sign change in cash flows", "NPV does not cross zero in (-99 %, 1000 %]" or
        :data:`NO_INVESTMENT_ROOT`.

    Notes
    -----
    Rule for several sign changes (e.g. a decommissioning cost at the end): the reported IRR
    is the investment root, the highest rate at which the NPV turns from positive to negative
    as the rate rises; above it the project destroys value at any higher rate. For flows
    -100, +230, -132 (roots 10 % and 20 %) it is 20 %; for a project with a final cost whose
    roots are -91 % and 6.6 % it is 6.6 %. All roots are reported beside it, and the MIRR
    (:func:`mirr`) is a single-valued companion.

    The NPV is scanned on a grid of :data:`IRR_GRID_POINTS` points uniform in
    ``u = log(1 + r)`` (spacing about 0.0035 in u) for sign changes; each bracket is refined by
    bisection in u to the last bit. A root is only reported where the NPV changes sign or is
    exactly zero on the grid, so no root is ever invented; two roots closer than the grid
    spacing, or a double root where the NPV touches zero without crossing, are not found.

    References
    ----------
    .. [1] Descartes' rule of signs: the number of positive roots of a polynomial is at most
       the number of sign changes of its coefficients (here in x = 1 / (1 + r)).
    """
    cf = np.asarray(cashflows, dtype=float)
    if cf.ndim != 1 or cf.size < 2:
        raise ValueError(f"irr: expected a 1-D cash flow of >= 2 years, got shape {cf.shape}")
    if not np.all(np.isfinite(cf)):
        raise ValueError("irr: cash flows must be finite")
    changes = int(sign_changes(cf))
    if changes == 0:
        return IrrResult([], float("nan"), "no sign change in cash flows", 0)
    u, root, falling = _crossings(cf[None, :], every=True)
    positions = np.flatnonzero(root[0])
    if positions.size == 0:
        return IrrResult([], float("nan"), "NPV does not cross zero in (-99 %, 1000 %]", changes)
    values = _refine(np.broadcast_to(cf, (positions.size, cf.size)), u, positions)
    roots = [float(x) for x in values]
    down = np.flatnonzero(falling[0])
    if down.size == 0:
        return IrrResult(roots, float("nan"), NO_INVESTMENT_ROOT, changes)
    value = roots[int(np.searchsorted(positions, down[-1]))]
    return IrrResult(roots, value, SEVERAL_ROOTS if len(roots) > 1 else "", changes)


def investment_irr(cashflows) -> np.ndarray:
    """IRR of each sample's cash flow: the investment root (see :func:`irr`), NaN where none.

    Parameters
    ----------
    cashflows : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Yearly cash flows [currency], column 0 = year 0; a 1-D input is one sample.

    Returns
    -------
    numpy.ndarray, shape (n_samples,)
        IRR [1/year] in (-0.99, 10]: the highest rate at which the NPV turns from positive to
        negative as the rate rises; NaN where the NPV never does.

    Notes
    -----
    The rule, grid and bisection of :func:`irr`, vectorised over samples: for one flow the
    result is ``irr(flow).value``. A flow that starts negative, turns positive and ends
    negative (decommissioning) has a spurious root near -100 % where the NPV turns from
    negative to positive; it is listed by :func:`irr` but never reported (DOMAIN.md
    section 8). Each sample's root depends only on its own flow.
    """
    cf = as_flows(cashflows, "cashflows")
    if not np.all(np.isfinite(cf)):
        raise ValueError("investment_irr: cash flows must be finite")
    out = np.full(cf.shape[0], np.nan)
    live = np.flatnonzero(sign_changes(cf) > 0)
    if live.size == 0:
        return out
    u, _, falling = _crossings(cf[live])
    found = falling.any(axis=1)
    last = falling.shape[1] - 1 - np.argmax(falling[:, ::-1], axis=1)
    out[live[found]] = _refine(cf[live[found]], u, last[found])
    return out


def irr_text(value, roots, reason: str = "", unit: str = " %") -> str:
    """An IRR as tables and reports write it: the investment root, every root beside it.

    Parameters
    ----------
    value : float or None
        The investment root [1/year] (:attr:`IrrResult.value`); None or NaN when there is none.
    roots : sequence of float
        Every root [1/year] (:attr:`IrrResult.roots`).
    reason : str
        Why there is no investment root (:attr:`IrrResult.reason`).
    unit : str
        Written after each percentage (" %" in text, "" in a table with a unit column).

    Returns
    -------
    str
        e.g. ``5.58 % (investment root; all roots -82.82 %, 5.58 %)``, ``5.58 %``, or
        ``none (reason; roots ...)``.
    """
    listed = ", ".join(f"{100 * x:.2f}{unit}" for x in roots)
    if value is not None and np.isfinite(value):
        if len(roots) > 1:
            return f"{100 * value:.2f}{unit} (investment root; all roots {listed})"
        return f"{100 * value:.2f}{unit}"
    if len(roots):
        return f"none ({reason or NO_INVESTMENT_ROOT}; roots {listed})"
    return f"none ({reason or 'no root'})"


def mirr(cashflows, finance_rate, reinvest_rate) -> np.ndarray:
    """Modified internal rate of return of each sample's cash flow.

    Parameters
    ----------
    cashflows : array_like, shape (n_samples, n_years + 1) or (n_years + 1,)
        Yearly cash flows [currency], column 0 = year 0.
    finance_rate : float or array_like (n_samples,)
        Rate at which the negative flows are discounted to year 0 [1/year] (e.g. the loan
        rate).
    reinvest_rate : float or array_like (n_samples,)
        Rate at which the positive flows are compounded to the last year [1/year] (e.g. the
        discount rate).

    Returns
    -------
    numpy.ndarray, shape (n_samples,)
        MIRR [1/year]; NaN for a flow without both positive and negative values.

    Notes
    -----
    MIRR = (FV of the positive flows at the reinvestment rate / -PV of the negative flows at
    the finance rate)^(1/n) - 1, n the number of years after year 0. Single-valued whatever the
    number of sign changes.

    References
    ----------
    .. [1] numpy-financial, ``mirr`` (docstring example: flows -4500, -800, 800, 800, 600, 600,
       800, 800, 700, 3000 at 8 % and 5.5 % give 0.0665972).
    """
    cf = as_flows(cashflows, "cashflows")
    n = cf.shape[1] - 1
    f = per_sample(check_rate(finance_rate, "finance_rate", "mirr"), cf.shape[0], "finance_rate")
    r = per_sample(check_rate(reinvest_rate, "reinvest_rate", "mirr"), cf.shape[0],
                   "reinvest_rate")
    t = np.arange(n + 1, dtype=float)
    fv_pos = np.sum(np.where(cf > 0, cf, 0.0) * (1.0 + r[:, None]) ** (n - t), axis=1)
    pv_neg = -np.sum(np.where(cf < 0, cf, 0.0) / (1.0 + f[:, None]) ** t, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = (fv_pos / pv_neg) ** (1.0 / n) - 1.0
    return np.where((fv_pos > 0) & (pv_neg > 0), out, np.nan)
