"""Light on the facets of a body: plane-of-array irradiance per facet (pvlib), rotation
about the vertical axis, neighbours in a field (beam shading, horizon and sky view) and
the :class:`~lcoe.site.irradiance.FacetIrradiance` of a case's bodies.

The bodies of a field are modelled by simple allowances (an estimate, not a ray trace).
"""

from __future__ import annotations

import numpy as np
import pvlib

from lcoe.case.errors import InputError
from lcoe.plant import body_shapes
from lcoe.plant.body_shapes import POA_MODELS, BodySpec, Facets, _count, _positive
from lcoe.site.irradiance import FacetIrradiance, SolarPosition, iam_beam
from lcoe.site.weather import Weather

# --------------------------------------------------------------------------------------------
# Plane-of-array irradiance per facet (pvlib)
# --------------------------------------------------------------------------------------------


def facet_poa(
    facets: Facets,
    solar_zenith,
    solar_azimuth,
    dni,
    ghi,
    dhi,
    albedo=0.25,
    dni_extra=None,
    airmass=None,
    model: str = "perez",
) -> dict[str, np.ndarray]:
    """Plane-of-array irradiance on every facet, with pvlib's transposition models.

    Parameters
    ----------
    facets : Facets
        The body, ``k`` facets (tilts up to 180 degrees are allowed).
    solar_zenith, solar_azimuth : array_like, shape (n_times,)
        Sun position (pvlib's apparent zenith is the usual choice). [degrees]
    dni, ghi, dhi : array_like, shape (n_times,)
        Direct normal, global horizontal and diffuse horizontal irradiance. [W/m2]
    albedo : float or array_like, shape (n_times,)
        Ground reflectance. [fraction]
    dni_extra : array_like, shape (n_times,), optional
        Extraterrestrial normal irradiance; required by ``"perez"`` and ``"haydavies"``. [W/m2]
    airmass : array_like, shape (n_times,), optional
        Relative air mass for ``"perez"``; pvlib computes it from the zenith when omitted.
        [unitless]
    model : {"perez", "haydavies", "isotropic"}
        Sky-diffuse transposition model (Perez et al. 1990; Hay & Davies 1980; isotropic).

    Returns
    -------
    dict of numpy.ndarray, each shape (k, n_times)
        ``poa_global``, ``poa_direct``, ``poa_sky_diffuse``, ``poa_ground_diffuse`` [W/m2]
        and ``aoi`` [degrees].

    Notes
    -----
    Each facet is treated as an unobstructed plane: the sky view factor is
    ``(1 + cos tilt)/2`` and the ground view ``(1 - cos tilt)/2``, so a downward-facing facet
    sees mostly ground. Self-shading between facets and the shadow the body casts on the
    ground it looks at are not modelled. pvlib's functions are evaluated once with the facet
    angles on a leading axis (shape (k, 1)) broadcast against the times (shape (n_times,)).

    References
    ----------
    .. [1] Perez, R., Ineichen, P., Seals, R., Michalsky, J., Stewart, R. (1990). Modeling
       daylight availability and irradiance components from direct and global irradiance.
       Solar Energy 44(5), 271-289.
    .. [2] Hay, J. E., Davies, J. A. (1980). Calculations of the solar radiation incident on an
       inclined surface. Proc. First Canadian Solar Radiation Data Workshop, 59-72.
    """
    if model not in POA_MODELS:
        raise InputError(f"model = {model!r}: expected one of {', '.join(POA_MODELS)}")
    if model in ("perez", "haydavies") and dni_extra is None:
        raise InputError(f"dni_extra = None: expected an array in W/m2 for model {model!r}")
    zen = np.atleast_1d(np.asarray(solar_zenith, dtype=float))
    n_times = zen.shape[-1]

    def _times(name, value):
        arr = np.asarray(value, dtype=float)
        try:
            return np.array(np.broadcast_to(arr, (n_times,)))
        except ValueError:
            raise InputError(
                f"{name} has shape {arr.shape}: expected a scalar or ({n_times},) like the zenith"
            ) from None

    zen = _times("solar_zenith", zen)
    azi = _times("solar_azimuth", solar_azimuth)
    dni_a, ghi_a, dhi_a = _times("dni", dni), _times("ghi", ghi), _times("dhi", dhi)
    alb = _times("albedo", albedo)
    extra = None if dni_extra is None else _times("dni_extra", dni_extra)
    am = None if airmass is None else _times("airmass", airmass)
    tilt = facets.tilt_deg[:, None]
    surf_az = facets.azimuth_deg[:, None]
    res = pvlib.irradiance.get_total_irradiance(
        tilt,
        surf_az,
        zen,
        azi,
        dni_a,
        ghi_a,
        dhi_a,
        dni_extra=extra,
        airmass=am,
        albedo=alb,
        model=model,
    )
    shape = (facets.n_facets, n_times)
    out = {
        key: np.array(np.broadcast_to(np.asarray(res[key], dtype=float), shape))
        for key in ("poa_global", "poa_direct", "poa_sky_diffuse", "poa_ground_diffuse")
    }
    out["aoi"] = np.array(
        np.broadcast_to(pvlib.irradiance.aoi(tilt, surf_az, zen, azi), shape), dtype=float
    )
    return out


