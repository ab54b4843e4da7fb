"""Plausibility guards on model results: a result that breaks physics is an error, not a number.

The model is run as written even when its inputs are nonsense (a drive that draws more than the
plant produces, cells thousands of degrees hot, a cost of 1e300 per kW). These checks look at
the results of every sample and name the inputs responsible, so that a wrong answer never leaves
the tool with exit status 0.

Checks, per sample (the first one failed is reported):

- energy: every stage of the loss chain finite; the cell-temperature stage keeps at least
  :data:`TEMPERATURE_KEEP_MIN` of the DC energy (losing more means mean cell temperatures far
  above any module rating, e.g. ``plant.thermal_u0`` near zero or air temperatures in kelvin);
  the plant's own consumption (drives) not larger than what it produces; delivered energy > 0;
  performance ratio (of the front side, rear gain of bifacial modules taken out) at most
  :data:`PR_MAX`.
- cost: LCOE (real and nominal) finite, >= 0 and below :data:`LCOE_ABSURD_PER_KWH`, naming the
  cost line that dominates the present value of costs.

Monte Carlo trials (decision): a trial that fails a check is not dropped (dropping biases the
tails that P90/P99 and covenant odds read) and not kept (it would report an impossible plant);
the run stops with one line that counts the failing trials of the whole run and names the first
with its sampled inputs, so the user can narrow the ``[uncertain]`` ranges (the study layer,
:func:`lcoe.study.trials.evaluate_chunk`, checks every chunk and
:func:`lcoe.study.trials.evaluate_runs` adds up the counts).
"""

from __future__ import annotations

import re

import numpy as np

#: Largest performance ratio accepted [-]. IEC 61724-1 PR is at most about 1 for a real plant;
#: very cold sunny sites reach about 0.9-0.95 (common practice), so 1.05 leaves a margin.
PR_MAX = 1.05
#: Smallest share of the DC energy at 25 C that may remain after the temperature loss [-].
#: Losing half needs a mean cell temperature of about 25 + 0.5 / 0.0035 = 168 C for crystalline
#: silicon, far above the 85 C modules are rated for (IEC 61215 test limit).
TEMPERATURE_KEEP_MIN = 0.5
#: LCOE at or above this is absurd in any currency [currency/kWh].
LCOE_ABSURD_PER_KWH = 1e6

#: Case key behind each cost line of :data:`lcoe.money.cashflow.COST_LINES` (and moving parts).
COST_LINE_KEYS = {
    "capex": "costs.capex_per_kw", "fixed_om": "costs.fixed_om_per_kw_year",
    "variable_om": "costs.variable_om_per_kwh",
    "insurance": "costs.insurance_fraction_per_year",
    "land_lease": "costs.land_lease_per_year", "replacements": "costs.replacement[*].cost_per_kw",
    "decommissioning": "costs.decommissioning_per_kw", "salvage": "costs.salvage_per_kw",
    "moving_parts": "costs.moving_part[*].cost_each",
}


def _v(params, path: str, i: int) -> str:
    """``path = value`` of sample ``i`` (value from the per-sample parameters)."""
    if path in params:
        return f"{path} = {float(np.asarray(params[path]).reshape(-1)[i]):,.6g}"
    return path


