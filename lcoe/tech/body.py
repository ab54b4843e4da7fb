"""Three-dimensional bodies covered with cells, described as sets of planar facets.

A body (cone, cylinder, dome, pyramid, or any list of flat pieces) receives the sum of what its
facets receive; each facet has its own tilt, azimuth and area. The beam part captured by a body
is the integral of ``max(0, n.s)`` over its active surface, which for a convex body with the sun
above its base plane equals the area of its shadow on a plane normal to the sun.

Coordinates: ``x`` east, ``y`` north, ``z`` up. A facet with tilt ``t`` and azimuth ``a``
(degrees, azimuth clockwise from north as in pvlib) has the outward unit normal
``(sin t sin a, sin t cos a, cos t)``. Tilt 0 faces straight up, 90 is vertical, 180 faces
straight down.

Self-shading between facets of a non-convex body is not modelled anywhere in this module.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pvlib

from lcoe.errors import InputError

#: Transposition models accepted by :func:`facet_poa` (names as in pvlib).
POA_MODELS = ("perez", "haydavies", "isotropic")

# Directions handled per block in projected_area_m2, to bound memory at (block, n_facets).
_DIRECTION_BLOCK = 8192


def _positive(name: str, value) -> float:
    value = float(value)
    if not np.isfinite(value) or value <= 0.0:
        raise InputError(f"{name} = {value!r}: expected a finite number > 0")
    return value


def _count(name: str, value, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < minimum:
        raise InputError(f"{name} = {value!r}: expected an integer >= {minimum}")
    return int(value)


@dataclass(frozen=True, eq=False)
class Facets:
    """Planar facets of a body covered with cells.

    Parameters
    ----------
    tilt_deg : array_like, shape (k,)
        Facet tilt from horizontal; 0 faces up, 90 is vertical, 180 faces down. [degrees]
    azimuth_deg : array_like, shape (k,)
        Direction the facet faces, clockwise from north (pvlib convention). [degrees]
    area_m2 : array_like, shape (k,)
        Facet area. [m2]

    Notes
    -----
    The arrays are copied to read-only float arrays, so a ``Facets`` never changes after it is
    built and never shares memory with its inputs.
    """

    tilt_deg: np.ndarray
    azimuth_deg: np.ndarray
    area_m2: np.ndarray

    def __post_init__(self):
        arrays = {}
        for name in ("tilt_deg", "azimuth_deg", "area_m2"):
            arr = np.array(getattr(self, name), dtype=float, copy=True)
            if arr.ndim != 1:
                raise InputError(f"facets.{name} has shape {arr.shape}: expected a 1-D array")
            if not np.all(np.isfinite(arr)):
                raise InputError(f"facets.{name} contains non-finite values: expected numbers")
            arrays[name] = arr
        k = arrays["tilt_deg"].size
        if k == 0:
            raise InputError("facets: no facets given: expected at least one facet")
        for name, arr in arrays.items():
            if arr.size != k:
                raise InputError(
                    f"facets.{name} has {arr.size} values: expected {k}, one per facet"
                )
        tilt = arrays["tilt_deg"]
        if np.any((tilt < 0.0) | (tilt > 180.0)):
            bad = tilt[(tilt < 0.0) | (tilt > 180.0)][0]
            raise InputError(f"facets.tilt_deg = {bad!r}: expected a number in [0, 180]")
        area = arrays["area_m2"]
        if np.any(area <= 0.0):
            raise InputError(f"facets.area_m2 = {area[area <= 0.0][0]!r}: expected > 0")
        arrays["azimuth_deg"] = np.mod(arrays["azimuth_deg"], 360.0)
        for name, arr in arrays.items():
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    @property
    def n_facets(self) -> int:
        """Number of facets ``k``."""
        return int(self.tilt_deg.size)

    @property
    def total_area_m2(self) -> float:
        """Sum of the facet areas. [m2]"""
        return float(self.area_m2.sum())

    def normals(self) -> np.ndarray:
        """Outward unit normals, shape (k, 3), axes (east, north, up)."""
        return direction_vectors(self.tilt_deg, self.azimuth_deg)


def direction_vectors(zenith_deg, azimuth_deg) -> np.ndarray:
    """Unit vectors (east, north, up) for zenith/tilt and azimuth angles.

    Parameters
    ----------
    zenith_deg : array_like
        Angle from straight up (a sun zenith or a facet tilt). [degrees]
    azimuth_deg : array_like
        Clockwise from north. [degrees]

    Returns
    -------
    numpy.ndarray
        Shape ``broadcast(zenith_deg, azimuth_deg).shape + (3,)``.
    """
    z = np.radians(np.asarray(zenith_deg, dtype=float))
    a = np.radians(np.asarray(azimuth_deg, dtype=float))
    z, a = np.broadcast_arrays(z, a)
    return np.stack((np.sin(z) * np.sin(a), np.sin(z) * np.cos(a), np.cos(z)), axis=-1)


def from_list(tilts_deg, azimuths_deg, areas_m2) -> Facets:
    """Facets from three equal-length sequences (tilt, azimuth [degrees], area [m2])."""
    return Facets(tilts_deg, azimuths_deg, areas_m2)


def join(*bodies: Facets) -> Facets:
    """One body made of the facets of several bodies, in order."""
    if not bodies:
        raise InputError("join: no bodies given: expected at least one Facets")
    return Facets(
        np.concatenate([b.tilt_deg for b in bodies]),
        np.concatenate([b.azimuth_deg for b in bodies]),
        np.concatenate([b.area_m2 for b in bodies]),
    )


# --------------------------------------------------------------------------------------------
# Builders. Every builder makes planar polygons from vertices and derives area and orientation
# with Newell's method, so the facets form a true polyhedron (inscribed in the smooth body).
# --------------------------------------------------------------------------------------------


def _ring_vertices(radius_m: float, z_m: float, n: int) -> np.ndarray:
    """Vertices (n, 3) of a regular n-gon; facet i will be centred on azimuth i*360/n."""
    az = np.radians((np.arange(n) - 0.5) * 360.0 / n)
    return np.stack((radius_m * np.sin(az), radius_m * np.cos(az), np.full(n, z_m)), axis=-1)


def _from_polygons(polygons: np.ndarray, interior_point) -> Facets:
    """Facets from polygons (k, m, 3), oriented outward from ``interior_point`` (3,).

    Newell's method gives the vector area 0.5 * sum(v_i x v_{i+1}) of each planar polygon;
    its length is the area and its direction the normal, flipped to point away from the
    interior point of the (convex) body.
    """
    v = np.asarray(polygons, dtype=float)
    vector_area = 0.5 * np.cross(v, np.roll(v, -1, axis=1)).sum(axis=1)  # (k, 3)
    area = np.linalg.norm(vector_area, axis=1)
    normal = vector_area / area[:, None]
    outward = v.mean(axis=1) - np.asarray(interior_point, dtype=float)
    flip = np.einsum("ij,ij->i", normal, outward) < 0.0
    normal[flip] *= -1.0
    tilt = np.degrees(np.arccos(np.clip(normal[:, 2], -1.0, 1.0)))
    horizontal = np.hypot(normal[:, 0], normal[:, 1])
    azimuth = np.where(horizontal > 1e-12, np.degrees(np.arctan2(normal[:, 0], normal[:, 1])), 0.0)
    return Facets(tilt, np.mod(azimuth, 360.0), area)


def _disc(radius_m: float, z_m: float, n: int, facing_up: bool) -> Facets:
    poly = _ring_vertices(radius_m, z_m, n)[None, :, :]
    interior = (0.0, 0.0, z_m - 1.0) if facing_up else (0.0, 0.0, z_m + 1.0)
    return _from_polygons(poly, interior)


def cone(radius_m: float, height_m: float, n_facets: int) -> Facets:
    """Lateral surface of an upright cone (apex up), as ``n_facets`` flat triangles.

    The triangles join the apex to the sides of a regular polygon inscribed in the base circle,
    so the lateral area tends to ``pi r sqrt(r^2 + h^2)`` and the plan area to ``pi r^2`` as
    ``n_facets`` grows (relative error about ``(pi/n)^2 / 6`` for the area). Facet ``i`` faces
    azimuth ``i * 360 / n_facets``.

    Parameters
    ----------
    radius_m : float
        Base radius. [m]
    height_m : float
        Height of the apex above the base. [m]
    n_facets : int
        Number of triangles (>= 3).

    Returns
    -------
    Facets
        ``n_facets`` facets, all with the same tilt.
    """
    r = _positive("radius_m", radius_m)
    h = _positive("height_m", height_m)
    n = _count("n_facets", n_facets, 3)
    base = _ring_vertices(r, 0.0, n)
    apex = np.broadcast_to([0.0, 0.0, h], (n, 3))
    polys = np.stack((base, np.roll(base, -1, axis=0), apex), axis=1)
    return _from_polygons(polys, (0.0, 0.0, h / 4.0))


def closed_cone(radius_m: float, height_m: float, n_facets: int) -> Facets:
    """Closed solid cone: :func:`cone` plus its base polygon facing down (tilt 180)."""
    lateral = cone(radius_m, height_m, n_facets)
    return join(lateral, _disc(float(radius_m), 0.0, int(n_facets), facing_up=False))


def pyramid(base_side_m: float, height_m: float, n_sides: int = 4) -> Facets:
    """Lateral faces of a regular pyramid with ``n_sides`` equal base sides (apex up).

    Parameters
    ----------
    base_side_m : float
        Length of one side of the regular base polygon. [m]
    height_m : float
        Height of the apex above the base. [m]
    n_sides : int
        Number of base sides and of triangular faces (>= 3); face ``i`` faces azimuth
        ``i * 360 / n_sides`` (a square pyramid faces north, east, south, west).
    """
    side = _positive("base_side_m", base_side_m)
    n = _count("n_sides", n_sides, 3)
    circumradius = side / (2.0 * np.sin(np.pi / n))
    return cone(circumradius, height_m, n)


def cylinder(
    radius_m: float,
    height_m: float,
    n_facets: int,
    include_top: bool = False,
    include_bottom: bool = False,
) -> Facets:
    """Upright cylinder: ``n_facets`` vertical rectangles, optionally a top and a bottom disc.

    Parameters
    ----------
    radius_m : float
        Radius of the circle through the polygon's corners. [m]
    height_m : float
        Height of the sides. [m]
    n_facets : int
        Number of vertical rectangles (>= 3).
    include_top : bool
        Add the top polygon facing up (tilt 0).
    include_bottom : bool
        Add the bottom polygon facing down (tilt 180); useful for closed-body checks.
    """
    r = _positive("radius_m", radius_m)
    h = _positive("height_m", height_m)
    n = _count("n_facets", n_facets, 3)
    low = _ring_vertices(r, 0.0, n)
    high = _ring_vertices(r, h, n)
    polys = np.stack((low, np.roll(low, -1, axis=0), np.roll(high, -1, axis=0), high), axis=1)
    parts = [_from_polygons(polys, (0.0, 0.0, h / 2.0))]
    if include_top:
        parts.append(_disc(r, h, n, facing_up=True))
    if include_bottom:
        parts.append(_disc(r, 0.0, n, facing_up=False))
    return join(*parts)


def dome(radius_m: float, n_rings: int, n_facets: int) -> Facets:
    """Hemisphere (dome) as rings of flat facets inscribed in the sphere.

    Ring ``j`` (0 at the top) spans polar angles ``[j, j+1] * 90 / n_rings`` degrees; each ring
    has ``n_facets`` facets (triangles in the top ring, planar trapezoids below). The surface
    tends to ``2 pi r^2`` and the plan area to ``pi r^2`` as both counts grow.

    Parameters
    ----------
    radius_m : float
        Sphere radius. [m]
    n_rings : int
        Number of rings from the top to the equator (>= 1).
    n_facets : int
        Facets per ring (>= 3).

    Returns
    -------
    Facets
        ``n_rings * n_facets`` facets ordered ring by ring from the top.
    """
    r = _positive("radius_m", radius_m)
    n_r = _count("n_rings", n_rings, 1)
    n = _count("n_facets", n_facets, 3)
    polar = np.radians(np.linspace(0.0, 90.0, n_r + 1))
    rings = []
    for j in range(n_r):  # one ring at a time: rings differ in vertex count at the pole
        upper = _ring_vertices(r * np.sin(polar[j]), r * np.cos(polar[j]), n)
        lower = _ring_vertices(r * np.sin(polar[j + 1]), r * np.cos(polar[j + 1]), n)
        if j == 0:
            apex = np.broadcast_to([0.0, 0.0, r], (n, 3))
            polys = np.stack((lower, np.roll(lower, -1, axis=0), apex), axis=1)
        else:
            polys = np.stack(
                (lower, np.roll(lower, -1, axis=0), np.roll(upper, -1, axis=0), upper), axis=1
            )
        rings.append(_from_polygons(polys, (0.0, 0.0, r / 4.0)))
    return join(*rings)


def closed_cube(side_m: float) -> Facets:
    """Closed cube of side ``side_m`` [m]: top, bottom and four vertical faces (N, E, S, W)."""
    s = _positive("side_m", side_m)
    area = s * s
    return Facets(
        [0.0, 180.0, 90.0, 90.0, 90.0, 90.0],
        [0.0, 0.0, 0.0, 90.0, 180.0, 270.0],
        [area] * 6,
    )


# --------------------------------------------------------------------------------------------
# Beam capture
# --------------------------------------------------------------------------------------------


def projected_area_m2(facets: Facets, direction_unit_vectors) -> np.ndarray:
    """Sum over facets of ``area * max(0, n.d)`` for arbitrary directions ``d``.

    This is the area the facets present to parallel light arriving from direction ``d``
    (pointing from the body towards the source), counting only faces turned towards it. For a
    closed convex body it is the area of its shadow on a plane normal to ``d``; averaged over
    all directions it is a quarter of the surface area (Cauchy's surface-area formula).

    Parameters
    ----------
    facets : Facets
        The body, ``k`` facets.
    direction_unit_vectors : array_like, shape (n, 3)
        Unit vectors (east, north, up); any direction, including below the horizon.

    Returns
    -------
    numpy.ndarray, shape (n,)
        Projected area. [m2]

    Notes
    -----
    Self-shading between facets of a non-convex body is not modelled.
    """
    d = np.asarray(direction_unit_vectors, dtype=float)
    if d.ndim != 2 or d.shape[1] != 3:
        raise InputError(
            f"direction_unit_vectors has shape {d.shape}: expected (n, 3) unit vectors"
        )
    norms = np.linalg.norm(d, axis=1)
    if d.shape[0] and not np.all(np.abs(norms - 1.0) < 1e-6):
        bad = norms[np.abs(norms - 1.0) >= 1e-6][0]
        raise InputError(f"direction_unit_vectors has a vector of length {bad!r}: expected 1")
    normals = facets.normals()
    out = np.empty(d.shape[0])
    for start in range(0, d.shape[0], _DIRECTION_BLOCK):  # blocks only bound memory
        block = d[start : start + _DIRECTION_BLOCK]
        out[start : start + block.shape[0]] = np.maximum(block @ normals.T, 0.0) @ facets.area_m2
    return out


def beam_capture_area_m2(facets: Facets, sun_zenith_deg, sun_azimuth_deg) -> np.ndarray:
    """Area the body presents to the direct beam: sum of ``area * max(0, cos aoi)``.

    Multiply by DNI [W/m2] to get the beam power reaching the body's facets [W]; equal to
    ``sum(area * poa_direct)`` from :func:`facet_poa`.

    Parameters
    ----------
    facets : Facets
        The body, ``k`` facets.
    sun_zenith_deg : array_like, shape (n_times,)
        Sun zenith angle. [degrees]
    sun_azimuth_deg : array_like, shape (n_times,)
        Sun azimuth, clockwise from north. [degrees]

    Returns
    -------
    numpy.ndarray
        Shape ``broadcast(sun_zenith_deg, sun_azimuth_deg).shape``; zero when the sun is at or
        below the horizon (zenith >= 90), where the ground blocks it. [m2]

    Notes
    -----
    Only faces turned towards the sun receive beam. Self-shading between facets of a
    non-convex body is not modelled; for a convex body this equals the area of its shadow on a
    plane normal to the sun.
    """
    zen, az = np.broadcast_arrays(
        np.asarray(sun_zenith_deg, dtype=float), np.asarray(sun_azimuth_deg, dtype=float)
    )
    d = direction_vectors(zen, az).reshape(-1, 3)
    area = projected_area_m2(facets, d).reshape(zen.shape)
    return np.where(zen < 90.0, area, 0.0)


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


# --------------------------------------------------------------------------------------------
# Bodies in a field
# --------------------------------------------------------------------------------------------


def land_area_per_body_m2(spacing_m) -> np.ndarray | float:
    """Land per body in a square grid with centre-to-centre ``spacing_m`` [m]: ``spacing^2``."""
    s = np.asarray(spacing_m, dtype=float)
    if np.any(~np.isfinite(s) | (s <= 0.0)):
        raise InputError(f"spacing_m = {spacing_m!r}: expected numbers > 0")
    out = s * s
    return float(out) if out.ndim == 0 else out


def ground_cover_ratio(footprint_area_m2, spacing_m) -> np.ndarray | float:
    """Footprint of one body over its land in a square grid, ``footprint / spacing^2``.

    Parameters
    ----------
    footprint_area_m2 : float or array_like
        Ground area covered by one body. [m2]
    spacing_m : float or array_like
        Centre-to-centre spacing of the square grid. [m]

    Returns
    -------
    float or numpy.ndarray
        [fraction]
    """
    fp = np.asarray(footprint_area_m2, dtype=float)
    if np.any(~np.isfinite(fp) | (fp <= 0.0)):
        raise InputError(f"footprint_area_m2 = {footprint_area_m2!r}: expected numbers > 0")
    land = land_area_per_body_m2(spacing_m)
    if np.any(fp > land):
        raise InputError(
            f"footprint_area_m2 = {footprint_area_m2!r}: expected at most spacing_m^2 = {land!r}"
        )
    out = fp / land
    return float(out) if np.ndim(out) == 0 else out


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
