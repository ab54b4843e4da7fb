"""``summary.json``: the headline numbers of a run, machine-readable."""

from __future__ import annotations

import json
import math

import numpy as np

from lcoe.export.hourly import monthly_tables
from lcoe.money.cashflow import LCOE_FORMULA
from lcoe.plant.energy import LOSS_CHAIN
from lcoe.study.results import RunResult

SCHEMA_VERSION = 1


def _clean(obj):
    """Make numpy scalars/arrays JSON-ready; non-finite floats become null."""
    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _clean(obj.tolist())
    if isinstance(obj, (np.floating, float)):
        f = float(obj)
        return f if math.isfinite(f) else None
    if isinstance(obj, (np.integer,)):
        return int(obj)
    if isinstance(obj, np.bool_):
        return bool(obj)
    return obj


def summary_dict(result: RunResult) -> dict:
    """The content of ``summary.json`` as a plain dict."""
    case = result.case
    e = result.base.energy
    c = result.base.cashflow
    w = result.site.weather
    out = {
        "schema_version": SCHEMA_VERSION,
        "case": {"name": case.name, "source": case.source, "sha256": case.sha256,
                 "currency": case["case.currency"], "lifetime_years": case["case.lifetime_years"],
                 "mount": case["plant.mount"], "dc_capacity_kw": case["plant.dc_capacity_kw"]},
        "weather": {"source": w.source, "format": w.fmt, "station": w.name,
                    "hours": w.n_hours, "years": w.n_years, "typical_year": w.typical_year,
                    "utc_offset_h": w.utc_offset_h},
        "energy": {
            "first_year_kwh": e.annual_kwh[0],
            "specific_yield_kwh_per_kw": e.specific_yield_kwh_per_kw[0],
            "performance_ratio": e.performance_ratio[0],
            "clipping_loss_fraction": e.clipping_loss_fraction[0],
            "capacity_factor_dc": e.capacity_factor_dc[0],
            "poa_irradiation_kwh_m2": e.poa_kwh_m2[0],
            "monthly_kwh": e.monthly_kwh[0],
            "monthly": monthly_tables(result),
            "loss_chain_kwh": {k: e.loss_chain_kwh[k][0] for k, _ in LOSS_CHAIN},
        },
        "lcoe": {"real_per_kwh": c.lcoe_real[0], "nominal_per_kwh": c.lcoe_nominal[0],
                 "formula": LCOE_FORMULA, "real_discount_rate": c.real_rate[0],
                 "nominal_discount_rate": c.nominal_rate[0]},
        "cost": {"npv_costs": c.pv_costs[0], "pv_energy_real_kwh": c.pv_energy_real_kwh[0],
                 "pv_energy_nominal_kwh": c.pv_energy_nominal_kwh[0],
                 "capex": c.lines["capex"][0, 0]},
        "notes": list(result.notes),
        "versions": result.provenance.get("versions", {}),
        "provenance": {k: v for k, v in result.provenance.items() if k != "versions"},
    }
    for name, block in result.extras.items():
        if hasattr(block, "to_summary"):
            out[name] = block.to_summary()
        elif isinstance(block, (dict, list)):
            out[name] = block
    return _clean(out)


def summary_json(result: RunResult) -> str:
    """``summary.json`` text (indented, UTF-8)."""
    return json.dumps(summary_dict(result), indent=2, ensure_ascii=False) + "\n"
