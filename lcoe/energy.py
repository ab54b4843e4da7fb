"""Hourly energy downstream of the plane of array, vectorised over a leading samples axis.

Given the plane-of-array irradiance of one geometry (shared) and parameter arrays of shape
(n_samples,), this module computes cell temperature, DC power, inverter output with clipping,
AC losses and availability for every sample and hour at once, and reduces the hourly arrays to
annual, monthly and loss-chain totals. Hourly arrays have shape (n_samples, n_hours) and are
built chunk by chunk, so peak memory is bounded by the chunk size, not by the number of samples.

Loss order (as in the domain brief): DC losses -> inverter efficiency -> clipping at the AC
rating -> AC losses -> availability. Clipping is reported as its own line.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .irradiance import PlaneOfArray, iam_beam
from .weather import Weather

#: Inputs of :func:`simulate` (dotted case paths) that act per sample.
ENERGY_PARAMS: tuple[str, ...] = (
    "site.albedo", "plant.dc_capacity_kw", "plant.dc_ac_ratio", "plant.temp_coeff_per_c",
    "plant.thermal_u0", "plant.thermal_u1", "plant.dc_loss_fraction",
    "plant.inverter_efficiency", "plant.ac_loss_fraction", "plant.availability",
)

#: PVWatts inverter reference efficiency (Dobos 2014), as in pvlib.inverter.pvwatts.
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
    ("delivered_kwh", "delivered, after availability"),
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
    """Inverter output before and after clipping [kW] with the PVWatts part-load curve.

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
    zeta = pdc_kw / pdc0
    with np.errstate(divide="ignore", invalid="ignore"):
        inv = np.where(pdc_kw != 0, 0.0059 / np.where(zeta == 0, 1.0, zeta), 0.0)
    eta = eta_nom / ETA_INV_REF * (-0.0162 * zeta - inv + 0.9858)
    unclipped = np.maximum(eta * pdc_kw, 0.0)
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
        Plane-of-array irradiation per average year [kWh/m2], (n_s,).
    dc_capacity_kw : numpy.ndarray
        Nameplate used [kW], (n_s,).
    hourly_ac_kw : numpy.ndarray or None
        Delivered AC power each hour [kW], (n_s, n_h), only when asked for.
    """

    annual_kwh: np.ndarray
    monthly_kwh: np.ndarray
    yearly_kwh: np.ndarray
    loss_chain_kwh: dict
    poa_kwh_m2: np.ndarray
    dc_capacity_kw: np.ndarray
    hourly_ac_kw: np.ndarray | None = None

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


def simulate(poa: PlaneOfArray, weather: Weather, params: dict, aoi_model: str = "physical",
             chunk_size: int = 128, keep_hourly: bool = False) -> EnergyResult:
    """Hourly energy for every sample, reduced to totals.

    Parameters
    ----------
    poa : PlaneOfArray
        Shared plane-of-array irradiance of the geometry, arrays (n_h,).
    weather : Weather
        Hourly weather (air temperature [C], wind speed [m/s]).
    params : dict of str to array_like
        Every key of :data:`ENERGY_PARAMS`, each a scalar or shape (n_s,), in the units of the
        case file (fractions, kW, 1/C, W/m2/K, W s/m3/K).
    aoi_model : {"physical", "ashrae"}
        Beam incidence-angle modifier.
    chunk_size : int
        Samples evaluated together; bounds peak memory at about 10 x chunk_size x n_h x 8 bytes.
    keep_hourly : bool
        Also return the hourly delivered AC power (n_s, n_h) [kW].

    Returns
    -------
    EnergyResult
    """
    missing = [k for k in ENERGY_PARAMS if k not in params]
    if missing:
        raise ValueError(f"missing energy parameters: {', '.join(missing)}")
    n_s = max(np.asarray(params[k]).size for k in ENERGY_PARAMS)
    cols = {k: _column(params[k], n_s) for k in ENERGY_PARAMS}
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
    direct_eff = poa.direct_w_m2 * iam_beam(poa.aoi_deg, aoi_model)

    annual = np.empty(n_s)
    monthly = np.empty((n_s, 12))
    yearly = np.empty((n_s, year_onehot.shape[1]))
    poa_kwh_m2 = np.empty(n_s)
    chain = {k: np.empty(n_s) for k, _ in LOSS_CHAIN}
    hourly = np.empty((n_s, weather.n_hours)) if keep_hourly else None
    for start in range(0, n_s, chunk_size):
        sl = slice(start, min(start + chunk_size, n_s))
        c = {k: v[sl] for k, v in cols.items()}
        albedo = c["site.albedo"]
        g_poa = poa.direct_w_m2 + poa.sky_diffuse_w_m2 + albedo * poa.ground_per_albedo_w_m2
        g_eff = direct_eff + poa.sky_diffuse_w_m2 + albedo * poa.ground_per_albedo_w_m2
        t_cell = faiman_cell_temperature(g_poa, t_air, ws, c["plant.thermal_u0"],
                                         c["plant.thermal_u1"])
        p_stc = c["plant.dc_capacity_kw"]
        pdc = dc_power_kw(g_eff, t_cell, p_stc, c["plant.temp_coeff_per_c"])
        pdc_net = pdc * (1.0 - c["plant.dc_loss_fraction"])
        ac_kw = p_stc / c["plant.dc_ac_ratio"]
        unclipped, clipped = inverter_ac_kw(pdc_net, ac_kw, c["plant.inverter_efficiency"])
        after_ac = clipped * (1.0 - c["plant.ac_loss_fraction"])
        delivered = after_ac * c["plant.availability"]
        h_poa = g_poa.sum(axis=1) / 1000.0 / n_years
        poa_kwh_m2[sl] = np.broadcast_to(h_poa, (sl.stop - sl.start,))
        stages = (p_stc * g_poa / 1000.0, p_stc * g_eff / 1000.0, pdc, pdc_net, unclipped,
                  clipped, after_ac, delivered)
        for (name, _), stage in zip(LOSS_CHAIN, stages):
            chain[name][sl] = stage.sum(axis=1) / n_years
        annual[sl] = delivered.sum(axis=1) / n_years
        monthly[sl] = delivered @ month_onehot / n_years
        yearly[sl] = delivered @ year_onehot
        if keep_hourly:
            hourly[sl] = delivered
    return EnergyResult(annual_kwh=annual, monthly_kwh=monthly, yearly_kwh=yearly,
                        loss_chain_kwh=chain, poa_kwh_m2=poa_kwh_m2,
                        dc_capacity_kw=cols["plant.dc_capacity_kw"][:, 0], hourly_ac_kw=hourly)
