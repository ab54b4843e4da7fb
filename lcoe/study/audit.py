"""Physics audit of a case's results and of a vendor's stated claims.

:func:`audit` takes plain numbers (annual energy, areas, irradiation, efficiencies and the
claims to test) and returns findings, each a dict ``{"check", "verdict", "message"}`` with
verdict ``"ok"``, ``"doubtful"`` or ``"impossible"`` and a plain sentence with the numbers.

Limits applied (fractions):

* nothing converts more than 100 % of the light crossing its aperture;
* a single-junction cell at one sun cannot exceed the Shockley-Queisser limit, about 33.7 %
  (Shockley & Queisser 1961; Ruhle 2016);
* a module delivers at most its rated efficiency times the light on it, plus a few per cent
  from running cooler than 25 C;
* cooling can at best bring a cell down to air temperature, so it gains at most
  ``|gamma| x`` the usual rise of cell temperature above the air.

References
----------
.. [1] Shockley, W., Queisser, H. J. (1961). Detailed balance limit of efficiency of p-n
   junction solar cells. Journal of Applied Physics 32(3), 510-519.
.. [2] Ruhle, S. (2016). Tabulated values of the Shockley-Queisser limit for single junction
   solar cells. Solar Energy 130, 139-147.
.. [3] Faiman, D. (2008). Assessing the outdoor operating temperature of photovoltaic modules.
   Progress in Photovoltaics 16(4), 307-315.
"""

from __future__ import annotations

import math

from lcoe.case.errors import InputError
from lcoe.plant.concentrator import rated_efficiency

#: Detailed-balance limit of a single-junction cell at one sun, AM1.5G (Shockley & Queisser
#: 1961; value 33.7 % as tabulated by Ruhle 2016, from memory). [fraction]
SQ_LIMIT_ONE_SUN = 0.337

#: Extra output allowed over rated efficiency for cells running below 25 C (common practice:
#: "a few per cent"). [fraction]
COOL_OPERATION_ALLOWANCE = 0.05

#: Faiman model defaults as in pvlib.temperature.faiman: U0 [W/m2K], U1 [W s/m3K].
FAIMAN_U0 = 25.0
FAIMAN_U1 = 6.84

#: Verdicts from best to worst.
VERDICTS = ("ok", "doubtful", "impossible")


#: What each check is, in words for pages and sheets (the key stays in JSON).
CHECK_LABELS = {
    "rated_efficiency": "Rated module efficiency",
    "cell_efficiency": "Efficiency on the light the cells receive",
    "aperture_efficiency": "Efficiency on the light entering the aperture",
    "land_efficiency": "Efficiency on the light falling on the land",
    "claim_energy_per_kw": "Claimed energy per kW",
    "claim_energy_ratio": "Claimed energy gain",
    "claim_cooling_gain": "Claimed gain from cooler cells",
    "claim_lcoe_ratio": "Claimed cost per kWh",
}


def check_label(check: str) -> str:
    """The words for an audit check key (its key with spaces when it has none)."""
    return CHECK_LABELS.get(check, check.replace("_", " "))


def _finding(check: str, verdict: str, message: str) -> dict:
    return {"check": check, "label": check_label(check), "verdict": verdict,
            "message": message}


def _pct(x: float) -> str:
    return f"{100.0 * x:.1f} %"


def _num(x: float, unit: str = "") -> str:
    text = f"{x:,.0f}" if abs(x) >= 100 else f"{x:,.3g}"
    return f"{text} {unit}".strip()


def _number(name: str, value, low=0.0, high=math.inf, low_open=True, required=True):
    if value is None:
        if required:
            raise InputError(f"{name} = None: expected a number")
        return None
    if isinstance(value, bool):
        raise InputError(f"{name} = {value!r}: expected a number")
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} = {value!r}: expected a number") from None
    too_low = x <= low if low_open else x < low
    if not math.isfinite(x) or too_low or x > high:
        lo = "(" if low_open else "["
        raise InputError(f"{name} = {value!r}: expected a number in {lo}{low}, {high}]")
    return x


