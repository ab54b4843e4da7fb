"""Exact factored evaluation of the hourly chain: sums instead of hours wherever the model allows.

:func:`lcoe.plant.energy.simulate` evaluates, for every sample and daylight hour, light -> cell
temperature -> DC -> inverter -> clipping. This module computes the same totals with far less
work per sample, exactly (same formulas, only summed in another order; agreement with the
hourly evaluation within 1e-12 relative is tested in ``tests/test_factored.py``).

The structure used (notation of :func:`lcoe.plant.energy.simulate`; facet j with share s_j, hour h):

- the DC per unit nameplate ``q_h = sum_j s_j (A_j + a B_j) / 1000 (1 + g (T'_h + w_h (N_j +
  a G_j)))`` with ``a`` the albedo, ``g`` the temperature coefficient, ``T' = T_air - 25``,
  ``w = 1 / (U0 + U1 v)`` (v the wind speed), ``A, B`` the effective front (x (1 - soiling))
  plus rear light (x bifaciality x (1 - rear loss)) without and per unit albedo, ``N, G`` the
  front light that drives the cell temperature. Written as ``q = (U (1 + g T') + g w V) /
  1000`` with ``U = UA + a UB`` and ``V = V0 + a V1 + a^2 V2`` hourly series that depend only
  on the site, the geometry, soiling and the rear-side factor (a *group* of samples);
- DC capacity, DC loss, inverter efficiency and DC/AC ratio enter the inverter only through
  ``z = beta q``, ``beta = (1 - DC loss) x eta_inv x DC/AC``: the output before clipping is
  ``AC_rating / 0.9637 x p(z)``, ``p(z) = 0.9858 z - 0.0162 z^2 - 0.0059`` floored at 0, and
  it clips exactly where ``p(z) >= 0.9637``;
- so for a set of hours that, for every sample of a sub-chunk, certainly lies between the
  inverter's start and its clipping threshold, the energy needs only ``sum q`` and
  ``sum q^2``: polynomials in ``a`` and ``g`` whose coefficients are hourly sums, and sums per
  distinct wind speed (``w`` takes one value per wind speed of the file) - a few dozen numbers
  per sample instead of thousands of hours. Hours that certainly clip count as the AC rating;
  hours that certainly stay below the start give nothing. Which hours are certain follows from
  interval bounds over the sub-chunk's samples (sorted by ``beta`` so that the bounds are
  narrow); the remaining hours are evaluated one by one as in the hourly method;
- capacity, AC loss, availability and everything after are scale factors applied to these
  sums by the caller.

References
----------
.. [1] A. P. Dobos, "PVWatts Version 5 Manual", NREL/TP-6A20-62641, 2014 (inverter curve).
.. [2] D. Faiman, "Assessing the outdoor operating temperature of photovoltaic modules",
   Progress in Photovoltaics 16(4), 2008 (cell temperature).
"""

from __future__ import annotations

import math

import numpy as np

from lcoe.case.threads import one_blas_thread, sample_product

#: The per-sample inputs these sums handle: :data:`lcoe.plant.energy.ENERGY_PARAMS` must equal this
#: set (a new one enters the hourly method, here, and ``tests/test_factored.py``).
PARAMS = frozenset({
    "site.albedo", "plant.dc_capacity_kw", "plant.dc_ac_ratio", "plant.temp_coeff_per_c",
    "plant.thermal_u0", "plant.thermal_u1", "plant.dc_loss_fraction",
    "plant.inverter_efficiency", "plant.ac_loss_fraction", "plant.availability",
    "plant.bifaciality", "plant.rear_loss_fraction"})

#: Inputs that, when not sampled, :func:`factored_sums` folds into the hourly series.
THERMAL_PARAMS = frozenset({"plant.thermal_u0", "plant.thermal_u1"})
REAR_PARAMS = frozenset({"plant.bifaciality", "plant.rear_loss_fraction"})


