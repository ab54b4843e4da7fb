"""Read and validate a case file (TOML) into a :class:`Case`.

Every problem is raised as one :class:`~lcoe.case.errors.InputError` line naming the file, the key,
the value and what is allowed. Unknown keys are errors that suggest the closest valid key.
"""

from __future__ import annotations

import functools
import hashlib
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field, fields, replace
from pathlib import Path
from types import MappingProxyType
from typing import Any

from lcoe.case.errors import InputError, field_error, unknown_key_error
from lcoe.case.rules import _check_cross_fields, _check_mount, _check_moving_parts
from lcoe.case.schema import (
    BODY_FACET_FIELDS,
    EXTRA_KEYS,
    FIELD_BY_PATH,
    FIELDS,
    MOVING_PART_FIELDS,
    REPLACEMENT_FIELDS,
    REQUIRED,
    SECTIONS,
    SIZING_CASES,
    Field,
    child_sections,
)

#: Top-level tables that are not scalar sections of the schema, with their readers elsewhere.
LIST_TABLES = ("uncertain", "correlation")


@dataclass(frozen=True)
class Replacement:
    """A scheduled replacement (e.g. inverters every 12 years).

    Parameters
    ----------
    item : str
        What is replaced.
    every_years : int
        Interval [years]; replacements happen at every multiple strictly inside the life.
    cost_per_kw : float
        Cost of each replacement in year-0 money [currency/kW DC].
    """

    item: str
    every_years: int
    cost_per_kw: float


@dataclass(frozen=True)
class BodyFacet:
    """One flat piece of a body described facet by facet (``[[plant.body.facet]]``).

    Parameters
    ----------
    tilt_deg : float
        Tilt from horizontal [deg]; 0 faces up, 90 is vertical, 180 faces down.
    azimuth_deg : float
        Direction the facet faces, clockwise from north [deg].
    area_m2 : float
        Cell area [m2].
    """

    tilt_deg: float
    azimuth_deg: float
    area_m2: float


@dataclass(frozen=True)
class MovingPart:
    """Parts that wear out and fail at random (``[[costs.moving_part]]``).

    Parameters
    ----------
    item : str
        What fails.
    units : float
        Number of such parts in the plant, or on each body when ``per == "body"``.
    per : {"plant", "body"}
    mean_years : float or None
        Mean life with exponential lives [years].
    shape, scale_years : float or None
        Weibull shape [-] and scale [years] of the life.
    cost_each : float
        Cost of one replacement in year-0 money [currency].
    repair_days : float
        Days a unit delivers nothing after a failure [days].
    damage_fraction : float
        Expected share of the capital cost of the equipment a part serves destroyed by a
        failure [-].
    """

    item: str
    units: float
    per: str
    mean_years: float | None
    shape: float | None
    scale_years: float | None
    cost_each: float
    repair_days: float
    damage_fraction: float

    @property
    def weibull(self) -> bool:
        return self.mean_years is None


