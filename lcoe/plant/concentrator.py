"""Concentrating photovoltaics: acceptance angle, receiver temperature and DC power.

A concentrator gathers only the direct beam arriving within its acceptance angle; diffuse light
is lost. Its DC output can never exceed aperture area x DNI x optical efficiency x cell
efficiency, and :func:`cpv_dc_power_w` enforces that bound.

Shapes: parameters may be scalars or arrays of shape (n_samples, 1); time series have shape
(n_times,); results broadcast to (n_samples, n_times).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lcoe.case.errors import InputError

#: Cell temperature at which the rated cell efficiency applies. [C]
T_REFERENCE_C = 25.0

HAZARDS = (
    "Loss of tracking under concentration moves the focused spot onto parts not built for it "
    "and can burn them within seconds.",
    "Loss of cooling (pump, fan or heat-sink failure) under concentration can destroy the "
    "receiver within seconds to minutes.",
    "Concentrated sunlight is an eye and burn hazard: never look into the focus or put a hand "
    "in the beam path, and keep people out of it during maintenance.",
    "Stowing or defocusing must work on loss of grid power; a stalled tracker can sweep the "
    "focus across structures, cables and vegetation.",
    "Design, installation and maintenance of concentrating systems follow local codes and "
    "licensed professionals.",
)


def hazard_warnings() -> tuple[str, ...]:
    """Hazards of concentrated sunlight, one plain sentence each, for reports."""
    return HAZARDS


def hazard_text() -> str:
    """The hazards of :func:`hazard_warnings` as one paragraph for a report."""
    return "Safety: " + " ".join(HAZARDS)


def _check(name: str, value, low: float, high: float, low_open=False, high_open=False):
    arr = np.asarray(value, dtype=float)
    bad = ~np.isfinite(arr)
    bad |= (arr <= low) if low_open else (arr < low)
    bad |= (arr >= high) if high_open else (arr > high)
    if np.any(bad):
        first = arr[bad].ravel()[0] if arr.ndim else float(arr)
        lo = "(" if low_open else "["
        hi = ")" if high_open else "]"
        raise InputError(f"{name} = {first!r}: expected a number in {lo}{low}, {high}{hi}")
    return arr


def acceptance_fraction(aoi_deg, acceptance_half_angle_deg, edge_width_deg=0.0) -> np.ndarray:
    """Fraction of the direct beam a concentrator accepts at an angle of incidence.

    Parameters
    ----------
    aoi_deg : array_like
        Angle between the sun and the optical axis (0 with perfect two-axis tracking).
        [degrees]
    acceptance_half_angle_deg : float or array_like
        Half-angle within which the whole beam is accepted. [degrees]
    edge_width_deg : float or array_like
        Width of a linear roll-off beyond the half-angle; 0 for a sharp cut-off. [degrees]

    Returns
    -------
    numpy.ndarray
        Broadcast shape of the inputs, values in [0, 1]: 1 for ``aoi <= half``, falling
        linearly to 0 at ``aoi = half + edge``, 0 beyond. [fraction]
    """
    aoi = np.abs(np.asarray(aoi_deg, dtype=float))
    half = _check("acceptance_half_angle_deg", acceptance_half_angle_deg, 0.0, 90.0, low_open=True)
    edge = _check("edge_width_deg", edge_width_deg, 0.0, 90.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        ramp = np.where(edge > 0.0, 1.0 - (aoi - half) / np.where(edge > 0, edge, 1.0), 0.0)
    return np.where(aoi <= half, 1.0, np.clip(ramp, 0.0, 1.0))


def cpv_upper_bound_w(dni, aperture_area_m2, optical_efficiency, cell_efficiency) -> np.ndarray:
    """Most DC power a concentrator can give: aperture x DNI x optical x cell efficiency.

    Parameters
    ----------
    dni : array_like, shape (n_times,)
        Direct normal irradiance. [W/m2]
    aperture_area_m2 : float or array_like (n_samples, 1)
        Entrance aperture area. [m2]
    optical_efficiency : float or array_like (n_samples, 1)
        Share of the beam entering the aperture that reaches the cell. [fraction]
    cell_efficiency : float or array_like (n_samples, 1)
        Cell efficiency under concentration at 25 C. [fraction]

    Returns
    -------
    numpy.ndarray, broadcast shape, e.g. (n_samples, n_times)
        [W]
    """
    dni = np.maximum(np.asarray(dni, dtype=float), 0.0)
    area = _check("aperture_area_m2", aperture_area_m2, 0.0, np.inf, low_open=True)
    opt = _check("optical_efficiency", optical_efficiency, 0.0, 1.0)
    eff = _check("cell_efficiency", cell_efficiency, 0.0, 1.0, high_open=True)
    return area * dni * opt * eff


def cpv_cell_temperature_c(
    dni,
    aoi_deg,
    optical_efficiency,
    cell_efficiency,
    acceptance_half_angle_deg,
    temp_air,
    wind_speed,
    geometric_concentration,
    cooling_u_w_m2k,
    temp_coeff_per_c,
    cooling_u_wind_w_m3sk=0.0,
    edge_width_deg=0.0,
) -> np.ndarray:
    """Receiver cell temperature from a steady energy balance per unit cell area.

    Parameters
    ----------
    See :func:`cpv_dc_power_w`.

    Returns
    -------
    numpy.ndarray, broadcast shape, e.g. (n_samples, n_times)
        Cell temperature. [C]

    Notes
    -----
    Per square metre of cell, the concentrated flux ``q = DNI * acceptance * optical * C``
    [W/m2] is all absorbed (conservative: reflection off the cell is neglected); what is not
    converted to electricity leaves as heat through a heat-loss coefficient
    ``U = U0 + U1 * wind_speed`` [W/m2K] referred to the cell area::

        T_cell = T_air + (q - q * eta(T_cell)) / U,   eta(T) = eta_25 * (1 + gamma (T - 25))

    which is linear in ``T_cell`` and solved in closed form::

        T_cell = (T_air + q (1 - eta_25 + 25 eta_25 gamma) / U) / (1 + q eta_25 gamma / U)

    Where that gives ``eta(T_cell) < 0``, or the denominator is not positive (with gamma < 0 the
    linearised balance then has no stable operating point), the receiver is taken to produce
    nothing and ``T_cell = T_air + q / U``.
    """
    q = _concentrated_flux(
        dni,
        aoi_deg,
        optical_efficiency,
        acceptance_half_angle_deg,
        geometric_concentration,
        edge_width_deg,
    )
    return _cell_temperature(
        q,
        cell_efficiency,
        temp_coeff_per_c,
        temp_air,
        wind_speed,
        cooling_u_w_m2k,
        cooling_u_wind_w_m3sk,
    )


def _cell_temperature(q, cell_efficiency, temp_coeff_per_c, temp_air, wind_speed, u0, u1):
    """Closed-form receiver temperature for cell flux ``q`` [W/m2]; see cpv_cell_temperature_c."""
    eta = _check("cell_efficiency", cell_efficiency, 0.0, 1.0, high_open=True)
    gamma = _check("temp_coeff_per_c", temp_coeff_per_c, -0.05, 0.05)
    u0 = _check("cooling_u_w_m2k", u0, 0.0, np.inf, low_open=True)
    u1 = _check("cooling_u_wind_w_m3sk", u1, 0.0, np.inf)
    ws = _check("wind_speed", wind_speed, 0.0, np.inf)
    t_air = _check("temp_air", temp_air, -90.0, 70.0)
    u = u0 + u1 * ws
    denom = 1.0 + q * eta * gamma / u
    safe = np.where(denom > 0.0, denom, 1.0)
    t_lin = (t_air + q * (1.0 - eta + T_REFERENCE_C * eta * gamma) / u) / safe
    factor = 1.0 + gamma * (t_lin - T_REFERENCE_C)
    dead = (denom <= 0.0) | (factor < 0.0)
    return np.where(dead, t_air + q / u, t_lin)


def _concentrated_flux(dni, aoi_deg, optical_efficiency, half_angle, concentration, edge):
    dni = np.maximum(np.asarray(dni, dtype=float), 0.0)
    opt = _check("optical_efficiency", optical_efficiency, 0.0, 1.0)
    conc = _check("geometric_concentration", concentration, 1.0, np.inf)
    acc = acceptance_fraction(aoi_deg, half_angle, edge)
    return dni * acc * opt * conc


def cpv_dc_power_w(
    dni,
    aoi_deg,
    aperture_area_m2,
    optical_efficiency,
    cell_efficiency,
    acceptance_half_angle_deg,
    temp_air,
    wind_speed,
    geometric_concentration,
    cooling_u_w_m2k,
    temp_coeff_per_c,
    cooling_u_wind_w_m3sk=0.0,
    edge_width_deg=0.0,
) -> np.ndarray:
    """DC power of a concentrator module.

    Parameters
    ----------
    dni : array_like, shape (n_times,)
        Direct normal irradiance. [W/m2]
    aoi_deg : array_like, shape (n_times,) or float
        Angle between the sun and the optical axis; 0 with perfect two-axis tracking. [degrees]
    aperture_area_m2 : float or array_like (n_samples, 1)
        Entrance aperture area. [m2]
    optical_efficiency : float or array_like (n_samples, 1)
        Share of accepted beam that reaches the cell. [fraction]
    cell_efficiency : float or array_like (n_samples, 1)
        Cell efficiency under concentration at 25 C. [fraction]
    acceptance_half_angle_deg : float or array_like (n_samples, 1)
        Half-angle within which the whole beam is accepted. [degrees]
    temp_air : array_like, shape (n_times,)
        Ambient air temperature. [C]
    wind_speed : array_like, shape (n_times,)
        Wind speed. [m/s]
    geometric_concentration : float or array_like (n_samples, 1)
        Aperture area over cell area (>= 1). [unitless]
    cooling_u_w_m2k : float or array_like (n_samples, 1)
        Receiver heat-loss coefficient per unit cell area, still air. [W/m2K]
    temp_coeff_per_c : float or array_like (n_samples, 1)
        Relative change of cell efficiency per kelvin (negative for real cells). [1/C]
    cooling_u_wind_w_m3sk : float or array_like (n_samples, 1)
        Wind-dependent part of the heat-loss coefficient per unit cell area. [W s/m3K]
    edge_width_deg : float
        Linear roll-off of acceptance beyond the half-angle (see :func:`acceptance_fraction`).
        [degrees]

    Returns
    -------
    numpy.ndarray, broadcast shape, e.g. (n_samples, n_times)
        DC power. [W]

    Notes
    -----
    Only direct normal irradiance within the acceptance angle reaches the cell; diffuse light
    is lost. With the cell temperature from :func:`cpv_cell_temperature_c`::

        P = A * DNI * acceptance * optical * eta_25 * min(1, 1 + gamma (T_cell - 25))

    The ``min(1, .)`` is a deliberate choice: the output is capped at the stated limit
    ``A * DNI * optical * eta_25`` (:func:`cpv_upper_bound_w`), so a cell running below 25 C
    gains nothing. That understates output in cold weather by at most
    ``|gamma| (25 - T_cell)``, typically a few per cent, and keeps the bound exact.
    """
    area = _check("aperture_area_m2", aperture_area_m2, 0.0, np.inf, low_open=True)
    q = _concentrated_flux(
        dni,
        aoi_deg,
        optical_efficiency,
        acceptance_half_angle_deg,
        geometric_concentration,
        edge_width_deg,
    )
    t_cell = _cell_temperature(
        q,
        cell_efficiency,
        temp_coeff_per_c,
        temp_air,
        wind_speed,
        cooling_u_w_m2k,
        cooling_u_wind_w_m3sk,
    )
    cell_area = area / np.asarray(geometric_concentration, dtype=float)
    gamma = np.asarray(temp_coeff_per_c, dtype=float)
    factor = np.clip(1.0 + gamma * (t_cell - T_REFERENCE_C), 0.0, 1.0)
    power = cell_area * q * np.asarray(cell_efficiency, dtype=float) * factor
    bound = cpv_upper_bound_w(dni, area, optical_efficiency, cell_efficiency)
    return np.minimum(power, bound)


#: Case inputs of a concentrator that act per sample (dotted paths).
CONCENTRATOR_PARAMS: tuple[str, ...] = (
    "plant.concentrator.geometric_concentration", "plant.concentrator.optical_efficiency",
    "plant.concentrator.cell_efficiency", "plant.concentrator.acceptance_half_angle_deg",
    "plant.concentrator.cooling_u_w_m2k", "plant.concentrator.cooling_u_wind_w_m3sk",
    "plant.concentrator.temp_coeff_per_c", "plant.concentrator.tracking_error_deg",
)


def rated_efficiency(case) -> float:
    """Stated optical x cell efficiency: nameplate per m2 of aperture at 1 kW/m2 DNI [-]."""
    return float(case["plant.concentrator.optical_efficiency"] *
                 case["plant.concentrator.cell_efficiency"])


def cautions(case) -> list[str]:
    """Safety cautions for a case: the hazards of concentrated sunlight, or none."""
    return list(hazard_warnings()) if case["plant.mount"] == "concentrator" else []


@dataclass(frozen=True, eq=False)
class ConcentratorBeam:
    """Direct beam on the apertures of a concentrator plant, with its own DC model.

    Attributes
    ----------
    dni_w_m2 : numpy.ndarray
        Direct normal irradiance, 0 with the sun below the horizon [W/m2], (n_h,).
    rated_efficiency : float
        Stated optical x cell efficiency [-] (sets the aperture of the nameplate).
    """

    dni_w_m2: np.ndarray
    rated_efficiency: float

    def dc_kw(self, c: dict, temp_air_c: np.ndarray, wind_speed_m_s: np.ndarray):
        """Irradiance terms and DC power of a chunk of samples.

        Parameters
        ----------
        c : dict of str to numpy.ndarray
            ``plant.dc_capacity_kw`` and :data:`CONCENTRATOR_PARAMS`, each (n_c, 1).
        temp_air_c, wind_speed_m_s : numpy.ndarray
            (n_h,) [C], [m/s].

        Returns
        -------
        g_poa, g_eff, pdc : numpy.ndarray
            DNI on the aperture [W/m2] (n_h,), DNI accepted by the optics [W/m2] (n_c, n_h),
            DC power [kW] (n_c, n_h).
        """
        k = "plant.concentrator."
        aperture_m2 = c["plant.dc_capacity_kw"] / self.rated_efficiency  # kW / (kW/m2)
        accepted = acceptance_fraction(c[k + "tracking_error_deg"],
                                           c[k + "acceptance_half_angle_deg"])
        p_w = cpv_dc_power_w(
            self.dni_w_m2, c[k + "tracking_error_deg"], aperture_m2,
            c[k + "optical_efficiency"], c[k + "cell_efficiency"],
            c[k + "acceptance_half_angle_deg"], temp_air_c, wind_speed_m_s,
            c[k + "geometric_concentration"], c[k + "cooling_u_w_m2k"],
            c[k + "temp_coeff_per_c"], c[k + "cooling_u_wind_w_m3sk"])
        return self.dni_w_m2, self.dni_w_m2 * accepted, p_w / 1000.0


def concentrator_beam(case, weather, sun) -> ConcentratorBeam:
    """The :class:`ConcentratorBeam` of a case at a site (DNI zeroed with the sun down)."""
    dni = np.where(sun.apparent_zenith_deg < 90.0,
                   np.maximum(weather.data["dni"].to_numpy(dtype=float), 0.0), 0.0)
    return ConcentratorBeam(dni_w_m2=dni, rated_efficiency=rated_efficiency(case))