# --------------------------------------------------------------------------------------------
# Rotation about the vertical axis
# --------------------------------------------------------------------------------------------


def _per_facet(facets: Facets, per_facet) -> np.ndarray:
    x = np.asarray(per_facet, dtype=float)
    if x.ndim == 0 or x.shape[0] != facets.n_facets:
        raise InputError(
            f"per_facet has shape {x.shape}: expected a leading axis of {facets.n_facets} facets"
        )
    return x


def rotating_average(per_facet, facets: Facets) -> np.ndarray:
    """Area-weighted mean over all facets, e.g. of plane-of-array irradiance.

    Parameters
    ----------
    per_facet : array_like, shape (k, n_times)
        A quantity per facet, e.g. ``facet_poa(...)["poa_global"]``. [any unit]
    facets : Facets
        The body, ``k`` facets.

    Returns
    -------
    numpy.ndarray, shape (n_times,)
        ``sum_k area_k x_k / sum_k area_k``. [same unit]

    Notes
    -----
    This is the mean over all cells of the body. For a body turning about its vertical axis
    with a period much shorter than an hour, each cell sees, within the hour, the average over
    the azimuths its ring passes through; when all facets form one ring (same tilt, spread
    evenly in azimuth, as on :func:`cone`, :func:`pyramid` or :func:`cylinder` sides) that is
    exactly this mean. For bodies with several rings (:func:`dome`) use :func:`ring_average`.
    """
    x = _per_facet(facets, per_facet)
    return np.tensordot(facets.area_m2, x, axes=(0, 0)) / facets.total_area_m2


def ring_average(facets: Facets, per_facet, tilt_tolerance_deg: float = 1e-6) -> np.ndarray:
    """What each facet sees when the body turns quickly about its vertical axis.

    Each facet gets the area-weighted mean over all facets with the same tilt (its ring).

    Parameters
    ----------
    facets : Facets
        The body, ``k`` facets.
    per_facet : array_like, shape (k, ...)
        A quantity per facet, e.g. plane-of-array irradiance (k, n_times). [any unit]
    tilt_tolerance_deg : float
        Facets whose tilts round to the same multiple of this are one ring. [degrees]

    Returns
    -------
    numpy.ndarray, same shape as ``per_facet``
        Ring-averaged values. ``sum_k area_k * result_k == sum_k area_k * per_facet_k``: turning
        the body does not change the energy it receives, it only evens the irradiance across
        the cells of a ring (and so lowers and evens their temperature).

    Notes
    -----
    Assumes the rotation period is much shorter than the time step and the facets of a ring are
    spread evenly in azimuth, so the mean over the ring's facets stands for the mean over the
    azimuths each cell sweeps. Rotation about a vertical axis leaves the tilt unchanged.
    """
    x = _per_facet(facets, per_facet)
    tol = _positive("tilt_tolerance_deg", tilt_tolerance_deg)
    _, ring = np.unique(np.round(facets.tilt_deg / tol), return_inverse=True)
    ring = ring.ravel()
    n_rings = int(ring.max()) + 1
    weighted = np.zeros((n_rings,) + x.shape[1:])
    np.add.at(weighted, ring, facets.area_m2.reshape((-1,) + (1,) * (x.ndim - 1)) * x)
    ring_area = np.bincount(ring, weights=facets.area_m2, minlength=n_rings)
    mean = weighted / ring_area.reshape((-1,) + (1,) * (x.ndim - 1))
    return mean[ring]