@dataclass(frozen=True)
class Case:
    """A validated case: flat dotted values with defaults filled in, plus list tables.

    Attributes
    ----------
    source : str
        Path of the case file as given (used in messages).
    base_dir : pathlib.Path
        Folder that relative paths in the case are resolved against.
    sha256 : str
        SHA-256 of the case file's bytes.
    values : Mapping[str, object]
        Every scalar key of :data:`lcoe.case.schema.FIELDS` by dotted path.
    replacements : tuple of Replacement
    uncertain : Mapping
        The raw ``[uncertain]`` table (parsed by :mod:`lcoe.study.spec`).
    correlation : tuple
        The raw ``[[correlation]]`` entries.
    monthly : Mapping or None
        ``[site.monthly]`` climate values (``ghi_kwh_m2_day``, ``temp_air_c`` and optionally
        ``wind_speed_m_s`` and ``dni_kwh_m2_day`` (None when not given), 12 values each, and
        ``seed``), checked; weather is then synthesised
        from them (:mod:`lcoe.site.synth_weather`).
    sections : frozenset of str
        Top-level tables present in the file (``revenue`` switches the bankability layer on).
    debt_sizing : tuple of (case, min_dscr)
        Debt-sizing constraints of ``[debt] sizing`` (default P50 at 1.30x and P99_1yr at
        1.00x, common practice).
    drawdown : tuple of float
        ``[construction] drawdown``: share of capex drawn in each construction period
        (empty: no construction period).
    body_facets : tuple of BodyFacet
        The ``[[plant.body.facet]]`` list (``plant.body.shape = "facets"``).
    moving_parts : tuple of MovingPart
        The ``[[costs.moving_part]]`` list.
    soiling_monthly : tuple of 12 float or None
        ``plant.soiling.monthly_loss``: soiling loss fraction of each month, January first.
    """

    source: str
    base_dir: Path
    sha256: str
    values: Mapping[str, Any]
    replacements: tuple[Replacement, ...] = ()
    uncertain: Mapping[str, Any] = field(default_factory=dict)
    correlation: tuple[Mapping[str, Any], ...] = ()
    monthly: Mapping[str, Any] | None = None
    sections: frozenset = frozenset()
    debt_sizing: tuple[tuple[str, float], ...] = ()
    drawdown: tuple[float, ...] = ()
    body_facets: tuple[BodyFacet, ...] = ()
    moving_parts: tuple[MovingPart, ...] = ()
    soiling_monthly: tuple[float, ...] | None = None

    def __getitem__(self, path: str) -> Any:
        return self.values[path]

    def __reduce__(self):
        """Pickle with plain dicts (read-only views do not pickle), for worker processes."""
        state = {f.name: getattr(self, f.name) for f in fields(self)}
        for key in ("values", "uncertain"):
            state[key] = dict(state[key])
        return (_case_from_state, (state,))

    @property
    def name(self) -> str:
        return str(self.values["case.name"])

    @property
    def weather_path(self) -> Path | None:
        """Absolute path of the weather file, or None for the bundled default."""
        w = self.values.get("site.weather")
        if w is None:
            return None
        p = self.base_dir / str(w)
        try:
            return p.resolve()
        except (OSError, RuntimeError):  # a symlink loop: the reader names the problem
            return p.absolute()

    def with_values(self, overrides: Mapping[str, Any]) -> Case:
        """A copy with some scalar values replaced (validated like the file)."""
        vals = dict(self.values)
        for path, v in overrides.items():
            if path not in FIELD_BY_PATH:
                raise unknown_key_error(self.source, path, FIELD_BY_PATH)
            vals[path] = _coerce(FIELD_BY_PATH[path], v, self.source)
        _apply_orientation_rules(vals)
        _check_cross_fields(vals, self.replacements, self.source)
        _check_mount(vals, self.body_facets, self.source)
        _check_moving_parts(vals, self.moving_parts, self.source)
        return replace(self, values=MappingProxyType(vals))


def _case_from_state(state: dict) -> Case:
    """Rebuild a pickled :class:`Case` (see ``Case.__reduce__``)."""
    return Case(**{**state, "values": MappingProxyType(state["values"]),
                   "uncertain": MappingProxyType(state["uncertain"])})


def load_case(path: str | Path) -> Case:
    """Read and validate the case file at ``path``.

    Parameters
    ----------
    path : str or pathlib.Path
        TOML case file.

    Returns
    -------
    Case

    Raises
    ------
    InputError
        One line naming the file, key, value and what is allowed.
    """
    p = Path(path)
    data, raw_bytes = read_toml(p, "case file")
    src = str(path)
    return case_from_dict(data, source=src, base_dir=p.resolve().parent,
                          sha256=hashlib.sha256(raw_bytes).hexdigest())


def read_toml(path: Path, what: str) -> tuple[dict, bytes]:
    """Read a TOML file; every failure is one InputError line naming the file.

    Parameters
    ----------
    path : pathlib.Path
    what : str
        What the file is, for messages (e.g. ``"case file"``, ``"sweep plan"``).

    Returns
    -------
    data : dict
        The parsed tables.
    raw : bytes
        The file's bytes (for its hash).
    """
    src = str(path)
    try:
        raw = Path(path).read_bytes()
    except FileNotFoundError:
        raise InputError(f"{src}: {what} not found") from None
    except OSError as exc:
        raise InputError(f"{src}: cannot read {what} ({exc.strerror})") from None
    try:
        return tomllib.loads(raw.decode("utf-8")), raw
    except UnicodeDecodeError:
        raise InputError(f"{src}: not a UTF-8 text file") from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{src}: not valid TOML: {exc}") from None


@functools.cache
def _allowed_keys() -> dict[str, frozenset]:
    """Section -> the keys its table may hold (schema keys, extra keys, sub-tables), built once
    (a sweep validates thousands of cases)."""
    return {section: frozenset({f.key for f in FIELDS if f.section == section}
                               | set(EXTRA_KEYS.get(section, ())) | set(child_sections(section)))
            for section in SECTIONS}


