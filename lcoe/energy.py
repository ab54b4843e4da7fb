"""Hourly energy downstream of the plane of array, vectorised over a leading samples axis.

Given the plane-of-array irradiance of one geometry (shared) and parameter arrays of shape
(n_samples,), this module computes cell temperature, DC power, inverter output with clipping,
AC losses and availability for every sample and hour at once, and reduces the hourly arrays to
annual, monthly and loss-chain totals. Hourly arrays have shape (n_samples, n_hours) and are
built chunk by chunk, so peak memory is bounded by the chunk size, not by the number of samples.

Loss order (as in the domain brief): DC losses -> inverter efficiency -> clipping at the AC
rating -> AC losses -> availability -> the plant's own consumption (drives of rotating bodies).
Clipping is reported as its own line.

A plant of flat modules has one plane of array; a plant of 3-D bodies has one per facet
(:class:`lcoe.irradiance.FacetIrradiance`): each facet gets its own cell temperature and DC
power, the DC of the plant is the area-weighted sum over facets, and one inverter, clipping and
AC chain follows for the whole plant.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .irradiance import FacetIrradiance, PlaneOfArray, as_facets
from .weather import Weather

#: Inputs of :func:`simulate` (dotted case paths) that act per sample.
ENERGY_PARAMS: tuple[str, ...] = (
    "site.albedo", "plant.dc_capacity_kw", "plant.dc_ac_ratio", "plant.temp_coeff_per_c",
    "plant.thermal_u0", "plant.thermal_u1", "plant.dc_loss_fraction",
    "plant.inverter_efficiency", "plant.ac_loss_fraction", "plant.availability",
)

#: Reference efficiency of the inverter part-load curve (Dobos 2014), as in pvlib.inverter.pvwatts.
ETA_INV_REF = 0.9637

#: Names of the loss-chain stages, in order [kWh per year].
LOSS_CHAIN = (
    ("poa_kwh", "Nameplate x plane-of-array irradiation / 1 kW/m2"),
    ("after_iam_kwh", "after angle-of-incidence loss"),
    ("after_temperature_kwh", "after cell temperature (DC at module terminals)"),
    ("after_dc_losses_kwh", "after DC losses"),
    ("after_inverter_kwh", "after inverter efficiency (before clipping)"),
    ("after_clipping_kwh", "after clipping at the AC rating"),
    ("after_ac_losses_kwh", "after AC losses"),
    ("after_availability_kwh", "after availability"),
    ("delivered_kwh", "delivered, after the plant's own consumption (drives)"),
)


def faiman_cell_temperature(poa_global_w_m2, temp_air_c, wind_speed_m_s, u0, u1):
    """Module temperature by Faiman's model [C].

    ``T_c = T_a + G / (U0 + U1 * ws)``; arrays broadcast, e.g. poa (n_s or 1, n_h) with u0
    (n_s, 1).

    Parameters
    ----------
    poa_global_w_m2 : array_like
        Total plane-of-array irradiance [W/m2].
    temp_air_c : array_like
        Air temperature [C].
    wind_speed_m_s : array_like
        Wind speed [m/s].
    u0 : array_like
        Constant heat-loss factor [W/m2/K].
    u1 : array_like
        Wind heat-loss factor [W s/m3/K].

    References
    ----------
    .. [1] D. Faiman, "Assessing the outdoor operating temperature of photovoltaic modules",
       Progress in Photovoltaics 16(4), 2008.
    """
    return temp_air_c + poa_global_w_m2 / (u0 + u1 * wind_speed_m_s)


def dc_power_kw(effective_irradiance_w_m2, cell_temp_c, dc_capacity_kw, temp_coeff_per_c):
    """DC power with a linear temperature coefficient [kW].

    ``P = P_stc * G_eff / 1000 * (1 + gamma (T_c - 25))``.

    Parameters
    ----------
    effective_irradiance_w_m2 : array_like
        Irradiance reaching the cells after incidence-angle loss [W/m2].
    cell_temp_c : array_like
        Cell temperature [C].
    dc_capacity_kw : array_like
        Nameplate at STC [kW].
    temp_coeff_per_c : array_like
        Power temperature coefficient gamma [1/C].
    """
    return dc_capacity_kw * effective_irradiance_w_m2 / 1000.0 * \
        (1.0 + temp_coeff_per_c * (cell_temp_c - 25.0))


def inverter_ac_kw(pdc_kw, ac_capacity_kw, eta_nom):
    """Inverter output before and after clipping [kW] with the part-load curve of Dobos (2014).

    ``eta = eta_nom / 0.9637 * (-0.0162 z - 0.0059 / z + 0.9858)``, ``z = P_dc / P_dc0``,
    ``P_dc0 = P_ac0 / eta_nom``; output is floored at 0 and clipped at ``P_ac0``.

    Parameters
    ----------
    pdc_kw : numpy.ndarray
        DC input [kW], shape (n_s, n_h).
    ac_capacity_kw : numpy.ndarray
        AC rating [kW], broadcastable (n_s, 1).
    eta_nom : numpy.ndarray
        Nominal efficiency [-], broadcastable (n_s, 1).

    Returns
    -------
    unclipped, clipped : numpy.ndarray
        AC power without and with the AC limit [kW].

    References
    ----------
    .. [1] A. P. Dobos, "PVWatts Version 5 Manual", NREL/TP-6A20-62641, 2014.
    """
    pdc0 = ac_capacity_kw / eta_nom
    # eta * P_dc written as a polynomial in P_dc (same value, no division per hour):
    # eta_nom/eta_ref * (0.9858 P - 0.0162 P^2 / P_dc0 - 0.0059 P_dc0)
    k = eta_nom / ETA_INV_REF
    unclipped = pdc_kw * (0.9858 - 0.0162 / pdc0 * pdc_kw)
    unclipped -= 0.0059 * pdc0
    unclipped *= k
    np.maximum(unclipped, 0.0, out=unclipped)
    return unclipped, np.minimum(unclipped, ac_capacity_kw)


@dataclass(frozen=True)
class EnergyResult:
    """Energy totals per sample.

    Attributes
    ----------
    annual_kwh : numpy.ndarray
        Delivered AC energy in an average year of the weather file [kWh], (n_s,).
    monthly_kwh : numpy.ndarray
        Delivered energy by calendar month, averaged over the file's years [kWh], (n_s, 12).
    yearly_kwh : numpy.ndarray
        Delivered energy of each calendar year of the file [kWh], (n_s, n_weather_years);
        one column for a typical year.
    loss_chain_kwh : dict of str to numpy.ndarray
        Energy after each stage of :data:`LOSS_CHAIN` per average year [kWh], each (n_s,).
    poa_kwh_m2 : numpy.ndarray
        Plane-of-array irradiation per average year, mean over the cells [kWh/m2], (n_s,).
    dc_capacity_kw : numpy.ndarray
        Nameplate used [kW], (n_s,).
    hourly_ac_kw : numpy.ndarray or None
        Delivered AC power each hour [kW], (n_s, n_h), only when asked for.
    cell_area_m2 : numpy.ndarray or None
        Area of the cells, nameplate / (module efficiency x 1 kW/m2) [m2], (n_s,); set by
        :func:`lcoe.model.evaluate`.
    land_area_m2 : numpy.ndarray or None
        Land the plant occupies [m2], (n_s,): cell area / gcr for flat mounts, bodies x
        spacing^2 for bodies; set by :func:`lcoe.model.evaluate`.
    n_bodies : numpy.ndarray or None
        Number of bodies (nameplate / body nameplate, not rounded) [-], (n_s,); None for flat
        mounts.
    """

    annual_kwh: np.ndarray
    monthly_kwh: np.ndarray
    yearly_kwh: np.ndarray
    loss_chain_kwh: dict
    poa_kwh_m2: np.ndarray
    dc_capacity_kw: np.ndarray
    hourly_ac_kw: np.ndarray | None = None
    cell_area_m2: np.ndarray | None = None
    land_area_m2: np.ndarray | None = None
    n_bodies: np.ndarray | None = None

    @property
    def energy_per_cell_m2_kwh(self) -> np.ndarray:
        """Delivered energy per m2 of cells per average year [kWh/m2], (n_s,)."""
        return self.annual_kwh / self.cell_area_m2

    @property
    def energy_per_land_m2_kwh(self) -> np.ndarray:
        """Delivered energy per m2 of land per average year [kWh/m2], (n_s,)."""
        return self.annual_kwh / self.land_area_m2

    @property
    def specific_yield_kwh_per_kw(self) -> np.ndarray:
        """Final yield Yf = E_AC / P_stc [kWh/kW], (n_s,)."""
        return self.annual_kwh / self.dc_capacity_kw

    @property
    def performance_ratio(self) -> np.ndarray:
        """IEC 61724-1 performance ratio PR = Yf / Yr, Yr = H_POA / (1 kW/m2) [-], (n_s,)."""
        return self.specific_yield_kwh_per_kw / self.poa_kwh_m2

    @property
    def clipping_loss_fraction(self) -> np.ndarray:
        """Energy lost to clipping / inverter output before clipping [-], (n_s,)."""
        lc = self.loss_chain_kwh
        before = lc["after_inverter_kwh"]
        return np.where(before > 0, (before - lc["after_clipping_kwh"]) / before, 0.0)

    @property
    def capacity_factor_dc(self) -> np.ndarray:
        """Delivered energy / (DC nameplate x 8760 h) [-], (n_s,)."""
        return self.annual_kwh / (self.dc_capacity_kw * 8760.0)


def _column(values, n: int) -> np.ndarray:
    """Parameter as a (n, 1) column for broadcasting against hours."""
    a = np.asarray(values, dtype=float).reshape(-1)
    if a.size == 1:
        a = np.full(n, a[0])
    if a.size != n:
        raise ValueError(f"parameter of size {a.size} does not match {n} samples")
    return a[:, None]


def _facet_rows(poa, aoi_model: str):
    """(direct, effective direct, sky, ground per albedo) as (k, n_h) arrays and shares (k,).

    A flat plane is one row with share 1 (so its result is unchanged by the facet sum).
    """
    f = poa if isinstance(poa, FacetIrradiance) else as_facets(poa, aoi_model)
    return (f.direct_w_m2, f.direct_effective_w_m2, f.sky_diffuse_w_m2,
            f.ground_per_albedo_w_m2, f.area_fraction)


def simulate(poa: PlaneOfArray | FacetIrradiance, weather: Weather, params: dict,
             aoi_model: str = "physical", chunk_size: int = 16, keep_hourly: bool = False,
             parasitic_kw=None, parasitic_hours=None) -> EnergyResult:
    """Hourly energy for every sample, reduced to totals.

    Parameters
    ----------
    poa : PlaneOfArray, FacetIrradiance or an object with a ``dc_kw`` method
        Shared irradiance of the geometry: one plane, arrays (n_h,), or k facets of a body,
        arrays (k, n_h) with area fractions (k,) (incidence-angle loss already applied), or a
        technology with its own DC model, ``dc_kw(chunk_params, temp_air_c, wind_speed_m_s)
        -> (g_poa, g_eff, pdc_kw)`` (e.g.
        :class:`lcoe.tech.concentrator_model.ConcentratorBeam`).
    weather : Weather
        Hourly weather (air temperature [C], wind speed [m/s]).
    params : dict of str to array_like
        Every key of :data:`ENERGY_PARAMS` (and whatever a ``dc_kw`` model reads), each a
        scalar or shape (n_s,), in the units of the case file (fractions, kW, 1/C, W/m2/K,
        W s/m3/K).
    aoi_model : {"physical", "ashrae"}
        Beam incidence-angle modifier (for a plane; a FacetIrradiance carries its own).
    chunk_size : int
        Samples evaluated together; bounds peak memory at about 12 x chunk_size x n_h x 8
        bytes, whatever the number of facets (facets are summed one at a time).
    keep_hourly : bool
        Also return the hourly delivered AC power (n_s, n_h) [kW].
    parasitic_kw : array_like, optional
        The plant's own consumption (drives) [kW], scalar or (n_s,), drawn in every hour of
        ``parasitic_hours`` and subtracted after availability. Where it exceeds the output, the
        difference is drawn from the grid and counts as negative delivered energy.
    parasitic_hours : numpy.ndarray of bool, optional
        (n_h,) hours in which the consumption runs (e.g. the sun above the horizon).

    Returns
    -------
    EnergyResult

    Notes
    -----
    For facet j with area fraction a_j, ``P_dc = sum_j a_j P_stc G_eff,j / 1000 (1 + gamma
    (T_j - 25))`` with ``T_j`` from Faiman with the facet's own plane-of-array irradiance. The
    plane-of-array irradiation reported is the area-weighted mean over the cells.
    """
    missing = [k for k in ENERGY_PARAMS if k not in params]
    if missing:
        raise ValueError(f"missing energy parameters: {', '.join(missing)}")
    n_s = max(np.asarray(params[k]).size for k in ENERGY_PARAMS)
    cols = {k: _column(v, n_s) for k, v in params.items()}
    t_air = weather.data["temp_air"].to_numpy()
    ws = weather.data["wind_speed"].to_numpy()
    months = weather.data.index.month.to_numpy() - 1
    years = weather.years
    year_values = np.unique(years)
    n_years = weather.n_years
    month_onehot = np.zeros((weather.n_hours, 12))
    month_onehot[np.arange(weather.n_hours), months] = 1.0
    year_onehot = (years[:, None] == year_values[None, :]).astype(float)
    if weather.typical_year:
        year_onehot = np.ones((weather.n_hours, 1))
    own_dc = not isinstance(poa, (PlaneOfArray, FacetIrradiance))
    run_hours = None if parasitic_kw is None else np.asarray(parasitic_hours, dtype=bool)
    if own_dc:  # its DC model works on every hour of the year
        day = np.arange(weather.n_hours)
    else:
        direct, direct_eff, sky, ground, share = _facet_rows(poa, aoi_model)
        # Hours without light on any facet (and no parasitic load) deliver nothing: the hourly
        # arrays hold only the other hours.
        busy = (direct + sky + ground > 0).any(axis=0)
        if run_hours is not None:
            busy |= run_hours
        day = np.nonzero(busy)[0] if busy.any() else np.arange(1)  # keep one (dark) hour
        direct, direct_eff = direct[:, day], direct_eff[:, day]
        sky, ground = sky[:, day], ground[:, day]
        t_air, ws = t_air[day], ws[day]
    parasitic = None
    if parasitic_kw is not None:
        parasitic = _column(parasitic_kw, n_s) * run_hours[day].astype(float)
    # Monthly and yearly totals: sum each run of consecutive hours of one (year, month) with
    # reduceat, then fold the few runs into months and years (cheaper than an hourly matmul).
    ym = years[day] * 12 + months[day]
    starts = np.concatenate(([0], np.nonzero(np.diff(ym))[0] + 1))
    seg_month, seg_year = month_onehot[day][starts], year_onehot[day][starts]

    annual = np.empty(n_s)
    monthly = np.empty((n_s, 12))
    yearly = np.empty((n_s, year_onehot.shape[1]))
    poa_kwh_m2 = np.empty(n_s)
    chain = {k: np.empty(n_s) for k, _ in LOSS_CHAIN}
    hourly = np.zeros((n_s, weather.n_hours)) if keep_hourly else None
    for start in range(0, n_s, chunk_size):
        sl = slice(start, min(start + chunk_size, n_s))
        m = sl.stop - sl.start
        c = {k: v[sl] for k, v in cols.items()}
        albedo = c["site.albedo"]
        p_stc = c["plant.dc_capacity_kw"]
        g_poa = g_eff = pdc = 0.0
        if own_dc:  # a technology with its own DC model (a concentrator)
            g_poa, g_eff, pdc = poa.dc_kw(c, t_air, ws)
        for j in range(0 if own_dc else share.size):  # facets one at a time: memory bound
            g_j = direct[j] + sky[j] + albedo * ground[j]
            g_eff_j = direct_eff[j] + sky[j] + albedo * ground[j]
            t_cell = faiman_cell_temperature(g_j, t_air, ws, c["plant.thermal_u0"],
                                             c["plant.thermal_u1"])
            pdc_j = dc_power_kw(g_eff_j, t_cell, p_stc, c["plant.temp_coeff_per_c"])
            if share.size == 1:  # a flat plane: no facet sum to build
                pdc, g_poa, g_eff = pdc_j, g_j, g_eff_j
                break
            pdc = pdc + share[j] * pdc_j
            g_poa = g_poa + share[j] * g_j
            g_eff = g_eff + share[j] * g_eff_j
        dc_keep = 1.0 - c["plant.dc_loss_fraction"]
        ac_kw = p_stc / c["plant.dc_ac_ratio"]
        unclipped, clipped = inverter_ac_kw(pdc * dc_keep, ac_kw, c["plant.inverter_efficiency"])
        ac_keep = (1.0 - c["plant.ac_loss_fraction"])[:, 0]
        avail = c["plant.availability"][:, 0]
        # Stages after clipping are scalar multiples per sample, so their totals are too.
        s_poa = np.broadcast_to(g_poa, (m, day.size)).sum(axis=1)
        s_eff = np.broadcast_to(g_eff, (m, day.size)).sum(axis=1)
        s_pdc = pdc.sum(axis=1)
        s_clip = clipped.sum(axis=1)
        s_par = 0.0 if parasitic is None else parasitic[sl].sum(axis=1)
        sums = (p_stc[:, 0] * s_poa / 1000.0, p_stc[:, 0] * s_eff / 1000.0, s_pdc,
                s_pdc * dc_keep[:, 0], unclipped.sum(axis=1), s_clip, s_clip * ac_keep,
                s_clip * ac_keep * avail, s_clip * ac_keep * avail - s_par)
        for (name, _), total in zip(LOSS_CHAIN, sums):
            chain[name][sl] = total / n_years
        poa_kwh_m2[sl] = s_poa / 1000.0 / n_years
        annual[sl] = chain["delivered_kwh"][sl]
        factor = (ac_keep * avail)[:, None]
        seg = np.add.reduceat(clipped, starts, axis=1) * factor
        if parasitic is not None:
            seg -= np.add.reduceat(parasitic[sl], starts, axis=1)
        monthly[sl] = seg @ seg_month / n_years
        yearly[sl] = seg @ seg_year
        if keep_hourly:
            hourly[sl, day] = clipped * factor - (0.0 if parasitic is None else parasitic[sl])
    return EnergyResult(annual_kwh=annual, monthly_kwh=monthly, yearly_kwh=yearly,
                        loss_chain_kwh=chain, poa_kwh_m2=poa_kwh_m2,
                        dc_capacity_kw=cols["plant.dc_capacity_kw"][:, 0], hourly_ac_kw=hourly)
