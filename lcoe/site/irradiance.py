"""Sun and plane-of-array irradiance: computed once per geometry, shared by every sample.

The plane-of-array (POA) irradiance depends only on the weather, the site and the mount geometry.
It is split so that the ground-reflected part stays linear in albedo: albedo can then be a
sampled input without recomputing the transposition.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from lcoe.site.weather import Weather


@dataclass(frozen=True)
class Geometry:
    """Mount geometry.

    Parameters
    ----------
    mount : {"fixed", "single_axis", "dual_axis", "body"}
    tilt_deg : float
        Fixed: module tilt from horizontal; single-axis: axis tilt [deg]; unused otherwise.
    azimuth_deg : float
        Fixed: azimuth the modules face; single-axis: axis azimuth [deg, clockwise from north];
        unused otherwise.
    gcr : float
        Ground coverage ratio [-] (backtracking; land use).
    max_rotation_deg : float
        Single-axis rotation limit [deg].
    backtrack : bool
        Single-axis backtracking.
    body : lcoe.plant.body_shapes.BodySpec or None
        The body of a ``"body"`` mount (hashable, so that a geometry is a cache key).
    rows : bool
        Fixed and single-axis: model the rows (:mod:`lcoe.site.rows`, infinite sheds).
    row_height_m : float
        Height of the rows' centre line (a tracker's axis) above ground [m].
    row_width_m : float
        Slant width of a row [m]; the pitch is ``row_width_m / gcr``.
    """

    mount: str
    tilt_deg: float
    azimuth_deg: float
    gcr: float = 0.4
    max_rotation_deg: float = 60.0
    backtrack: bool = True
    body: Any = None
    rows: bool = False
    row_height_m: float = 1.5
    row_width_m: float = 2.0


@dataclass(frozen=True)
class SolarPosition:
    """Sun position and the atmosphere terms used by transposition, at interval centres.

    Attributes
    ----------
    apparent_zenith_deg, azimuth_deg, dni_extra_w_m2, airmass_relative : numpy.ndarray
        Arrays of shape (n_hours,) [deg, deg, W/m2, -].
    """

    apparent_zenith_deg: np.ndarray
    azimuth_deg: np.ndarray
    dni_extra_w_m2: np.ndarray
    airmass_relative: np.ndarray


@dataclass(frozen=True)
class PlaneOfArray:
    """Plane-of-array irradiance for one geometry, each of shape (n_hours,).

    Attributes
    ----------
    direct_w_m2 : numpy.ndarray
        Beam on the plane [W/m2].
    sky_diffuse_w_m2 : numpy.ndarray
        Sky diffuse on the plane [W/m2].
    ground_per_albedo_w_m2 : numpy.ndarray
        Ground-reflected irradiance per unit albedo [W/m2]; multiply by albedo.
    aoi_deg : numpy.ndarray
        Angle of incidence of the beam [deg] (90 where the sun is behind the plane).
    surface_tilt_deg, surface_azimuth_deg : numpy.ndarray
        Orientation of the plane each hour [deg].
    """

    direct_w_m2: np.ndarray
    sky_diffuse_w_m2: np.ndarray
    ground_per_albedo_w_m2: np.ndarray
    aoi_deg: np.ndarray
    surface_tilt_deg: np.ndarray
    surface_azimuth_deg: np.ndarray

    def global_w_m2(self, albedo) -> np.ndarray:
        """Total POA irradiance [W/m2]; ``albedo`` scalar or (n_samples, 1) -> broadcast."""
        return self.direct_w_m2 + self.sky_diffuse_w_m2 + np.asarray(albedo) * \
            self.ground_per_albedo_w_m2


@dataclass(frozen=True, eq=False)
class FacetIrradiance:
    """Irradiance on the k facets (or groups of identical facets) of a body, arrays (k, n_h).

    The hourly energy model (:func:`lcoe.plant.energy.simulate`) gives every facet its own cell
    temperature and DC power and sums the DC weighted by ``area_fraction``.

    Attributes
    ----------
    direct_w_m2 : numpy.ndarray
        Beam on each facet, after any shading between bodies [W/m2], (k, n_h).
    direct_effective_w_m2 : numpy.ndarray
        The same after the incidence-angle loss [W/m2], (k, n_h).
    sky_diffuse_w_m2 : numpy.ndarray
        Sky diffuse on each facet [W/m2], (k, n_h).
    ground_per_albedo_w_m2 : numpy.ndarray
        Ground-reflected irradiance per unit albedo [W/m2], (k, n_h).
    area_fraction : numpy.ndarray
        Share of the body's cell area of each row [-], (k,), summing to 1.
    sky_effective_w_m2, ground_effective_per_albedo_w_m2 : numpy.ndarray or None
        Sky diffuse and ground-reflected parts after the diffuse incidence-angle loss (Marion
        2017); None when that loss is switched off [W/m2], (k, n_h).
    open_direct_w_m2, open_sky_w_m2, open_ground_per_albedo_w_m2 : numpy.ndarray or None
        The same plane in an open field, before shading by neighbouring rows or bodies;
        None when nothing shades it [W/m2], (k, n_h).
    shading : {"none", "rows", "bodies"}
        Which loss-chain step the difference between open and shaded light belongs to.
    rear_direct_w_m2, rear_sky_w_m2, rear_ground_per_albedo_w_m2 : numpy.ndarray or None
        Irradiance incident on the rear side (rows model) [W/m2], (k, n_h).
    rear_effective_w_m2, rear_ground_effective_per_albedo_w_m2 : numpy.ndarray or None
        Rear beam + sky, and rear ground part per unit albedo, after incidence-angle losses
        [W/m2], (k, n_h); multiplied by bifaciality x (1 - rear loss) in the energy model.
    """

    direct_w_m2: np.ndarray
    direct_effective_w_m2: np.ndarray
    sky_diffuse_w_m2: np.ndarray
    ground_per_albedo_w_m2: np.ndarray
    area_fraction: np.ndarray
    sky_effective_w_m2: np.ndarray | None = None
    ground_effective_per_albedo_w_m2: np.ndarray | None = None
    open_direct_w_m2: np.ndarray | None = None
    open_sky_w_m2: np.ndarray | None = None
    open_ground_per_albedo_w_m2: np.ndarray | None = None
    shading: str = "none"
    rear_direct_w_m2: np.ndarray | None = None
    rear_sky_w_m2: np.ndarray | None = None
    rear_ground_per_albedo_w_m2: np.ndarray | None = None
    rear_effective_w_m2: np.ndarray | None = None
    rear_ground_effective_per_albedo_w_m2: np.ndarray | None = None

    @property
    def n_facets(self) -> int:
        return int(self.area_fraction.size)

    @property
    def has_rear(self) -> bool:
        """True when the rear side's irradiance is known (rows of a flat mount)."""
        return self.rear_effective_w_m2 is not None

    def stage(self, name: str) -> np.ndarray:
        """A component with its fallback when a step is absent [W/m2], (k, n_h).

        ``sky_effective`` / ``ground_effective``: without diffuse angle loss, the sky and
        ground parts; ``open_direct`` / ``open_sky`` / ``open_ground``: without shading, the
        shaded parts (no shading step).
        """
        own = getattr(self, {"sky_effective": "sky_effective_w_m2",
                             "ground_effective": "ground_effective_per_albedo_w_m2",
                             "open_direct": "open_direct_w_m2", "open_sky": "open_sky_w_m2",
                             "open_ground": "open_ground_per_albedo_w_m2"}[name])
        if own is not None:
            return own
        return {"sky_effective": self.sky_diffuse_w_m2,
                "ground_effective": self.ground_per_albedo_w_m2,
                "open_direct": self.direct_w_m2, "open_sky": self.sky_diffuse_w_m2,
                "open_ground": self.ground_per_albedo_w_m2}[name]