def case_from_dict(data: Mapping[str, Any], source: str, base_dir: Path,
                   sha256: str = "") -> Case:
    """Validate a nested mapping (as read from TOML) into a :class:`Case`.

    Parameters
    ----------
    data : Mapping
        Nested tables as produced by :func:`tomllib.loads`.
    source : str
        Name of the origin for messages.
    base_dir : pathlib.Path
        Folder for relative paths.
    sha256 : str
        Hash of the origin's bytes.
    """
    values: dict[str, Any] = {}
    top_allowed = {s.split(".")[0] for s in SECTIONS} | set(LIST_TABLES)
    for key in data:
        if key not in top_allowed:
            raise unknown_key_error(source, key, sorted(top_allowed))
    tables = {section: _section_table(data, section, source) for section in SECTIONS}
    allowed = _allowed_keys()
    for section, table in tables.items():
        for key in table:
            if key not in allowed[section]:
                raise unknown_key_error(source, f"{section}.{key}",
                                        [f"{section}.{k}" for k in sorted(allowed[section])])
    for f in FIELDS:
        table = tables[f.section]
        if f.key in table:
            values[f.path] = _coerce(f, table[f.key], source)
        elif f.default is REQUIRED and not f.optional:
            raise InputError(f"{source}: missing required key '{f.path}' ({f.doc}; "
                             f"{f.allowed()}, unit {f.unit})")
        else:
            values[f.path] = None if f.default is REQUIRED else f.default
    life = values["case.lifetime_years"]
    for path in ("debt.tenor_years", "tax.depreciation_years"):  # unused defaults never
        if FIELD_BY_PATH[path].key not in tables[FIELD_BY_PATH[path].section]:  # refuse a
            values[path] = min(values[path], life)  # short life
    replacements = _read_replacements(data.get("costs", {}).get("replacement", []), source)
    for rule, key, what in (("plant.tilt_rule", "tilt_deg", "latitude"),
                            ("plant.azimuth_rule", "azimuth_deg", "equator")):
        if values[rule] == what and key in tables["plant"]:
            raise field_error(source, f"plant.{key}", tables["plant"][key],
                              f'no value when {rule} = "{what}" (the rule sets it; remove one)')
    _apply_orientation_rules(values)
    _check_cross_fields(values, replacements, source)
    body_facets = _read_list(tables["plant.body"].get("facet", []), "plant.body.facet",
                             BODY_FACET_FIELDS, BodyFacet, source)
    for table, mount in (("body", "body"), ("concentrator", "concentrator")):
        if table in data.get("plant", {}) and values["plant.mount"] != mount:
            raise field_error(source, "plant.mount", values["plant.mount"],
                              f'"{mount}" when a [plant.{table}] table is given (or remove '
                              f'the table)')
    _check_mount(values, body_facets, source)
    moving_parts = _read_list(tables["costs"].get("moving_part", []), "costs.moving_part",
                              MOVING_PART_FIELDS, MovingPart, source)
    _check_moving_parts(values, moving_parts, source)
    monthly = _read_monthly(data.get("site", {}).get("monthly"), values, source)
    soiling_monthly = _read_soiling_profile(tables["plant.soiling"].get("monthly_loss"),
                                            values, source)
    sections = frozenset(k for k in data if k in SECTIONS)
    if "revenue" in sections and values["revenue.tariff_per_kwh"] is None:
        raise InputError(f"{source}: missing required key 'revenue.tariff_per_kwh' (contracted "
                         f"price in year 1 [currency/kWh]; a number >= 0)")
    sizing = _read_sizing(data.get("debt", {}).get("sizing"), source)
    drawdown = _read_drawdown(data.get("construction", {}).get("drawdown"), source)
    uncertain = data.get("uncertain", {})
    if not isinstance(uncertain, Mapping):
        raise field_error(source, "uncertain", uncertain, "a table [uncertain]")
    correlation = data.get("correlation", [])
    if not isinstance(correlation, list):
        raise field_error(source, "correlation", correlation, "a list of [[correlation]] tables")
    return Case(source=source, base_dir=base_dir, sha256=sha256,
                values=MappingProxyType(values), replacements=tuple(replacements),
                uncertain=MappingProxyType(dict(uncertain)), correlation=tuple(correlation),
                monthly=monthly, sections=sections, debt_sizing=sizing, drawdown=drawdown,
                body_facets=tuple(body_facets), moving_parts=tuple(moving_parts),
                soiling_monthly=soiling_monthly)


