"""Hourly energy downstream of the plane of array, vectorised over a leading samples axis.

Given the plane-of-array irradiance of one geometry (shared) and parameter arrays of shape
(n_samples,), this module computes cell temperature, DC power, inverter output with clipping,
AC losses and availability for every sample and hour at once, and reduces the hourly arrays to
annual, monthly and loss-chain totals. Hourly arrays have shape (n_samples, n_hours) and are
built chunk by chunk, so peak memory is bounded by the chunk size, not by the number of samples.

Loss order: light on the plane in an open field -> shading and the narrower sky and ground
view between rows (or bodies) -> angle-of-incidence loss (beam, sky and ground diffuse) ->
soiling -> plus the rear side (bifacial) -> cell temperature -> DC losses -> inverter
efficiency -> clipping at the AC rating -> AC losses -> availability -> the plant's own
consumption (drives) -> moving-part outages (set by :func:`lcoe.model.evaluate`). Each is a
named step of :data:`LOSS_CHAIN`; clipping is reported as its own line.

A plant of flat modules has one plane of array; a plant of 3-D bodies has one per facet
(:class:`lcoe.site.irradiance.FacetIrradiance`): each facet gets its own cell temperature and DC
power, the DC of the plant is the area-weighted sum over facets, and one inverter, clipping and
AC chain follows for the whole plant.
"""

from __future__ import annotations

import weakref
from dataclasses import dataclass

import numpy as np

from lcoe.case.threads import sample_product
from lcoe.site.irradiance import FacetIrradiance, PlaneOfArray, as_facets
from lcoe.site.weather import Weather

#: Inputs of :func:`simulate` (dotted case paths) that act per sample.
ENERGY_PARAMS: tuple[str, ...] = (
    "site.albedo", "plant.dc_capacity_kw", "plant.dc_ac_ratio", "plant.temp_coeff_per_c",
    "plant.thermal_u0", "plant.thermal_u1", "plant.dc_loss_fraction",
    "plant.inverter_efficiency", "plant.ac_loss_fraction", "plant.availability",
    "plant.bifaciality", "plant.rear_loss_fraction",
)

#: Values of the rear-side parameters when :func:`simulate` is not given them (monofacial).
MONOFACIAL: dict[str, float] = {"plant.bifaciality": 0.0, "plant.rear_loss_fraction": 0.0}

#: Reference efficiency of the inverter part-load curve (Dobos 2014), as in pvlib.inverter.pvwatts.
ETA_INV_REF = 0.9637

#: Names of the loss-chain stages, in order [kWh per year]. Each stage is the energy after
#: one more effect; a step that does not apply to a plant (e.g. body shading for rows) leaves
#: the energy unchanged. ``after_outages_kwh`` is set by :func:`lcoe.model.evaluate`.
LOSS_CHAIN = (
    ("poa_kwh", "Nameplate x plane-of-array irradiation in an open field / 1 kW/m2"),
    ("after_row_shading_kwh", "after shading and the narrower sky and ground view between "
     "rows"),
    ("after_body_shading_kwh", "after shading between bodies in the field"),
    ("after_iam_kwh", "after angle-of-incidence loss (beam, sky and ground diffuse)"),
    ("after_soiling_kwh", "after soiling"),
    ("after_bifacial_kwh", "plus the rear side (bifacial gain net of rear structure and "
     "mismatch loss)"),
    ("after_temperature_kwh", "after cell temperature (DC at module terminals)"),
    ("after_dc_losses_kwh", "after DC losses"),
    ("after_inverter_kwh", "after inverter efficiency (before clipping)"),
    ("after_clipping_kwh", "after clipping at the AC rating"),
    ("after_ac_losses_kwh", "after AC losses"),
    ("after_availability_kwh", "after availability"),
    ("delivered_kwh", "after the plant's own consumption (drives)"),
    ("after_outages_kwh", "delivered, after moving-part outages (mean over the life)"),
)