def worst_verdict(findings: list[dict]) -> str:
    """The worst verdict among findings (``"ok"`` for none)."""
    rank = max((VERDICTS.index(f["verdict"]) for f in findings), default=0)
    return VERDICTS[rank]


def _efficiency_on_cells(
    check: str, what: str, eff: float, rated: float, allowance: float, single_junction_flat: bool
) -> dict:
    """Verdict on an implied conversion efficiency on the cells' own area."""
    limit_rated = rated * (1.0 + allowance)
    if eff > 1.0:
        return _finding(
            check,
            "impossible",
            f"{what} implies {_pct(eff)} conversion of the light on the cells, more than all "
            f"of the light (100 %).",
        )
    if single_junction_flat and eff > SQ_LIMIT_ONE_SUN:
        return _finding(
            check,
            "impossible",
            f"{what} implies {_pct(eff)} conversion of the light on the cells, above the "
            f"{_pct(SQ_LIMIT_ONE_SUN)} limit of a single-junction cell at one sun "
            f"(Shockley-Queisser).",
        )
    if eff > limit_rated:
        return _finding(
            check,
            "doubtful",
            f"{what} implies {_pct(eff)} conversion of the light on the cells, above the rated "
            f"{_pct(rated)} even with {_pct(allowance)} extra for cells cooler than 25 C "
            f"(at most {_pct(limit_rated)}).",
        )
    return _finding(
        check,
        "ok",
        f"{what} implies {_pct(eff)} conversion of the light on the cells, within the rated "
        f"{_pct(rated)} plus {_pct(allowance)} for cool operation ({_pct(limit_rated)}).",
    )


def _efficiency_on_area(
    check: str, what: str, eff: float, area_name: str, single_junction_flat: bool, note: str = ""
) -> dict:
    """Verdict on an implied efficiency on an aperture or on land (all light crosses it)."""
    if eff > 1.0:
        return _finding(
            check,
            "impossible",
            f"{what} implies {_pct(eff)} of the light falling on the {area_name}, more than all "
            f"of it (100 %){note}.",
        )
    if single_junction_flat and eff > SQ_LIMIT_ONE_SUN:
        return _finding(
            check,
            "impossible",
            f"{what} implies {_pct(eff)} of the light falling on the {area_name}, above the "
            f"{_pct(SQ_LIMIT_ONE_SUN)} single-junction limit at one sun (Shockley-Queisser)"
            f"{note}.",
        )
    return _finding(
        check,
        "ok",
        f"{what} implies {_pct(eff)} of the light falling on the {area_name}, below 100 %.",
    )