def is_fixed(varied: frozenset | None, names: frozenset) -> bool:
    """True when none of ``names`` may differ between samples (``varied`` None: any may)."""
    return varied is not None and not varied & names


#: Part-load polynomial of the inverter (Dobos 2014) in z = P_dc / P_dc0, and its reference.
_C1, _C2, _C0 = 0.9858, 0.0162, 0.0059
ETA_INV_REF = 0.9637
#: z where the output starts (p(z) = 0), where it reaches the rating (p(z) = eta_ref) and
#: where it would fall back below the rating past the top of the parabola.
Z_START = (_C1 - math.sqrt(_C1 ** 2 - 4.0 * _C2 * _C0)) / (2.0 * _C2)
Z_CLIP = (_C1 - math.sqrt(_C1 ** 2 - 4.0 * _C2 * (_C0 + ETA_INV_REF))) / (2.0 * _C2)
Z_TOP = _C1 / _C2 - Z_CLIP
#: Relative safety margin of the interval classification (rounding of the bounds).
MARGIN = 1e-9
#: Samples that share interval bounds (sorted by beta); smaller = fewer hours left hourly.
SUB_CHUNK = 256
#: Hours whose effective light without albedo reaches this are summed (the rest, dawn and
#: dusk, are evaluated per sample unless certainly below the inverter's start) [W/m2].
BASE_LIGHT_W_M2 = 5.0


def _imul(a_lo, a_hi, b_lo, b_hi):
    """Bounds of the product of two intervals (elementwise)."""
    p = (a_lo * b_lo, a_lo * b_hi, a_hi * b_lo, a_hi * b_hi)
    return np.minimum(np.minimum(p[0], p[1]), np.minimum(p[2], p[3])), \
        np.maximum(np.maximum(p[0], p[1]), np.maximum(p[2], p[3]))


def _quad_bounds(c0, c1, c2, lo: float, hi: float):
    """Bounds of c0 + c1 a + c2 a^2 over a in [lo, hi] (elementwise over the coefficients)."""
    v_lo = c0 + lo * (c1 + lo * c2)
    v_hi = c0 + hi * (c1 + hi * c2)
    out_lo, out_hi = np.minimum(v_lo, v_hi), np.maximum(v_lo, v_hi)
    with np.errstate(divide="ignore", invalid="ignore"):
        vertex = np.where(c2 != 0.0, -c1 / (2.0 * c2), np.nan)
    inside = (vertex > lo) & (vertex < hi)
    if inside.any():
        v = c0 + vertex * (c1 + vertex * c2)
        out_lo = np.where(inside, np.minimum(out_lo, v), out_lo)
        out_hi = np.where(inside, np.maximum(out_hi, v), out_hi)
    return out_lo, out_hi


def _part(share: np.ndarray, A, B, N, G) -> tuple:
    """Hourly series (xa, xb, x0, x1, x2) of one part of q: ``U = xa + a xb`` and
    ``V = x0 + a x1 + a^2 x2`` for effective light ``A + a B`` heated by ``N + a G``."""
    return (share @ A, share @ B, share @ (A * N), share @ (A * G + B * N), share @ (B * G))


def _moment_rows(x: tuple, y: tuple, tp: np.ndarray) -> tuple:
    """Hourly rows whose sums, times the features of :func:`_features`, give the sum of
    ``q_x q_y`` (``x is y``: of ``q_x^2``): global rows (9, n_h) and per-class rows (13, n_h).

    With ``q = U (1 + g T') + g w V``: ``q_x q_y = U_x U_y (1 + g T')^2 + g w (U_x V_y +
    U_y V_x) (1 + g T') + g^2 w^2 V_x V_y``, each a polynomial in the albedo.
    """
    xa, xb, x0, x1, x2 = x
    ya, yb, y0, y1, y2 = y
    u2 = (xa * ya, xa * yb + xb * ya, xb * yb)
    # (U_x V_y + U_y V_x) / 2: the features carry the factor 2
    uv = tuple(0.5 * (c + d) for c, d in zip(
        (xa * y0, xa * y1 + xb * y0, xa * y2 + xb * y1, xb * y2),
        (ya * x0, ya * x1 + yb * x0, ya * x2 + yb * x1, yb * x2)))
    vv = (x0 * y0, x0 * y1 + x1 * y0, x1 * y1 + x0 * y2 + x2 * y0, x1 * y2 + x2 * y1, x2 * y2)
    return (np.stack([u * t for u in u2 for t in (1.0, 2.0 * tp, tp * tp)]),
            np.stack(list(uv) + [c * tp for c in uv] + list(vv)))