def mutual_shading_factor(
    body_height_m: float,
    body_width_m: float,
    spacing_m: float,
    sun_elevation_deg,
    sun_azimuth_deg,
    rows: int = 2,
    grid_azimuth_deg: float = 0.0,
) -> np.ndarray:
    """Fraction of a body's beam lost to the shadows of its neighbours in a square grid.

    Parameters
    ----------
    body_height_m : float
        Height of each body. [m]
    body_width_m : float
        Width of each body seen from the side (diameter of a round body). [m]
    spacing_m : float
        Centre-to-centre distance between neighbours along the grid axes (>= width). [m]
    sun_elevation_deg, sun_azimuth_deg : array_like, shape (n_times,)
        Sun elevation above the horizon and azimuth clockwise from north. [degrees]
    rows : int
        How many rows of neighbours around the body are considered: 1 for the 8 nearest,
        2 for the 24 nearest, and so on (>= 1).
    grid_azimuth_deg : float
        Azimuth of one grid axis (0: axes run north-south and east-west). [degrees]

    Returns
    -------
    numpy.ndarray
        Shape ``broadcast(sun_elevation_deg, sun_azimuth_deg).shape``, values in [0, 1]
        [fraction]; 1 when the sun is at or below the horizon.

    Notes
    -----
    Method (a documented allowance, not a ray trace). Seen from the sun, each body is treated
    as a vertical screen of width ``w`` and height ``h`` with beam capture spread evenly over
    it. A neighbour at horizontal distance ``d`` towards the sun along the sun's azimuth and
    ``y`` across it casts a shadow of length ``L = h / tan(elevation)``; on the shaded body it
    covers the lateral band ``[y - w/2, y + w/2]`` (clipped to the body's width) up to a height
    fraction ``max(0, 1 - d / L)``. The lost fraction is the area of the union of these
    bottom-anchored rectangles over the body's ``w x h`` screen, computed exactly.

    Limits: beam only (diffuse and ground-reflected light are not reduced); identical bodies
    on a square grid on flat ground; neighbours beyond ``rows`` are ignored; a body that is
    wider at its base than at its top (a cone) loses more than the screen model says, because
    its wide lower part is shaded first.
    """
    h = _positive("body_height_m", body_height_m)
    w = _positive("body_width_m", body_width_m)
    s = _positive("spacing_m", spacing_m)
    if w > s:
        raise InputError(
            f"body_width_m = {w!r}: expected at most spacing_m = {s!r} (bodies would overlap)"
        )
    n_rows = _count("rows", rows, 1)
    el, az = np.broadcast_arrays(
        np.asarray(sun_elevation_deg, dtype=float), np.asarray(sun_azimuth_deg, dtype=float)
    )
    shape = el.shape
    el, az = el.ravel(), az.ravel()

    idx = np.arange(-n_rows, n_rows + 1)
    i, j = np.meshgrid(idx, idx, indexing="ij")
    keep = (i != 0) | (j != 0)
    i, j = i[keep].astype(float), j[keep].astype(float)
    g = np.radians(grid_azimuth_deg)
    # neighbour offsets (east, north) in metres; grid axis 1 along azimuth g, axis 2 at g + 90
    east = s * (i * np.sin(g) + j * np.cos(g))
    north = s * (i * np.cos(g) - j * np.sin(g))

    a = np.radians(az)[:, None]
    along = east[None, :] * np.sin(a) + north[None, :] * np.cos(a)  # towards the sun (n, m)
    across = east[None, :] * np.cos(a) - north[None, :] * np.sin(a)
    tan_el = np.tan(np.radians(np.clip(el, 1e-9, 90.0)))[:, None]
    height_frac = np.where(along > 0.0, np.clip(1.0 - along * tan_el / h, 0.0, 1.0), 0.0)
    lo = np.clip(across - w / 2.0, -w / 2.0, w / 2.0)
    hi = np.clip(across + w / 2.0, -w / 2.0, w / 2.0)

    n = el.size
    edges = np.sort(
        np.concatenate((lo, hi, np.full((n, 1), -w / 2.0), np.full((n, 1), w / 2.0)), axis=1),
        axis=1,
    )
    mid = 0.5 * (edges[:, 1:] + edges[:, :-1])  # (n, 2m+1)
    width = np.diff(edges, axis=1)
    covers = (lo[:, None, :] <= mid[:, :, None]) & (mid[:, :, None] < hi[:, None, :])
    top = np.max(np.where(covers, height_frac[:, None, :], 0.0), axis=2)  # (n, 2m+1)
    lost = np.clip((width * top).sum(axis=1) / w, 0.0, 1.0)
    return np.where(el > 0.0, lost, 1.0).reshape(shape)


