"""Short human labels of inputs, with units, for charts, report sentences and sheet headings.

Readers see "Capex [USD/kW]", never ``costs.capex_per_kw``; the dotted key stays where a
machine or an auditor needs it (the Inputs sheet, summary.json, trials.csv). Labels come from
the one schema table (:mod:`lcoe.case.schema`): a short name here where the key's one-line meaning
is too long for an axis, the meaning's first clause otherwise, and the unit of the key.
"""

from __future__ import annotations

import re

from lcoe.case.schema import (
    BODY_FACET_FIELDS,
    FIELD_BY_PATH,
    MOVING_PART_FIELDS,
    REPLACEMENT_FIELDS,
    Field,
)

#: Short names of keys whose one-line meaning is too long for a chart axis.
SHORT: dict[str, str] = {
    "case.lifetime_years": "Operating life",
    "site.latitude_deg": "Latitude",
    "site.longitude_deg": "Longitude",
    "site.altitude_m": "Altitude",
    "site.albedo": "Ground albedo",
    "plant.tilt_deg": "Tilt",
    "plant.azimuth_deg": "Azimuth",
    "plant.gcr": "Ground coverage ratio",
    "plant.max_rotation_deg": "Tracker rotation limit",
    "plant.dc_capacity_kw": "DC capacity",
    "plant.dc_ac_ratio": "DC/AC ratio",
    "plant.module_efficiency": "Module efficiency",
    "plant.temp_coeff_per_c": "Power temperature coefficient",
    "plant.thermal_u0": "Heat loss, constant (Faiman U0)",
    "plant.thermal_u1": "Heat loss, wind (Faiman U1)",
    "plant.dc_loss_fraction": "DC losses",
    "plant.inverter_efficiency": "Inverter efficiency",
    "plant.ac_loss_fraction": "AC losses",
    "plant.availability": "Availability",
    "plant.degradation_per_year": "Degradation",
    "plant.body.radius_m": "Body radius",
    "plant.body.height_m": "Body height",
    "plant.body.facets": "Facets per body",
    "plant.body.rings": "Rings of facets",
    "plant.body.spacing_m": "Body spacing",
    "plant.body.rotation_period_s": "Rotation period",
    "plant.body.drive_power_w": "Drive power per body",
    "plant.concentrator.geometric_concentration": "Geometric concentration",
    "plant.concentrator.optical_efficiency": "Optical efficiency",
    "plant.concentrator.cell_efficiency": "Cell efficiency",
    "plant.concentrator.acceptance_half_angle_deg": "Acceptance half-angle",
    "plant.concentrator.cooling_u_w_m2k": "Receiver heat loss, still air",
    "plant.concentrator.cooling_u_wind_w_m3sk": "Receiver heat loss, wind",
    "plant.concentrator.temp_coeff_per_c": "Cell temperature coefficient",
    "plant.concentrator.tracking_error_deg": "Tracking error",
    "costs.capex_per_kw": "Capex",
    "costs.fixed_om_per_kw_year": "Fixed O&M",
    "costs.variable_om_per_kwh": "Variable O&M",
    "costs.decommissioning_per_kw": "Decommissioning",
    "costs.salvage_per_kw": "Salvage value",
    "costs.insurance_fraction_per_year": "Insurance",
    "costs.land_lease_per_year": "Land lease",
    "finance.discount_rate": "Discount rate (nominal)",
    "finance.inflation": "Inflation",
    "revenue.tariff_per_kwh": "Contract price",
    "revenue.tariff_escalation": "Contract price escalation",
    "revenue.contract_years": "Contract length",
    "revenue.merchant_price_per_kwh": "Merchant price",
    "revenue.merchant_escalation": "Merchant price escalation",
    "revenue.curtailment_fraction": "Curtailment",
    "tax.rate": "Tax rate",
    "tax.depreciation_years": "Depreciation period",
    "tax.depreciation_rate": "Declining-balance rate",
    "tax.itc_fraction": "Investment tax credit",
    "debt.interest_rate": "Interest rate",
    "debt.tenor_years": "Debt tenor",
    "debt.upfront_fee_fraction": "Upfront fee",
    "debt.max_gearing": "Gearing cap",
    "debt.lockup_dscr": "Lock-up DSCR",
    "equity.target_irr": "Target equity IRR",
    # entries of list tables (by the table's path)
    "costs.replacement.cost_per_kw": "replacement cost",
    "costs.replacement.every_years": "replacement interval",
    "costs.moving_part.units": "units",
    "costs.moving_part.mean_years": "mean life",
    "costs.moving_part.shape": "Weibull shape",
    "costs.moving_part.scale_years": "Weibull scale",
    "costs.moving_part.cost_each": "cost per replacement",
    "costs.moving_part.repair_days": "repair time",
    "costs.moving_part.damage_fraction": "damage per failure",
}

#: Energy factors of ``[uncertain.energy]`` (multipliers of energy; 1 = as modelled).
ENERGY_LABELS: dict[str, str] = {
    "resource": "Long-term solar resource",
    "model": "Energy model error",
    "interannual": "Year-to-year weather",
}

_INDEXED = re.compile(r"^(?P<table>[a-z_.]+)\[(?P<i>\d+)\]\.(?P<key>[a-z_0-9]+)$")


def _unit(unit: str, currency: str) -> str:
    return unit.replace("currency", currency)


