"""Rows of modules: row-to-row shading, restricted sky and ground view, rear-side irradiance.

Pure functions over hourly arrays, computed once per geometry and shared by every sample.
pvlib's infinite-sheds model (Mikofski et al. 2019; ``pvlib.bifacial.infinite_sheds``) gives,
for long parallel rows on level ground, the fraction of each row shaded from the beam by the
row in front, the share of the sky and of the ground a row sees between its neighbours, the
ground's shadows, and the irradiance on the rear side. Its ground-reflected parts are
``albedo x (f_beam (GHI - DHI) + f_sky DHI) x view factor`` (single reflection), exactly linear
in albedo, so they are kept per unit albedo like the open-field ground part and albedo stays a
vectorised, sampled input.

How the row model meets the chosen transposition: the front beam is multiplied by the unshaded
fraction ``1 - f_x``; the front sky diffuse of the transposition model (Perez by default) is
multiplied by the row's sky view relative to an open field, ``vf_row_sky / ((1 + cos tilt)/2)``
(both for an isotropic sky, as in infinite sheds); the front ground-reflected part and the rear
side are infinite sheds' own (isotropic sky). With ``plant.transposition = "isotropic"`` the
front irradiance equals ``pvlib.bifacial.infinite_sheds.get_irradiance_poa`` (checked in the
tests); with Perez the circumsolar part of the sky is seen through the row's sky view instead
of being shaded like the beam (a small approximation, noted in README).

The infinite-sheds steps are :func:`sheds_side`: pvlib's own functions in pvlib's order, with
the view-factor integrals (a function of the tilt alone) evaluated once per distinct tilt, not
hour by hour; the numbers are pvlib's bit for bit (checked in the tests), about 8x faster for
a fixed mount.

Diffuse incidence-angle loss (Marion 2017, ``pvlib.iam.marion_diffuse``) is a factor per
surface tilt for the sky and for the ground; it lives here too because it applies to both the
front and the rear of a row.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class RowIrradiance:
    """Row effects on one plane of array, arrays of shape (n_hours,).

    Attributes
    ----------
    front_unshaded_fraction : numpy.ndarray
        Share of the front beam left after shading by the row in front, ``1 - f_x`` [-].
    front_sky_view_ratio : numpy.ndarray
        Sky diffuse seen by a row between its neighbours / sky diffuse seen in an open field
        (isotropic sky) [-].
    front_ground_per_albedo_w_m2 : numpy.ndarray
        Ground-reflected irradiance on the front per unit albedo [W/m2].
    rear_direct_w_m2, rear_sky_w_m2 : numpy.ndarray
        Beam (after row shading) and sky diffuse on the rear side [W/m2].
    rear_ground_per_albedo_w_m2 : numpy.ndarray
        Ground-reflected irradiance on the rear per unit albedo [W/m2].
    rear_aoi_deg : numpy.ndarray
        Angle of incidence of the beam on the rear side [deg] (90 where the sun is in front).
    rear_tilt_deg : numpy.ndarray
        Tilt of the rear surface, 180 - front tilt [deg].
    """

    front_unshaded_fraction: np.ndarray
    front_sky_view_ratio: np.ndarray
    front_ground_per_albedo_w_m2: np.ndarray
    rear_direct_w_m2: np.ndarray
    rear_sky_w_m2: np.ndarray
    rear_ground_per_albedo_w_m2: np.ndarray
    rear_aoi_deg: np.ndarray
    rear_tilt_deg: np.ndarray


def row_pitch_m(row_width_m: float, gcr: float) -> float:
    """Distance between neighbouring rows, ``pitch = width / gcr`` [m].

    Parameters
    ----------
    row_width_m : float
        Slant width of a row, edge to edge across the row [m].
    gcr : float
        Ground coverage ratio, row width / pitch [-].
    """
    return row_width_m / gcr


def row_irradiance(surface_tilt_deg, surface_azimuth_deg, solar_zenith_deg, solar_azimuth_deg,
                   ghi_w_m2, dhi_w_m2, dni_w_m2, gcr: float, height_m: float,
                   pitch_m: float) -> RowIrradiance:
    """Row shading, sky and ground view and rear irradiance by infinite sheds.

    Parameters
    ----------
    surface_tilt_deg, surface_azimuth_deg : numpy.ndarray
        Front-side orientation each hour [deg], (n_h,).
    solar_zenith_deg, solar_azimuth_deg : numpy.ndarray
        Apparent sun position [deg], (n_h,).
    ghi_w_m2, dhi_w_m2, dni_w_m2 : numpy.ndarray
        Horizontal global and diffuse, direct normal irradiance [W/m2], (n_h,).
    gcr : float
        Ground coverage ratio [-].
    height_m : float
        Height of the rows' centre line (a tracker's axis) above ground [m].
    pitch_m : float
        Distance between rows [m].

    Returns
    -------
    RowIrradiance

    Notes
    -----
    The shaded fraction of the front is [1] Eq. 14:
    ``f_x = max(0, min(1 - 1 / (gcr (cos(tilt) + sin(tilt) tan(phi))), 1))`` with ``phi``
    the sun's zenith projected onto the plane across the rows; 1 when the sun is behind the
    plane. The row's sky view is the integral over its slant height of the view factor to the
    sky between the neighbours ([1], pvlib ``utils.vf_row_sky_2d_integ``).

    References
    ----------
    .. [1] M. Mikofski, R. Darawali, M. Hamer, A. Neubert and J. Newmiller, "Bifacial
       Performance Modeling in Large Arrays", 2019 IEEE 46th PVSC, pp. 1282-1287,
       doi:10.1109/PVSC40753.2019.8980572.
    """
    from pvlib.bifacial import utils
    from pvlib.irradiance import aoi

    tilt = np.asarray(surface_tilt_deg, dtype=float)
    az = np.asarray(surface_azimuth_deg, dtype=float)
    zenith = np.asarray(solar_zenith_deg, dtype=float)
    sun_az = np.asarray(solar_azimuth_deg, dtype=float)
    ghi, dhi, dni = (np.asarray(x, dtype=float) for x in (ghi_w_m2, dhi_w_m2, dni_w_m2))
    # Infinite sheds is evaluated hour by hour; hours without light (about half of them) give
    # zero irradiance on both sides whatever the geometry, so only the others are computed
    # (the same numbers bit for bit: checked in the tests); their shaded fraction is taken as
    # 0, as it multiplies no light.
    lit = np.flatnonzero((ghi > 0) | (dhi > 0) | (dni > 0))
    sun = (zenith[lit], sun_az[lit], ghi[lit], dhi[lit], dni[lit])
    front = sheds_side(tilt[lit], az[lit], *sun, gcr, height_m, pitch_m)
    back = sheds_side(180.0 - tilt[lit], (180.0 + az[lit]) % 360.0, *sun, gcr, height_m,
                      pitch_m)  # the rear side, turned over as infinite sheds does
    out = {"shaded_fraction_front": front["shaded_fraction"],
           "poa_front_ground_diffuse": front["poa_ground_diffuse"],
           "poa_back_direct": back["poa_direct"], "poa_back_sky_diffuse": back["poa_sky_diffuse"],
           "poa_back_ground_diffuse": back["poa_ground_diffuse"]}
    clean = {k: np.zeros(tilt.shape) for k in out}
    for k in out:
        clean[k][lit] = np.nan_to_num(np.asarray(out[k], dtype=float), nan=0.0)
    open_sky = 0.5 * (1.0 + np.cos(np.radians(tilt)))
    vf_sky = np.asarray(utils.vf_row_sky_2d_integ(tilt, gcr, 0.0, 1.0), dtype=float)
    ratio = np.divide(vf_sky, open_sky, out=np.zeros_like(vf_sky), where=open_sky > 1e-9)
    rear_tilt = 180.0 - tilt
    rear_az = (az + 180.0) % 360.0
    rear_aoi = np.nan_to_num(np.asarray(aoi(rear_tilt, rear_az, solar_zenith_deg,
                                            solar_azimuth_deg), dtype=float), nan=90.0)
    return RowIrradiance(
        front_unshaded_fraction=1.0 - clean["shaded_fraction_front"],
        front_sky_view_ratio=ratio,
        front_ground_per_albedo_w_m2=clean["poa_front_ground_diffuse"],
        rear_direct_w_m2=clean["poa_back_direct"], rear_sky_w_m2=clean["poa_back_sky_diffuse"],
        rear_ground_per_albedo_w_m2=clean["poa_back_ground_diffuse"],
        rear_aoi_deg=np.minimum(rear_aoi, 90.0), rear_tilt_deg=rear_tilt)


def sheds_side(tilt_deg, azimuth_deg, solar_zenith_deg, solar_azimuth_deg, ghi_w_m2, dhi_w_m2,
               dni_w_m2, gcr: float, height_m: float, pitch_m: float) -> dict:
    """One side of a row by infinite sheds at albedo 1, isotropic sky, no angle loss: the
    numbers of ``pvlib.bifacial.infinite_sheds.get_irradiance_poa`` bit for bit.

    Its steps in its order, with one change: the view-factor integrals, which depend on the
    surface tilt alone, are evaluated once per distinct tilt (a fixed mount has one; pvlib
    evaluates them hour by hour, about 80 % of its time) and spread over the hours. Equality
    with pvlib is checked in the tests.

    Parameters
    ----------
    tilt_deg, azimuth_deg : numpy.ndarray
        Orientation of the side each hour [deg], (n_h,).
    solar_zenith_deg, solar_azimuth_deg : numpy.ndarray
        Apparent sun position [deg], (n_h,).
    ghi_w_m2, dhi_w_m2, dni_w_m2 : numpy.ndarray
        [W/m2], (n_h,).
    gcr : float
    height_m, pitch_m : float
        [m].

    Returns
    -------
    dict of str to numpy.ndarray
        ``shaded_fraction`` [-], ``poa_direct``, ``poa_sky_diffuse``, ``poa_ground_diffuse``
        [W/m2], (n_h,).
    """
    from pvlib.bifacial import infinite_sheds, utils
    from pvlib.irradiance import beam_component
    from pvlib.tools import atand, tand

    tilt = np.asarray(tilt_deg, dtype=float)
    # Per distinct tilt; at least two values, so that numpy sums the rows of each integral in
    # the same order as over the hours (one value alone would be summed pairwise).
    distinct, at = np.unique(tilt, return_inverse=True)
    table = np.concatenate((distinct, distinct[-1:])) if distinct.size == 1 else distinct
    max_rows = np.ceil(height_m / (pitch_m * tand(5)))
    vf_gnd_sky = utils.vf_ground_sky_2d_integ(table, gcr, height_m, pitch_m, g0=0, g1=1,
                                              max_rows=max_rows)[at]
    vf_row_sky = utils.vf_row_sky_2d_integ(table, gcr, x0=0.0, x1=1.0)[at]
    vf_row_ground = utils.vf_row_ground_2d_integ(table, gcr, x0=0.0, x1=1.0, g0=0.0,
                                                 g1=1.0)[at]
    phi = atand(utils._solar_projection_tangent(solar_zenith_deg, solar_azimuth_deg,
                                                azimuth_deg))
    f_gnd_beam = utils._unshaded_ground_fraction(tilt, phi, gcr)
    f_x = infinite_sheds._shaded_fraction(solar_zenith_deg, solar_azimuth_deg, tilt,
                                          azimuth_deg, gcr)
    ground = 1.0 * (f_gnd_beam * (ghi_w_m2 - dhi_w_m2) + vf_gnd_sky * dhi_w_m2)  # albedo 1
    beam = np.atleast_1d(beam_component(tilt, azimuth_deg, solar_zenith_deg,
                                        solar_azimuth_deg, dni_w_m2))
    return {"shaded_fraction": f_x, "poa_direct": beam * (1 - f_x) * 1.0,
            "poa_sky_diffuse": dhi_w_m2 * vf_row_sky, "poa_ground_diffuse": ground * vf_row_ground}


def diffuse_iam(surface_tilt_deg, aoi_model: str = "physical") -> tuple[np.ndarray, np.ndarray]:
    """Incidence-angle modifiers of sky and ground diffuse light for each tilt [-].

    Marion's integration of a beam IAM model over the sky dome and over the ground (pvlib
    ``iam.marion_integrate``, as in ``iam.marion_diffuse``) with the same model as the beam
    (``"physical"``: Fresnel/Snell, pvlib defaults; ``"ashrae"``: b0 = 0.05). The integral is
    evaluated at whole degrees (each once per process) and interpolated linearly between them:
    a tracker's hourly tilts then cost a few dozen integrals, not thousands (agreement with
    the direct integral within 1e-4, checked in the tests).

    Parameters
    ----------
    surface_tilt_deg : array_like
        Surface tilt [deg], any shape; 0-180 (a rear side is 180 - front tilt).
    aoi_model : {"physical", "ashrae"}

    Returns
    -------
    iam_sky, iam_ground : numpy.ndarray
        Modifiers of the shape of ``surface_tilt_deg`` [-].

    References
    ----------
    .. [1] B. Marion, "Numerical method for angle-of-incidence correction factors for diffuse
       radiation incident photovoltaic modules", Solar Energy 147, 344-348, 2017.
    """
    tilt = np.clip(np.asarray(surface_tilt_deg, dtype=float), 0.0, 180.0)
    lo = np.floor(tilt).astype(np.int64)
    hi = np.minimum(lo + 1, 180)
    w = tilt - lo
    sky = np.empty(tilt.shape)
    ground = np.empty(tilt.shape)
    degrees = np.unique(np.concatenate((lo.ravel(), hi.ravel())))
    table = np.array([_marion_whole_degree(aoi_model, int(d)) for d in degrees], dtype=float)
    at_lo, at_hi = np.searchsorted(degrees, lo), np.searchsorted(degrees, hi)
    for out, i in ((sky, 0), (ground, 1)):
        out[...] = (1.0 - w) * table[at_lo, i] + w * table[at_hi, i]
    return sky, ground


@functools.lru_cache(maxsize=1024)
def _marion_whole_degree(aoi_model: str, tilt_deg: int) -> tuple[float, float]:
    """(sky, ground) diffuse modifiers at a whole-degree tilt (Marion 2017 via pvlib)."""
    import pvlib

    models = {"physical": pvlib.iam.physical, "ashrae": pvlib.iam.ashrae}
    if aoi_model not in models:
        raise ValueError(f"plant.aoi_model = {aoi_model!r}: expected 'physical' or 'ashrae'")
    f = models[aoi_model]
    return (float(pvlib.iam.marion_integrate(f, float(tilt_deg), "sky")),
            float(pvlib.iam.marion_integrate(f, float(tilt_deg), "ground")))