class _Group:
    """Hourly series and their products for samples sharing one soiling history.

    q is ``c_F q_F + c_R q_R``: the front part (effective front light, x the group's soiling
    when it is folded in) and, with a rear side, the rear part; ``c_F`` is 1 or a sample's
    soiling factor of the segment, ``c_R`` the sample's rear factor (bifaciality x (1 - rear
    loss)). Both parts are heated by the front light before soiling (``N + a G``).
    """

    def __init__(self, st: dict, share: np.ndarray, keep, t_prime, wind_class,
                 n_class: int, seg, n_seg: int, w_hour=None, rear_k: float | None = None):
        A = st["eff_n"] if keep is None else st["eff_n"] * keep
        B = st["eff_g"] if keep is None else st["eff_g"] * keep
        N, G = st["shaded_n"], st["shaded_g"]
        if w_hour is not None:  # thermal coefficients fixed: w folded into the heating light
            N, G = N * w_hour, G * w_hour
        if "rear_n" in st and rear_k:  # a fixed rear factor: light of the front part
            A, B = A + rear_k * st["rear_n"], B + rear_k * st["rear_g"]
        parts = [_part(share, A, B, N, G)]
        if "rear_n" in st and rear_k is None:  # sampled: a part of its own
            parts.append(_part(share, st["rear_n"], st["rear_g"], N, G))
        self.rear = len(parts) == 2
        tp = t_prime
        self.ua = parts[0][0]
        self.tp, self.seg, self.n_class, self.n_seg = tp, seg, n_class, n_seg
        self.parts, self.wind_class = parts, wind_class
        cell = seg * n_class + wind_class
        self.order = np.argsort(cell, kind="stable")
        cs = cell[self.order]
        self.cell_starts = np.concatenate(([0], np.nonzero(np.diff(cs))[0] + 1))
        self.cells = cs[self.cell_starts]
        self.seg_starts = np.concatenate(([0], np.nonzero(np.diff(seg))[0] + 1))
        # Fixed sets of the group (never depend on which samples are evaluated together):
        # the summed hours (front light), and the hours without any light.
        self.base = self.ua >= BASE_LIGHT_W_M2
        self.unlit = np.all([x == 0 for part in parts for x in part], axis=0)
        self.lit = np.nonzero(~self.unlit)[0]
        every = np.ones(self.ua.size, dtype=bool)
        # sum q: a^i g^j (i, j in 0..1), and per wind class g w a^i (i in 0..2), per part;
        # sum q^2: per pair of parts (FF, FR, RR), the rows of _moment_rows
        k1, k2 = [], []
        for x in parts:
            rows = (np.stack([x[0], x[1], x[0] * tp, x[1] * tp]), np.stack(x[2:]))
            k1 += [self._sums(rows, every), self._sums(rows, self.base)]
        pairs = [(0, 0), (0, 1), (1, 1)] if self.rear else [(0, 0)]
        for i, j in pairs:
            k2.append(self._sums(_moment_rows(parts[i], parts[j], tp), self.base))
        self.k1t = np.ascontiguousarray(np.concatenate(k1, axis=1).T)
        self.k2t = np.ascontiguousarray(np.concatenate(k2, axis=1).T)
        # per hour, for z: [xa, xb, xa T', xb T'] and [x0, x1, x2] of each part
        self.zc = [(np.stack([x[0], x[1], x[0] * tp, x[1] * tp], axis=1),
                    np.stack(x[2:], axis=1)) for x in parts]
        self.n_base = np.add.reduceat(self.base.astype(float), self.seg_starts)

    def _sums(self, rows: tuple, mask: np.ndarray) -> np.ndarray:
        """Sums over the hours of ``mask`` of global rows (k_g, n_h) and per-class rows
        (k_c, n_h): ``(k_g + k_c n_class, n_seg)``, matching :func:`_features`."""
        glob, per_class = rows
        ns, nc = self.n_seg, self.n_class
        m = mask.astype(float)
        g_sums = np.add.reduceat(glob * m, self.seg_starts, axis=1)
        by_cell = np.zeros((per_class.shape[0], ns * nc))
        by_cell[:, self.cells] = np.add.reduceat(per_class[:, self.order] * m[self.order],
                                                 self.cell_starts, axis=1)
        # (k, seg, class) -> rows k x class, columns seg
        by_cell = by_cell.reshape(-1, ns, nc).transpose(0, 2, 1).reshape(-1, ns)
        return np.concatenate([g_sums, by_cell])