def as_facets(poa: PlaneOfArray, aoi_model: str = "physical", rows=None,
              diffuse_loss: bool = False) -> FacetIrradiance:
    """A plane of array as one facet of share 1, with its incidence-angle losses applied.

    Parameters
    ----------
    poa : PlaneOfArray
        Open-field plane of array (transposition of the case).
    aoi_model : {"physical", "ashrae"}
        Beam incidence-angle modifier (see :func:`iam_beam`); also the model integrated for
        the diffuse modifiers.
    rows : lcoe.site.rows.RowIrradiance, optional
        Row effects on this plane: front beam shading, sky and ground view, rear side.
        None: an open field (no neighbours; no rear side).
    diffuse_loss : bool
        Apply the sky and ground diffuse incidence-angle modifiers of Marion (2017)
        (:func:`lcoe.site.rows.diffuse_iam`), front and rear.

    Notes
    -----
    With ``rows=None`` and ``diffuse_loss=False`` the result is the open-field plane with only
    the beam angle loss, exactly as before rows existed.
    """
    def one(a):
        return np.asarray(a, dtype=float)[None, :]

    direct, sky, ground = poa.direct_w_m2, poa.sky_diffuse_w_m2, poa.ground_per_albedo_w_m2
    extra: dict = {}
    if rows is not None:
        direct = direct * rows.front_unshaded_fraction
        sky = sky * rows.front_sky_view_ratio
        ground = rows.front_ground_per_albedo_w_m2
        extra.update(open_direct_w_m2=one(poa.direct_w_m2),
                     open_sky_w_m2=one(poa.sky_diffuse_w_m2),
                     open_ground_per_albedo_w_m2=one(poa.ground_per_albedo_w_m2), shading="rows")
        rear_sky_iam = rear_ground_iam = 1.0
        if diffuse_loss:
            from lcoe.site.rows import diffuse_iam

            rear_sky_iam, rear_ground_iam = diffuse_iam(rows.rear_tilt_deg, aoi_model)
        extra.update(
            rear_direct_w_m2=one(rows.rear_direct_w_m2), rear_sky_w_m2=one(rows.rear_sky_w_m2),
            rear_ground_per_albedo_w_m2=one(rows.rear_ground_per_albedo_w_m2),
            rear_effective_w_m2=one(rows.rear_direct_w_m2
                                    * iam_beam(rows.rear_aoi_deg, aoi_model)
                                    + rows.rear_sky_w_m2 * rear_sky_iam),
            rear_ground_effective_per_albedo_w_m2=one(rows.rear_ground_per_albedo_w_m2
                                                      * rear_ground_iam))
    if diffuse_loss:
        from lcoe.site.rows import diffuse_iam

        sky_iam, ground_iam = diffuse_iam(poa.surface_tilt_deg, aoi_model)
        extra.update(sky_effective_w_m2=one(sky * sky_iam),
                     ground_effective_per_albedo_w_m2=one(ground * ground_iam))
    return FacetIrradiance(
        direct_w_m2=one(direct),
        direct_effective_w_m2=one(direct * iam_beam(poa.aoi_deg, aoi_model)),
        sky_diffuse_w_m2=one(sky), ground_per_albedo_w_m2=one(ground),
        area_fraction=np.ones(1), **extra)