def audit(
    *,
    energy_kwh: float,
    cell_area_m2: float,
    irradiation_on_cells_kwh_m2: float,
    rated_efficiency: float,
    aperture_area_m2: float | None = None,
    irradiation_on_aperture_kwh_m2: float | None = None,
    land_area_m2: float | None = None,
    irradiation_on_land_kwh_m2: float | None = None,
    concentrating: bool = False,
    multi_junction: bool = False,
    cool_allowance: float = COOL_OPERATION_ALLOWANCE,
    claim_energy_per_kw_kwh: float | None = None,
    claim_energy_per_cell_m2_kwh: float | None = None,
    claim_energy_per_aperture_m2_kwh: float | None = None,
    claim_energy_per_land_m2_kwh: float | None = None,
    claim_energy_ratio: float | None = None,
    baseline_irradiation_on_cells_kwh_m2: float | None = None,
    baseline_rated_efficiency: float | None = None,
    baseline_energy_kwh: float | None = None,
    baseline_cell_area_m2: float | None = None,
    claim_lcoe_ratio: float | None = None,
    model_lcoe_ratio: float | None = None,
    lcoe_tolerance: float = 0.10,
    claim_cooling_gain: float | None = None,
    temp_coeff_per_c: float | None = None,
    cell_temp_rise_c: float | None = None,
    poa_irradiance_w_m2: float | None = None,
    wind_speed: float = 1.0,
) -> list[dict]:
    """Check a case's annual results, and any stated claims, against physical limits.

    Parameters
    ----------
    energy_kwh : float
        Annual energy delivered by the system (the model's result). [kWh]
    cell_area_m2 : float
        Total area of the cells. For a concentrator give the aperture area here and below
        (the cells' own area sees concentrated light). [m2]
    irradiation_on_cells_kwh_m2 : float
        Annual irradiation incident on the cells, mean over the cells (plane of array,
        before optical losses). [kWh/m2]
    rated_efficiency : float
        Module efficiency at standard test conditions on the same area. [fraction]
    aperture_area_m2, irradiation_on_aperture_kwh_m2 : float, optional
        A surface all the light reaching the cells must cross (a concentrator's entrance
        aperture) and the annual irradiation on it. [m2], [kWh/m2]
    land_area_m2, irradiation_on_land_kwh_m2 : float, optional
        Land occupied by a field of many units and the annual irradiation on it (usually
        global horizontal). The check treats the land as the field's aperture and so neglects
        light entering through the field's edges; do not use it for a single isolated body,
        which can catch more light than falls on its own footprint. [m2], [kWh/m2]
    concentrating : bool
        The cells work under concentration (the one-sun single-junction limit is not applied).
    multi_junction : bool
        The cells are multi-junction (the single-junction limit is not applied).
    cool_allowance : float
        Output allowed above rated efficiency for cells cooler than 25 C. [fraction]
    claim_energy_per_kw_kwh : float, optional
        Claimed annual energy per kW of rating, the rating being
        ``rated_efficiency x 1 kW/m2 x cell_area_m2``. [kWh/kW]
    claim_energy_per_cell_m2_kwh, claim_energy_per_aperture_m2_kwh,
    claim_energy_per_land_m2_kwh : float, optional
        Claimed annual energy per m2 of cells, of aperture, of land. [kWh/m2]
    claim_energy_ratio : float, optional
        Claimed energy per m2 of cells relative to the baseline's. [ratio]
    baseline_irradiation_on_cells_kwh_m2 : float, optional
        Annual irradiation on the baseline's cells; required with ``claim_energy_ratio``.
        [kWh/m2]
    baseline_rated_efficiency : float, optional
        Baseline module efficiency (default: ``rated_efficiency``). [fraction]
    baseline_energy_kwh, baseline_cell_area_m2 : float, optional
        The baseline's modelled annual energy and cell area; with them the energy-ratio check
        becomes a strict bound. [kWh], [m2]
    claim_lcoe_ratio : float, optional
        Claimed LCOE relative to the baseline's; requires ``model_lcoe_ratio``. [ratio]
    model_lcoe_ratio : float, optional
        LCOE ratio this tool computed for the same comparison. [ratio]
    lcoe_tolerance : float
        Shortfall of the claimed LCOE ratio below the model's beyond which it is doubtful.
        [fraction]
    claim_cooling_gain : float, optional
        Claimed energy gain from cooling (or rotation that cools). [fraction]
    temp_coeff_per_c : float, optional
        Power temperature coefficient, required with ``claim_cooling_gain``. [1/C]
    cell_temp_rise_c : float, optional
        Energy-weighted rise of cell temperature above the air without the cooling. [C]
    poa_irradiance_w_m2 : float, optional
        Energy-weighted plane-of-array irradiance; used with ``wind_speed`` and the Faiman model
        when ``cell_temp_rise_c`` is not given. [W/m2]
    wind_speed : float
        Typical wind speed for the Faiman model. [m/s]

    Returns
    -------
    list of dict
        Findings ``{"check": str, "verdict": "ok" | "doubtful" | "impossible",
        "message": str}``, in the order the checks are listed above.

    Notes
    -----
    Implied efficiency on the cells: ``E / (H_cells A_cells)``. A claimed yield per kW implies
    the ratio ``Y / H_cells`` (H in kWh/m2 over 1 kW/m2), and the cell efficiency
    ``rated_efficiency x Y / H_cells``. The energy-ratio bound: the body's cells can deliver at
    most ``rated x (1 + cool_allowance) x H_cells`` per m2; divided by the baseline's delivered
    energy per m2 of cells this is the largest ratio physics allows ("impossible" above it).
    Without the baseline's energy, a claim above ``(H_cells / H_base) x (rated / rated_base) x
    (1 + cool_allowance)`` is "doubtful": it needs the new cells to lose less than the
    baseline's. The cooling bound: a cell cooled to air temperature gains at most
    ``|gamma| x rise``, with ``rise = G / (U0 + U1 ws)`` (Faiman 2008) when not given.
    """
    energy = _number("energy_kwh", energy_kwh, low_open=False)
    area = _number("cell_area_m2", cell_area_m2)
    h_cells = _number("irradiation_on_cells_kwh_m2", irradiation_on_cells_kwh_m2)
    rated = _number("rated_efficiency", rated_efficiency, high=1.0)
    allowance = _number("cool_allowance", cool_allowance, high=1.0, low_open=False)
    sj_flat = not concentrating and not multi_junction
    findings = []

    if sj_flat and rated > SQ_LIMIT_ONE_SUN:
        findings.append(
            _finding(
                "rated_efficiency",
                "impossible",
                f"A rated module efficiency of {_pct(rated)} is above the {_pct(SQ_LIMIT_ONE_SUN)} "
                f"limit of a single-junction cell at one sun (Shockley-Queisser).",
            )
        )

    what = (
        f"Delivering {_num(energy, 'kWh')} a year from {_num(area, 'm2')} of cells that "
        f"receive {_num(h_cells, 'kWh/m2')}"
    )
    findings.append(
        _efficiency_on_cells(
            "cell_efficiency",
            what,
            energy / (h_cells * area),
            rated,
            allowance,
            sj_flat,
        )
    )

    land_note = " (assuming a field many units across, where light entering the edges is small)"
    surfaces = {  # name: (area given for the results check, irradiation on it, extra note)
        "aperture": (aperture_area_m2, irradiation_on_aperture_kwh_m2, ""),
        "land": (land_area_m2, irradiation_on_land_kwh_m2, land_note),
    }
    for name, (surface_m2, h_surface, note) in surfaces.items():
        if surface_m2 is None:
            continue
        a_s = _number(f"{name}_area_m2", surface_m2)
        h_s = _number(f"irradiation_on_{name}_kwh_m2", h_surface)
        what = (
            f"Delivering {_num(energy, 'kWh')} a year from {_num(a_s, 'm2')} of {name} "
            f"receiving {_num(h_s, 'kWh/m2')}"
        )
        eff = energy / (h_s * a_s)
        findings.append(_efficiency_on_area(f"{name}_efficiency", what, eff, name, sj_flat, note))

    if claim_energy_per_kw_kwh is not None:
        y = _number("claim_energy_per_kw_kwh", claim_energy_per_kw_kwh)
        what = (
            f"The claimed {_num(y, 'kWh/kW')} a year on cells receiving "
            f"{_num(h_cells, 'kWh/m2')} (a ratio of {y / h_cells:.2f} to the light, rating "
            f"{_pct(rated)} at 1 kW/m2)"
        )
        eff = rated * y / h_cells
        findings.append(
            _efficiency_on_cells("claim_energy_per_kw", what, eff, rated, allowance, sj_flat)
        )

    per_m2_claims = {
        "cell": (claim_energy_per_cell_m2_kwh, h_cells, ""),
        "aperture": (claim_energy_per_aperture_m2_kwh, irradiation_on_aperture_kwh_m2, ""),
        "land": (claim_energy_per_land_m2_kwh, irradiation_on_land_kwh_m2, land_note),
    }
    for name, (claim, h_surface, note) in per_m2_claims.items():
        if claim is None:
            continue
        e_m2 = _number(f"claim_energy_per_{name}_m2_kwh", claim)
        noun = "cells" if name == "cell" else name
        h_s = _number(f"irradiation_on_{noun}_kwh_m2", h_surface)
        check = f"claim_energy_per_{name}_m2"
        what = (
            f"The claimed {_num(e_m2, 'kWh')} a year per m2 of {noun} "
            f"receiving {_num(h_s, 'kWh/m2')}"
        )
        if name == "cell":
            f = _efficiency_on_cells(check, what, e_m2 / h_s, rated, allowance, sj_flat)
        else:
            f = _efficiency_on_area(check, what, e_m2 / h_s, name, sj_flat, note)
        findings.append(f)
    if claim_energy_ratio is not None:
        findings.append(
            _energy_ratio_finding(
                _number("claim_energy_ratio", claim_energy_ratio),
                h_cells,
                rated,
                allowance,
                energy,
                area,
                _number(
                    "baseline_irradiation_on_cells_kwh_m2", baseline_irradiation_on_cells_kwh_m2
                ),
                _number(
                    "baseline_rated_efficiency", baseline_rated_efficiency, high=1.0, required=False
                ),
                _number("baseline_energy_kwh", baseline_energy_kwh, required=False),
                _number("baseline_cell_area_m2", baseline_cell_area_m2, required=False),
            )
        )

    if claim_lcoe_ratio is not None:
        claim = _number("claim_lcoe_ratio", claim_lcoe_ratio)
        model = _number("model_lcoe_ratio", model_lcoe_ratio)
        tol = _number("lcoe_tolerance", lcoe_tolerance, high=1.0, low_open=False)
        floor = model * (1.0 - tol)
        verdict = "doubtful" if claim < floor else "ok"
        relation = "below" if claim < floor else "not below"
        findings.append(
            _finding(
                "claim_lcoe_ratio",
                verdict,
                f"The claimed LCOE ratio of {claim:.3f} to the baseline is {relation} this model's "
                f"{model:.3f} less {_pct(tol)} ({floor:.3f}).",
            )
        )

    if claim_cooling_gain is not None:
        findings.append(
            _cooling_finding(
                _number("claim_cooling_gain", claim_cooling_gain, low_open=False),
                _number("temp_coeff_per_c", temp_coeff_per_c, low=-1.0, high=1.0, low_open=False),
                cell_temp_rise_c,
                poa_irradiance_w_m2,
                wind_speed,
            )
        )
    return findings