def _features(a, g, gw):
    """Per-sample monomials of sum q (moment 1) and sum q^2 (moment 2), scaled to W/m2:
    ``(n_features, n_t)`` each (samples along rows, so every product runs over samples).

    ``gw`` is g x w per wind class and sample, (n_class, n_t).
    """
    nc, n_t = gw.shape
    ap = np.stack([np.ones_like(a), a, a * a, a ** 3, a ** 4])  # (5, n_t)
    f1 = np.empty((4 + 3 * nc, n_t))
    f1[:4] = np.stack([ap[0], a, g, a * g])
    np.multiply(ap[:3, None, :], gw[None, :, :], out=f1[4:].reshape(3, nc, n_t))
    f1 /= 1000.0
    f2 = np.empty((9 + 13 * nc, n_t))
    gp = np.stack([ap[0], g, g * g])
    np.multiply(ap[:3, None, :], gp[None, :, :], out=f2[:9].reshape(3, 3, n_t))
    # blocks of nc rows: 2 g w a^i (i < 4), 2 g w g a^i (i < 4), (g w)^2 a^i (i < 5)
    blocks = f2[9:].reshape(13, nc, n_t)
    right = np.concatenate([ap[:4], g * ap[:4]])
    np.multiply(right[:, None, :], (2.0 * gw)[None, :, :], out=blocks[:8])
    np.multiply(ap[:, None, :], (gw * gw)[None, :, :], out=blocks[8:])
    f2 /= 1e6
    return f1, f2


def _q_bounds(part: tuple, hrs: np.ndarray, tp, a_lo, a_hi, g_lo, g_hi, w_lo, w_hi):
    """Bounds of one part of q (W/m2 / 1000) over the hours ``hrs`` and the samples' ranges."""
    xa, xb = part[0][hrs], part[1][hrs]
    u_lo, u_hi = _imul(1.0, 1.0, xa + a_lo * xb, xa + a_hi * xb)
    v_lo, v_hi = _quad_bounds(part[2][hrs], part[3][hrs], part[4][hrs], a_lo, a_hi)
    c_lo, c_hi = _imul(1.0, 1.0, 1.0 + g_lo * tp, 1.0 + g_hi * tp)
    uc = _imul(u_lo, u_hi, c_lo, c_hi)
    gwv = _imul(g_lo, g_hi, *_imul(w_lo, w_hi, v_lo, v_hi))
    return (uc[0] + gwv[0]) / 1000.0, (uc[1] + gwv[1]) / 1000.0