#: Rows of neighbours around a body counted by the shading allowance (2: the 24 nearest).
SHADING_ROWS = 2


def shading_beam_factor(spec: BodySpec, sun: SolarPosition) -> np.ndarray:
    """Share of a body's beam left by the shadows of its neighbours [-], (n_h,).

    1 where the envelope is unknown (``shape = "facets"`` without radius and height); 0 when
    the sun is below the horizon. See :func:`lcoe.plant.body_light.mutual_shading_factor`.
    """
    env = spec.envelope_m()
    n = sun.apparent_zenith_deg.shape[0]
    if env is None:
        return np.ones(n)
    height, width = env
    lost = mutual_shading_factor(height, width, spec.spacing_m,
                                    90.0 - sun.apparent_zenith_deg, sun.azimuth_deg,
                                    rows=SHADING_ROWS)
    return 1.0 - lost


#: Sky grid of :func:`sky_view_fraction`: elevation and azimuth steps [deg].
SKY_STEP_DEG = 1.0


def horizon_elevation_deg(height_m: float, width_m: float, spacing_m: float,
                          azimuth_deg: np.ndarray, rows: int = SHADING_ROWS) -> np.ndarray:
    """Elevation of the neighbours' tops seen from a body's axis at mid-height [deg].

    Parameters
    ----------
    height_m, width_m : float
        Envelope of every body: an upright cylinder [m].
    spacing_m : float
        Centre-to-centre distance on a square grid (axes north-south and east-west) [m].
    azimuth_deg : numpy.ndarray
        Directions, clockwise from north [deg], (n_az,).
    rows : int
        Rings of neighbours counted (2: the 24 nearest).

    Returns
    -------
    numpy.ndarray
        (n_az,) [deg]; 0 where a direction passes between the neighbours. The nearest
        neighbour a ray meets sets the elevation ``atan((h/2) / distance)``.
    """
    idx = np.arange(-rows, rows + 1)
    i, j = np.meshgrid(idx, idx, indexing="ij")
    keep = (i != 0) | (j != 0)
    east, north = spacing_m * j[keep], spacing_m * i[keep]
    a = np.radians(np.asarray(azimuth_deg, dtype=float))[:, None]
    along = east[None, :] * np.sin(a) + north[None, :] * np.cos(a)
    across = east[None, :] * np.cos(a) - north[None, :] * np.sin(a)
    r = width_m / 2.0
    hit = (along > 0.0) & (np.abs(across) < r)
    dist = np.where(hit, along - np.sqrt(np.maximum(r * r - across * across, 0.0)), np.inf)
    nearest = np.maximum(dist.min(axis=1), 1e-9)
    return np.where(np.isfinite(nearest), np.degrees(np.arctan(0.5 * height_m / nearest)), 0.0)