#: Hourly arrays of :attr:`EnergyResult.hourly` (``keep_hourly=True``), each (n_s, n_h):
#: name -> (unit, meaning). Irradiance is the area-weighted mean over the cells.
HOURLY_FIELDS: dict[str, tuple[str, str]] = {
    "poa_front_direct_w_m2": ("W/m2", "front beam after shading by neighbours"),
    "poa_front_sky_w_m2": ("W/m2", "front sky diffuse after the neighbours' obstruction"),
    "poa_front_ground_w_m2": ("W/m2", "front ground-reflected light (x albedo)"),
    "poa_rear_direct_w_m2": ("W/m2", "rear beam (row model)"),
    "poa_rear_sky_w_m2": ("W/m2", "rear sky diffuse (row model)"),
    "poa_rear_ground_w_m2": ("W/m2", "rear ground-reflected light (row model, x albedo)"),
    "soiling_loss_fraction": ("-", "share of the front light lost to soiling"),
    "effective_irradiance_w_m2": ("W/m2", "light reaching the cells after angle, soiling "
                                  "losses, plus bifaciality x net rear light"),
    "cell_temperature_c": ("C", "cell temperature (Faiman, front irradiance)"),
    "dc_kw": ("kW", "DC power after DC losses"),
    "ac_before_clipping_kw": ("kW", "inverter output before the AC limit"),
    "ac_kw": ("kW", "inverter output after clipping"),
    "delivered_kw": ("kW", "after AC losses, availability and the plant's own consumption"),
}


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
    hourly : dict of str to numpy.ndarray or None
        With ``keep_hourly``: every array of :data:`HOURLY_FIELDS`, (n_s, n_h) (irradiance
        components, soiling, cell temperature, DC, AC before and after clipping, delivered).
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
    hourly: dict | None = None

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

    def step_changes(self, keys=("after_row_shading_kwh", "after_body_shading_kwh",
                                 "after_iam_kwh", "after_soiling_kwh", "after_bifacial_kwh")
                     ) -> dict:
        """Relative change of the energy at each named loss-chain step [-], (n_s,) each.

        ``stage / previous stage - 1`` (negative for a loss, positive for the rear side's gain),
        0 where the previous stage is 0.
        """
        names = [k for k, _ in LOSS_CHAIN]
        lc = self.loss_chain_kwh
        out = {}
        for k in keys:
            prev = lc[names[names.index(k) - 1]]
            out[k] = np.divide(lc[k], prev, out=np.ones_like(prev), where=prev > 0) - 1.0
        return out

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


def _facet_stages(f: FacetIrradiance) -> dict:
    """The facet arrays the hourly model needs, (k, n_h), by stage of the loss chain."""
    out = {
        "open_n": f.stage("open_direct") + f.stage("open_sky"), "open_g": f.stage("open_ground"),
        "shaded_n": f.direct_w_m2 + f.sky_diffuse_w_m2, "shaded_g": f.ground_per_albedo_w_m2,
        "eff_n": f.direct_effective_w_m2 + f.stage("sky_effective"),
        "eff_g": f.stage("ground_effective"),
    }
    if f.has_rear:
        out["rear_n"] = f.rear_effective_w_m2
        out["rear_g"] = f.rear_ground_effective_per_albedo_w_m2
    return out


def _hourly_components(f: FacetIrradiance, day: np.ndarray, albedo: np.ndarray) -> dict:
    """Area-weighted irradiance components for :data:`HOURLY_FIELDS`, (m, n_day) each."""
    w = f.area_fraction[:, None]

    def mean(a, per_albedo=False):
        v = (w * a[:, day]).sum(axis=0)[None, :]
        return albedo * v if per_albedo else np.repeat(v, albedo.shape[0], axis=0)

    zero = np.zeros((albedo.shape[0], day.size))
    rear = f.has_rear
    return {
        "poa_front_direct_w_m2": mean(f.direct_w_m2),
        "poa_front_sky_w_m2": mean(f.sky_diffuse_w_m2),
        "poa_front_ground_w_m2": mean(f.ground_per_albedo_w_m2, True),
        "poa_rear_direct_w_m2": mean(f.rear_direct_w_m2) if rear else zero,
        "poa_rear_sky_w_m2": mean(f.rear_sky_w_m2) if rear else zero,
        "poa_rear_ground_w_m2": mean(f.rear_ground_per_albedo_w_m2, True) if rear else zero,
    }


#: Most distinct wind speeds for which the factored sums pay (see :mod:`lcoe.plant.factored`).
MAX_WIND_SPEEDS = 300

