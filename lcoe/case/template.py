"""``lcoe new``: commented case files of every kind, each runnable as written.

The text is generated from :data:`lcoe.case.schema.FIELDS`, so it can never drift from what the
validator accepts: every key is written with its meaning, unit, allowed values and typical
range, active where the kind of case uses it and commented out (with its default) elsewhere.
The example values are invented for a runnable start at the site of the weather file bundled
with pvlib; they are not recommendations.
"""

from __future__ import annotations

from lcoe.case.schema import FIELDS, MOVING_PART_FIELDS, REPLACEMENT_FIELDS, REQUIRED, Field

#: Kinds of template: name -> what it describes (shown by ``lcoe new --help``).
KINDS: dict[str, str] = {
    "fixed": "fixed-tilt plant",
    "tracker": "single-axis tracker with backtracking and tracker drives that fail",
    "body": "3-D bodies covered with cells (here rotating cylinders)",
    "concentrator": "concentrator optics on dual-axis trackers",
    "lender": "lender's case: revenue, tax, debt sized on P50/P99, equity returns",
    "sweep": "sweep plan: sites x technologies (writes the technology case files beside it)",
}

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

#: Example values of optional keys (written commented out unless the kind uses them).
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

#: Sections written commented out unless a kind switches them on.
OPTIONAL_SECTIONS = ("revenue", "tax", "debt", "equity", "plant.body", "plant.concentrator",
                     "claim", "construction")

#: Per kind: values that differ from the fixed-tilt template and optional sections switched on.
#: Invented example values (plausible, not recommendations).
PROFILES: dict[str, dict] = {
    "fixed": {"values": {"plant.tilt_deg": 25.0}, "on": ()},
    "tracker": {"values": {"case.name": "New single-axis tracker plant",
                           "plant.mount": "single_axis", "plant.tilt_deg": 0.0,
                           "plant.gcr": 0.35, "plant.max_rotation_deg": 55.0,
                           "costs.capex_per_kw": 1050.0, "costs.fixed_om_per_kw_year": 17.0},
                "on": (), "moving_parts": True},
    "body": {"values": {"case.name": "New plant of rotating cylinders",
                        "plant.mount": "body", "plant.tilt_deg": 0.0,
                        "plant.body.rotating": True, "plant.body.drive_power_w": 15.0,
                        "costs.capex_per_kw": 1300.0, "costs.fixed_om_per_kw_year": 20.0},
             "on": ("plant.body",), "moving_parts": True},
    "concentrator": {"values": {"case.name": "New concentrator plant",
                                "plant.mount": "concentrator", "plant.tilt_deg": 0.0,
                                "plant.concentrator.tracking_error_deg": 0.2,
                                "costs.capex_per_kw": 2400.0,
                                "costs.fixed_om_per_kw_year": 35.0},
                     "on": ("plant.concentrator",), "moving_parts": True},
    "lender": {"values": {"case.name": "New single-axis plant (lender's case)",
                          "plant.mount": "single_axis", "plant.tilt_deg": 0.0,
                          "plant.gcr": 0.35, "plant.max_rotation_deg": 55.0,
                          "plant.dc_capacity_kw": 50000.0, "costs.capex_per_kw": 1050.0,
                          "costs.fixed_om_per_kw_year": 17.0,
                          "costs.insurance_fraction_per_year": 0.0035,
                          "revenue.tariff_per_kwh": 0.07, "revenue.contract_years": 20,
                          "revenue.merchant_price_per_kwh": 0.045, "tax.rate": 0.25,
                          "debt.dsra_months": 6.0, "debt.mra_years_ahead": 4,
                          "construction.commitment_fee_fraction": 0.005},
               "on": ("revenue", "tax", "debt", "equity", "construction")},
}

_MOVING_PART = {"item": "tracker drive (motor and controller)", "units": 400.0, "per": "plant",
                "mean_years": 12.0, "cost_each": 900.0, "repair_days": 5.0,
                "damage_fraction": 0.0}
_BODY_DRIVE = {"item": "body drive (gear motor)", "units": 1.0, "per": "body",
               "mean_years": 10.0, "cost_each": 150.0, "repair_days": 7.0,
               "damage_fraction": 0.0}

#: Invented monthly climate of the bundled site's latitude (a screening input only).
MONTHLY_EXAMPLE = ("[2.6, 3.5, 4.8, 5.9, 6.4, 6.7, 6.5, 5.9, 5.0, 4.0, 2.9, 2.3]",
                   "[3.5, 5.0, 9.5, 14.5, 19.0, 23.5, 25.5, 24.8, 21.0, 15.0, 9.5, 5.0]")