def energy_problems(mount: str, energy, params) -> tuple[np.ndarray, list]:
    """Samples whose energy breaks physics, and how to describe each.

    Parameters
    ----------
    mount : str
        ``plant.mount`` of the case (names the temperature inputs).
    energy : lcoe.plant.energy.EnergyResult
        Totals per sample, (n_s,) arrays.
    params : mapping of str to numpy.ndarray
        Every numeric input by dotted path, (n_s,).

    Returns
    -------
    bad : numpy.ndarray of bool
        (n_s,) True where a check fails.
    describe : list of callables
        ``(mask, text(i))`` pairs in the order the checks are made; the first whose mask is
        True at ``i`` describes sample ``i``.
    """
    lc = energy.loss_chain_kwh
    n = energy.annual_kwh.shape[0]
    with np.errstate(all="ignore"):
        finite = np.all([np.isfinite(v) for v in lc.values()], axis=0) & \
            np.isfinite(energy.annual_kwh)
        dc_stc = lc.get("after_bifacial_kwh", lc["after_iam_kwh"])  # the stage before
        temp_keep = np.where(dc_stc > 0, lc["after_temperature_kwh"] / dc_stc, 1.0)
        produced = lc["after_availability_kwh"]
        own_use = produced - lc["delivered_kwh"]
        # PR of the front side: a bifacial plant's rear gain is light the front PR omits
        front = lc.get("after_soiling_kwh", dc_stc)
        rear_gain = np.where((front > 0) & (dc_stc > front), dc_stc / front, 1.0)
        pr = np.where(energy.poa_kwh_m2 > 0, energy.performance_ratio / rear_gain, 0.0)
    if mount == "concentrator":
        temp_keys = ("plant.concentrator.cooling_u_w_m2k",
                     "plant.concentrator.cooling_u_wind_w_m3sk",
                     "plant.concentrator.temp_coeff_per_c")
    else:
        temp_keys = ("plant.thermal_u0", "plant.thermal_u1", "plant.temp_coeff_per_c")

    def keys(i, paths):
        return ", ".join(_v(params, p, i) for p in paths)

    checks = [
        (~finite, lambda i: "the energy model gave a non-finite energy; check the plant inputs "
                            "and the weather file"),
        (temp_keep < TEMPERATURE_KEEP_MIN, lambda i: (
            ("cell temperature makes the DC energy negative" if temp_keep[i] < 0 else
             f"cell temperature takes {100 * (1 - temp_keep[i]):.0f} % of the DC energy")
            + f" (a loss above {100 * (1 - TEMPERATURE_KEEP_MIN):.0f} % means cells far "
            f"above their rated temperature); check {keys(i, temp_keys)} and the weather's air "
            f"temperature (degrees C)")),
        (own_use > produced, lambda i: (
            f"the plant's own consumption ({own_use[i] / 1e3:,.0f} MWh/year) is larger than "
            f"what it produces ({produced[i] / 1e3:,.0f} MWh/year); check "
            f"{keys(i, ('plant.body.drive_power_w', 'plant.dc_capacity_kw'))} and "
            f"{keys(i, ('plant.module_efficiency',))} (they set the number of bodies"
            + (f", {energy.n_bodies[i]:,.0f})" if energy.n_bodies is not None else ")"))),
        (~(energy.annual_kwh > 0), lambda i: (
            f"the plant delivers {energy.annual_kwh[i]:,.0f} kWh a year, so its LCOE is "
            f"non-finite (check the site, the weather file and "
            f"{keys(i, ('plant.availability', 'plant.dc_capacity_kw'))})")),
        (pr > PR_MAX, lambda i: (
            f"performance ratio {pr[i]:.3f} is above {PR_MAX:g}: more energy than the light on "
            f"the modules at rated efficiency can give; check the weather's air temperature "
            f"(kelvin or Fahrenheit instead of C?) and {keys(i, temp_keys)}")),
    ]
    bad = np.zeros(n, dtype=bool)
    for mask, _ in checks:
        bad |= mask
    return bad, checks


def cost_problems(cashflow, params) -> tuple[np.ndarray, list]:
    """Samples whose LCOE is not finite, negative or absurdly large, and how to describe each.

    Parameters
    ----------
    cashflow : lcoe.money.cashflow.CashFlow
    params : mapping of str to numpy.ndarray
        Every numeric input by dotted path, (n_s,).

    Returns
    -------
    bad, describe
        As :func:`energy_problems`.
    """
    real, nom = cashflow.lcoe_real, cashflow.lcoe_nominal
    with np.errstate(all="ignore"):
        finite = np.isfinite(real) & np.isfinite(nom)
        negative = finite & ((real < 0) | (nom < 0))
        absurd = finite & ((real >= LCOE_ABSURD_PER_KWH) | (nom >= LCOE_ABSURD_PER_KWH))

    def dominant(i: int, sign: float) -> str:
        """The cost line with the largest present value of sign x cost for sample ``i``."""
        years = cashflow.years
        rate = float(cashflow.nominal_rate[i])
        with np.errstate(all="ignore"):
            disc = (1.0 + rate) ** -years.astype(float)
            pv = {k: float(np.sum(sign * v[i] * disc)) for k, v in cashflow.lines.items()}
        name = max(pv, key=lambda k: pv[k] if np.isfinite(pv[k]) else np.inf)
        key = COST_LINE_KEYS.get(name, name)
        return _v(params, key, i) if "*" not in key else key

    checks = [
        (~finite, lambda i: (
            f"the LCOE is not finite (discounted energy "
            f"{cashflow.pv_energy_real_kwh[i]:.4g} kWh, present value of costs "
            f"{cashflow.pv_costs[i]:.4g}); check {dominant(i, 1.0)} and that the plant "
            f"delivers energy")),
        (negative, lambda i: (
            f"the LCOE is negative ({real[i]:.4g} real, {nom[i]:.4g} nominal per kWh): the "
            f"credits outweigh every cost; check {dominant(i, -1.0)}")),
        (absurd, lambda i: (
            f"the LCOE of {max(real[i], nom[i]):.4g} per kWh is absurd in any currency (limit "
            f"{LCOE_ABSURD_PER_KWH:g}); check {dominant(i, 1.0)} (a total entered as a "
            f"per-kW value?)")),
    ]
    return ~finite | negative | absurd, checks


