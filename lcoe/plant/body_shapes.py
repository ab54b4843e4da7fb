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

from lcoe.case.errors import InputError

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


#: Facets around a body when ``plant.body.facets`` is absent (a pyramid: its 4 sides).
DEFAULT_FACETS = {"pyramid": 4}
DEFAULT_FACETS_OTHER = 24


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

    def facets(self) -> Facets:
        """The body as planar facets (lateral surface only; no top or bottom)."""
        if self.shape == "cone":
            return cone(self.radius_m, self.height_m, self.n_facets)
        if self.shape == "pyramid":
            return cone(self.radius_m, self.height_m, self.n_facets)  # corners on the circle
        if self.shape == "cylinder":
            return cylinder(self.radius_m, self.height_m, self.n_facets)
        if self.shape == "dome":
            return dome(self.radius_m, self.n_rings, self.n_facets)
        if self.shape == "facets":
            tilt, az, area = (np.array(c, dtype=float) for c in zip(*self.facet_table))
            return from_list(tilt, az, area)
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
        return float(land_area_per_body_m2(self.spacing_m))


def body_spec(case, values) -> BodySpec:
    """The :class:`BodySpec` of a case, with numeric keys taken from ``values``.

    Parameters
    ----------
    case : lcoe.case.reader.Case
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