#: The air-independent solar-position terms of the last times and place (one entry): the
#: synthesis of a year from monthly values and the site's solar position then share them.
_SPA_LAST: dict = {}


def spa_sun(times: pd.DatetimeIndex, latitude_deg: float, longitude_deg: float,
            altitude_m: float, temperature_c) -> dict:
    """Solar position by SPA: ``pvlib.solarposition.get_solarposition`` (its ``nrel_numpy``
    method, pressure from the altitude) bit for bit, in pvlib's steps.

    Only the refraction depends on the air temperature; the other terms (nutation, the sun's
    coordinates, parallax: nearly all of the time) are kept for the last ``times`` and place,
    so the two evaluations of a site from monthly values (the synthesis at the standard 12 C,
    the site at its hourly temperature) compute them once.

    Parameters
    ----------
    times : pandas.DatetimeIndex
        Instants (time-zone aware), (n,).
    latitude_deg, longitude_deg : float
        [deg].
    altitude_m : float
        [m]; sets the standard pressure.
    temperature_c : float or numpy.ndarray
        Air temperature for refraction [C], scalar or (n,).

    Returns
    -------
    dict of str to numpy.ndarray
        ``apparent_zenith``, ``zenith``, ``azimuth`` [deg], (n,).

    References
    ----------
    .. [1] I. Reda and A. Andreas, "Solar position algorithm for solar radiation applications",
       NREL/TP-560-34302, 2004.
    """
    import pvlib
    from pvlib import spa
    from pvlib.solarposition import _datetime_to_unixtime

    unixtime = np.asarray(_datetime_to_unixtime(times))
    key = (unixtime.tobytes(), float(latitude_deg), float(longitude_deg), float(altitude_m))
    if _SPA_LAST.get("key") != key:
        _SPA_LAST.clear()
        _SPA_LAST.update(key=key, terms=_spa_air_free(unixtime, latitude_deg, longitude_deg,
                                                      altitude_m))
    e0, phi = _SPA_LAST["terms"]
    pressure_mbar = pvlib.atmosphere.alt2pres(altitude_m) / 100  # as spa_python converts it
    delta_e = spa.atmospheric_refraction_correction(pressure_mbar, temperature_c, e0, 0.5667)
    e = spa.topocentric_elevation_angle(e0, delta_e)
    return {"apparent_zenith": spa.topocentric_zenith_angle(e),
            "zenith": spa.topocentric_zenith_angle(e0), "azimuth": phi}