#: Invented monthly mean daily DNI to go with :data:`MONTHLY_EXAMPLE` [kWh/m2/day].
MONTHLY_DNI_EXAMPLE = "[3.4, 4.0, 4.9, 5.6, 5.7, 5.8, 5.5, 5.2, 5.0, 4.8, 3.7, 3.1]"


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
    return [f"# {info}", f"{'# ' if commented else ''}{f.key} = {_toml_value(value)}"]


def _section_intro(section: str) -> list[str]:
    if section == "revenue":
        return ["# ---- Bankability: [revenue] switches on tax, debt, DSCR and equity returns."]
    if section == "claim":
        return ["# ---- A vendor's claim (optional), tested by: lcoe compare BASELINE.toml "
                "THIS.toml"]
    if section == "plant.concentrator":
        return ['# ---- plant.mount = "concentrator": optics on dual-axis trackers. Concentrated',
                "# ---- sunlight can destroy the receiver within seconds to minutes on loss of "
                "tracking", "# ---- or cooling, and burns skin and eyes: design and "
                "maintenance follow local codes", "# ---- and licensed professionals."]
    if section == "plant.soiling":
        return ['# ---- Soiling. model = "monthly" needs 12 loss fractions, January first, e.g.',
                "# ---- monthly_loss = [0.02, 0.02, 0.03, 0.03, 0.02, 0.01, 0.01, 0.01, 0.01, "
                "0.01, 0.02, 0.02]", '# ---- model = "kimber" needs rain in the weather file '
                "(a precip_mm column)."]
    if section == "plant.body":
        return ['# ---- plant.mount = "body": bodies covered with cells. With shape = "facets" '
                "list", "# ---- the pieces instead: [[plant.body.facet]] with tilt_deg, "
                "azimuth_deg, area_m2."]
    return []


def _moving_parts(kind: str, active: bool) -> list[str]:
    lines = ["", "# Moving parts that fail at random (one table each). Life: mean_years "
                 "(exponential), or", "# Weibull shape and scale_years. Renewal theory gives "
                 "the expected failures."]
    example = _BODY_DRIVE if kind == "body" else _MOVING_PART
    lines.append(f"{'' if active else '# '}[[costs.moving_part]]")
    for mf in MOVING_PART_FIELDS:
        if mf.key in example:
            lines += _line(mf, example[mf.key], commented=not active)
    return lines


def _uncertainty(kind: str) -> list[str]:
    capex = PROFILES[kind]["values"].get("costs.capex_per_kw", EXAMPLES["costs.capex_per_kw"])
    om = PROFILES[kind]["values"].get("costs.fixed_om_per_kw_year", 15.0)
    return [
        "",
        "# ---- Uncertain inputs: any numeric key above by its dotted path, with a distribution:",
        "# normal (mean, sd), lognormal (median, sigma of the log), triangular (low, mode, high),",
        "# pert (low, mode, high), uniform (low, high), truncnormal (mean, sd, low, high),",
        "# discrete (values, weights); low/high truncate normal and lognormal; group = \"...\"",
        "# groups inputs for Sobol. A distribution that can leave the key's allowed range is",
        "# refused. List tables by index, e.g. \"costs.replacement[0].cost_per_kw\".",
        "# Invented example spreads: replace them with your own evidence.",
        "[uncertain]",
        f'"costs.capex_per_kw" = {{ dist = "triangular", low = {0.9 * capex:g}, '
        f'mode = {capex:g}, high = {1.2 * capex:g}, group = "costs" }}',
        f'"costs.fixed_om_per_kw_year" = {{ dist = "pert", low = {0.8 * om:g}, mode = {om:g}, '
        f'high = {1.4 * om:g}, group = "costs" }}',
        '"plant.degradation_per_year" = { dist = "lognormal", median = 0.005, sigma = 0.35, '
        'high = 0.02 }',
        '"plant.dc_loss_fraction" = { dist = "pert", low = 0.05, mode = 0.07, high = 0.12 }',
        "",
        "# Energy uncertainty as lenders state it [fraction of energy]: interannual_cov is drawn",
        "# for every year of every trial; resource_sd, model_sd and any other <name>_sd once per",
        "# trial. Typical: year-to-year GHI CoV 0.02-0.05 (Thevenard & Pelland 2013), resource",
        "# 0.03-0.06 for a typical-year file, model 0.02-0.04 (common practice).",
        "[uncertain.energy]",
        "# Year-to-year coefficient of variation of energy [-]; allowed: a number >= 0; "
        "typical: 0.02-0.05",
        "interannual_cov = 0.04",
        "# Standard deviation of the long-term resource [-]; allowed: a number >= 0; "
        "typical: 0.03-0.06",
        "resource_sd = 0.05",
        "# Standard deviation of the energy model [-]; allowed: a number >= 0; "
        "typical: 0.02-0.04",
        "model_sd = 0.03",
        "",
        "# Rank correlations between uncertain inputs (Iman-Conover; keeps the marginals).",
        "# Sobol indices assume independence: correlated inputs belong in one group (as here).",
        "[[correlation]]",
        "# The two uncertain inputs by dotted path [-]; allowed: two different keys of "
        "[uncertain]",
        'between = ["costs.capex_per_kw", "costs.fixed_om_per_kw_year"]',
        "# Spearman rank correlation [-]; allowed: a number in [-1, 1]; invented example",
        "rank = 0.3",
    ]


