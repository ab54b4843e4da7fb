"""Plants made of 3-D bodies covered with cells (``plant.mount = "body"``).

A body (cone, cylinder, dome, pyramid, or a list of flat facets) is built with
:mod:`lcoe.tech.body`; each facet gets its own plane-of-array irradiance (pvlib transposition,
:func:`lcoe.tech.body.facet_poa`) and incidence-angle loss, and the hourly model
(:func:`lcoe.energy.simulate`) gives each its own cell temperature and DC power. Only facets
turned towards the sun receive beam (pvlib's beam component is ``DNI max(0, cos aoi)``).

Several bodies on a square grid shade one another. Two simple allowances, both documented
approximations rather than a ray trace:

* beam: :func:`lcoe.tech.body.mutual_shading_factor` (a screen model, the exact union of the
  neighbours' shadow rectangles over the 24 nearest neighbours) applied to every facet alike;
* sky diffuse: :func:`sky_view_fraction`, the share of each facet's isotropic sky view factor
  left by the neighbours seen from the body's mid-height (the 24 nearest as upright cylinders
  of the body's envelope), applied to the transposed sky diffuse of that facet;
* ground-reflected light: the same for the facet's view of the ground, which the neighbours
  hide symmetrically (seen from mid-height they span the same angle below the horizontal as
  above it).

Limits: the anisotropic parts of the sky (circumsolar, horizon) are hidden in the same
proportion as an isotropic sky; the ground still visible is taken as fully lit (the shadows
the bodies cast on it are ignored) and the light the neighbours' own surfaces reflect is
neglected; neighbours beyond the second ring are ignored; self-shading of a non-convex body
(possible with ``shape = "facets"``) is not modelled; a body wider at its base than at its top
(a cone) loses somewhat more beam than the screen model says. Without an envelope (``shape =
"facets"`` with no radius and height) there is no shading allowance at all.

A body turning about its vertical axis (``rotating = true``) with a period much shorter than
an hour shows each cell, within the hour, the mean over the facets of its ring
(:func:`lcoe.tech.body.ring_average`): the body receives the same irradiance, but its cells see
it evened out, which lowers and evens out their temperature. The drive of each body draws
``drive_power_w`` whenever the sun is above the horizon.

Sizes: ``dc_capacity_kw`` is the plant's nameplate; a body's nameplate is its cell area x
module efficiency x 1 kW/m2, so the number of bodies is ``dc_capacity_kw`` / body nameplate
(kept as a real number). Land per body is ``spacing_m^2`` (square grid).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .irradiance import FacetIrradiance, SolarPosition, iam_beam
from .tech import body as tb
from .weather import Weather

#: Facets around a body when ``plant.body.facets`` is absent (a pyramid: its 4 sides).
DEFAULT_FACETS = {"pyramid": 4}
DEFAULT_FACETS_OTHER = 24

#: Rows of neighbours around a body counted by the shading allowance (2: the 24 nearest).
SHADING_ROWS = 2


@dataclass(frozen=True)
class BodySpec:
    """One body of a ``"body"`` mount (hashable: part of a geometry cache key).

    Parameters
    ----------
    shape : {"cone", "cylinder", "dome", "pyramid", "facets"}
    radius_m : float or None
        Radius of the base circle (pyramid: of its corners) [m]; for ``"facets"`` optional,
        the envelope used for shading.
    height_m : float or None
        Height [m] (a dome: None, its height is its radius).
    n_facets : int
        Facets around the body (pyramid: its sides).
    n_rings : int
        Rings of a dome.
    spacing_m : float
        Centre-to-centre distance on a square grid [m].
    rotating : bool
        Turns about its vertical axis.
    facet_table : tuple of (tilt_deg, azimuth_deg, area_m2)
        The facets of ``shape = "facets"`` [deg, deg, m2].
    """

    shape: str
    radius_m: float | None
    height_m: float | None
    n_facets: int
    n_rings: int
    spacing_m: float
    rotating: bool = False
    facet_table: tuple = ()

    def facets(self) -> tb.Facets:
        """The body as planar facets (lateral surface only; no top or bottom)."""
        if self.shape == "cone":
            return tb.cone(self.radius_m, self.height_m, self.n_facets)
        if self.shape == "pyramid":
            return tb.cone(self.radius_m, self.height_m, self.n_facets)  # corners on the circle
        if self.shape == "cylinder":
            return tb.cylinder(self.radius_m, self.height_m, self.n_facets)
        if self.shape == "dome":
            return tb.dome(self.radius_m, self.n_rings, self.n_facets)
        if self.shape == "facets":
            tilt, az, area = (np.array(c, dtype=float) for c in zip(*self.facet_table))
            return tb.from_list(tilt, az, area)
        raise ValueError(f"plant.body.shape = {self.shape!r}: unknown shape")

    def envelope_m(self) -> tuple[float, float] | None:
        """(height, width) of the body seen from the side [m], None when unknown."""
        if self.radius_m is None:
            return None
        height = self.radius_m if self.shape == "dome" else self.height_m
        return float(height), 2.0 * float(self.radius_m)

    @property
    def cell_area_m2(self) -> float:
        """Cell area of one body [m2]."""
        return self.facets().total_area_m2

    @property
    def land_area_m2(self) -> float:
        """Land per body on the square grid, spacing^2 [m2]."""
        return float(tb.land_area_per_body_m2(self.spacing_m))


def body_spec(case, values) -> BodySpec:
    """The :class:`BodySpec` of a case, with numeric keys taken from ``values``.

    Parameters
    ----------
    case : lcoe.case.Case
        Supplies the shape, the rotation flag and the facet list.
    values : mapping of str to float
        ``plant.body.*`` numeric values (e.g. one sample's values); missing keys take the
        case's value.
    """
    def get(path):
        v = values.get(path, case[path])
        return None if v is None else float(v)

    shape = case["plant.body.shape"]
    n = get("plant.body.facets")
    n = DEFAULT_FACETS.get(shape, DEFAULT_FACETS_OTHER) if n is None else int(round(n))
    return BodySpec(shape=shape, radius_m=get("plant.body.radius_m"),
                    height_m=get("plant.body.height_m"), n_facets=n,
                    n_rings=int(round(get("plant.body.rings"))),
                    spacing_m=get("plant.body.spacing_m"),
                    rotating=bool(case["plant.body.rotating"]),
                    facet_table=tuple((f.tilt_deg, f.azimuth_deg, f.area_m2)
                                      for f in case.body_facets))


def shading_beam_factor(spec: BodySpec, sun: SolarPosition) -> np.ndarray:
    """Share of a body's beam left by the shadows of its neighbours [-], (n_h,).

    1 where the envelope is unknown (``shape = "facets"`` without radius and height); 0 when
    the sun is below the horizon. See :func:`lcoe.tech.body.mutual_shading_factor`.
    """
    env = spec.envelope_m()
    n = sun.apparent_zenith_deg.shape[0]
    if env is None:
        return np.ones(n)
    height, width = env
    lost = tb.mutual_shading_factor(height, width, spec.spacing_m,
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
    normals = tb.direction_vectors(tilt_deg, azimuth_deg)  # (k, 3)
    cos_inc = np.maximum(np.tensordot(dirs, normals, axes=(2, 1)), 0.0)  # (n_e, n_a, k)
    open_vf = np.tensordot(weight, cos_inc, axes=((0, 1), (0, 1)))
    seen_vf = np.tensordot(weight * visible, cos_inc, axes=((0, 1), (0, 1)))
    return np.where(open_vf > 0.0, seen_vf / np.where(open_vf > 0.0, open_vf, 1.0), 1.0)


def diffuse_view_factors(spec: BodySpec, facets: tb.Facets) -> tuple[np.ndarray, np.ndarray]:
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
        (:func:`lcoe.rows.diffuse_iam`) to its sky and ground parts.

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
    body's total is unchanged: the check of :func:`lcoe.tech.body.ring_average`).
    Memory: up to nine (k, n_h) arrays, e.g. 24 facets x 8760 h x 8 bytes x 9 = 15 MB.
    """
    facets = spec.facets()
    d = weather.data
    poa = tb.facet_poa(facets, sun.apparent_zenith_deg, sun.azimuth_deg,
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
        from .rows import diffuse_iam

        sky_iam, ground_iam = diffuse_iam(facets.tilt_deg, aoi_model)
        rows += [sky * sky_iam[:, None], ground * ground_iam[:, None]]
    share = facets.area_m2 / facets.total_area_m2
    if spec.rotating:
        rows = [tb.ring_average(facets, r) for r in rows]
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


def count_and_land(spec: BodySpec, dc_capacity_kw, module_efficiency):
    """Number of bodies and land of a plant of bodies.

    Parameters
    ----------
    spec : BodySpec
    dc_capacity_kw, module_efficiency : numpy.ndarray
        Plant nameplate [kW] and module efficiency [-], (n_s,).

    Returns
    -------
    n_bodies, land_area_m2 : numpy.ndarray
        (n_s,) [-], [m2]. A body's nameplate is its cell area x efficiency x 1 kW/m2.
    """
    n = np.asarray(dc_capacity_kw, dtype=float) / (spec.cell_area_m2 *
                                                    np.asarray(module_efficiency, dtype=float))
    return n, n * spec.land_area_m2