def describe(checks: list, i: int) -> str:
    """Text of the first failed check of sample ``i``."""
    for mask, text in checks:
        if mask[i]:
            return text(i)
    raise ValueError(f"sample {i} fails no check")


def check_output(mount: str, out) -> tuple[np.ndarray, callable]:
    """Energy and cost checks of a model output.

    Parameters
    ----------
    mount : str
        ``plant.mount`` of the case.
    out : lcoe.model.ModelOutput
        Energy, cash flow and per-sample parameters, (n_s,) arrays.

    Returns
    -------
    bad : numpy.ndarray of bool
        (n_s,) True where a check fails.
    text : callable
        ``text(i)``: one sentence on the first failed check of sample ``i``.
    """
    e_bad, e_checks = energy_problems(mount, out.energy, out.params)
    c_bad, c_checks = cost_problems(out.cashflow, out.params)
    checks = e_checks + c_checks
    return e_bad | c_bad, lambda i: describe(checks, i)


#: A value this many times beyond its typical range gets a hint about the unit [-].
_UNIT_SLIP = 20.0
_NUMBER = r"-?\d+(?:\.\d+)?(?:e-?\d+)?"
_RANGE = re.compile(rf"({_NUMBER})\s*(?:-|to)\s*({_NUMBER})|({_NUMBER})")


def typical_ranges(typical: str) -> list[tuple[float, float]]:
    """Numeric ranges of a schema ``typical`` text; a single value v stands for [v/2, 2v].

    ``"10-35 fixed; 0 trackers"`` -> [(10, 35), (0, 0)]; ``"25 (Faiman 2008)"`` -> [(12.5, 50)]
    (text in brackets is a citation, not a range); relative ranges (``"2-4 x the body's
    width"``) give [].
    """
    if " x " in typical:
        return []
    out = []
    for part in re.sub(r"\([^)]*\)", "", typical.replace(",", "")).split(";"):
        m = _RANGE.search(part)
        if not m:
            continue
        if m.group(3) is not None:
            v = float(m.group(3))
            out.append((v, v) if v == 0 else tuple(sorted((v / 2, v * 2))))
        else:
            out.append(tuple(sorted((float(m.group(1)), float(m.group(2))))))
    return out


def atypical_inputs(case) -> list[str]:
    """One line per numeric case value outside its schema ``typical`` range (a warning).

    Catches unit slips that validation cannot: capex entered as a total, a tariff per MWh, a
    capacity in MW, a DSCR or a loss in percent. Only values written in the case file count;
    defaults are typical by construction.

    Parameters
    ----------
    case : lcoe.case.reader.Case

    Returns
    -------
    list of str
        E.g. ``"costs.capex_per_kw = 2.1e+07 currency/kW is outside the typical 700-1300
        utility scale (a total instead of per kW?)"``.
    """
    from lcoe.case.schema import FIELDS, STATEMENT_SECTIONS

    notes = []
    for f in FIELDS:
        value = case.values.get(f.path)
        if (f.section in STATEMENT_SECTIONS or not f.numeric or value is None
                or not f.typical or value == f.default):
            continue
        ranges = typical_ranges(f.typical)
        if not ranges or any(lo <= value <= hi for lo, hi in ranges):
            continue
        lo = min(r[0] for r in ranges)
        hi = max(r[1] for r in ranges)
        hint = ""
        if hi > 0 and value > _UNIT_SLIP * hi:
            hint = (" (per MWh instead of per kWh?)" if f.unit.endswith("/kWh") else
                    " (a total instead of per kW?)" if "/kW" in f.unit else
                    " (percent instead of a fraction or ratio?)" if f.unit in ("-", "1/year")
                    else " (another unit?)")
        elif lo > 0 and 0 < value < lo / _UNIT_SLIP:
            hint = " (in a larger unit, e.g. MW instead of kW?)"
        unit = "" if f.unit == "-" else f" {f.unit}"
        notes.append(f"{f.path} = {value:,.6g}{unit} is outside the typical {f.typical}"
                     f"{hint}")
    for i, (name, dscr) in enumerate(case.debt_sizing):
        if dscr > 5:
            notes.append(f"debt.sizing[{i}].min_dscr = {dscr:g} for {name} is far above the "
                         f"usual 1.0-1.6 (a ratio, not percent: 1.30 means 130 %)")
    return notes
