"""Concentrator plants (``plant.mount = "concentrator"``) in the hourly energy model.

Concentrating optics on dual-axis trackers: only the direct beam within the acceptance angle
reaches the cells (diffuse and ground-reflected light are lost); the receiver's temperature
comes from its energy balance (:func:`lcoe.tech.concentrator.cpv_cell_temperature_c`) and the
DC output can never exceed aperture x DNI x optical efficiency x cell efficiency
(:func:`lcoe.tech.concentrator.cpv_dc_power_w` enforces it). The beam's angle to the optical
axis is the trackers' pointing error ``tracking_error_deg`` (0 = perfect tracking); beyond the
acceptance half-angle nothing reaches the cells.

Rating: a concentrator is rated at 1 kW/m2 of direct normal irradiance and 25 C cells, so the
plant's aperture is ``dc_capacity_kw / (optical x cell efficiency x 1 kW/m2)`` with the case's
stated efficiencies; sampled (uncertain) efficiencies change what that aperture delivers, not
its size. The loss chain reads: nameplate x DNI (``poa_kwh``), after the acceptance of the
optics (``after_iam_kwh``), DC at the receiver after temperature and any shortfall of the
actual against the stated efficiencies (``after_temperature_kwh``), then the usual DC losses,
inverter, clipping, AC losses and availability.

Hazards travel with the results: :func:`cautions`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import concentrator as cpv

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
    return list(cpv.hazard_warnings()) if case["plant.mount"] == "concentrator" else []


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
        accepted = cpv.acceptance_fraction(c[k + "tracking_error_deg"],
                                           c[k + "acceptance_half_angle_deg"])
        p_w = cpv.cpv_dc_power_w(
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