def _candidates(grp: _Group, hrs: np.ndarray, smp: dict, wind_h) -> np.ndarray:
    """The hours of ``hrs`` where some of the samples ``smp`` may start late, clip or fall
    below the inverter's start (summed hours), or may deliver at all (unsummed hours).

    Interval bounds of ``z = beta (c_F q_F + c_R q_R)`` over the samples' ranges of albedo,
    temperature coefficient, thermal coefficients, ``beta`` and the parts' factors; every
    other hour of ``hrs`` is certainly between start and clipping (summed) or certainly dark
    for every sample.
    """
    a, g, u0, u1 = smp["a"], smp["g"], smp["u0"], smp["u1"]
    wind = wind_h[hrs]
    rng = (grp.tp[hrs], a.min(), a.max(), g.min(), g.max(),
           1.0 / (u0.max() + u1.max() * wind), 1.0 / (u0.min() + u1.min() * wind))
    z_lo, z_hi = _q_bounds(grp.parts[0], hrs, *rng)
    keep = smp["keep"]
    if keep is not None:  # soiling: each segment's light x the samples' factors of it
        s_h = grp.seg[hrs]
        z_lo, z_hi = _imul(keep.min(axis=0)[s_h], keep.max(axis=0)[s_h], z_lo, z_hi)
    if grp.rear:
        r_lo, r_hi = _imul(smp["rear"].min(), smp["rear"].max(),
                           *_q_bounds(grp.parts[1], hrs, *rng))
        z_lo, z_hi = z_lo + r_lo, z_hi + r_hi
    beta = smp["beta"]
    z_lo, z_hi = _imul(beta.min(), beta.max(), z_lo, z_hi)
    z_lo = z_lo - MARGIN * np.abs(z_lo)
    z_hi = z_hi + MARGIN * np.abs(z_hi)
    plain = (z_lo > Z_START) & (z_hi < Z_CLIP)  # certainly between start and clipping
    dark = z_hi < Z_START  # certainly below the start
    return hrs[np.where(grp.base[hrs], ~plain, ~dark)]