def _monthly_block() -> list[str]:
    ghi, temp = MONTHLY_EXAMPLE
    return ["",
            "# Weather from monthly climate values instead of a weather file (screening only,",
            "# never a bankable resource assessment): an hourly year is synthesised so that each",
            "# month's mean matches. Uncomment to use (then leave site.weather out).",
            "# [site.monthly]",
            f"# ghi_kwh_m2_day = {ghi}   # mean daily GHI per month, January first "
            "[kWh/m2/day]",
            f"# temp_air_c = {temp}   # mean air temperature per month [C]",
            "# wind_speed_m_s = 3.0   # mean wind speed [m/s]; optional",
            "# Optional: mean daily direct normal irradiation per month (a monthly sum divided",
            "# by the days of the month). When given, each month's beam matches it; from GHI",
            "# alone a month's DNI can miss by 10-17 %. Allowed: >= 0, at most the",
            "# extraterrestrial normal irradiation of the daylight hours, and no more beam than",
            "# the month's GHI can hold [kWh/m2/day]; allowed: see above",
            f"# dni_kwh_m2_day = {MONTHLY_DNI_EXAMPLE}",
            "# seed = 1               # seed of the synthetic year; optional"]


def template_text(kind: str = "fixed") -> str:
    """The commented template of ``kind`` (a key of :data:`KINDS`) as TOML text.

    ``kind = "sweep"`` gives the sweep plan; see :func:`sweep_files` for its technology cases.
    """
    if kind == "sweep":
        return sweep_plan_text()
    profile = PROFILES[kind]
    values = {**EXAMPLES, **profile["values"]}
    on = set(profile["on"])
    lines = [
        f"# lcoe case file: {KINDS[kind]}. Run it as written: lcoe check THIS.toml, then",
        "# lcoe run THIS.toml. Units: fractions (0.07 = 7 %), kW of DC nameplate, kWh, degrees,",
        "# money in the case currency (year-0 money unless stated). Paths are relative to this",
        "# file. Keys commented out are optional; their defaults are shown. Example values are",
        "# invented: replace them with your project's.",
    ]
    section = None
    for f in FIELDS:
        off = f.section in OPTIONAL_SECTIONS and f.section not in on
        if f.section != section:
            section = f.section
            lines += [""] + _section_intro(section) + [f"{'# ' if off else ''}[{section}]"]
        if f.path in values:
            new = _line(f, values[f.path])
        elif f.default is REQUIRED and f.optional:
            new = _line(f, OPTIONAL_EXAMPLES[f.path],
                        commented=not off and f.section not in on)
        else:
            new = _line(f, f.default)
        lines += [("# " + x if off and not x.startswith("#") else x) for x in new]
        if f.path == "site.albedo":
            lines += _monthly_block()
        if f.path == "debt.lockup_dscr":
            lines += ["# Debt is the smallest that meets every constraint and the gearing cap",
                      "# [case, DSCR]; allowed: case P50 (the deterministic case), P90_1yr, "
                      "P99_1yr, P90_10yr, P99_10yr", "# (from [uncertain.energy]) and min_dscr "
                      "> 0; typical: P50 at 1.25-1.40, P99_1yr at 1.00-1.10",
                      f"{'# ' if off else ''}sizing = [{{case = \"P50\", min_dscr = 1.30}}, "
                      '{case = "P99_1yr", min_dscr = 1.00}]']
        if f.path == "construction.commitment_fee_fraction":
            lines += ["# Share of capex drawn at the start of each construction period [-]; "
                      "allowed: a list of", "# 1 to 120 shares >= 0 that sum to 1 (absent = no "
                      "construction period)",
                      f"{'# ' if off else ''}drawdown = [0.25, 0.35, 0.25, 0.15]"]
        if f.path == "costs.land_lease_per_year":
            lines += ["", "# Scheduled replacements, one table each (add as many as needed):",
                      "[[costs.replacement]]"]
            for rf, v in zip(REPLACEMENT_FIELDS, ("inverters", 12, 60.0)):
                lines += _line(rf, v)
            lines += _moving_parts(kind, active=bool(profile.get("moving_parts")))
    lines += _uncertainty(kind)
    return "\n".join(lines) + "\n"