def _doc_name(f: Field) -> str:
    """First clause of a key's one-line meaning."""
    return re.split(r"[,:;(]| - ", f.doc, maxsplit=1)[0].strip()


def input_label(path: str, currency: str = "currency", items=None, unit: bool = True) -> str:
    """Short human label of an input, with its unit in brackets.

    Parameters
    ----------
    path : str
        Dotted key (``costs.capex_per_kw``), an entry of a list table
        (``costs.replacement[0].cost_per_kw``), an energy factor (``energy.resource``) or a
        Sobol group name (returned as it is).
    currency : str
        Currency code replacing "currency" in units.
    items : mapping, optional
        Names of list-table entries by table path and index, e.g.
        ``{("costs.replacement", 0): "inverters"}``; see :func:`case_items`.
    unit : bool
        Append `` [unit]`` (dimensionless inputs get ``[-]``).

    Returns
    -------
    str
        E.g. ``"Capex [USD/kW]"``, ``"Inverters replacement cost [USD/kW]"``,
        ``"Long-term solar resource (energy factor) [-]"``.
    """
    path = str(path)
    f = FIELD_BY_PATH.get(path)
    if f is not None:
        name = SHORT.get(path) or _doc_name(f)
        return f"{name} [{_unit(f.unit, currency)}]" if unit else name
    if path.startswith("energy."):
        comp = path.split(".", 1)[1]
        name = ENERGY_LABELS.get(comp, comp.replace("_", " ").capitalize())
        return f"{name} (energy factor) [-]" if unit else f"{name} (energy factor)"
    m = _INDEXED.match(path)
    if m:
        table, i, key = m["table"], int(m["i"]), m["key"]
        fields = {x.path: x for x in REPLACEMENT_FIELDS + MOVING_PART_FIELDS +
                  BODY_FACET_FIELDS}
        f = fields.get(f"{table}.{key}")
        if f is not None:
            item = (items or {}).get((table, i))
            item = item.split(" (")[0].strip() if item else item
            what = SHORT.get(f.path) or _doc_name(f).lower()
            kind = table.rsplit(".", 1)[-1].replace("_", " ")
            name = f"{item.capitalize()} {what}" if item else f"{what.capitalize()} of " \
                f"{kind} {i + 1}"
            return f"{name} [{_unit(f.unit, currency)}]" if unit else name
    return path


def case_items(case) -> dict:
    """Names of a case's list-table entries for :func:`input_label`."""
    out = {}
    for i, r in enumerate(getattr(case, "replacements", ()) or ()):
        out[("costs.replacement", i)] = str(r.item)
    for i, p in enumerate(getattr(case, "moving_parts", ()) or ()):
        out[("costs.moving_part", i)] = str(getattr(p, "item", f"part {i + 1}"))
    return out


def labeller(case):
    """``label(path)`` for the inputs of ``case`` (its currency and list-table names)."""
    currency = case["case.currency"] if case is not None else "currency"
    items = case_items(case) if case is not None else {}

    def label(path: str, unit: bool = True) -> str:
        return input_label(path, currency, items, unit)

    return label


def group_label(name: str, n_members: int) -> str:
    """Label of a group of inputs (Sobol or value-of-information group): its name, capitalised,
    with the number of members, e.g. ``"Costs [Larkspur] (group of 3 inputs)"``."""
    name = str(name)
    return f"{name[:1].upper()}{name[1:]} (group of {n_members} inputs)"


def with_case(label: str, key: str, path: str) -> str:
    """``label`` of ``path`` with what a study appends to the key to name its case.

    A study names an input of one case ``"costs.capex_per_kw [Case name]"``; the label keeps
    that suffix: ``"Capex [USD/kW] [Case name]"``.
    """
    return label + key[len(path):] if key != path and key.startswith(path) else label


def study_labels(columns, cases) -> dict:
    """Label with unit of every column of a study's trial design.

    Parameters
    ----------
    columns : sequence
        Design columns with ``path`` (dotted key), ``dist.name`` (the column's name: the key,
        with the case appended when cases draw it apart) and ``cases`` (indices of the cases
        that use it).
    cases : sequence of Case
        The study's cases (their currency and list-table names).

    Returns
    -------
    dict of str to str
        Label by column name and by dotted key (the first case's label).
    """
    out = {}
    for col in columns:
        text = labeller(cases[col.cases[0]])(col.path)
        out.setdefault(col.path, text)
        out[col.dist.name] = with_case(text, col.dist.name, col.path)
    return out


#: Readable names of the outputs a study ranks drivers for.
OUTPUT_NAMES: dict[str, str] = {
    "lcoe_real_per_kwh": "LCOE real",
    "lcoe_nominal_per_kwh": "LCOE nominal",
    "npv_costs": "NPV of costs",
    "energy_first_year_kwh": "First-year energy",
}


def schema_labels(currency: str = "currency") -> dict:
    """Label with unit of every key of the schema, for :func:`humanize` of notes that may
    name any input (e.g. a sweep's notes on its technologies)."""
    return {path: input_label(path, currency) for path in FIELD_BY_PATH}


def humanize(text: str, labels: dict) -> str:
    """``text`` with every dotted input key of ``labels`` (and output key) replaced by its
    label, for sentences written from machine names (notes, warnings)."""
    out = str(text)
    names = {**OUTPUT_NAMES, **labels}
    for key in sorted(names, key=len, reverse=True):
        if key in out:
            label = names[key]
            out = out.replace(f'uncertain."{key}"', label).replace(key, label)
    return out