def _sub_chunk(grp: _Group, smp: dict, wind_values, wind_h, hrs: np.ndarray):
    """(sum q, sum of output before clipping, after clipping) by segment for the samples
    ``smp`` of one sub-chunk, the last two in units of AC rating / 0.9637, each (n_t, n_seg).

    The summed hours contribute ``p(z)`` through the factored sums; the hours of ``hrs``
    where some sample of the sub-chunk may start late, clip or fall below the start are
    evaluated hour by hour as corrections (``max(p, 0) - p``, ``min(max(p, 0), 0.9637) - p``)
    that are exactly 0 wherever nothing happens, plus the full value of unsummed hours that
    may deliver. Laid out hours x samples, the corrections are added up one hour after the
    other (running sums, into which exact zeros change nothing; a segment's share is the
    difference of the running sums at its ends), so a sample's result does not depend on
    the samples evaluated with it.
    """
    a, g, u0, u1, beta = (smp[k] for k in ("a", "g", "u0", "u1", "beta"))
    keep, rear = smp["keep"], smp["rear"] if grp.rear else None
    h = _candidates(grp, hrs, smp, wind_h)
    gw = g / (u0 + u1 * wind_values[:, None])  # g w, (n_class, n_t)
    f1, f2 = _features(a, g, gw)
    # samples x segments in C order: a row's sums then run the same way for any n_t
    s1 = np.ascontiguousarray(sample_product(grp.k1t, f1).T)
    s2 = np.ascontiguousarray(sample_product(grp.k2t, f2).T)
    ns = grp.n_seg
    total_q, q1, q2 = s1[:, :ns], s1[:, ns:2 * ns], s2[:, :ns]
    if keep is not None:  # the front part x the segment's soiling factor
        total_q, q1, q2 = total_q * keep, q1 * keep, q2 * (keep * keep)
    if rear is not None:  # + c_R q_R: sum q gains c_R q_R, sum q^2 2 c_F c_R q_F q_R + c_R^2 q_R^2
        c = rear[:, None]
        cross = s2[:, ns:2 * ns] if keep is None else s2[:, ns:2 * ns] * keep
        total_q = total_q + c * s1[:, 2 * ns:3 * ns]
        q1 = q1 + c * s1[:, 3 * ns:]
        q2 = q2 + c * (2.0 * cross + c * s2[:, 2 * ns:])
    poly = beta[:, None] * (_C1 * q1 - _C2 * beta[:, None] * q2) - _C0 * grp.n_base[None, :]
    after = poly
    before = poly.sum(axis=1)
    if h.size:  # hours x samples: z = beta q / 1000, p(z) and the corrections, in place
        # z of a part: beta / 1000 (xa + a xb + g xa T' + a g xb T') + beta / 1000 g w (x0 +
        # a x1 + a^2 x2), as two small products (per-hour coefficients x per-sample monomials)
        b = beta / 1000.0
        ab = a * b
        m1, m2 = np.stack([b, ab, g * b, g * ab]), np.stack([b, ab, a * ab])
        gw_h = gw[grp.wind_class[h]]
        u = None
        for i, (c1, c2) in enumerate(grp.zc):
            scale = rear if i == 1 else None
            zp = sample_product(c1[h], m1 if scale is None else m1 * scale)
            v = sample_product(c2[h], m2 if scale is None else m2 * scale)
            v *= gw_h
            zp += v
            if i == 0 and keep is not None:
                zp *= np.ascontiguousarray(keep.T)[grp.seg[h]]
            u = zp if u is None else u + zp
        p = u * -_C2
        p += _C1
        p *= u
        p -= _C0
        r = np.maximum(p, 0.0)
        np.minimum(r, ETA_INV_REF, out=r)
        np.subtract(r, p, out=r, where=grp.base[h][:, None])  # summed hours: the correction
        np.subtract(p, ETA_INV_REF, out=u)
        np.maximum(u, 0.0, out=u)  # clipped away
        # running sums down the hours (accumulate is sequential by definition; numpy's
        # reductions may sum pairwise, whose grouping depends on how many hours there are)
        np.cumsum(r, axis=0, out=r)
        np.cumsum(u, axis=0, out=u)
        ends = np.append(np.searchsorted(h, grp.seg_starts), h.size)  # (n_seg + 1,)
        edges = np.zeros((ends.size, a.size))
        edges[ends > 0] = r[ends[ends > 0] - 1]
        after = poly + np.ascontiguousarray((edges[1:] - edges[:-1]).T)
        before = after.sum(axis=1) + u[-1]
    return total_q, before, after