#: Invented sites of the sweep template (names and monthly values invented).
_SWEEP_SITES = (
    ("Dry plateau (invented)", 31.0, -106.0, 1300.0, "Etc/GMT+7",
     "[3.9, 4.9, 6.2, 7.3, 7.9, 7.9, 7.0, 6.6, 5.9, 5.0, 4.2, 3.6]",
     "[7, 10, 14, 18, 23, 27, 27, 26, 23, 18, 11, 7]"),
    ("Humid lowland (invented)", 36.1, -79.95, 273.0, "Etc/GMT+5",
     "[2.6, 3.5, 4.8, 5.9, 6.4, 6.7, 6.5, 5.9, 5.0, 4.0, 2.9, 2.3]",
     "[3.5, 5.0, 9.5, 14.5, 19.0, 23.5, 25.5, 24.8, 21.0, 15.0, 9.5, 5.0]"),
    ("Cloudy north (invented)", 53.0, -2.0, 100.0, "Etc/GMT+0",
     "[0.6, 1.2, 2.3, 3.6, 4.6, 4.9, 4.7, 3.9, 2.7, 1.5, 0.8, 0.5]",
     "[4, 4, 6, 8, 12, 14, 16, 16, 14, 10, 7, 5]"),
)


def sweep_files(stem: str) -> dict[str, str]:
    """The technology case files a sweep template refers to: file name -> text."""
    return {f"{stem}_fixed.toml": template_text("fixed"),
            f"{stem}_tracker.toml": template_text("tracker")}


def sweep_plan_text(stem: str = "plan") -> str:
    """The sweep plan template; its technologies are :func:`sweep_files` of ``stem``."""
    techs = list(sweep_files(stem))
    lines = [
        "# lcoe sweep plan: every site x technology with its own Monte Carlo and common random",
        "# numbers (each trial sees the same draws in every run). Run: lcoe sweep THIS.toml",
        "# Technologies are complete case files (lcoe new writes them beside this plan); each",
        "# site replaces their [site] table. Sites and their monthly values are INVENTED",
        "# examples: weather synthesised from monthly means is a screening input only.",
        "",
        "[sweep]",
        "# Monte Carlo trials of every site x technology [-]; allowed: a whole number >= 2;",
        "# typical: 200-2000",
        "samples = 200",
        "# Seed of the whole sweep [-]; allowed: a whole number >= 0",
        "seed = 20261201",
        "# Trials per task, the unit of parallel work [-]; allowed: a whole number >= 1",
        "chunk_trials = 100",
        "# Case files of the technologies, relative to this plan",
        "technologies = [" + ", ".join(f'"{t}"' for t in techs) + "]",
        "",
        "# Shared by every run (overrides the technologies' own tables key by key): one market",
        "# for all, so comparisons are not blurred by finance.",
        "[uncertain]",
        '"finance.discount_rate" = { dist = "triangular", low = 0.055, mode = 0.07, '
        'high = 0.09 }',
    ]
    for name, lat, lon, alt, tz, ghi, temp in _SWEEP_SITES:
        lines += ["", "[[sites]]", f'name = "{name}"',
                  f"latitude_deg = {lat}      # [deg], north positive",
                  f"longitude_deg = {lon}     # [deg], east positive",
                  f"altitude_m = {alt}        # [m]", f'timezone = "{tz}"',
                  "[sites.monthly]               # or weather = \"file.csv\" in [[sites]]",
                  f"ghi_kwh_m2_day = {ghi}   # [kWh/m2/day], January first",
                  f"temp_air_c = {temp}   # [C]", "wind_speed_m_s = 3.0   # [m/s]"]
    return "\n".join(lines) + "\n"