def _energy_ratio_finding(
    claim, h_cells, rated, allowance, energy, area, h_base, rated_base, energy_base, area_base
) -> dict:
    rated_base = rated if rated_base is None else rated_base
    light_ratio = h_cells / h_base
    expected_max = light_ratio * (rated / rated_base) * (1.0 + allowance)
    model_note = ""
    if energy_base is not None and area_base is not None and energy_base > 0.0:
        base_per_m2 = energy_base / area_base
        model_note = (
            f" This model gives {(energy / area) / base_per_m2:.2f} "
            f"({_num(energy / area, 'kWh/m2')} against {_num(base_per_m2, 'kWh/m2')})."
        )
        strict = rated * (1.0 + allowance) * h_cells / base_per_m2
        if claim > strict:
            return _finding(
                "claim_energy_ratio",
                "impossible",
                f"The claimed ratio of {claim:.2f} in energy per m2 of cells exceeds {strict:.2f}, "
                f"the most possible: the cells receive {_num(h_cells, 'kWh/m2')} and convert at "
                f"most {_pct(rated * (1.0 + allowance))} of it, against the baseline's "
                f"delivered {_num(base_per_m2, 'kWh/m2')}.{model_note}",
            )
    if claim > expected_max:
        return _finding(
            "claim_energy_ratio",
            "doubtful",
            f"The claimed ratio of {claim:.2f} in energy per m2 of cells exceeds "
            f"{expected_max:.2f}, the ratio of light on the cells "
            f"({_num(h_cells, 'kWh/m2')} against {_num(h_base, 'kWh/m2')}) times the "
            f"efficiency ratio and {_pct(allowance)} for cooler cells: it needs the new cells "
            f"to lose much less than the baseline's."
            f"{model_note}",
        )
    return _finding(
        "claim_energy_ratio",
        "ok",
        f"The claimed ratio of {claim:.2f} in energy per m2 of cells is within {expected_max:.2f}, "
        f"the ratio of light on the cells ({_num(h_cells, 'kWh/m2')} against "
        f"{_num(h_base, 'kWh/m2')}) times the efficiency ratio and {_pct(allowance)} for cooler "
        f"cells.{model_note}",
    )