def _spa_air_free(unixtime, lat, lon, elev, delta_t: float = 67.0):
    """Topocentric elevation without refraction and azimuth [deg]: the steps of
    ``pvlib.spa.solar_position_numpy`` before the refraction (its default delta_t)."""
    from pvlib import spa

    jd = spa.julian_day(unixtime)
    jde = spa.julian_ephemeris_day(jd, delta_t)
    jc = spa.julian_century(jd)
    jce = spa.julian_ephemeris_century(jde)
    jme = spa.julian_ephemeris_millennium(jce)
    R = spa.heliocentric_radius_vector(jme)
    Theta = spa.geocentric_longitude(spa.heliocentric_longitude(jme))
    beta = spa.geocentric_latitude(spa.heliocentric_latitude(jme))
    # the five fundamental arguments of the nutation (Reda & Andreas 2004, section 3.4)
    xs = [f(jce) for f in (spa.mean_elongation, spa.mean_anomaly_sun, spa.mean_anomaly_moon,
                           spa.moon_argument_latitude, spa.moon_ascending_longitude)]
    l_o_nutation = np.empty((2, len(xs[0])))
    spa.longitude_obliquity_nutation(jce, *xs, l_o_nutation)
    delta_psi, delta_epsilon = l_o_nutation[0], l_o_nutation[1]
    epsilon0 = spa.mean_ecliptic_obliquity(jme)
    epsilon = spa.true_ecliptic_obliquity(epsilon0, delta_epsilon)
    delta_tau = spa.aberration_correction(R)
    lamd = spa.apparent_sun_longitude(Theta, delta_psi, delta_tau)
    v0 = spa.mean_sidereal_time(jd, jc)
    v = spa.apparent_sidereal_time(v0, delta_psi, epsilon)
    alpha = spa.geocentric_sun_right_ascension(lamd, epsilon, beta)
    delta = spa.geocentric_sun_declination(lamd, epsilon, beta)
    H = spa.local_hour_angle(v, lon, alpha)
    xi = spa.equatorial_horizontal_parallax(R)
    u = spa.uterm(lat)
    x = spa.xterm(u, lat, elev)
    y = spa.yterm(u, lat, elev)
    delta_alpha = spa.parallax_sun_right_ascension(x, xi, H, delta)
    delta_prime = spa.topocentric_sun_declination(delta, x, y, xi, delta_alpha, H)
    H_prime = spa.topocentric_local_hour_angle(H, delta_alpha)
    e0 = spa.topocentric_elevation_angle_without_atmosphere(lat, delta_prime, H_prime)
    gamma = spa.topocentric_astronomers_azimuth(H_prime, delta_prime, lat)
    return e0, spa.topocentric_azimuth_angle(gamma)


def solar_position(weather: Weather, latitude_deg: float, longitude_deg: float,
                   altitude_m: float) -> SolarPosition:
    """Solar position by SPA (Reda & Andreas 2004) at the centre of each hour.

    Parameters
    ----------
    weather : Weather
        Hourly weather; its air temperature [C] refines refraction.
    latitude_deg, longitude_deg : float
        Site [deg].
    altitude_m : float
        Site altitude [m]; sets the standard pressure.

    Returns
    -------
    SolarPosition

    References
    ----------
    .. [1] I. Reda and A. Andreas, "Solar position algorithm for solar radiation applications",
       NREL/TP-560-34302, 2004.
    """
    import pvlib

    loc = pvlib.location.Location(latitude_deg, longitude_deg, altitude=altitude_m)
    times = weather.mid_times
    sp = pd.DataFrame(spa_sun(times, latitude_deg, longitude_deg, altitude_m,
                              weather.data["temp_air"].to_numpy()), index=times)
    am = loc.get_airmass(solar_position=sp)
    dni_extra = pvlib.irradiance.get_extra_radiation(times)
    return SolarPosition(
        apparent_zenith_deg=sp["apparent_zenith"].to_numpy(),
        azimuth_deg=sp["azimuth"].to_numpy(),
        dni_extra_w_m2=np.asarray(dni_extra, dtype=float),
        airmass_relative=am["airmass_relative"].to_numpy(),
    )