#: Per plane of array (weakly held) and weather: the hours the model evaluates and what
#: follows from them alone (:func:`_hours`); also the factored sums' groups.
_HOURS: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def _hours(facets: FacetIrradiance | None, weather: Weather, run_hours, poa_holder) -> dict:
    """The daylight hours of a plane of array at a site and what depends on them only.

    Hours without light on any facet (and no parasitic load) deliver nothing: the model holds
    only the other hours (every hour for a technology with its own DC model, ``facets`` None).
    Monthly and yearly totals sum each run of consecutive hours of one (year, month) with
    reduceat, then fold the few runs into months and years (``seg_month``, ``seg_year``).
    Computed once per plane (``poa_holder`` holds it for a DC model of its own), weather and
    load hours, then reused.
    """
    holder = facets if facets is not None else poa_holder
    key = (id(weather), None if run_hours is None else hash(run_hours.tobytes()))
    store = _HOURS.setdefault(holder, {})
    hit = store.get(key)
    if hit is not None and hit["weather"] is weather:
        return hit
    t_air = weather.data["temp_air"].to_numpy()
    ws = weather.data["wind_speed"].to_numpy()
    months = weather.data.index.month.to_numpy() - 1
    years = weather.years
    out = {"weather": weather, "groups": {}}
    if facets is None:
        day = np.arange(weather.n_hours)
    else:
        st = _facet_stages(facets)
        busy = (st["open_n"] + st["open_g"] > 0).any(axis=0)
        if facets.has_rear:
            busy |= (st["rear_n"] + st["rear_g"] > 0).any(axis=0)
        if run_hours is not None:
            busy |= run_hours
        day = np.nonzero(busy)[0] if busy.any() else np.arange(1)  # keep one (dark) hour
        st = {k: v[:, day] for k, v in st.items()}
        out["st"] = st
        # Totals over the hours of each stage, per facet (k,), weighted by the facet shares.
        out["tot"] = {k: facets.area_fraction @ v.sum(axis=1) for k, v in st.items()}
    ym = years[day] * 12 + months[day]
    starts = np.concatenate(([0], np.nonzero(np.diff(ym))[0] + 1))
    month_onehot = np.zeros((day.size, 12))
    month_onehot[np.arange(day.size), months[day]] = 1.0
    if weather.typical_year:
        year_onehot = np.ones((day.size, 1))
    else:
        year_onehot = (years[day][:, None] == np.unique(years)[None, :]).astype(float)
    out.update(day=day, t_air=t_air[day], ws=ws[day], starts=starts,
               n_wind=np.unique(ws[day]).size,
               seg_month=month_onehot[starts], seg_year=year_onehot[starts])
    if len(store) > 8:
        store.clear()
    store[key] = out
    return out