def sky_view_fraction(tilt_deg, azimuth_deg, horizon_deg_of, step_deg: float = SKY_STEP_DEG
                      ) -> np.ndarray:
    """Share of each facet's isotropic sky view factor left by an obstructed horizon [-].

    Parameters
    ----------
    tilt_deg, azimuth_deg : numpy.ndarray
        Facet orientations [deg], (k,).
    horizon_deg_of : callable
        ``horizon_deg_of(azimuth_deg) -> elevation_deg``, the obstructed horizon, arrays (n,).
    step_deg : float
        Grid step of the numerical integration over the sky [deg].

    Returns
    -------
    numpy.ndarray
        (k,), ``VF(visible sky) / VF(whole sky)``; 1 for a facet that sees no sky.

    Notes
    -----
    ``VF = (1/pi) * integral of max(0, n.s) dOmega`` over the sky above the horizon profile,
    integrated on a midpoint grid in elevation and azimuth (``dOmega = cos(e) de dphi``); the
    ratio uses the same grid for both view factors, so grid errors largely cancel. Checks
    (tests): a horizontal facet under a uniform horizon at elevation b keeps cos^2 b, a
    vertical one ``1 - 2b/pi - sin(2b)/pi`` of its open view (analytic).
    """
    step = np.radians(step_deg)
    elev = np.arange(0.5, 90.0 / step_deg) * step  # midpoints in (0, pi/2)
    az_deg = np.arange(0.5, 360.0 / step_deg) * step_deg
    horizon = np.radians(np.asarray(horizon_deg_of(az_deg), dtype=float))
    e, a = np.meshgrid(elev, np.radians(az_deg), indexing="ij")  # (n_e, n_a)
    dirs = np.stack((np.cos(e) * np.sin(a), np.cos(e) * np.cos(a), np.sin(e)), axis=-1)
    weight = np.cos(e) * step * step
    visible = e >= horizon[None, :]
    normals = body_shapes.direction_vectors(tilt_deg, azimuth_deg)  # (k, 3)
    cos_inc = np.maximum(np.tensordot(dirs, normals, axes=(2, 1)), 0.0)  # (n_e, n_a, k)
    open_vf = np.tensordot(weight, cos_inc, axes=((0, 1), (0, 1)))
    seen_vf = np.tensordot(weight * visible, cos_inc, axes=((0, 1), (0, 1)))
    return np.where(open_vf > 0.0, seen_vf / np.where(open_vf > 0.0, open_vf, 1.0), 1.0)


def diffuse_view_factors(spec: BodySpec, facets: Facets) -> tuple[np.ndarray, np.ndarray]:
    """Per-facet shares of sky and of ground view left by the neighbours [-], two (k,).

    The ground view of a facet of tilt t is the sky view of the mirrored facet (tilt 180 - t)
    under the mirrored horizon, which for neighbours spanning the body's full height and seen
    from mid-height is the same horizon.
    """
    env = spec.envelope_m()
    if env is None:
        return np.ones(facets.n_facets), np.ones(facets.n_facets)
    height, width = env

    def horizon(az):
        return horizon_elevation_deg(height, width, spec.spacing_m, az)

    sky = sky_view_fraction(facets.tilt_deg, facets.azimuth_deg, horizon)
    ground = sky_view_fraction(180.0 - facets.tilt_deg, facets.azimuth_deg, horizon)
    return sky, ground