def factored_sums(st: dict, share: np.ndarray, t_air: np.ndarray, wind: np.ndarray, cols: dict,
                  soil, seg: np.ndarray, n_seg: int, groups: dict | None = None,
                  varied: frozenset | None = None) -> dict:
    """Totals of the hourly chain for every sample, without an hourly array per sample.

    Parameters
    ----------
    st : dict of str to numpy.ndarray
        Facet stages of the daylight hours (``shaded_n``, ``shaded_g``, ``eff_n``, ``eff_g``
        and, with a rear side, ``rear_n``, ``rear_g``) [W/m2], (k, n_h).
    share : numpy.ndarray
        Area fraction of each facet [-], (k,).
    t_air, wind : numpy.ndarray
        Air temperature [C] and wind speed [m/s], (n_h,).
    cols : dict of str to numpy.ndarray
        The energy parameters, (n_s, 1) each (see :data:`lcoe.plant.energy.ENERGY_PARAMS`).
    soil : tuple (history (n_h,), coef (n_s, 1), cap (n_s, 1)) or None
    seg : numpy.ndarray of int
        Segment (run of one year and month) of each hour, (n_h,).
    n_seg : int
    groups : dict, optional
        Cache of the groups' hourly series for these hours (kept by the caller per plane of
        array and weather).
    varied : frozenset of str, optional
        The caller's word on which inputs may differ between samples (None: any), decided
        from the inputs, never from the samples of a chunk, so results do not depend on
        chunking. Fixed thermal coefficients put ``w`` as one hourly series into the groups'
        series (the number of distinct wind speeds no longer matters); a fixed rear factor
        is folded into the front part (none when it is 0).

    Returns
    -------
    dict
        ``pdc_kw`` sum of DC before DC losses [kW h], ``unclipped_kw`` sum of inverter output
        before clipping, ``clipped_kw`` after (n_s,), ``seg_clipped_kw`` (n_s, n_seg) by
        segment, ``soiled_w_m2`` sum of the front effective light after soiling weighted by
        facet (n_s,) or None without soiling [W/m2 h].
    """

    n_s = cols["site.albedo"].shape[0]
    col = {k: v[:, 0] for k, v in cols.items()}
    smp = {"a": col["site.albedo"], "g": col["plant.temp_coeff_per_c"],
           "u0": col["plant.thermal_u0"], "u1": col["plant.thermal_u1"],
           "p_stc": col["plant.dc_capacity_kw"],
           "ac": col["plant.dc_capacity_kw"] / col["plant.dc_ac_ratio"],
           "beta": (1.0 - col["plant.dc_loss_fraction"]) * col["plant.inverter_efficiency"] *
           col["plant.dc_ac_ratio"],
           "rear": col["plant.bifaciality"] * (1.0 - col["plant.rear_loss_fraction"]),
           "keep": _segment_keep(soil, seg)}
    if smp["keep"] is not None:  # soiling as a per-sample factor of each segment's light
        soiled, soil = True, None  # the groups are clean modules
    else:
        soiled = soil is not None
    # groups: one per soiling level when the dirt changes hour by hour (Kimber)
    keys = np.zeros((n_s, 1)) if soil is None else np.stack([soil[1][:, 0], soil[2][:, 0]], 1)
    uniq, inverse = distinct_rows(keys)
    w_hour, rear_k = None, None
    for names, keys in ((THERMAL_PARAMS, ("u0", "u1")), (REAR_PARAMS, ("rear",))):
        if is_fixed(varied, names) and any(np.any(smp[k] != smp[k][0]) for k in keys):
            raise ValueError(f"factored_sums: {sorted(names)} given as fixed, but they vary")
    if is_fixed(varied, REAR_PARAMS):
        rear_k = float(smp["rear"][0])
        if rear_k and smp["keep"] is not None:  # the dirt scales the front part only
            rear_k = None
    if is_fixed(varied, THERMAL_PARAMS):
        u0, u1 = float(smp["u0"][0]), float(smp["u1"][0])
        w_hour = 1.0 / (u0 + u1 * wind)
        # one wind class with w = 1 / (1 + 0 x 0): g w is g, the series carry w
        smp["u0"], smp["u1"] = np.ones(n_s), np.zeros(n_s)
        wind_values, wind_class = np.zeros(1), np.zeros(wind.size, dtype=np.intp)
        history = ("w", u0, u1)
    else:
        wind_values, wind_class = np.unique(wind, return_inverse=True)
        history = ()
    history += (rear_k,)
    site = {"wind": wind, "wind_values": wind_values, "wind_class": wind_class.reshape(-1),
            "t_prime": t_air - 25.0, "seg": seg, "n_seg": n_seg}
    out = {"pdc_kw": np.empty(n_s), "unclipped_kw": np.empty(n_s),
           "clipped_kw": np.empty(n_s), "seg_clipped_kw": np.empty((n_s, n_seg)),
           "soiled_w_m2": np.empty(n_s) if soiled else None}
    history += (None if soil is None else hash(np.asarray(soil[0]).tobytes()),)
    with one_blas_thread():  # small products: threads cost more than they give
        for gi in range(uniq.shape[0]):
            key = tuple(float(x) for x in uniq[gi]) + history
            if groups is None or key not in groups:
                keep = None if soil is None else 1.0 - np.minimum(uniq[gi, 0] * soil[0],
                                                                  uniq[gi, 1])
                grp = _Group(st, share, keep, site["t_prime"], site["wind_class"],
                             site["wind_values"].size, seg, n_seg, w_hour, rear_k)
                grp.soiled = None if keep is None else (
                    (share @ (st["eff_n"] * keep)).sum(), (share @ (st["eff_g"] * keep)).sum())
                # front effective light by segment, for soiling as a factor per segment
                grp.seg_eff = tuple(np.add.reduceat(share @ st[k], grp.seg_starts)
                                    for k in ("eff_n", "eff_g"))
                if groups is not None:
                    if len(groups) > 64:
                        groups.clear()
                    groups[key] = grp
            _group_sums(out, np.nonzero(inverse == gi)[0], groups[key] if groups is not None
                        else grp, smp, site)
    return out


