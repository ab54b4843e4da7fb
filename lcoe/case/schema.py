"""The case-file vocabulary: every key, its type, unit, allowed range, default and meaning.

One table drives validation (:mod:`lcoe.case.reader`), the commented template written by ``lcoe
new``,
the Inputs sheet of the workbook and the list of numeric inputs that may be made uncertain.
Units: fractions (never percent), kW of DC nameplate, kWh, degrees, the case's currency.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

REQUIRED = object()  # sentinel: the key has no default and must be given

#: Mounting structures of ``plant.mount``.
MOUNTS: tuple[str, ...] = ("fixed", "single_axis", "dual_axis", "body", "concentrator")
#: Shapes of ``plant.body.shape``.
BODY_SHAPES: tuple[str, ...] = ("cone", "cylinder", "dome", "pyramid", "facets")


@dataclass(frozen=True)
class Field:
    """One scalar key of the case file.

    Parameters
    ----------
    path : str
        Dotted path ``section.key`` (sections may be nested, e.g. ``site.monthly``).
    kind : str
        ``"float"``, ``"int"``, ``"bool"``, ``"str"``, ``"choice"`` or ``"path"``.
    unit : str
        Unit shown in the template and the workbook (``"-"`` for dimensionless).
    doc : str
        One-line meaning.
    default : object
        Default value, or :data:`REQUIRED`.
    low, high : float
        Allowed range (inclusive unless ``low_open``/``high_open``).
    choices : tuple of str
        Allowed values for ``kind == "choice"``.
    typical : str
        Typical range shown in the template.
    """

    path: str
    kind: str
    unit: str
    doc: str
    default: object = REQUIRED
    low: float = -math.inf
    high: float = math.inf
    low_open: bool = False
    high_open: bool = False
    choices: tuple[str, ...] = ()
    typical: str = ""
    optional: bool = False  # may be absent with no default (None)

    @property
    def section(self) -> str:
        return self.path.rsplit(".", 1)[0]

    @property
    def key(self) -> str:
        return self.path.rsplit(".", 1)[1]

    @property
    def numeric(self) -> bool:
        return self.kind in ("float", "int")

    def allowed(self) -> str:
        """Plain description of the allowed values, for error messages."""
        if self.kind == "choice":
            return "one of " + ", ".join(f'"{c}"' for c in self.choices)
        if self.kind == "bool":
            return "true or false"
        if self.kind in ("str", "path"):
            return "a text string"
        what = "a whole number" if self.kind == "int" else "a number"
        lo = "" if self.low == -math.inf else f"{'>' if self.low_open else '>='} {self.low:g}"
        hi = "" if self.high == math.inf else f"{'<' if self.high_open else '<='} {self.high:g}"
        rng = " and ".join(s for s in (lo, hi) if s)
        return f"{what} {rng}".strip()

    def in_range(self, value: float) -> bool:
        lo_ok = value > self.low if self.low_open else value >= self.low
        hi_ok = value < self.high if self.high_open else value <= self.high
        return bool(lo_ok and hi_ok and math.isfinite(value))


F = Field
FIELDS: tuple[Field, ...] = (
    # --- case -------------------------------------------------------------------------------
    F("case.name", "str", "-", "Name of the case, shown in every output"),
    F("case.currency", "str", "-", "Currency code of every money amount", default="USD"),
    F("case.lifetime_years", "int", "years", "Operating life after financial close",
      low=1, high=60, typical="25-35"),
    F("case.description", "str", "-", "Free text describing the case", default=""),
    # --- site -------------------------------------------------------------------------------
    F("site.latitude_deg", "float", "deg", "Latitude, north positive", low=-90, high=90),
    F("site.longitude_deg", "float", "deg", "Longitude, east positive", low=-180, high=180),
    F("site.altitude_m", "float", "m", "Altitude above sea level", low=-500, high=9000,
      typical="0-3000"),
    F("site.timezone", "str", "-",
      "IANA time zone or fixed offset (e.g. 'Etc/GMT+5' = UTC-5) used for local-time tables; "
      "must agree with the weather file's offset", optional=True),
    F("site.weather", "path", "-",
      "Weather file (TMY3 .csv, EPW .epw or plain CSV) relative to this case file; "
      "absent = the TMY3 file bundled with pvlib (Greensboro, NC, USA)", optional=True),
    F("site.weather_time_label", "choice", "-",
      "For plain CSV weather: whether each timestamp marks the start, the end or the centre of "
      "its hour (TMY3 and EPW are always hour-ending)", choices=("start", "end", "center"),
      optional=True),
    F("site.albedo", "float", "-", "Ground reflectance", default=0.2, low=0, high=1,
      typical="0.15-0.30 (grass, soil); 0.6-0.8 fresh snow"),
    # --- plant ------------------------------------------------------------------------------
    F("plant.mount", "choice", "-", "Mounting structure: fixed tilt, single-axis tracker, "
      "dual-axis tracker (faces the sun), a 3-D body covered with cells ([plant.body]), or "
      "concentrator optics on dual-axis trackers ([plant.concentrator])",
      choices=MOUNTS, default="fixed"),
    F("plant.tilt_deg", "float", "deg", "Fixed mount: tilt from horizontal; single-axis: "
      "axis tilt", default=20.0, low=0, high=90, typical="10-35 fixed; 0 trackers"),
    F("plant.tilt_rule", "choice", "-", "'value': use plant.tilt_deg; 'latitude': tilt = "
      "|site latitude| (so one technology file serves any site)", choices=("value", "latitude"),
      default="value"),
    F("plant.azimuth_rule", "choice", "-", "'value': use plant.azimuth_deg; 'equator': face "
      "the equator (180 north of it, 0 south of it; a tracker's axis likewise)",
      choices=("value", "equator"), default="value"),
    F("plant.azimuth_deg", "float", "deg", "Fixed mount: azimuth the modules face (180 = south); "
      "single-axis: azimuth of the axis (180 = north-south axis)", default=180.0,
      low=0, high=360, high_open=True),
    F("plant.gcr", "float", "-", "Ground coverage ratio: module area / ground area (trackers: "
      "backtracking; all mounts: land use)", default=0.4, low=0, high=1, low_open=True,
      typical="0.3-0.5"),
    F("plant.max_rotation_deg", "float", "deg", "Single-axis: largest rotation from horizontal",
      default=60.0, low=0, high=90, low_open=True, typical="45-60"),
    F("plant.backtrack", "bool", "-", "Single-axis: backtrack to avoid row-to-row shading",
      default=True),
    F("plant.dc_capacity_kw", "float", "kW", "DC nameplate capacity at STC", low=0,
      low_open=True, typical="100-500000 (commercial to utility scale)"),
    F("plant.dc_ac_ratio", "float", "-", "DC nameplate / inverter AC rating", default=1.25,
      low=0, high=5, low_open=True, typical="1.1-1.4"),
    F("plant.module_efficiency", "float", "-", "Module efficiency at STC (sets cell area)",
      default=0.21, low=0, high=1, low_open=True, typical="0.19-0.23 crystalline silicon"),
    F("plant.temp_coeff_per_c", "float", "1/C", "Power temperature coefficient (gamma)",
      default=-0.0035, low=-0.02, high=0.0, typical="-0.0030 to -0.0045 (common practice)"),
    F("plant.thermal_u0", "float", "W/m2/K", "Faiman constant heat-loss factor", default=25.0,
      low=0, low_open=True, typical="25 (Faiman 2008)"),
    F("plant.thermal_u1", "float", "W s/m3/K", "Faiman wind heat-loss factor", default=6.84,
      low=0, typical="6.84 (Faiman 2008)"),
    F("plant.dc_loss_fraction", "float", "-", "DC losses: mismatch, wiring, nameplate "
      "(and soiling unless [plant.soiling] models it)",
      default=0.07, low=0, high=1, high_open=True, typical="0.05-0.12"),
    F("plant.inverter_efficiency", "float", "-", "Inverter nominal efficiency (part-load curve "
      "of Dobos 2014)", default=0.98, low=0, high=1, low_open=True, typical="0.96-0.99"),
    F("plant.ac_loss_fraction", "float", "-", "AC losses after the inverter: transformer, AC "
      "wiring", default=0.015, low=0, high=1, high_open=True, typical="0.01-0.03"),
    F("plant.availability", "float", "-", "Fraction of energy not lost to outages",
      default=0.99, low=0, high=1, low_open=True, typical="0.97-0.995"),
    F("plant.degradation_per_year", "float", "1/year", "Linear loss of output per year",
      default=0.005, low=0, high=0.1, typical="0.005 median (Jordan & Kurtz 2013)"),
    F("plant.transposition", "choice", "-", "Sky-diffuse transposition model",
      choices=("perez", "haydavies", "isotropic"), default="perez"),
    F("plant.aoi_model", "choice", "-", "Angle-of-incidence loss model for beam light (and, "
      "integrated over the sky and the ground, for diffuse light)",
      choices=("physical", "ashrae"), default="physical"),
    F("plant.diffuse_iam", "bool", "-", "Apply the angle-of-incidence loss to sky and ground "
      "diffuse light too (Marion 2017)", default=True),
    F("plant.rows", "bool", "-", "Fixed and single-axis: model the rows (infinite sheds): "
      "beam shading by the row in front, the sky and ground each row sees, the rear side; "
      "false = an open field, as if each row stood alone", default=True),
    F("plant.row_height_m", "float", "m", "Height of the rows' centre line above ground "
      "(trackers: the rotation axis)", default=1.5, low=0, low_open=True,
      typical="1-2.5"),
    F("plant.row_width_m", "float", "m", "Slant width of a row from lower to upper edge; the "
      "distance between rows is row_width_m / gcr", default=2.0, low=0, low_open=True,
      typical="2 (one module portrait) - 4.5 (two)"),
    F("plant.bifaciality", "float", "-", "Rear-side efficiency / front-side efficiency "
      "(0 = monofacial)", default=0.0, low=0, high=1,
      typical="0 monofacial; 0.65-0.75 PERC; 0.8-0.9 TOPCon, HJT (from memory)"),
    F("plant.rear_loss_fraction", "float", "-", "Rear light lost to the mounting structure, "
      "junction boxes and rear mismatch", default=0.1, low=0, high=1, high_open=True,
      typical="0.05-0.15 (common practice)"),
    # --- plant.soiling ------------------------------------------------------------------------
    F("plant.soiling.model", "choice", "-", "'none'; 'monthly': the 12 fractions of "
      "plant.soiling.monthly_loss; 'kimber': rainfall-driven (Kimber 2006), needs a weather "
      "file with a precipitation column", choices=("none", "monthly", "kimber"),
      default="none"),
    F("plant.soiling.scale", "float", "-", "Multiplier on the monthly soiling profile (make it "
      "uncertain to sample the profile's level)", default=1.0, low=0, high=10,
      typical="0.5-2"),
    F("plant.soiling.rate_per_day", "float", "1/day", "Kimber: energy lost per day without "
      "cleaning rain", default=0.0015, low=0, high=0.1,
      typical="0.001-0.002 rural/suburban, 0.003 desert (Kimber 2006)"),
    F("plant.soiling.max_loss", "float", "-", "Kimber: largest soiling loss", default=0.3,
      low=0, high=1),
    F("plant.soiling.cleaning_threshold_mm", "float", "mm", "Kimber: rain in 24 h that cleans "
      "the modules", default=6.0, low=0, typical="5-10"),
    F("plant.soiling.grace_period_days", "float", "days", "Kimber: days after a cleaning rain "
      "with damp ground and no new soiling", default=14.0, low=0, high=60),
    # --- plant.body (plant.mount = "body") --------------------------------------------------
    F("plant.body.shape", "choice", "-", "Shape of each body covered with cells; 'facets' = "
      "the list of [[plant.body.facet]] tables", choices=BODY_SHAPES, optional=True),
    F("plant.body.radius_m", "float", "m", "Radius: base circle of a cone, cylinder or dome; "
      "corners of a pyramid's base; for 'facets' the envelope used for mutual shading",
      low=0, low_open=True, optional=True, typical="0.2-2"),
    F("plant.body.height_m", "float", "m", "Height of a cone, cylinder or pyramid (a dome's "
      "height is its radius); for 'facets' the envelope used for mutual shading", low=0,
      low_open=True, optional=True, typical="1-6"),
    F("plant.body.facets", "int", "-", "Flat facets around the body (pyramid: its sides); "
      "absent: 4 for a pyramid, 24 otherwise", low=3, high=360, optional=True),
    F("plant.body.rings", "int", "-", "Dome: rings of facets from the top to the base",
      default=6, low=1, high=90),
    F("plant.body.spacing_m", "float", "m", "Centre-to-centre distance of bodies on a square "
      "grid (land per body = spacing^2; mutual shading)", low=0, low_open=True, optional=True,
      typical="2-4 x the body's width"),
    F("plant.body.rotating", "bool", "-", "The body turns about its vertical axis, evening out "
      "the irradiance of each ring of cells", default=False),
    F("plant.body.rotation_period_s", "float", "s", "Time of one turn; must be much shorter "
      "than an hour (each cell then sees the mean of its ring within the hour)", default=60.0,
      low=0, high=600, low_open=True, typical="10-120"),
    F("plant.body.drive_power_w", "float", "W", "Power drawn by each rotating body's drive "
      "whenever the sun is above the horizon (subtracted from the AC output)", default=0.0,
      low=0, typical="5-50"),
    # --- plant.concentrator (plant.mount = "concentrator": on dual-axis trackers) -----------
    F("plant.concentrator.geometric_concentration", "float", "-", "Aperture area / cell area",
      low=1, optional=True, typical="300-1000 (high concentration)"),
    F("plant.concentrator.optical_efficiency", "float", "-", "Share of the direct beam "
      "entering the aperture that reaches the cells", low=0, high=1, low_open=True,
      optional=True, typical="0.75-0.90"),
    F("plant.concentrator.cell_efficiency", "float", "-", "Cell efficiency under "
      "concentration at 25 C", low=0, high=1, low_open=True, high_open=True, optional=True,
      typical="0.35-0.45 multi-junction"),
    F("plant.concentrator.acceptance_half_angle_deg", "float", "deg", "Half-angle within "
      "which the whole beam is accepted", low=0, high=90, low_open=True, optional=True,
      typical="0.5-1.5"),
    F("plant.concentrator.cooling_u_w_m2k", "float", "W/m2/K", "Receiver heat-loss "
      "coefficient per m2 of cell, still air", low=0, low_open=True, optional=True),
    F("plant.concentrator.cooling_u_wind_w_m3sk", "float", "W s/m3/K", "Wind-dependent part "
      "of the heat-loss coefficient per m2 of cell", default=0.0, low=0),
    F("plant.concentrator.temp_coeff_per_c", "float", "1/C", "Relative change of cell "
      "efficiency per kelvin", low=-0.05, high=0.05, optional=True,
      typical="-0.001 to -0.002 multi-junction"),
    F("plant.concentrator.tracking_error_deg", "float", "deg", "Typical pointing error of the "
      "trackers (the beam's angle to the optical axis)", default=0.0, low=0, high=90,
      typical="0.1-0.5"),
    # --- costs ------------------------------------------------------------------------------
    F("costs.capex_per_kw", "float", "currency/kW", "Installed cost at financial close",
      low=0, typical="700-1300 utility scale"),
    F("costs.fixed_om_per_kw_year", "float", "currency/kW/year",
      "Fixed O&M in year-0 money, escalated with inflation", default=0.0, low=0,
      typical="10-25"),
    F("costs.variable_om_per_kwh", "float", "currency/kWh",
      "Variable O&M in year-0 money, escalated with inflation", default=0.0, low=0),
    F("costs.decommissioning_per_kw", "float", "currency/kW",
      "Decommissioning in year-0 money, paid in the last year", default=0.0, low=0),
    F("costs.salvage_per_kw", "float", "currency/kW",
      "Salvage value in year-0 money, received in the last year", default=0.0, low=0),
    F("costs.insurance_fraction_per_year", "float", "1/year",
      "Insurance per year as a fraction of capex, escalated with inflation", default=0.0,
      low=0, high=0.1, typical="0.002-0.006"),
    F("costs.land_lease_per_year", "float", "currency/year",
      "Land lease per year in year-0 money, escalated with inflation", default=0.0, low=0),
    # --- finance ----------------------------------------------------------------------------
    F("finance.discount_rate", "float", "1/year", "Nominal discount rate (after-tax WACC or "
      "the investor's hurdle rate)", low=-1, low_open=True, high=1, typical="0.05-0.10"),
    F("finance.inflation", "float", "1/year", "General inflation; also escalates O&M",
      default=0.02, low=-0.5, high=1, typical="0.02-0.03"),
    # --- claim (what a vendor states; tested by lcoe compare, never used as an input) ---------
    F("claim.text", "str", "-", "The claim in the vendor's words, for the report",
      optional=True),
    F("claim.energy_per_kw_kwh", "float", "kWh/kW/year", "Claimed energy per kW of nameplate "
      "in an average year", low=0, low_open=True, optional=True, typical="1100-2200"),
    F("claim.energy_per_m2_kwh", "float", "kWh/m2/year", "Claimed energy per m2 of cells in an "
      "average year", low=0, low_open=True, optional=True, typical="150-450"),
    F("claim.energy_ratio", "float", "-", "Claimed energy per m2 of cells relative to the "
      "baseline it is compared with", low=0, low_open=True, optional=True),
    F("claim.lcoe_ratio", "float", "-", "Claimed cost per kWh relative to the baseline it is "
      "compared with (0.667 = a third cheaper)", low=0, low_open=True, optional=True),
    # --- revenue (bankability; the section's presence switches it on) ------------------------
    F("revenue.tariff_per_kwh", "float", "currency/kWh",
      "Contracted price in year 1, escalating from year 2", low=0, optional=True,
      typical="0.03-0.10"),
    F("revenue.tariff_escalation", "float", "1/year", "Yearly escalation of the contract price",
      default=0.0, low=-0.2, high=0.5),
    F("revenue.contract_years", "int", "years", "Length of the price contract (absent = whole "
      "life); merchant price afterwards", low=1, high=60, optional=True),
    F("revenue.merchant_price_per_kwh", "float", "currency/kWh",
      "Market price in year 1 money terms for the years after the contract", default=0.0,
      low=0),
    F("revenue.merchant_escalation", "float", "1/year", "Yearly escalation of the merchant "
      "price from year 2", default=0.02, low=-0.2, high=0.5),
    F("revenue.curtailment_fraction", "float", "-", "Share of energy that cannot be sold",
      default=0.0, low=0, high=1, high_open=True, typical="0-0.05"),
    # --- tax ----------------------------------------------------------------------------------
    F("tax.rate", "float", "-", "Income tax rate", default=0.0, low=0, high=1, high_open=True,
      typical="0.15-0.30"),
    F("tax.depreciation", "choice", "-", "Tax depreciation method (accelerated_5yr: IRS "
      "Publication 946 Table A-1, 5-year, half-year)",
      choices=("straight_line", "declining_balance", "accelerated_5yr"),
      default="straight_line"),
    F("tax.depreciation_years", "int", "years", "Recovery period (straight_line, "
      "declining_balance)", default=20, low=1, high=60),
    F("tax.depreciation_rate", "float", "1/year", "Declining-balance rate", default=0.1,
      low=0, high=1, low_open=True),
    F("tax.itc_fraction", "float", "-", "Investment tax credit as a fraction of capex",
      default=0.0, low=0, high=1),
    # --- debt ---------------------------------------------------------------------------------
    F("debt.interest_rate", "float", "1/year", "Loan interest rate (nominal)", default=0.06,
      low=0, high=1, typical="0.04-0.08"),
    F("debt.tenor_years", "int", "years", "Loan tenor from financial close (absent: 18, or "
      "the life if shorter)", default=18, low=1,
      high=60, typical="15-20"),
    F("debt.upfront_fee_fraction", "float", "-", "Arrangement fee as a fraction of the loan",
      default=0.02, low=0, high=0.2),
    F("debt.repayment", "choice", "-", "Repayment profile", choices=("sculpted", "annuity"),
      default="sculpted"),
    F("debt.max_gearing", "float", "-", "Largest debt / capex", default=0.8, low=0, high=1,
      low_open=True, typical="0.6-0.85"),
    F("debt.lockup_dscr", "float", "-", "DSCR below which distributions to equity are locked up",
      default=1.10, low=0, low_open=True, typical="1.05-1.15 (common practice)"),
    # --- lender's case: reserves, cash sweep, tail, construction period -----------------------
    F("debt.dsra_months", "float", "months", "Debt service reserve: months of the next "
      "year's debt service held (0 = none); released at maturity", default=0.0, low=0,
      high=24, typical="6 (common practice)"),
    F("debt.dsra_funding", "choice", "-", "Debt service reserve funded at close (a use of "
      "funds, paid by equity) or built from cash flow", choices=("close", "cash_flow"),
      default="close"),
    F("debt.mra_years_ahead", "int", "years", "Maintenance reserve: years over which each "
      "scheduled replacement and moving-part renewal is accrued before it falls due (0 = "
      "none)", default=0, low=0, high=30, typical="3-5"),
    F("debt.sweep_share", "float", "-", "Cash sweep: share of the cash above "
      "sweep_above_dscr x debt service that prepays the loan (0 = no sweep)", default=0.0,
      low=0, high=1),
    F("debt.sweep_above_dscr", "float", "-", "Cash sweep: DSCR above which cash is swept "
      "(1 = a fixed share of all cash after debt service)", default=1.0, low=1, high=10),
    F("debt.min_tail_years", "int", "years", "Contract years wanted after loan maturity (the "
      "tail); a shorter tail is noted", default=0, low=0, high=30, typical="2-5"),
    F("construction.period", "choice", "-", "Length of one period of construction.drawdown",
      choices=("quarter", "month"), default="quarter"),
    F("construction.idc", "choice", "-", "Interest during construction: added to the loan "
      "(capitalised) or paid by equity", choices=("capitalised", "equity"),
      default="capitalised"),
    F("construction.commitment_fee_fraction", "float", "1/year", "Fee per year on the "
      "undrawn loan during construction", default=0.0, low=0, high=0.05,
      typical="0.003-0.01 (common practice)"),
    # --- equity -------------------------------------------------------------------------------
    F("equity.target_irr", "float", "1/year", "Equity investor's target IRR (nominal)",
      default=0.10, low=-0.99, high=1, typical="0.08-0.14"),
)

#: Energy cases a debt-sizing constraint may name (P50 = the deterministic case; the others
#: by the normal method from ``[uncertain.energy]``, applied to every operating year).
SIZING_CASES: tuple[str, ...] = ("P50", "P90_1yr", "P99_1yr", "P90_10yr", "P99_10yr")

#: Keys of each ``[[costs.replacement]]`` entry.
REPLACEMENT_FIELDS: tuple[Field, ...] = (
    F("costs.replacement.item", "str", "-", "What is replaced"),
    F("costs.replacement.every_years", "int", "years", "Interval between replacements",
      low=1),
    F("costs.replacement.cost_per_kw", "float", "currency/kW",
      "Cost of each replacement in year-0 money, escalated with inflation", low=0),
)

#: Keys of each ``[[plant.body.facet]]`` entry (``plant.body.shape = "facets"``).
BODY_FACET_FIELDS: tuple[Field, ...] = (
    F("plant.body.facet.tilt_deg", "float", "deg", "Facet tilt from horizontal (0 faces up, "
      "90 vertical, 180 faces down)", low=0, high=180),
    F("plant.body.facet.azimuth_deg", "float", "deg", "Direction the facet faces, clockwise "
      "from north (180 = south)", low=0, high=360, high_open=True),
    F("plant.body.facet.area_m2", "float", "m2", "Cell area of the facet", low=0,
      low_open=True),
)

#: Keys of each ``[[costs.moving_part]]`` entry: parts that wear out and fail (drives, motors,
#: bearings, actuators). Give the life as ``mean_years`` (exponential) or as Weibull ``shape``
#: and ``scale_years``.
MOVING_PART_FIELDS: tuple[Field, ...] = (
    F("costs.moving_part.item", "str", "-", "What fails and is replaced (e.g. a column drive)"),
    F("costs.moving_part.units", "float", "-", "How many such parts: in the plant, or on each "
      "body (per = \"body\")", low=0, low_open=True),
    F("costs.moving_part.per", "choice", "-", "Whether units counts parts in the plant or on "
      "each body", choices=("plant", "body"), default="plant"),
    F("costs.moving_part.mean_years", "float", "years", "Mean life with exponential lives "
      "(constant failure rate)", low=0, low_open=True, optional=True, typical="5-20"),
    F("costs.moving_part.shape", "float", "-", "Weibull shape k of the life (1 = exponential, "
      "> 1 wear-out)", low=0.2, high=20, optional=True, typical="1.5-4 for wear-out"),
    F("costs.moving_part.scale_years", "float", "years", "Weibull scale of the life", low=0,
      low_open=True, optional=True, typical="5-25"),
    F("costs.moving_part.cost_each", "float", "currency", "Cost of one replacement, parts and "
      "labour, in year-0 money, escalated with inflation", low=0),
    F("costs.moving_part.repair_days", "float", "days", "Days a unit delivers nothing after a "
      "failure", default=0.0, low=0, high=365),
    F("costs.moving_part.damage_fraction", "float", "-", "Expected share of the capital cost of "
      "the equipment a part serves that a failure destroys", default=0.0, low=0, high=1),
)

FIELD_BY_PATH: dict[str, Field] = {f.path: f for f in FIELDS}
SECTIONS: tuple[str, ...] = tuple(dict.fromkeys(f.section for f in FIELDS))
#: Sections that hold lists or tables handled outside the scalar schema.
EXTRA_KEYS: dict[str, tuple[str, ...]] = {
    "costs": ("replacement", "moving_part"),
    "site": ("monthly",),
    "debt": ("sizing",),
    "construction": ("drawdown",),
    "plant.body": ("facet",),
    "plant.soiling": ("monthly_loss",),
    "": ("uncertain", "correlation"),
}


#: Sections whose numbers are statements to test, not inputs of the model.
STATEMENT_SECTIONS: tuple[str, ...] = ("claim",)


def list_field(path: str) -> Field | None:
    """The Field of an entry of a list table by indexed path, e.g.
    ``costs.moving_part[0].mean_years`` -> the ``mean_years`` field; None when unknown."""
    if "[" not in path or "]." not in path:
        return None
    table, key = path.split("[", 1)[0], path.rsplit("].", 1)[1]
    for f in REPLACEMENT_FIELDS + MOVING_PART_FIELDS + BODY_FACET_FIELDS:
        if f.path == f"{table}.{key}":
            return f
    return None


def numeric_paths() -> list[str]:
    """Dotted paths of every numeric input (candidates for ``[uncertain]``)."""
    return [f.path for f in FIELDS if f.numeric and f.section not in STATEMENT_SECTIONS]


#: Inputs that change the plane-of-array irradiance (the geometry); every other energy input
#: acts downstream of it and is evaluated vectorised over samples.
GEOMETRY_PATHS: tuple[str, ...] = (
    "plant.tilt_deg", "plant.azimuth_deg", "plant.gcr", "plant.max_rotation_deg",
    "plant.row_height_m", "plant.row_width_m",
)
#: Mounts whose rows get the row model (``plant.rows``).
ROW_MOUNTS: tuple[str, ...] = ("fixed", "single_axis")
#: Kimber inputs that change the hourly dirt history (grouped like geometry when sampled).
KIMBER_HISTORY_PATHS: tuple[str, ...] = (
    "plant.soiling.cleaning_threshold_mm", "plant.soiling.grace_period_days",
)
#: Further geometry inputs of a body (``plant.mount = "body"``), when the case gives them.
BODY_GEOMETRY_PATHS: tuple[str, ...] = (
    "plant.body.radius_m", "plant.body.height_m", "plant.body.facets", "plant.body.rings",
    "plant.body.spacing_m",
)


def child_sections(section: str) -> tuple[str, ...]:
    """Names of the sub-tables of ``section`` that hold schema keys (``plant`` -> ``body``)."""
    depth = section.count(".") + 1
    return tuple(dict.fromkeys(s.split(".")[depth] for s in SECTIONS
                               if s.startswith(section + ".") and s.count(".") >= depth))