def _cooling_finding(claim, gamma, rise, poa, wind) -> dict:
    if rise is None:
        g = _number("poa_irradiance_w_m2", poa, low_open=False, high=2000.0)
        ws = _number("wind_speed", wind, low_open=False, high=60.0)
        rise = g / (FAIMAN_U0 + FAIMAN_U1 * ws)
        how = f"the Faiman rise at {_num(g, 'W/m2')} and {_num(ws, 'm/s')} wind is {rise:.1f} K"
    else:
        rise = _number("cell_temp_rise_c", rise, low_open=False, high=200.0)
        how = f"the cells run {rise:.1f} K above the air"
    max_gain = abs(gamma) * rise
    if claim > max_gain:
        return _finding(
            "claim_cooling_gain",
            "impossible",
            f"The claimed cooling gain of {_pct(claim)} exceeds {_pct(max_gain)}, what a cell "
            f"cooled all the way to air temperature would gain ({_pct(abs(gamma))} per K; {how}).",
        )
    return _finding(
        "claim_cooling_gain",
        "ok",
        f"The claimed cooling gain of {_pct(claim)} is within {_pct(max_gain)}, what a cell "
        f"cooled all the way to air temperature would gain ({_pct(abs(gamma))} per K; {how}).",
    )


#: A field of bodies is audited against the light on its land from this many bodies up: the
#: land check treats the land as the field's aperture, which neglects light entering through
#: the edges (a design choice of this tool: a 5 x 5 grid).
MIN_BODIES_FOR_LAND_CHECK = 25


