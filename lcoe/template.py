"""``lcoe new``: a commented case file with every key, its unit, allowed range and typical values.

The text is generated from :data:`lcoe.schema.FIELDS`, so it can never drift from what the
validator accepts. The example values for required keys give a runnable case at the site of the
bundled weather file.
"""

from __future__ import annotations

from .schema import FIELDS, MOVING_PART_FIELDS, REPLACEMENT_FIELDS, REQUIRED, Field

#: Example values for keys that have no default (a runnable case at the bundled site).
EXAMPLES = {
    "case.name": "New fixed-tilt plant",
    "case.lifetime_years": 30,
    "site.latitude_deg": 36.1,
    "site.longitude_deg": -79.95,
    "site.altitude_m": 273.0,
    "plant.dc_capacity_kw": 5000.0,
    "costs.capex_per_kw": 950.0,
    "finance.discount_rate": 0.07,
}


def _toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    return repr(v)


def _line(f: Field, value, commented: bool = False) -> list[str]:
    info = f"{f.doc} [{f.unit}]; allowed: {f.allowed()}"
    if f.typical:
        info += f"; typical: {f.typical}"
    out = [f"# {info}"]
    out.append(f"{'# ' if commented else ''}{f.key} = {_toml_value(value)}")
    return out


#: Sections written commented out: the bankability layer and the tables of other mounts.
OPTIONAL_SECTIONS = ("revenue", "tax", "debt", "equity", "plant.body", "plant.concentrator",
                     "claim")
OPTIONAL_EXAMPLES = {"site.timezone": "Etc/GMT+5", "site.weather": "weather/site.csv",
                     "site.weather_time_label": "start", "revenue.tariff_per_kwh": 0.055,
                     "revenue.contract_years": 20, "plant.body.shape": "cylinder",
                     "plant.body.radius_m": 0.5, "plant.body.height_m": 3.0,
                     "plant.body.facets": 24, "plant.body.spacing_m": 3.0,
                     "claim.text": "a third cheaper power", "claim.energy_per_kw_kwh": 1500.0,
                     "claim.energy_per_m2_kwh": 300.0, "claim.energy_ratio": 1.2,
                     "claim.lcoe_ratio": 0.667,
                     "plant.concentrator.geometric_concentration": 500.0,
                     "plant.concentrator.optical_efficiency": 0.85,
                     "plant.concentrator.cell_efficiency": 0.40,
                     "plant.concentrator.acceptance_half_angle_deg": 0.8,
                     "plant.concentrator.cooling_u_w_m2k": 20000.0,
                     "plant.concentrator.temp_coeff_per_c": -0.0015}


def template_text() -> str:
    """The commented template as TOML text."""
    lines = [
        "# lcoe case file. Units: fractions (0.07 = 7 %), kW of DC nameplate, kWh, degrees,",
        "# money in the case currency (year-0 money unless stated). Paths are relative to this",
        "# file. Keys shown commented out are optional; their defaults are shown.",
        "",
    ]
    section = None
    for f in FIELDS:
        off = f.section in OPTIONAL_SECTIONS
        if f.section != section:
            section = f.section
            lines += [""]
            if f.section == "revenue":
                lines += ["# ---- Bankability (optional): uncomment [revenue] and what follows to "
                          "get tax, debt,", "# ---- DSCR and equity returns."]
            if f.section == "claim":
                lines += ["# ---- A vendor's claim (optional), tested by: lcoe compare "
                          "BASELINE.toml THIS.toml"]
            if f.section == "plant.concentrator":
                lines += ['# ---- plant.mount = "concentrator": optics on dual-axis trackers '
                          "(uncomment). Concentrated sunlight", "# ---- can destroy the "
                          "receiver within seconds to minutes on loss of tracking or cooling, "
                          "and", "# ---- burns skin and eyes: design and maintenance follow "
                          "local codes and licensed professionals."]
            if f.section == "plant.body":
                lines += ['# ---- plant.mount = "body": bodies covered with cells (uncomment). '
                          'With shape = "facets"', "# ---- list the pieces instead: "
                          "[[plant.body.facet]] with tilt_deg, azimuth_deg, area_m2."]
            lines += [f"{'# ' if off else ''}[{section}]"]
        if f.default is REQUIRED and not f.optional:
            new = _line(f, EXAMPLES[f.path])
        elif f.default is REQUIRED:
            new = _line(f, OPTIONAL_EXAMPLES[f.path], commented=not off)
        else:
            new = _line(f, f.default)
        lines += [("# " + x if off and not x.startswith("#") else x) for x in new]
        if f.path == "debt.lockup_dscr":
            lines += ["# Debt is the smallest that meets every constraint and the gearing cap:",
                      '# sizing = [{case = "P50", min_dscr = 1.30}, '
                      '{case = "P99_1yr", min_dscr = 1.00}]']
        if f.path == "costs.land_lease_per_year":
            lines += ["", "# Scheduled replacements, one table each (add as many as needed):",
                      "[[costs.replacement]]"]
            for rf, v in zip(REPLACEMENT_FIELDS, ("inverters", 12, 60.0)):
                lines += _line(rf, v)
            lines += ["", "# Moving parts that fail at random (optional; one table each). Life: "
                          "mean_years, or Weibull", "# shape and scale_years.",
                      "# [[costs.moving_part]]"]
            example = {"item": "tracker motor", "units": 400.0, "per": "plant",
                       "mean_years": 12.0, "cost_each": 900.0, "repair_days": 5.0,
                       "damage_fraction": 0.0}
            for mf in MOVING_PART_FIELDS:
                if mf.key in example:
                    lines += _line(mf, example[mf.key], commented=True)
    lines += [
        "",
        "# Uncertain inputs (optional): any numeric key above by its dotted path, e.g.",
        '# [uncertain]',
        '# "costs.capex_per_kw" = { dist = "triangular", low = 850, mode = 950, high = 1150,'
        ' group = "costs" }',
        "",
    ]
    return "\n".join(lines) + "\n"
