"""The one vectorised model: case values per sample -> energy -> cash flow -> LCOE.

:func:`prepare` does the work that depends only on the site and the weather (reading the file,
solar position); :func:`evaluate` runs any number of parameter sets through the hourly physics
and the cash flow. The plane-of-array irradiance is computed once per distinct geometry and
shared; everything downstream is numpy over the samples axis. A deterministic run is one sample.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace

import numpy as np

from lcoe.case.errors import ImplausibleResult, InputError
from lcoe.case.plausibility import check_output
from lcoe.case.reader import Case
from lcoe.case.schema import BODY_GEOMETRY_PATHS, GEOMETRY_PATHS, KIMBER_HISTORY_PATHS, ROW_MOUNTS
from lcoe.money.cashflow import CashFlow, build_cashflow, energy_by_year
from lcoe.plant.energy import ENERGY_PARAMS, EnergyResult, simulate
from lcoe.plant.factored import distinct_rows
from lcoe.site.irradiance import (
    FacetIrradiance,
    Geometry,
    SolarPosition,
    as_facets,
    orientation,
    plane_of_array,
    solar_position,
)
from lcoe.site.weather import (
    Weather,
    bundled_weather_path,
    check_against_sun,
    check_timezone,
    read_weather,
)


@dataclass
class Site:
    """Weather and sun for a case, plus a cache of plane-of-array irradiance by geometry.

    Attributes
    ----------
    weather : Weather
    sun : SolarPosition
    notes : list of str
        Remarks for the report (e.g. coordinates far from the weather station).
    """

    weather: Weather
    sun: SolarPosition
    notes: list = field(default_factory=list)
    _poa_cache: dict = field(default_factory=dict, repr=False)

    def poa(self, geometry: Geometry, transposition: str,
            aoi_model: str = "physical", diffuse_loss: bool = False) -> FacetIrradiance:
        """Irradiance for ``geometry`` (computed once, then cached).

        Rows of facets with their incidence-angle losses (hence ``aoi_model`` and
        ``diffuse_loss``, the diffuse angle loss of Marion 2017): one row for a flat mount
        (with the row model of :mod:`lcoe.site.rows` when ``geometry.rows``), the facets of a body
        for ``mount = "body"``.
        """
        key = (geometry, transposition, aoi_model, diffuse_loss)
        if key not in self._poa_cache:
            if geometry.mount == "body":
                from lcoe.plant.body_light import body_irradiance

                self._poa_cache[key] = body_irradiance(self.weather, self.sun, geometry.body,
                                                       transposition, aoi_model, diffuse_loss)
            else:  # one facet, incidence-angle loss applied once here, not per model call
                tilt, az = orientation(geometry, self.sun)
                open_poa = plane_of_array(self.weather, self.sun, tilt, az, transposition)
                rows = self.rows(geometry, tilt, az) if geometry.rows else None
                self._poa_cache[key] = as_facets(open_poa, aoi_model, rows, diffuse_loss)
        return self._poa_cache[key]

    def rows(self, geometry: Geometry, tilt_deg, azimuth_deg):
        """Row shading, views and rear side of a fixed or single-axis geometry (infinite
        sheds, :func:`lcoe.site.rows.row_irradiance`)."""
        from lcoe.site.rows import row_irradiance, row_pitch_m

        d = self.weather.data
        return row_irradiance(tilt_deg, azimuth_deg, self.sun.apparent_zenith_deg,
                              self.sun.azimuth_deg, d["ghi"].to_numpy(), d["dhi"].to_numpy(),
                              d["dni"].to_numpy(), geometry.gcr, geometry.row_height_m,
                              row_pitch_m(geometry.row_width_m, geometry.gcr))


@dataclass(frozen=True)
class ModelOutput:
    """Energy and cash flow for every sample.

    Attributes
    ----------
    energy : EnergyResult
        Totals of the weather file's average year, (n_s,) arrays.
    cashflow : CashFlow
        (n_s, N + 1) arrays and LCOE (n_s,).
    params : dict of str to numpy.ndarray
        Every numeric input used, by dotted path, (n_s,) (the case's values filled in).
    weather_factors : numpy.ndarray or None
        The energy multipliers per operating year that were applied, (n_s, N).
    """

    energy: EnergyResult
    cashflow: CashFlow
    params: dict = field(default_factory=dict)
    weather_factors: np.ndarray | None = None


#: Inputs that the factored sums (:mod:`lcoe.plant.factored`) treat as fixed within a group of
#: samples: Kimber's soiling rate and ceiling shape the group's hourly series (the dirt
#: changes hour by hour). When one of them is sampled, ``evaluate`` uses the hourly method:
#: decided from the inputs given, never from which samples happen to share a chunk, so
#: results do not depend on chunking. (The rear factor and the monthly soiling scale are
#: per-sample factors of the sums' parts, see :mod:`lcoe.plant.factored`.)
SUMMED_PER_GROUP = frozenset({"plant.soiling.rate_per_day", "plant.soiling.max_loss"})


def load_weather_for(case: Case) -> Weather:
    """Read the case's weather file (or the bundled one) and check its time zone.

    With ``[site.monthly]`` the hourly year is synthesised from the monthly values instead
    (seeded, reproducible; a screening tool, see :mod:`lcoe.site.synth_weather`).
    """
    if case.monthly is not None:
        weather = synthetic_weather(case)
    else:
        path = case.weather_path or bundled_weather_path()
        weather = read_weather(path, case["site.weather_time_label"])
        check_timezone(weather, case["site.timezone"], case.source)
    if case["plant.soiling.model"] == "kimber":
        rain_series(weather, case.source)  # refuse a rainfall model on a file without rain
    return weather


def synthetic_weather(case: Case) -> Weather:
    """Hourly weather synthesised from the case's ``[site.monthly]`` values."""
    import pandas as pd

    from lcoe.site.synth_weather import SYNTHETIC_WEATHER_WARNING, synthesize_year

    m = case.monthly
    tz = case["site.timezone"]
    df = synthesize_year(case["site.latitude_deg"], case["site.longitude_deg"],
                         case["site.altitude_m"], tz, m["ghi_kwh_m2_day"], m["temp_air_c"],
                         m["wind_speed_m_s"], rng=m["seed"], source=case.source,
                         dni_kwh_m2_day=m.get("dni_kwh_m2_day"))
    jan = pd.Timestamp("2021-01-15 12:00").tz_localize(tz).utcoffset().total_seconds() / 3600
    return Weather(data=df[["ghi", "dni", "dhi", "temp_air", "wind_speed"]],
                   source=f"{case.source} [site.monthly]", fmt="synthetic",
                   latitude_deg=case["site.latitude_deg"],
                   longitude_deg=case["site.longitude_deg"], altitude_m=case["site.altitude_m"],
                   utc_offset_h=jan, name="synthetic year from monthly means",
                   typical_year=True, notes=(SYNTHETIC_WEATHER_WARNING,))


def prepare(case: Case, weather: Weather | None = None) -> Site:
    """Read the weather and compute solar position for a case.

    Parameters
    ----------
    case : Case
    weather : Weather, optional
        Already-read weather (e.g. synthetic); read from the case when omitted.
    """
    weather = weather or load_weather_for(case)
    lat, lon = case["site.latitude_deg"], case["site.longitude_deg"]
    notes = list(weather.notes)
    if weather.latitude_deg is not None and (abs(weather.latitude_deg - lat) > 1.0 or
                                             abs(weather.longitude_deg - lon) > 1.0):
        notes.append(f"site coordinates ({lat:.3f}, {lon:.3f}) are more than 1 deg from the "
                     f"weather station ({weather.latitude_deg:.3f}, "
                     f"{weather.longitude_deg:.3f})")
    sun = solar_position(weather, lat, lon, case["site.altitude_m"])
    if weather.fmt != "synthetic":
        notes += check_against_sun(weather, sun.apparent_zenith_deg)
    return Site(weather=weather, sun=sun, notes=notes)


def base_params(case: Case, n_samples: int = 1) -> dict:
    """Every numeric case value (and those of list tables) as arrays of shape (n_samples,)."""
    out = {}
    for path, value in case.values.items():
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            out[path] = np.full(n_samples, float(value))
    for i, r in enumerate(case.replacements):
        out[f"costs.replacement[{i}].cost_per_kw"] = np.full(n_samples, r.cost_per_kw)
        out[f"costs.replacement[{i}].every_years"] = np.full(n_samples, float(r.every_years))
    if case.moving_parts:
        from lcoe.money.reliability import base_values

        for path, value in base_values(case.moving_parts).items():
            out[path] = np.full(n_samples, value)
    return out


def geometry_paths(case: Case) -> tuple[str, ...]:
    """Inputs that change the irradiance of ``case``'s geometry (grouped by in evaluate)."""
    if case["plant.mount"] != "body":
        return GEOMETRY_PATHS
    return GEOMETRY_PATHS + tuple(p for p in BODY_GEOMETRY_PATHS if case[p] is not None)


def _geometry(case: Case, params: Mapping, i: int) -> Geometry:
    body = None
    if case["plant.mount"] == "body":
        from lcoe.plant.body_shapes import body_spec

        body = body_spec(case, {p: params[p][i] for p in BODY_GEOMETRY_PATHS if p in params})
    mount = case["plant.mount"]
    return Geometry(mount=mount, tilt_deg=float(params["plant.tilt_deg"][i]),
                    azimuth_deg=float(params["plant.azimuth_deg"][i]),
                    gcr=float(params["plant.gcr"][i]),
                    max_rotation_deg=float(params["plant.max_rotation_deg"][i]),
                    backtrack=bool(case["plant.backtrack"]), body=body,
                    rows=bool(case["plant.rows"]) and mount in ROW_MOUNTS,
                    row_height_m=float(params["plant.row_height_m"][i]),
                    row_width_m=float(params["plant.row_width_m"][i]))


def _simulate_group(case: Case, site: Site, full: Mapping, idx: np.ndarray, chunk_size: int,
                    keep_hourly: bool, method: str = "factored",
                    varied: frozenset | None = None) -> EnergyResult:
    """Energy of the samples ``idx`` that share one geometry, with areas and body count."""
    geometry = _geometry(case, full, int(idx[0]))
    if geometry.rows:  # a sampled row height or width must still clear the ground
        from lcoe.case.rules import lowest_row_height_m

        tilt = geometry.tilt_deg if geometry.mount == "fixed" else geometry.max_rotation_deg
        lowest = lowest_row_height_m(geometry.row_width_m, tilt)
        if geometry.row_height_m < lowest:
            raise InputError(f"{case.source}: plant.row_height_m = {geometry.row_height_m:g} "
                             f"in sample {int(idx[0])}: allowed >= {lowest:.3g} m for rows "
                             f"{geometry.row_width_m:g} m wide at {tilt:g} deg (the lower "
                             f"edge must clear the ground); truncate its distribution")
    sub = {k: full[k][idx] for k in ENERGY_PARAMS}
    dc_kw, eff = full["plant.dc_capacity_kw"][idx], full["plant.module_efficiency"][idx]
    parasitic_kw, n_bodies = None, None
    cell_area = dc_kw / eff
    if geometry.body is not None:
        from lcoe.plant.body_shapes import count_and_land

        n_bodies, land = count_and_land(geometry.body, dc_kw, eff)
        if geometry.body.rotating:
            parasitic_kw = n_bodies * full["plant.body.drive_power_w"][idx] / 1000.0
    elif geometry.mount == "concentrator":
        from lcoe.plant.concentrator import CONCENTRATOR_PARAMS, concentrator_beam, rated_efficiency

        poa = concentrator_beam(case, site.weather, site.sun)
        sub.update({k: full[k][idx] for k in CONCENTRATOR_PARAMS})
        cell_area = dc_kw / rated_efficiency(case)  # the aperture, as the audit reads it
        land = cell_area / full["plant.gcr"][idx]
    else:
        land = cell_area / full["plant.gcr"][idx]
    if geometry.mount != "concentrator":
        poa = site.poa(geometry, case["plant.transposition"], case["plant.aoi_model"],
                       bool(case["plant.diffuse_iam"]))
    soiling = _soiling(case, site, full, idx)
    rows = None
    if method == "factored" and not keep_hourly:  # each distinct physics row once (Sobol)
        key = np.stack([np.broadcast_to(v, idx.shape) for v in sub.values()] +
                       ([] if parasitic_kw is None else [parasitic_kw]) +
                       ([] if soiling is None else list(soiling[1:])), axis=1)
        uniq, rows = distinct_rows(key, any_repeat=True)
        if uniq.shape[0] == idx.size:
            rows = None
        else:
            first = np.unique(rows, return_index=True)[1]
            sub = {k: v[first] for k, v in sub.items()}
            parasitic_kw = None if parasitic_kw is None else parasitic_kw[first]
            soiling = None if soiling is None else (soiling[0], soiling[1][first],
                                                    soiling[2][first])
    energy = simulate(poa, site.weather, sub, case["plant.aoi_model"], chunk_size=chunk_size,
                      keep_hourly=keep_hourly, parasitic_kw=parasitic_kw,
                      parasitic_hours=site.sun.apparent_zenith_deg < 90.0, soiling=soiling,
                      method=method, varied=varied)
    if rows is not None:
        energy = _take(energy, rows)
    return replace(energy, cell_area_m2=cell_area, land_area_m2=land, n_bodies=n_bodies)


def _take(energy: EnergyResult, rows: np.ndarray) -> EnergyResult:
    """The per-sample arrays of ``energy`` at ``rows`` (distinct physics rows -> samples)."""
    return replace(energy, annual_kwh=energy.annual_kwh[rows],
                   monthly_kwh=energy.monthly_kwh[rows], yearly_kwh=energy.yearly_kwh[rows],
                   loss_chain_kwh={k: v[rows] for k, v in energy.loss_chain_kwh.items()},
                   poa_kwh_m2=energy.poa_kwh_m2[rows],
                   dc_capacity_kw=energy.dc_capacity_kw[rows])


def _soiling(case: Case, site: Site, full: Mapping, idx: np.ndarray):
    """(history (n_h,), coef (n,), cap (n,)) of the case's soiling model, or None."""
    model = case["plant.soiling.model"]
    if model == "none":
        return None
    if model == "monthly":
        from lcoe.plant.soiling import monthly_history

        key = ("monthly soiling",) + tuple(float(x) for x in case.soiling_monthly)
        if key not in site._poa_cache:  # per site and profile (pandas' month index: ~1 ms)
            site._poa_cache[key] = monthly_history(case.soiling_monthly,
                                                   site.weather.data.index.month)
        return site._poa_cache[key], full["plant.soiling.scale"][idx], np.ones(idx.size)
    i = int(idx[0])  # the samples of a group share the dirt history (grouped like geometry)
    key = ("kimber",) + tuple(float(full[p][i]) for p in KIMBER_HISTORY_PATHS)
    if key not in site._poa_cache:
        from lcoe.plant.soiling import kimber_history

        site._poa_cache[key] = kimber_history(rain_series(site.weather, case.source), *key[1:])
    return (site._poa_cache[key], full["plant.soiling.rate_per_day"][idx],
            full["plant.soiling.max_loss"][idx])


def rain_series(weather: Weather, source: str):
    """The weather's hourly rain [mm] as a Series; an InputError when the file has none."""
    if "precip_mm" not in weather.data.columns:
        raise InputError(f"{source}: plant.soiling.model = \"kimber\" needs rainfall, but the "
                         f"weather ({weather.source}) has no precipitation; allowed: a plain "
                         f"CSV with a precip_mm column or an EPW file with liquid precipitation,"
                         f" or plant.soiling.model = \"monthly\"")
    return weather.data["precip_mm"]


def evaluate(case: Case, site: Site, params: Mapping | None = None,
             weather_factors: np.ndarray | None = None, chunk_size: int = 16,
             keep_hourly: bool = False, guard: bool = True,
             method: str = "factored") -> ModelOutput:
    """Run parameter sets through the hourly physics and the cash flow.

    Parameters
    ----------
    case : Case
        Supplies the non-numeric choices (mount, models) and the base values.
    site : Site
        From :func:`prepare`.
    params : mapping of str to numpy.ndarray, optional
        Dotted path -> values of shape (n_s,); paths not given take the case's value. Omitted:
        one sample at the case's values.
    weather_factors : numpy.ndarray, optional
        Energy multiplier per operating year, (n_s, N) (year-to-year weather and persistent
        energy uncertainty); its rows count as samples even when ``params`` is empty.
    chunk_size : int
        Samples per chunk in the hourly model (memory bound).
    keep_hourly : bool
        Keep hourly delivered power (for checks; memory grows with n_s).
    guard : bool
        Raise :class:`~lcoe.case.errors.ImplausibleResult` when a sample's result breaks physics
        or is absurd (:func:`lcoe.case.plausibility.check_output`); False returns every sample and
        leaves the checks to the caller (the Monte Carlo counts failing trials).
    method : {"factored", "hourly"}
        How :func:`lcoe.plant.energy.simulate` sums the hours: the exact factored sums, each
        distinct row of physics inputs once (default; the hourly method when an input of
        :data:`SUMMED_PER_GROUP` is given), or every sample hour by hour (the reference; same
        results within 1e-12 relative).

    Returns
    -------
    ModelOutput
    """
    params = dict(params or {})
    if method == "factored" and SUMMED_PER_GROUP.intersection(params):
        method = "hourly"  # sampled: every sample its own group, nothing to share
    # inputs not given are the same for every sample: the sums fold them in (decided from
    # the inputs given, never from a chunk's values)
    varied = frozenset(params)
    sizes = [np.asarray(v).size for v in params.values()]
    if weather_factors is not None:  # trials whose only uncertainty is the energy factors
        sizes.append(np.shape(weather_factors)[0])
    n_s = max(sizes or [1])
    full = base_params(case, n_s)
    for k, v in params.items():
        full[k] = np.broadcast_to(np.asarray(v, dtype=float), (n_s,))
    gpaths = geometry_paths(case)
    if case["plant.soiling.model"] == "kimber":
        gpaths = gpaths + KIMBER_HISTORY_PATHS
    for path in gpaths:
        if path not in full:
            full[path] = np.full(n_s, float(case[path]))
    uniq, inverse = distinct_rows(np.stack([full[p] for p in gpaths], axis=1))
    parts = []
    for g in range(uniq.shape[0]):
        idx = np.nonzero(inverse == g)[0]
        parts.append((idx, _simulate_group(case, site, full, idx, chunk_size, keep_hourly,
                                           method, varied)))
    energy = parts[0][1] if len(parts) == 1 else _merge(parts, n_s)
    with np.errstate(all="ignore"):  # nonsense results are caught by the guards below
        cash = cash_flow(case, full, energy, weather_factors)
    if cash.outage_loss_fraction is not None:  # the loss chain's last step: mean over the life
        chain = dict(energy.loss_chain_kwh)
        chain["after_outages_kwh"] = chain["delivered_kwh"] * (
            1.0 - cash.outage_loss_fraction[:, 1:].mean(axis=1))
        energy = replace(energy, loss_chain_kwh=chain)
    out = ModelOutput(energy=energy, cashflow=cash, params=full, weather_factors=weather_factors)
    if guard:
        bad, text = check_output(case["plant.mount"], out)
        if bad.any():
            i = int(np.argmax(bad))
            raise ImplausibleResult(case.source, text(i), i, int(bad.sum()), n_s)
    return out


def cash_flow(case: Case, params: Mapping, energy: EnergyResult,
              weather_factors: np.ndarray | None = None) -> CashFlow:
    """Lifetime cash flow and LCOE from the energy of :func:`evaluate`, vectorised.

    Split from :func:`evaluate` so that the finance can be re-run on the same physics (e.g.
    at another capex per kW, which LCOE depends on affinely). Moving parts
    (:mod:`lcoe.money.reliability`) add a ``moving_parts`` cost line and take the energy lost while
    parts are down off each year's energy.

    Parameters
    ----------
    case : Case
    params : mapping of str to numpy.ndarray
        Every numeric input by dotted path, (n_s,) (``ModelOutput.params``).
    energy : EnergyResult
        Average-year energy, (n_s,) arrays.
    weather_factors : numpy.ndarray, optional
        Energy multipliers per operating year, (n_s, N).

    Returns
    -------
    CashFlow
    """
    life = int(case["case.lifetime_years"])
    e_by_year = energy_by_year(energy.annual_kwh, params["plant.degradation_per_year"], life,
                               weather_factors)
    if not case.moving_parts:
        return build_cashflow(params, case.replacements, life, e_by_year)
    from dataclasses import replace

    from lcoe.money.reliability import moving_part_lines

    cost, lost, _ = moving_part_lines(case.moving_parts, params, energy.n_bodies, life)
    e_by_year[:, 1:] *= 1.0 - lost
    cf = build_cashflow(params, case.replacements, life, e_by_year, {"moving_parts": cost})
    loss = np.zeros_like(e_by_year)
    loss[:, 1:] = lost
    return replace(cf, outage_loss_fraction=loss)


def _merge(parts, n_s: int) -> EnergyResult:
    """Reassemble per-geometry energy results into sample order."""
    first = parts[0][1]

    def gather(get):
        shape = (n_s,) + get(first).shape[1:]
        out = np.empty(shape)
        for idx, res in parts:
            out[idx] = get(res)
        return out

    hourly = None if first.hourly_ac_kw is None else gather(lambda r: r.hourly_ac_kw)
    extra = None if first.hourly is None else {
        k: gather(lambda r, k=k: r.hourly[k]) for k in first.hourly}
    return EnergyResult(
        annual_kwh=gather(lambda r: r.annual_kwh), monthly_kwh=gather(lambda r: r.monthly_kwh),
        yearly_kwh=gather(lambda r: r.yearly_kwh),
        loss_chain_kwh={k: gather(lambda r, k=k: r.loss_chain_kwh[k])
                        for k in first.loss_chain_kwh},
        poa_kwh_m2=gather(lambda r: r.poa_kwh_m2),
        dc_capacity_kw=gather(lambda r: r.dc_capacity_kw), hourly_ac_kw=hourly,
        cell_area_m2=gather(lambda r: r.cell_area_m2),
        land_area_m2=gather(lambda r: r.land_area_m2),
        n_bodies=None if first.n_bodies is None else gather(lambda r: r.n_bodies), hourly=extra)
