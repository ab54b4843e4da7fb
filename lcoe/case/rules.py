"""Rules across the keys of a case (cost tables, mounts and their geometry, moving parts),
applied by :func:`lcoe.case.reader.case_from_dict` after every key was read.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np

from lcoe.case.errors import InputError, field_error
from lcoe.case.schema import (
    FIELDS,
    ROW_MOUNTS,
)


def _check_cross_fields(values: Mapping[str, Any], replacements, source: str) -> None:
    """Checks that involve several keys at once."""
    life = values["case.lifetime_years"]
    for i, r in enumerate(replacements):
        if r.every_years >= life:
            raise field_error(source, f"costs.replacement[{i}].every_years", r.every_years,
                              f"a whole number of years shorter than case.lifetime_years "
                              f"({life}); a replacement at or after the end of life never "
                              f"happens")
    r, infl = values["finance.discount_rate"], values["finance.inflation"]
    if (1 + r) / (1 + infl) - 1 <= -1 + 1e-9 or not math.isfinite(r):
        raise field_error(source, "finance.discount_rate", r,
                          "a rate whose real value (1+r)/(1+inflation)-1 is above -100 %")
    if values["debt.tenor_years"] > life:
        raise field_error(source, "debt.tenor_years", values["debt.tenor_years"],
                          f"a tenor no longer than case.lifetime_years ({life})")
    dep = values["tax.depreciation"]
    if dep == "accelerated_5yr" and life < 6:
        raise field_error(source, "tax.depreciation", dep,
                          f"straight_line or declining_balance when case.lifetime_years "
                          f"({life}) is below the 6 tax years of accelerated_5yr")
    if dep != "accelerated_5yr" and values["tax.depreciation_years"] > life:
        raise field_error(source, "tax.depreciation_years", values["tax.depreciation_years"],
                          f"a recovery period no longer than case.lifetime_years ({life})")
    cy = values.get("revenue.contract_years")
    if cy is not None and cy > life:
        raise field_error(source, "revenue.contract_years", cy,
                          f"a contract no longer than case.lifetime_years ({life})")
    if values["plant.mount"] == "single_axis" and values["plant.tilt_deg"] > 45:
        raise field_error(source, "plant.tilt_deg", values["plant.tilt_deg"],
                          "an axis tilt in [0, 45] for a single-axis tracker")


def _check_mount(values: Mapping[str, Any], facets, source: str) -> None:
    """Checks of the mount's own tables: a concentrator's keys; a body's shape, spacing, drive;
    rows whose lower edge stays above the ground."""
    if values["plant.rows"] and values["plant.mount"] in ROW_MOUNTS:

        fixed = values["plant.mount"] == "fixed"
        tilt = values["plant.tilt_deg"] if fixed else values["plant.max_rotation_deg"]
        width, height = values["plant.row_width_m"], values["plant.row_height_m"]
        lowest = lowest_row_height_m(width, tilt)
        if height < lowest:
            what = "tilt" if fixed else "largest rotation"
            raise field_error(source, "plant.row_height_m", height,
                              f">= {lowest:.3g} m: rows {width:g} m wide at a {what} of "
                              f"{tilt:g} deg reach the ground (width/2 x sin(tilt)); raise "
                              f"the rows, narrow them or lower the tilt")
    if values["plant.mount"] == "concentrator":
        for f in FIELDS:
            if f.section == "plant.concentrator" and values[f.path] is None:
                raise InputError(f"{source}: missing key '{f.path}' (plant.mount = "
                                 f"\"concentrator\" needs it: {f.doc}; {f.allowed()}, unit "
                                 f"{f.unit})")
    if values["plant.mount"] != "body":
        return
    shape = values["plant.body.shape"]
    if shape is None:
        raise InputError(f"{source}: missing key 'plant.body.shape' (plant.mount = \"body\" "
                         f"needs a [plant.body] table; one of cone, cylinder, dome, pyramid, "
                         f"facets)")
    if values["plant.body.spacing_m"] is None:
        raise InputError(f"{source}: missing key 'plant.body.spacing_m' (centre-to-centre "
                         f"distance of the bodies [m]; sets the land per body and the shading "
                         f"between bodies; a number > 0)")
    radius, height = values["plant.body.radius_m"], values["plant.body.height_m"]
    if shape == "facets":
        if not facets:
            raise InputError(f"{source}: plant.body.shape = \"facets\" needs at least one "
                             f"[[plant.body.facet]] table with tilt_deg, azimuth_deg, area_m2")
        if (radius is None) != (height is None):
            raise InputError(f"{source}: plant.body.radius_m and plant.body.height_m describe "
                             f"the envelope used for shading between bodies: give both or "
                             f"neither")
    else:
        if facets:
            raise field_error(source, "plant.body.shape", shape,
                              '"facets" when [[plant.body.facet]] tables are given')
        if radius is None:
            raise InputError(f"{source}: missing key 'plant.body.radius_m' (radius of the "
                             f"{shape} [m]; a number > 0)")
        if shape == "dome":
            if height is not None:
                raise field_error(source, "plant.body.height_m", height,
                                  "no height for a dome (a hemisphere: its height is "
                                  "plant.body.radius_m)")
        elif height is None:
            raise InputError(f"{source}: missing key 'plant.body.height_m' (height of the "
                             f"{shape} [m]; a number > 0)")
    if radius is not None and values["plant.body.spacing_m"] < 2.0 * radius:
        raise field_error(source, "plant.body.spacing_m", values["plant.body.spacing_m"],
                          f"at least the body's width 2 x plant.body.radius_m = {2 * radius:g} "
                          f"m (bodies would overlap)")
    if values["plant.body.drive_power_w"] > 0 and not values["plant.body.rotating"]:
        raise field_error(source, "plant.body.drive_power_w", values["plant.body.drive_power_w"],
                          "0 unless plant.body.rotating = true (only a rotating body has a "
                          "drive)")


def _check_moving_parts(values: Mapping[str, Any], parts, source: str) -> None:
    """Each moving part has one form of life; parts counted per body need bodies."""
    for i, part in enumerate(parts):
        where = f"costs.moving_part[{i}]"
        weibull = (part.shape is not None, part.scale_years is not None)
        if part.mean_years is not None and any(weibull):
            raise InputError(f"{source}: {where}: give the life either as mean_years "
                             f"(exponential) or as shape and scale_years (Weibull), not both")
        if part.mean_years is None and not all(weibull):
            raise InputError(f"{source}: missing key '{where}.mean_years' (mean life [years], "
                             f"exponential) or both '{where}.shape' and '{where}.scale_years' "
                             f"(Weibull)")
        if part.per == "body" and values["plant.mount"] != "body":
            raise field_error(source, f"{where}.per", part.per,
                              '"plant" unless plant.mount = "body"')


def lowest_row_height_m(row_width_m: float, max_tilt_deg: float) -> float:
    """Smallest height of a row's centre that keeps its lower edge above ground [m].

    ``h_min = width / 2 x sin(max tilt)`` for a row turning about its centre line (a
    tracker's axis) or fixed at ``max_tilt_deg``.
    """
    return 0.5 * row_width_m * float(np.sin(np.radians(max_tilt_deg)))