def _section_table(data: Mapping[str, Any], section: str, source: str) -> Mapping[str, Any]:
    """The table at dotted ``section`` (e.g. ``plant.body``), empty when absent."""
    table: Any = data
    for depth, part in enumerate(section.split(".")):
        table = table.get(part, {})
        if not isinstance(table, Mapping):
            where = ".".join(section.split(".")[:depth + 1])
            raise field_error(source, where, table, f"a table [{where}]")
    return table


def _coerce(f: Field, value: Any, source: str) -> Any:
    """Check the type and range of one value and return it in its canonical type."""
    if f.kind == "bool":
        if not isinstance(value, bool):
            raise field_error(source, f.path, value, f.allowed())
        return value
    if f.kind in ("str", "path"):
        if not isinstance(value, str):
            raise field_error(source, f.path, value, f.allowed())
        if f.kind == "path" and ("\x00" in value or not value.strip()):
            raise field_error(source, f.path, value, "a file path (not empty, no NUL byte)")
        return value
    if f.kind == "choice":
        if value not in f.choices:
            raise field_error(source, f.path, value, f.allowed())
        return value
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise field_error(source, f.path, value, f.allowed())
    if f.kind == "int":
        if isinstance(value, float) and not value.is_integer():
            raise field_error(source, f.path, value, f.allowed())
        value = int(value)
    else:
        value = float(value)
    if not f.in_range(value):
        raise field_error(source, f.path, value, f.allowed())
    return value


def _read_replacements(entries: Any, source: str) -> list[Replacement]:
    return _read_list(entries, "costs.replacement", REPLACEMENT_FIELDS, Replacement, source)


def _read_list(entries: Any, path: str, fields: tuple[Field, ...], make, source: str) -> list:
    """Check a list of tables such as ``[[costs.replacement]]`` and build one object each.

    A key is required unless its field has a default; ``make(**values)`` builds the entry.
    """
    if not isinstance(entries, list):
        raise field_error(source, path, entries, f"a list of [[{path}]] tables")
    out = []
    known = {f.key: f for f in fields}
    for i, entry in enumerate(entries):
        where = f"{path}[{i}]"
        if not isinstance(entry, Mapping):
            raise field_error(source, where, entry, "a table with " + ", ".join(known))
        for key in entry:
            if key not in known:
                raise unknown_key_error(source, f"{where}.{key}",
                                        [f"{where}.{k}" for k in known])
        vals = {}
        for key, f in known.items():
            if key in entry:
                vals[key] = _coerce(replace(f, path=f"{where}.{key}"), entry[key], source)
            elif f.default is REQUIRED and not f.optional:
                raise InputError(f"{source}: missing key '{where}.{key}' ({f.doc}; "
                                 f"{f.allowed()})")
            else:
                vals[key] = None if f.default is REQUIRED else f.default
        out.append(make(**vals))
    return out


DEFAULT_SIZING = (("P50", 1.30), ("P99_1yr", 1.00))


def _read_sizing(entries: Any, source: str) -> tuple[tuple[str, float], ...]:
    """Check ``[debt] sizing = [{case = "P50", min_dscr = 1.30}, ...]``."""
    if entries is None:
        return DEFAULT_SIZING
    if not isinstance(entries, list) or not entries:
        raise field_error(source, "debt.sizing", entries,
                          'a non-empty list such as [{case = "P50", min_dscr = 1.30}]')
    out = []
    for i, e in enumerate(entries):
        where = f"debt.sizing[{i}]"
        if not isinstance(e, Mapping) or set(e) != {"case", "min_dscr"}:
            raise field_error(source, where, e, "a table with case and min_dscr")
        if e["case"] not in SIZING_CASES:
            raise field_error(source, f"{where}.case", e["case"],
                              "one of " + ", ".join(SIZING_CASES))
        v = e["min_dscr"]
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not v > 0:
            raise field_error(source, f"{where}.min_dscr", v, "a number > 0")
        out.append((e["case"], float(v)))
    return tuple(out)


