"""Concentrator plants in the hourly model: beam only, the upper bound, hazards in outputs."""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import MINIMAL_CASE, write_case

from lcoe.case.errors import InputError
from lcoe.case.reader import load_case
from lcoe.model import evaluate, prepare

CPV = """
[plant.concentrator]
geometric_concentration = 500.0
optical_efficiency = 0.85
cell_efficiency = 0.40
acceptance_half_angle_deg = 0.8
cooling_u_w_m2k = 20000.0
temp_coeff_per_c = {gamma}
tracking_error_deg = {error}
"""


def _case(tmp_path, gamma=-0.0015, error=0.2, extra="", name="case.toml"):
    text = MINIMAL_CASE.replace("[plant]", '[plant]\nmount = "concentrator"') + \
        CPV.format(gamma=gamma, error=error) + extra
    return load_case(write_case(tmp_path, text, name))


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    return prepare(load_case(write_case(tmp_path_factory.mktemp("cpv"), MINIMAL_CASE)))


def _dni(site):
    up = site.sun.apparent_zenith_deg < 90.0
    return np.where(up, site.weather.data["dni"].to_numpy(), 0.0)


def test_output_never_exceeds_aperture_dni_optics_cell(tmp_path, site):
    # Physical bound (DOMAIN.md section 5): a concentrator's output cannot exceed aperture x
    # DNI x optical efficiency x cell efficiency; the AC after inverter and losses is below it
    # in every hour, and diffuse light (hours without DNI) gives nothing.
    case = _case(tmp_path, gamma=-0.004)
    e = evaluate(case, site, keep_hourly=True).energy
    aperture = 1000.0 / (0.85 * 0.40)
    bound_kw = aperture * _dni(site) * 0.85 * 0.40 / 1000.0
    assert np.all(e.hourly_ac_kw[0] <= bound_kw + 1e-12)
    no_beam = (_dni(site) == 0.0) & (site.weather.data["ghi"].to_numpy() > 0)
    assert no_beam.any() and np.all(e.hourly_ac_kw[0][no_beam] <= 0.0)
    assert e.cell_area_m2[0] == pytest.approx(aperture, rel=1e-12)


def test_ideal_receiver_gives_nameplate_times_dni(tmp_path, site):
    # Analytic: perfect tracking within the acceptance angle and a zero temperature
    # coefficient give DC = nameplate x DNI / (1 kW/m2) hour by hour.
    e = evaluate(_case(tmp_path, gamma=0.0, error=0.0), site).energy
    h_dni = _dni(site).sum() / 1000.0
    assert e.poa_kwh_m2[0] == pytest.approx(h_dni, rel=1e-12)
    assert e.loss_chain_kwh["after_temperature_kwh"][0] == pytest.approx(1000.0 * h_dni,
                                                                         rel=1e-12)


def test_actual_optics_scale_output_not_plant_size(tmp_path, site):
    # Analytic: the aperture follows from the stated efficiencies; a sampled optical
    # efficiency scales the DC in proportion (zero temperature coefficient).
    case = _case(tmp_path, gamma=0.0, error=0.0)
    e = evaluate(case, site, {"plant.concentrator.optical_efficiency":
                              np.array([0.85, 0.80])}).energy
    ratio = e.loss_chain_kwh["after_temperature_kwh"][1] / \
        e.loss_chain_kwh["after_temperature_kwh"][0]
    assert ratio == pytest.approx(0.80 / 0.85, rel=1e-12)
    assert e.cell_area_m2[0] == e.cell_area_m2[1]


def test_beam_outside_acceptance_is_lost(tmp_path, site):
    # Analytic: with the pointing error beyond the acceptance half-angle no light reaches the
    # cells.
    from lcoe.plant.concentrator import CONCENTRATOR_PARAMS, concentrator_beam

    case = _case(tmp_path)
    beam = concentrator_beam(case, site.weather, site.sun)
    c = {k: np.array([[case[k]], [case[k]]]) for k in CONCENTRATOR_PARAMS}
    c["plant.concentrator.tracking_error_deg"] = np.array([[0.2], [1.5]])
    c["plant.dc_capacity_kw"] = np.array([[1000.0], [1000.0]])
    t_air = site.weather.data["temp_air"].to_numpy()
    ws = site.weather.data["wind_speed"].to_numpy()
    _, g_eff, pdc = beam.dc_kw(c, t_air, ws)
    assert pdc[0].sum() > 0 and np.all(pdc[1] == 0.0) and np.all(g_eff[1] == 0.0)


def test_hazards_and_audit_in_comparison_outputs(tmp_path):
    # The cautions of concentrated sunlight travel with the results (DOMAIN.md section 5);
    # the audit checks the aperture and does not apply the one-sun cell limit.
    import subprocess
    import sys

    base = write_case(tmp_path, MINIMAL_CASE.replace('name = "t"', 'name = "flat"'),
                      "flat.toml")
    cand = _case(tmp_path, extra="\n[claim]\nenergy_per_m2_kwh = 300.0\n", name="cpv.toml")
    out = tmp_path / "out"
    r = subprocess.run([sys.executable, "-m", "lcoe.cli", "compare", str(base), cand.source,
                        "--out", str(out), "--samples", "20", "--sobol-ratio", "0"],
                       capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    assert "caution:" in r.stdout and "seconds to minutes" in r.stdout
    data = json.loads((out / "comparison.json").read_text())
    cpv = data["candidates"][0]
    assert any("seconds to minutes" in c for c in cpv["cautions"])
    assert any("eye and burn" in c for c in data["cautions"])
    checks = {f["check"]: f["verdict"] for f in cpv["audit"]}
    assert checks["aperture_efficiency"] == "ok" and "rated_efficiency" not in checks
    # 300 kWh per m2 of aperture on ~1,470 kWh/m2 of DNI is 20 %, below the rated 34 %
    assert checks["claim_energy_per_cell_m2"] == "ok"


@pytest.mark.parametrize("edit,match", [
    (lambda t: t.replace("cooling_u_w_m2k = 20000.0\n", ""),
     "plant.concentrator.cooling_u_w_m2k"),
    (lambda t: t.replace('mount = "concentrator"', 'mount = "fixed"'), "plant.mount"),
    (lambda t: t.replace("optical_efficiency = 0.85", "optical_efficiency = 1.2"),
     "plant.concentrator.optical_efficiency"),
])
def test_bad_concentrator_input(tmp_path, edit, match):
    text = edit(MINIMAL_CASE.replace("[plant]", '[plant]\nmount = "concentrator"') +
                CPV.format(gamma=-0.0015, error=0.2))
    with pytest.raises(InputError, match=match) as exc:
        load_case(write_case(tmp_path, text))
    assert "\n" not in str(exc.value) and "case.toml" in str(exc.value)