def case_facts(case, site, base) -> dict:
    """The deterministic year of a case as :func:`audit_case` reads it.

    Parameters
    ----------
    case : lcoe.case.reader.Case
    site : lcoe.model.Site
    base : lcoe.model.ModelOutput
        The run at the case's values (one sample).

    Returns
    -------
    dict
        See :func:`audit_case`. For a concentrator the "cells" are its aperture (rated at
        optical x cell efficiency on direct normal light), as :func:`lcoe.study.audit.audit`
        expects. Bifacial cells also get bifaciality x rear light (before the rear loss).
    """
    e = base.energy
    w = site.weather
    concentrating = case["plant.mount"] == "concentrator"
    chain = e.loss_chain_kwh  # its rear step: kW x bifaciality x (1 - rear loss) x rear light
    rear_kwh_m2 = float((chain["after_bifacial_kwh"][0] - chain["after_soiling_kwh"][0]) /
                        e.dc_capacity_kw[0] / (1.0 - float(case["plant.rear_loss_fraction"])))
    facts = {"energy_kwh": float(e.annual_kwh[0]), "cell_area_m2": float(e.cell_area_m2[0]),
             "poa_kwh_m2": float(e.poa_kwh_m2[0]) + rear_kwh_m2,
             "module_efficiency": rated_efficiency(case) if concentrating else
             float(case["plant.module_efficiency"]),
             "land_area_m2": float(e.land_area_m2[0]),
             "ghi_kwh_m2": float(w.data["ghi"].sum() / 1000.0 / w.n_years),
             "dni_kwh_m2": float(w.data["dni"].sum() / 1000.0 / w.n_years),
             "n_bodies": None if e.n_bodies is None else float(e.n_bodies[0]),
             "concentrating": concentrating,
             "aperture_area_m2": float(e.cell_area_m2[0]) if concentrating else None}
    return facts


def claims_of(case) -> dict:
    """The ``[claim]`` numbers of a case by key (None where not claimed)."""
    return {k: case[f"claim.{k}"] for k in ("energy_per_kw_kwh", "energy_per_m2_kwh",
                                             "energy_ratio", "lcoe_ratio")}


def audit_run(case, site, base) -> list[dict]:
    """Audit of a single run (no baseline): its modelled year and its per-kW, per-m2 claims.

    For ``lcoe run`` (e.g. ``RunResult.extras["audit"]``, which the report shows).
    """
    return audit_case(case_facts(case, site, base), claims_of(case))