def _read_drawdown(entries: Any, source: str) -> tuple[float, ...]:
    """Check ``[construction] drawdown = [0.2, 0.3, ...]``: shares >= 0 that sum to 1."""
    if entries is None:
        return ()
    allowed = "a list of 1 to 120 shares >= 0 that sum to 1, e.g. [0.3, 0.4, 0.3]"
    if not isinstance(entries, list) or not 1 <= len(entries) <= 120 or any(
            isinstance(v, bool) or not isinstance(v, (int, float)) or not v >= 0
            for v in entries):
        raise field_error(source, "construction.drawdown", entries, allowed)
    if abs(sum(entries) - 1.0) > 1e-6:
        raise field_error(source, "construction.drawdown", entries,
                          allowed + f" (these sum to {sum(entries):g})")
    return tuple(float(v) for v in entries)


MONTHLY_KEYS = ("ghi_kwh_m2_day", "temp_air_c", "wind_speed_m_s", "dni_kwh_m2_day", "seed")


def _read_monthly(table: Any, values: Mapping[str, Any], source: str):
    """Check a ``[site.monthly]`` table (12 values per list) and return it, or None."""
    if table is None:
        return None
    if not isinstance(table, Mapping):
        raise field_error(source, "site.monthly", table, "a table [site.monthly]")
    for key in table:
        if key not in MONTHLY_KEYS:
            raise unknown_key_error(source, f"site.monthly.{key}",
                                    [f"site.monthly.{k}" for k in MONTHLY_KEYS])
    for key in ("ghi_kwh_m2_day", "temp_air_c"):
        if key not in table:
            raise InputError(f"{source}: missing key 'site.monthly.{key}' (12 monthly values)")
    if values.get("site.weather") is not None:
        raise InputError(f"{source}: site.weather and [site.monthly] are both given; keep one "
                         f"(a weather file, or monthly values to synthesise weather from)")
    if values.get("site.timezone") is None:
        raise InputError(f"{source}: [site.monthly] needs site.timezone (e.g. 'Etc/GMT-1') to "
                         f"place the synthetic hours in local time")
    seed = table.get("seed", 1)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise field_error(source, "site.monthly.seed", seed, "a whole number >= 0")
    from lcoe.case.monthly import validate_monthly

    ghi, temp, wind, *dni = validate_monthly(
        values["site.latitude_deg"], values["site.longitude_deg"], table["ghi_kwh_m2_day"],
        table["temp_air_c"], table.get("wind_speed_m_s"), source=source,
        dni_kwh_m2_day=table.get("dni_kwh_m2_day"))
    return MappingProxyType({"ghi_kwh_m2_day": tuple(ghi), "temp_air_c": tuple(temp),
                             "wind_speed_m_s": tuple(wind), "seed": seed,
                             "dni_kwh_m2_day": tuple(dni[0]) if dni else None})


def _apply_orientation_rules(values: dict) -> None:
    """Set tilt and azimuth from ``plant.tilt_rule`` / ``plant.azimuth_rule`` (in place).

    ``latitude``: tilt = |latitude| (a common screening rule for fixed tilt); ``equator``:
    azimuth 180 deg (south) north of the equator, 0 deg (north) south of it.
    """
    lat = values["site.latitude_deg"]
    if values["plant.tilt_rule"] == "latitude":
        values["plant.tilt_deg"] = abs(float(lat))
    if values["plant.azimuth_rule"] == "equator":
        values["plant.azimuth_deg"] = 180.0 if lat >= 0 else 0.0


def _read_soiling_profile(profile: Any, values: Mapping[str, Any], source: str):
    """Check ``plant.soiling.monthly_loss`` (12 fractions in [0, 1)) against the model."""
    model = values["plant.soiling.model"]
    allowed = "a list of 12 loss fractions in [0, 1), January to December"
    if profile is None:
        if model == "monthly":
            raise InputError(f"{source}: missing key 'plant.soiling.monthly_loss' "
                             f"(plant.soiling.model = \"monthly\"; {allowed})")
        return None
    if model != "monthly":
        raise field_error(source, "plant.soiling.model", model,
                          '"monthly" when plant.soiling.monthly_loss is given (or remove it)')
    if not isinstance(profile, list) or len(profile) != 12:
        n = len(profile) if isinstance(profile, list) else "not a list of"
        raise field_error(source, "plant.soiling.monthly_loss", f"{n} values", allowed)
    out = []
    for i, v in enumerate(profile):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not 0 <= v < 1:
            raise field_error(source, f"plant.soiling.monthly_loss[{i}]", v, allowed)
        out.append(float(v))
    return tuple(out)