def orientation(geometry: Geometry, sun: SolarPosition) -> tuple[np.ndarray, np.ndarray]:
    """Surface tilt and azimuth each hour for a mount [deg], arrays of shape (n_hours,).

    Single-axis trackers follow pvlib.tracking.singleaxis (true tracking with optional
    backtracking, Marion & Dobos 2013; Anderson & Mikofski 2020). A dual-axis tracker turns its
    surface normal onto the sun (tilt = apparent zenith, azimuth = sun azimuth, so the angle of
    incidence is 0) while the sun is above the horizon, with no rotation limit and no shading
    between trackers (spacing them so is the designer's job; land use follows from ``gcr``).
    At night every tracker is parked flat (tilt 0). A body has no single plane: see
    :func:`lcoe.plant.body_light.body_irradiance`.
    """
    import pvlib

    n = sun.apparent_zenith_deg.shape[0]
    if geometry.mount == "fixed":
        return np.full(n, geometry.tilt_deg), np.full(n, geometry.azimuth_deg)
    if geometry.mount in ("dual_axis", "concentrator"):
        up = sun.apparent_zenith_deg < 90.0
        return (np.where(up, sun.apparent_zenith_deg, 0.0),
                np.where(up, sun.azimuth_deg, 180.0))
    if geometry.mount == "single_axis":
        tr = pvlib.tracking.singleaxis(
            sun.apparent_zenith_deg, sun.azimuth_deg, axis_tilt=geometry.tilt_deg,
            axis_azimuth=geometry.azimuth_deg, max_angle=geometry.max_rotation_deg,
            backtrack=geometry.backtrack, gcr=geometry.gcr)
        tilt = np.nan_to_num(np.asarray(tr["surface_tilt"], dtype=float), nan=0.0)
        az = np.nan_to_num(np.asarray(tr["surface_azimuth"], dtype=float),
                           nan=geometry.azimuth_deg)
        return tilt, az
    raise ValueError(f"plant.mount = {geometry.mount!r}: expected 'fixed', 'single_axis' or "
                     f"'dual_axis' (a body has no single plane)")


def plane_of_array(weather: Weather, sun: SolarPosition, surface_tilt_deg, surface_azimuth_deg,
                   transposition: str = "perez") -> PlaneOfArray:
    """Transpose horizontal irradiance onto a plane with the chosen sky-diffuse model.

    Parameters
    ----------
    weather : Weather
    sun : SolarPosition
    surface_tilt_deg, surface_azimuth_deg : float or numpy.ndarray
        Plane orientation [deg], scalar or (n_hours,).
    transposition : {"perez", "haydavies", "isotropic"}
        Perez et al. 1990 (default), Hay & Davies 1980, or isotropic sky.

    Returns
    -------
    PlaneOfArray

    References
    ----------
    .. [1] R. Perez et al., "Modeling daylight availability and irradiance components from
       direct and global irradiance", Solar Energy 44(5), 1990.
    .. [2] J. E. Hay and J. A. Davies, "Calculation of the solar radiation incident on an
       inclined surface", 1980.
    """
    import pvlib

    n = weather.n_hours
    tilt = np.broadcast_to(np.asarray(surface_tilt_deg, dtype=float), (n,))
    az = np.broadcast_to(np.asarray(surface_azimuth_deg, dtype=float), (n,))
    d = weather.data
    ghi, dni, dhi = (d[c].to_numpy() for c in ("ghi", "dni", "dhi"))
    irr = pvlib.irradiance.get_total_irradiance(
        tilt, az, sun.apparent_zenith_deg, sun.azimuth_deg, dni, ghi, dhi,
        dni_extra=sun.dni_extra_w_m2, airmass=sun.airmass_relative, albedo=1.0,
        model=transposition)
    aoi = np.asarray(pvlib.irradiance.aoi(tilt, az, sun.apparent_zenith_deg, sun.azimuth_deg))

    def arr(key):
        return np.nan_to_num(np.asarray(irr[key], dtype=float), nan=0.0)

    return PlaneOfArray(direct_w_m2=arr("poa_direct"), sky_diffuse_w_m2=arr("poa_sky_diffuse"),
                        ground_per_albedo_w_m2=arr("poa_ground_diffuse"),
                        aoi_deg=np.nan_to_num(aoi, nan=90.0), surface_tilt_deg=np.array(tilt),
                        surface_azimuth_deg=np.array(az))


def iam_beam(aoi_deg: np.ndarray, model: str = "physical") -> np.ndarray:
    """Incidence-angle modifier for beam light [-], shape of ``aoi_deg``.

    ``"physical"``: Fresnel/Snell air-glass model (De Soto et al. 2006; pvlib defaults n=1.526,
    K=4 /m, L=2 mm). ``"ashrae"``: 1 - b0 (1/cos(aoi) - 1), b0 = 0.05 (Souka & Safwat 1966).
    """
    import pvlib

    if model == "physical":
        return np.asarray(pvlib.iam.physical(aoi_deg), dtype=float)
    if model == "ashrae":
        return np.asarray(pvlib.iam.ashrae(aoi_deg), dtype=float)
    raise ValueError(f"plant.aoi_model = {model!r}: expected 'physical' or 'ashrae'")


def times_local(weather: Weather) -> pd.DatetimeIndex:
    """Interval starts in the weather file's local standard time (for monthly tables)."""
    return weather.data.index