def audit_case(facts: dict, claims: dict, baseline: dict | None = None,
               model_lcoe_ratio: float | None = None) -> list[dict]:
    """Physics audit of one case's modelled year and of its stated claims.

    Maps a case onto :func:`lcoe.study.audit.audit`, whose keyword names differ from the case
    file's ``[claim]`` keys: ``energy_per_kw_kwh`` -> ``claim_energy_per_kw_kwh``,
    ``energy_per_m2_kwh`` -> ``claim_energy_per_cell_m2_kwh``, ``energy_ratio`` ->
    ``claim_energy_ratio`` (against the baseline's light, efficiency and modelled energy per m2
    of cells), ``lcoe_ratio`` -> ``claim_lcoe_ratio`` (against this tool's median ratio).

    Parameters
    ----------
    facts : dict
        The case's deterministic year: ``energy_kwh`` [kWh], ``cell_area_m2`` [m2],
        ``poa_kwh_m2`` (irradiation on the cells, mean) [kWh/m2], ``module_efficiency`` [-],
        ``land_area_m2`` [m2], ``ghi_kwh_m2`` [kWh/m2], ``n_bodies`` (None for flat mounts),
        ``concentrating`` (bool), and for a concentrator ``aperture_area_m2`` and
        ``dni_kwh_m2`` [m2, kWh/m2].
    claims : dict
        The case's ``[claim]`` numbers by key (absent or None: not claimed).
    baseline : dict, optional
        The baseline's ``facts``; needed for ``energy_ratio``. None for the baseline itself
        (its ratio claims are then not tested).
    model_lcoe_ratio : float, optional
        Median candidate / baseline LCOE ratio from the trials.

    Returns
    -------
    list of dict
        Findings ``{check, verdict, message}``.
    """
    kwargs = dict(energy_kwh=max(facts["energy_kwh"], 0.0), cell_area_m2=facts["cell_area_m2"],
                  irradiation_on_cells_kwh_m2=facts["poa_kwh_m2"],
                  rated_efficiency=facts["module_efficiency"],
                  concentrating=bool(facts.get("concentrating", False)))
    if facts.get("aperture_area_m2") is not None:
        kwargs.update(aperture_area_m2=facts["aperture_area_m2"],
                      irradiation_on_aperture_kwh_m2=facts["dni_kwh_m2"])
    n_bodies = facts.get("n_bodies")
    if n_bodies is None or n_bodies >= MIN_BODIES_FOR_LAND_CHECK:
        kwargs.update(land_area_m2=facts["land_area_m2"],
                      irradiation_on_land_kwh_m2=facts["ghi_kwh_m2"])
    if claims.get("energy_per_kw_kwh") is not None:
        kwargs["claim_energy_per_kw_kwh"] = claims["energy_per_kw_kwh"]
    if claims.get("energy_per_m2_kwh") is not None:
        kwargs["claim_energy_per_cell_m2_kwh"] = claims["energy_per_m2_kwh"]
    if baseline is not None and claims.get("energy_ratio") is not None:
        kwargs.update(claim_energy_ratio=claims["energy_ratio"],
                      baseline_irradiation_on_cells_kwh_m2=baseline["poa_kwh_m2"],
                      baseline_rated_efficiency=baseline["module_efficiency"],
                      baseline_energy_kwh=baseline["energy_kwh"],
                      baseline_cell_area_m2=baseline["cell_area_m2"])
    if baseline is not None and claims.get("lcoe_ratio") is not None and \
            model_lcoe_ratio is not None:
        kwargs.update(claim_lcoe_ratio=claims["lcoe_ratio"], model_lcoe_ratio=model_lcoe_ratio)
    return audit(**kwargs)


def audit_sentence(findings: list[dict]) -> str:
    """One line: the worst verdict and how many findings of each kind."""
    counts = {v: sum(f["verdict"] == v for f in findings) for v in ("ok", "doubtful",
                                                                    "impossible")}
    parts = [f"{n} {v}" for v, n in counts.items() if n]
    return f"worst verdict {worst_verdict(findings)} ({', '.join(parts) or 'no checks'})"