def _group_sums(out: dict, idx: np.ndarray, grp: _Group, smp: dict, site: dict) -> None:
    """Fill ``out`` at the samples ``idx`` of one group (one soiling history)."""
    keep = smp["keep"]
    if grp.soiled is not None:
        out["soiled_w_m2"][idx] = grp.soiled[0] + smp["a"][idx] * grp.soiled[1]
    elif keep is not None:
        light = grp.seg_eff[0][None, :] + smp["a"][idx, None] * grp.seg_eff[1][None, :]
        out["soiled_w_m2"][idx] = (keep[idx] * light).sum(axis=1)
    names = ("a", "g", "u0", "u1", "beta", "rear", "keep")

    def pick(rows):
        return {k: None if smp[k] is None else smp[k][rows] for k in names}

    order = idx[np.argsort(smp["beta"][idx], kind="stable")]
    # hours that any sample of the group may need one by one: the sub-chunks' bounds look
    # only at these (a superset of each sub-chunk's own hours)
    hrs = _candidates(grp, grp.lit, pick(idx), site["wind"])
    for start in range(0, order.size, SUB_CHUNK):
        sub = order[start:start + SUB_CHUNK]
        q, before, after = _sub_chunk(grp, pick(sub), site["wind_values"], site["wind"], hrs)
        scale = smp["ac"][sub] / ETA_INV_REF
        out["pdc_kw"][sub] = smp["p_stc"][sub] * q.sum(axis=1)
        out["unclipped_kw"][sub] = scale * before
        out["seg_clipped_kw"][sub] = scale[:, None] * after
        out["clipped_kw"][sub] = out["seg_clipped_kw"][sub].sum(axis=1)


def _segment_keep(soil, seg: np.ndarray):
    """Share of the front light the dirt lets through, per sample and segment (n_s, n_seg),
    when the soiling history is constant within every segment (the monthly model); else None.

    Then the DC of a sample is that share times the DC of clean modules in every hour of the
    segment (the cell temperature is driven by the light before the dirt), so soiling scales
    each segment's sums and the groups' hourly series stay those of clean modules.
    """
    if soil is None:
        return None
    hist = np.asarray(soil[0], dtype=float)
    starts = np.concatenate(([0], np.nonzero(np.diff(seg))[0] + 1))
    if not np.array_equal(hist[starts][seg], hist):
        return None
    return 1.0 - np.minimum(soil[1] * hist[starts][None, :], soil[2])


def distinct_rows(keys: np.ndarray, any_repeat: bool = False):
    """Distinct rows of ``keys`` (n, k) and the index of each row's distinct row (n,).

    Shortcuts the sort of ``np.unique(axis=0)`` in the common cases: every column constant
    (one row), or, with ``any_repeat``, some column without repeated values (no two rows
    alike: the rows themselves, in order).
    """
    n = keys.shape[0]
    varying = [j for j in range(keys.shape[1]) if np.any(keys[:, j] != keys[0, j])]
    if not varying:
        return keys[:1], np.zeros(n, dtype=np.intp)
    if any_repeat and any(np.unique(keys[:, j]).size == n for j in varying):
        return keys, np.arange(n)
    uniq, inverse = np.unique(keys, axis=0, return_inverse=True)
    return uniq, inverse.reshape(-1)