def simulate(poa: PlaneOfArray | FacetIrradiance, weather: Weather, params: dict,
             aoi_model: str = "physical", chunk_size: int = 16, keep_hourly: bool = False,
             parasitic_kw=None, parasitic_hours=None, soiling=None,
             method: str = "factored", varied: frozenset | None = None) -> EnergyResult:
    """Hourly energy for every sample, reduced to totals.

    Parameters
    ----------
    poa : PlaneOfArray, FacetIrradiance or an object with a ``dc_kw`` method
        Shared irradiance of the geometry: one plane, arrays (n_h,), or k facets (a row of
        modules, or the facets of a body), arrays (k, n_h) with area fractions (k,)
        (incidence-angle losses, shading and the rear side already applied), or a
        technology with its own DC model, ``dc_kw(chunk_params, temp_air_c, wind_speed_m_s)
        -> (g_poa, g_eff, pdc_kw)`` (e.g.
        :class:`lcoe.plant.concentrator.ConcentratorBeam`).
    weather : Weather
        Hourly weather (air temperature [C], wind speed [m/s]).
    params : dict of str to array_like
        Every key of :data:`ENERGY_PARAMS` (and whatever a ``dc_kw`` model reads), each a
        scalar or shape (n_s,), in the units of the case file (fractions, kW, 1/C, W/m2/K,
        W s/m3/K); the rear-side keys default to :data:`MONOFACIAL`.
    aoi_model : {"physical", "ashrae"}
        Beam incidence-angle modifier (for a plane; a FacetIrradiance carries its own).
    chunk_size : int
        Samples evaluated together; bounds peak memory at about 14 x chunk_size x n_h x 8
        bytes, whatever the number of facets (facets are summed one at a time).
    keep_hourly : bool
        Also return the hourly delivered AC power (n_s, n_h) [kW] and the arrays of
        :data:`HOURLY_FIELDS`.
    parasitic_kw : array_like, optional
        The plant's own consumption (drives) [kW], scalar or (n_s,), drawn in every hour of
        ``parasitic_hours`` and subtracted after availability. Where it exceeds the output, the
        difference is drawn from the grid and counts as negative delivered energy.
    parasitic_hours : numpy.ndarray of bool, optional
        (n_h,) hours in which the consumption runs (e.g. the sun above the horizon).
    soiling : tuple (history, coef, cap), optional
        Front soiling loss ``min(coef x history, cap)`` (:mod:`lcoe.plant.soiling`): history (n_h,),
        coef and cap scalar or (n_s,). None: no soiling step.
    method : {"factored", "hourly"}
        ``"factored"`` (default): the exact factored sums of :mod:`lcoe.plant.factored` (same model,
        summed in another order; a DC model of its own, or weather with more than
        :data:`MAX_WIND_SPEEDS` distinct wind speeds, goes hour by hour; ``keep_hourly``
        adds the hourly arrays, the totals stay factored). ``"hourly"``: every sample and
        daylight hour evaluated directly, in chunks of ``chunk_size`` samples: the reference
        implementation the factored sums are tested against.
    varied : frozenset of str, optional
        Names of the inputs of ``params`` that may differ between samples (None: any). The
        factored sums fold the others in (e.g. ``1 / (U0 + U1 v)`` into their hourly series
        when the thermal coefficients are fixed, whatever the number of distinct wind
        speeds; see :func:`lcoe.plant.factored.factored_sums`).

    Returns
    -------
    EnergyResult

    Notes
    -----
    For facet j with area fraction a_j, front irradiance after angle losses ``F_j``, soiling
    ``s``, rear irradiance after angle losses ``R_j``, bifaciality ``phi`` and rear loss
    ``l_r``: ``G_eff,j = F_j (1 - s) + phi (1 - l_r) R_j`` and ``P_dc = sum_j a_j P_stc
    G_eff,j / 1000 (1 + gamma (T_j - 25))``, with ``T_j`` from Faiman driven by the facet's
    front plane-of-array irradiance (as the model was fitted). The loss chain's irradiance
    stages are sums of linear functions of albedo, so they cost no hourly work per sample
    except soiling. The plane-of-array irradiation reported is the area-weighted front mean
    after shading.
    """
    if method not in ("factored", "hourly"):
        raise ValueError(f"method = {method!r}: expected 'factored' or 'hourly'")
    params = {**MONOFACIAL, **params}
    missing = [k for k in ENERGY_PARAMS if k not in params]
    if missing:
        raise ValueError(f"missing energy parameters: {', '.join(missing)}")
    n_s = max(np.asarray(params[k]).size for k in ENERGY_PARAMS)
    cols = {k: _column(v, n_s) for k, v in params.items()}
    own_dc = not isinstance(poa, (PlaneOfArray, FacetIrradiance))
    run_hours = None if parasitic_kw is None else np.asarray(parasitic_hours, dtype=bool)
    facets = None
    if not own_dc:
        facets = poa if isinstance(poa, FacetIrradiance) else as_facets(poa, aoi_model)
    prep = _hours(facets, weather, run_hours, poa)
    day, t_air, ws, starts = prep["day"], prep["t_air"], prep["ws"], prep["starts"]
    seg_month, seg_year, n_years = prep["seg_month"], prep["seg_year"], weather.n_years
    if not own_dc:
        st, tot, share = prep["st"], prep["tot"], facets.area_fraction
    parasitic = None
    if parasitic_kw is not None:
        parasitic = _column(parasitic_kw, n_s) * run_hours[day].astype(float)
    soil_hist = None
    if soiling is not None and not own_dc:
        soil_hist = np.asarray(soiling[0], dtype=float)[day]
        soil_coef, soil_cap = _column(soiling[1], n_s), _column(soiling[2], n_s)

    n_seg = starts.size
    raw = {k: np.zeros(n_s) for k in ("poa_w_m2", "eff_w_m2", "pdc_kw", "unclipped_kw",
                                      "clipped_kw")}
    raw["seg_clipped_kw"] = np.empty((n_s, n_seg))
    raw["soiled_w_m2"] = None if soil_hist is None else np.empty(n_s)
    hourly = np.zeros((n_s, weather.n_hours)) if keep_hourly else None
    extra = {k: np.zeros((n_s, weather.n_hours)) for k in HOURLY_FIELDS} if keep_hourly else None
    # The factored sums keep one set of terms per distinct wind speed: a file with wind
    # speeds of many digits (measured, not a typical year) is summed hour by hour instead.
    from lcoe.plant.factored import THERMAL_PARAMS, factored_sums, is_fixed

    factored = method == "factored" and not own_dc and (
        is_fixed(varied, THERMAL_PARAMS) or prep["n_wind"] <= MAX_WIND_SPEEDS)
    if factored:

        seg_of_hour = np.repeat(np.arange(n_seg), np.diff(np.append(starts, day.size)))
        raw.update(factored_sums(st, share, t_air, ws, cols, None if soil_hist is None else
                                 (soil_hist, soil_coef, soil_cap), seg_of_hour, n_seg,
                                 prep["groups"], varied))
        raw["poa_w_m2"] = tot["shaded_n"] + cols["site.albedo"][:, 0] * tot["shaded_g"]
    # The hourly method; with keep_hourly also for the hourly arrays (totals stay factored).
    for start in range(0, 0 if factored and not keep_hourly else n_s, chunk_size):
        sl = slice(start, min(start + chunk_size, n_s))
        m = sl.stop - sl.start
        c = {k: v[sl] for k, v in cols.items()}
        albedo = c["site.albedo"]
        p_stc = c["plant.dc_capacity_kw"]
        rear_k = c["plant.bifaciality"] * (1.0 - c["plant.rear_loss_fraction"])
        with_rear = facets is not None and facets.has_rear and bool(np.any(rear_k != 0.0))
        soil = keep = None
        if soil_hist is not None:
            soil = np.minimum(soil_coef[sl] * soil_hist, soil_cap[sl])
            keep = 1.0 - soil
        g_poa = g_eff = pdc = t_mean = 0.0
        s_soiled = 0.0
        if own_dc:  # a technology with its own DC model (a concentrator)
            g_poa, g_eff, pdc = poa.dc_kw(c, t_air, ws)
            t_mean = np.nan  # its own thermal model; not reported hourly
        for j in range(0 if own_dc else share.size):  # facets one at a time: memory bound
            g_j = st["shaded_n"][j] + albedo * st["shaded_g"][j]
            g_eff_j = albedo * st["eff_g"][j]  # in place below: fewer temporaries per chunk
            g_eff_j += st["eff_n"][j]
            if keep is not None:
                g_eff_j *= keep
                s_soiled = s_soiled + share[j] * g_eff_j.sum(axis=1)
            if with_rear:
                rear = albedo * st["rear_g"][j]
                rear += st["rear_n"][j]
                rear *= rear_k
                g_eff_j += rear
            t_cell = faiman_cell_temperature(g_j, t_air, ws, c["plant.thermal_u0"],
                                             c["plant.thermal_u1"])
            pdc_j = dc_power_kw(g_eff_j, t_cell, p_stc, c["plant.temp_coeff_per_c"])
            if share.size == 1:  # a flat plane: no facet sum to build
                pdc, g_poa, g_eff, t_mean = pdc_j, g_j, g_eff_j, t_cell
                break
            pdc = pdc + share[j] * pdc_j
            g_poa = g_poa + share[j] * g_j
            g_eff = g_eff + share[j] * g_eff_j
            t_mean = t_mean + share[j] * t_cell
        dc_keep = 1.0 - c["plant.dc_loss_fraction"]
        ac_kw = p_stc / c["plant.dc_ac_ratio"]
        unclipped, clipped = inverter_ac_kw(pdc * dc_keep, ac_kw, c["plant.inverter_efficiency"])
        if not factored:
            raw["poa_w_m2"][sl] = np.broadcast_to(g_poa, (m, day.size)).sum(axis=1)
            if own_dc:
                raw["eff_w_m2"][sl] = np.broadcast_to(g_eff, (m, day.size)).sum(axis=1)
            raw["pdc_kw"][sl] = pdc.sum(axis=1)
            raw["unclipped_kw"][sl] = unclipped.sum(axis=1)
            raw["clipped_kw"][sl] = clipped.sum(axis=1)
            raw["seg_clipped_kw"][sl] = np.add.reduceat(clipped, starts, axis=1)
            if soil is not None:
                raw["soiled_w_m2"][sl] = s_soiled
        if keep_hourly:
            factor = ((1.0 - c["plant.ac_loss_fraction"]) * c["plant.availability"])
            hourly[sl, day] = clipped * factor - (0.0 if parasitic is None else parasitic[sl])
            rows_h = {} if own_dc else _hourly_components(facets, day, albedo)
            rows_h.update({
                "soiling_loss_fraction": 0.0 if soil is None else soil,
                "effective_irradiance_w_m2": g_eff, "cell_temperature_c": t_mean,
                "dc_kw": pdc * dc_keep, "ac_before_clipping_kw": unclipped, "ac_kw": clipped,
                "delivered_kw": hourly[sl, day]})
            if own_dc:
                rows_h["poa_front_direct_w_m2"] = g_poa
            for k, v in rows_h.items():
                extra[k][sl, day] = np.broadcast_to(v, (m, day.size))
    # Stages after clipping are scalar multiples per sample, so their totals are too.
    ac_keep = 1.0 - cols["plant.ac_loss_fraction"][:, 0]
    avail = cols["plant.availability"][:, 0]
    dc_keep = 1.0 - cols["plant.dc_loss_fraction"][:, 0]
    s_poa, s_pdc, s_clip = raw["poa_w_m2"], raw["pdc_kw"], raw["clipped_kw"]
    s_par = 0.0 if parasitic is None else parasitic.sum(axis=1)
    if own_dc:
        irr = (s_poa, s_poa, s_poa, raw["eff_w_m2"], raw["eff_w_m2"], raw["eff_w_m2"])
    else:
        a = cols["site.albedo"][:, 0]
        rear_k = (cols["plant.bifaciality"] * (1.0 - cols["plant.rear_loss_fraction"]))[:, 0]
        s_open = tot["open_n"] + a * tot["open_g"]
        s_shaded = tot["shaded_n"] + a * tot["shaded_g"]
        s_iam = tot["eff_n"] + a * tot["eff_g"]
        s_soil = s_iam if soil_hist is None else raw["soiled_w_m2"]
        s_rear = s_soil
        if facets.has_rear:
            s_rear = s_soil + rear_k * (tot["rear_n"] + a * tot["rear_g"])
        rows = facets.shading == "rows"
        irr = (s_open, s_shaded if rows else s_open, s_shaded, s_iam, s_soil, s_rear)
    kw_per_w = cols["plant.dc_capacity_kw"][:, 0] / 1000.0
    delivered = s_clip * ac_keep * avail - s_par
    sums = tuple(kw_per_w * x for x in irr) + (
        s_pdc, s_pdc * dc_keep, raw["unclipped_kw"], s_clip, s_clip * ac_keep,
        s_clip * ac_keep * avail, delivered, delivered)
    chain = {name: total / n_years for (name, _), total in zip(LOSS_CHAIN, sums)}
    poa_kwh_m2 = s_poa / 1000.0 / n_years
    seg = raw["seg_clipped_kw"] * (ac_keep * avail)[:, None]
    if parasitic is not None:
        seg -= np.add.reduceat(parasitic, starts, axis=1)
    monthly = sample_product(seg, seg_month) / n_years
    yearly = sample_product(seg, seg_year)
    return EnergyResult(annual_kwh=chain["delivered_kwh"], monthly_kwh=monthly,
                        yearly_kwh=yearly, loss_chain_kwh=chain, poa_kwh_m2=poa_kwh_m2,
                        dc_capacity_kw=cols["plant.dc_capacity_kw"][:, 0], hourly_ac_kw=hourly,
                        hourly=extra)