def body_irradiance(weather: Weather, sun: SolarPosition, spec: BodySpec,
                    transposition: str = "perez", aoi_model: str = "physical",
                    diffuse_loss: bool = False) -> FacetIrradiance:
    """Irradiance on every facet of a body in a field, ready for the hourly model.

    Parameters
    ----------
    weather : Weather
    sun : SolarPosition
    spec : BodySpec
    transposition : {"perez", "haydavies", "isotropic"}
    aoi_model : {"physical", "ashrae"}
    diffuse_loss : bool
        Apply the diffuse incidence-angle modifiers of Marion (2017) for each facet's tilt
        (:func:`lcoe.site.rows.diffuse_iam`) to its sky and ground parts.

    Returns
    -------
    FacetIrradiance
        Arrays (k, n_h); for a rotating body one row per ring (identical facets merged, their
        area fractions summed), since every cell of a ring then sees the same irradiance.

    Notes
    -----
    Steps: per-facet transposition with albedo 1 (the ground part stays linear in albedo,
    which is sampled); beam x the shading allowance of the field, sky diffuse and ground-
    reflected light x the shares of sky and ground the neighbours leave in view;
    incidence-angle loss on the
    beam of each facet; for a rotating body, ring averages of every component (linear, so the
    body's total is unchanged: the check of :func:`lcoe.plant.body_light.ring_average`).
    Memory: up to nine (k, n_h) arrays, e.g. 24 facets x 8760 h x 8 bytes x 9 = 15 MB.
    """
    facets = spec.facets()
    d = weather.data
    poa = facet_poa(facets, sun.apparent_zenith_deg, sun.azimuth_deg,
                       d["dni"].to_numpy(), d["ghi"].to_numpy(), d["dhi"].to_numpy(),
                       albedo=1.0, dni_extra=sun.dni_extra_w_m2,
                       airmass=sun.airmass_relative, model=transposition)
    clean = {k: np.nan_to_num(v, nan=0.0) for k, v in poa.items()}
    direct = clean["poa_direct"] * shading_beam_factor(spec, sun)[None, :]
    direct_eff = direct * iam_beam(np.nan_to_num(poa["aoi"], nan=90.0), aoi_model)
    sky_share, ground_share = diffuse_view_factors(spec, facets)
    sky = clean["poa_sky_diffuse"] * sky_share[:, None]
    ground = clean["poa_ground_diffuse"] * ground_share[:, None]
    rows = [direct, direct_eff, sky, ground, clean["poa_direct"], clean["poa_sky_diffuse"],
            clean["poa_ground_diffuse"]]
    if diffuse_loss:
        from lcoe.site.rows import diffuse_iam

        sky_iam, ground_iam = diffuse_iam(facets.tilt_deg, aoi_model)
        rows += [sky * sky_iam[:, None], ground * ground_iam[:, None]]
    share = facets.area_m2 / facets.total_area_m2
    if spec.rotating:
        rows = [ring_average(facets, r) for r in rows]
        _, first, ring = np.unique(np.round(facets.tilt_deg / 1e-6), return_index=True,
                                   return_inverse=True)
        share = np.bincount(ring.ravel(), weights=share)
        rows = [r[first] for r in rows]
    effective = {}
    if diffuse_loss:
        effective = {"sky_effective_w_m2": rows[7],
                     "ground_effective_per_albedo_w_m2": rows[8]}
    return FacetIrradiance(direct_w_m2=rows[0], direct_effective_w_m2=rows[1],
                           sky_diffuse_w_m2=rows[2], ground_per_albedo_w_m2=rows[3],
                           area_fraction=share, open_direct_w_m2=rows[4],
                           open_sky_w_m2=rows[5], open_ground_per_albedo_w_m2=rows[6],
                           shading="bodies", **effective)
