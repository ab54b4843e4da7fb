"""Read and check a sweep plan: many sites x many technologies, one uncertainty design.

A plan is a TOML file::

    [sweep]
    samples = 400            # Monte Carlo trials of every site x technology
    seed = 20261201          # seed of the whole sweep
    technologies = ["demo_fixed_tilt.toml", "tech_single_axis.toml"]   # case files
    chunk_trials = 200       # optional: trials per task (the unit of parallel work)
    method = "lhs"           # optional: "lhs" (default) or "random"

    [uncertain]              # optional, shared by every run; overrides the technologies' own
    "finance.discount_rate" = { dist = "triangular", low = 0.06, mode = 0.075, high = 0.095 }

    [[sites]]
    name = "Some invented place"
    latitude_deg = 30.0      # ... and every other key of a case's [site] table
    [sites.monthly]          # or weather = "file.csv", relative to the plan
    ghi_kwh_m2_day = [...]   # 12 values

Each technology is a complete case file (it can be run on its own with ``lcoe run``). The case of
a site x technology is that file with its ``[site]`` table replaced by the plan's site (minus
``name``) and validated by :func:`lcoe.case.case_from_dict`, so a bad site is reported exactly as
in a case file, with the plan and the site named as the source. The ``[uncertain]`` tables are
merged key by key (``[uncertain.energy]`` too), the plan winning.

Common random numbers need one joint distribution of uniforms for the whole sweep: the rank
correlations of all runs are merged into one matrix over the union of the uncertain inputs.
The same pair with two different ranks is an error; a pair given for one technology also
applies to another that has both inputs (a note says so).
"""

from __future__ import annotations

import copy
import hashlib
import json
import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np

from .case import Case, case_from_dict, load_case, read_toml
from .errors import InputError, field_error, unknown_key_error
from .uncertainty.sampling import correlation_matrix
from .uncertainty.spec import UncertainSpec, read_spec

#: Keys of the ``[sweep]`` table.
SWEEP_KEYS = ("samples", "seed", "technologies", "chunk_trials", "method")
#: Top-level tables of a plan.
PLAN_KEYS = ("sweep", "sites", "uncertain", "correlation")
#: Defaults of the optional ``[sweep]`` keys.
DEFAULT_SAMPLES = 500
DEFAULT_SEED = 20261201
DEFAULT_CHUNK_TRIALS = 250
#: Longest site name accepted [characters] (names label table rows and chart ticks).
MAX_NAME_LENGTH = 60


@dataclass(frozen=True)
class Technology:
    """A technology of the sweep: a case file whose ``[site]`` is replaced per site.

    Attributes
    ----------
    label : str
        Name used in the outputs: the file name without its extension.
    path : str
        Absolute path of the case file.
    sha256 : str
        SHA-256 of the file's bytes.
    case_name : str
        ``case.name`` of the file.
    """

    label: str
    path: str
    sha256: str
    case_name: str


@dataclass(frozen=True)
class SweepSite:
    """A site of the sweep.

    Attributes
    ----------
    name : str
    latitude_deg, longitude_deg : float
        Position [deg], north and east positive.
    table : dict
        The site's keys as a case's ``[site]`` table (plain TOML data, without ``name``).
    """

    name: str
    latitude_deg: float
    longitude_deg: float
    table: dict


@dataclass(frozen=True)
class RunDef:
    """One site x technology, as plain data that can be shipped to another process.

    Attributes
    ----------
    site, technology : str
        Site name and technology label.
    source : str
        Origin named in messages (plan, site and technology).
    base_dir : str
        Folder that the site's weather path is relative to (the plan's folder).
    raw : dict
        The full case as nested TOML tables (site replaced, uncertainty merged).
    lifetime_years : int
    """

    site: str
    technology: str
    source: str
    base_dir: str
    raw: dict
    lifetime_years: int

    def case(self) -> Case:
        """The validated :class:`~lcoe.case.Case` of this run."""
        return case_from_dict(self.raw, source=self.source, base_dir=Path(self.base_dir),
                              sha256=raw_sha256(self.raw))


@dataclass(frozen=True)
class SweepPlan:
    """A checked sweep plan.

    Attributes
    ----------
    path : str
        Plan file as given.
    sha256 : str
    samples : int
        Trials per site x technology.
    seed : int
    chunk_trials : int
        Largest number of trials per task.
    method : str
        ``"lhs"`` or ``"random"`` (within each chunk).
    technologies : tuple of Technology
    sites : tuple of SweepSite
    runs : tuple of RunDef
        Site-major order: every technology of the first site, then the second site, ...
    input_names : tuple of str
        Union of the sampled inputs of all runs (columns of the common uniforms).
    corr : numpy.ndarray or None
        (d, d) rank correlation over ``input_names``; None when no pair is given.
    life_max : int
        Longest lifetime of any run [years] (columns of the common year-to-year draws).
    currency : str
    notes : tuple of str
    """

    path: str
    sha256: str
    samples: int
    seed: int
    chunk_trials: int
    method: str
    technologies: tuple
    sites: tuple
    runs: tuple
    input_names: tuple
    corr: np.ndarray | None
    life_max: int
    currency: str
    notes: tuple = field(default_factory=tuple)

    @property
    def chunks(self) -> tuple[tuple[int, int], ...]:
        """(start, stop) trial indices of every chunk (same for every run)."""
        return chunk_bounds(self.samples, self.chunk_trials)


def chunk_bounds(n: int, chunk_trials: int) -> tuple[tuple[int, int], ...]:
    """Split ``n`` trials into ceil(n / chunk_trials) chunks whose sizes differ by at most 1.

    Parameters
    ----------
    n : int
        Number of trials (>= 1).
    chunk_trials : int
        Largest chunk (>= 1).

    Returns
    -------
    tuple of (int, int)
        (start, stop) of each chunk, covering 0..n in order.
    """
    k = -(-n // chunk_trials)
    edges = [i * n // k for i in range(k + 1)]
    return tuple((edges[i], edges[i + 1]) for i in range(k))


def raw_sha256(raw: Mapping) -> str:
    """SHA-256 of a nested case table (canonical JSON), used as the case's fingerprint."""
    text = json.dumps(raw, sort_keys=True, default=str, ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def load_plan(path: str | Path) -> SweepPlan:
    """Read, validate and expand the sweep plan at ``path``.

    Every site x technology case is built and validated, with its uncertainty spec, before
    anything runs.

    Raises
    ------
    InputError
        One line naming the plan (and the site) or the technology file, the key, the value and
        what is allowed.
    """
    p = Path(path)
    src = str(path)
    data, raw_bytes = read_toml(p, "sweep plan")
    for key in data:
        if key not in PLAN_KEYS:
            raise unknown_key_error(src, key, PLAN_KEYS)
    base_dir = p.resolve().parent
    sweep = _table(data.get("sweep"), "sweep", src, required=True)
    for key in sweep:
        if key not in SWEEP_KEYS:
            raise unknown_key_error(src, f"sweep.{key}", [f"sweep.{k}" for k in SWEEP_KEYS])
    samples = _count(sweep.get("samples", DEFAULT_SAMPLES), "sweep.samples", src, 2)
    seed = _count(sweep.get("seed", DEFAULT_SEED), "sweep.seed", src, 0)
    chunk_trials = _count(sweep.get("chunk_trials", DEFAULT_CHUNK_TRIALS), "sweep.chunk_trials",
                          src, 2)
    method = sweep.get("method", "lhs")
    if method not in ("lhs", "random"):
        raise field_error(src, "sweep.method", method, 'one of "lhs", "random"')
    techs, tech_raw = _read_technologies(sweep.get("technologies"), src, base_dir)
    sites = _read_sites(data.get("sites"), src)
    plan_unc = _table(data.get("uncertain"), "uncertain", src)
    plan_pairs = _read_pairs(data.get("correlation", []), src)
    runs, specs = [], []
    for site in sites:
        for tech in techs:
            run, spec = _build_run(site, tech, tech_raw[tech.label], plan_unc, plan_pairs,
                                   src, base_dir)
            runs.append(run)
            specs.append(spec)
    names = tuple(dict.fromkeys(n for s in specs for n in s.names))
    _check_plan_pairs(plan_pairs, names, src)
    corr, notes = _common_correlation(runs, specs, names, src)
    if corr is not None:
        smallest = min(b - a for a, b in chunk_bounds(samples, chunk_trials))
        if smallest <= len(names):
            raise InputError(f"{src}: sweep.chunk_trials = {chunk_trials} with sweep.samples = "
                             f"{samples} gives chunks of {smallest} trials: expected more trials "
                             f"per chunk than the {len(names)} uncertain inputs that the rank "
                             f"correlation reorders")
    currencies = {t.label: case_currency(tech_raw[t.label]) for t in techs}
    if len(set(currencies.values())) > 1:
        raise InputError(f"{src}: sweep.technologies use different currencies ({currencies}); "
                         f"costs can only be compared in one currency")
    for tech in techs:
        for path in tech_raw[tech.label].get("uncertain", {}):
            if path.startswith("site.") and path not in plan_unc:
                notes.append(f"technology '{tech.label}' makes {path} uncertain with its own "
                             f"distribution, which replaces the value of every plan site")
    for site in sites:
        for tech in techs:
            if site.latitude_deg < 0 and _faces(tech_raw[tech.label], "fixed", 180.0):
                notes.append(f"site '{site.name}' is south of the equator and technology "
                             f"'{tech.label}' is a fixed mount facing south (azimuth 180): its "
                             f"modules face away from the equator there")
    return SweepPlan(path=src, sha256=hashlib.sha256(raw_bytes).hexdigest(), samples=samples,
                     seed=seed, chunk_trials=chunk_trials, method=method,
                     technologies=tuple(techs), sites=tuple(sites), runs=tuple(runs),
                     input_names=names, corr=corr, life_max=max(r.lifetime_years for r in runs),
                     currency=next(iter(currencies.values())), notes=tuple(notes))


def case_currency(raw: Mapping) -> str:
    """``case.currency`` of a nested case table (default as in the schema)."""
    return str(raw.get("case", {}).get("currency", "USD"))


def _faces(raw: Mapping, mount: str, azimuth_deg: float) -> bool:
    plant = raw.get("plant", {})
    return plant.get("mount", "fixed") == mount and \
        float(plant.get("azimuth_deg", 180.0)) == azimuth_deg


def _table(value: Any, key: str, src: str, required: bool = False) -> dict:
    if value is None:
        if required:
            raise InputError(f"{src}: missing table [{key}] (samples, seed and a list of "
                             f"technology case files)")
        return {}
    if not isinstance(value, Mapping):
        raise field_error(src, key, value, f"a table [{key}]")
    return dict(value)


def _count(value: Any, key: str, src: str, least: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or value < least:
        raise field_error(src, key, value, f"a whole number >= {least}")
    return int(value)


def _read_technologies(value: Any, src: str, base_dir: Path):
    if not (isinstance(value, list) and value and all(isinstance(v, str) for v in value)):
        raise field_error(src, "sweep.technologies", value,
                          "a non-empty list of case files (paths relative to the plan)")
    techs, raws = [], {}
    for entry in value:
        path = (base_dir / entry).resolve()
        label = path.stem
        if label in raws:
            raise field_error(src, "sweep.technologies", value,
                              f"case files with different names ('{label}' appears twice)")
        case = load_case(path)  # a technology must be a valid case file on its own
        raws[label], _ = read_toml(path, "case file")
        techs.append(Technology(label=label, path=str(path), sha256=case.sha256,
                                case_name=case.name))
    return techs, raws


def _read_sites(value: Any, src: str) -> list[SweepSite]:
    if not (isinstance(value, list) and value):
        raise field_error(src, "sites", value, "one or more [[sites]] tables")
    sites, seen = [], set()
    for i, entry in enumerate(value):
        where = f"sites[{i}]"
        if not isinstance(entry, Mapping):
            raise field_error(src, where, entry, "a [[sites]] table")
        name = entry.get("name")
        if not isinstance(name, str) or not name.strip() or len(name) > MAX_NAME_LENGTH or \
                not name.isprintable():
            raise field_error(src, f"{where}.name", name,
                              f"a name of 1 to {MAX_NAME_LENGTH} printable characters")
        if name in seen:
            raise field_error(src, f"{where}.name", name, "a name not used by another site")
        seen.add(name)
        table = {k: copy.deepcopy(v) for k, v in entry.items() if k != "name"}
        lat, lon = table.get("latitude_deg"), table.get("longitude_deg")
        sites.append(SweepSite(name=name, latitude_deg=_float_or_nan(lat),
                               longitude_deg=_float_or_nan(lon), table=table))
    return sites


def _float_or_nan(v: Any) -> float:
    ok = isinstance(v, (int, float)) and not isinstance(v, bool)
    return float(v) if ok else math.nan  # the case validation reports a bad value


def _read_pairs(value: Any, src: str) -> list[dict]:
    if not isinstance(value, list):
        raise field_error(src, "correlation", value, "a list of [[correlation]] tables")
    for i, entry in enumerate(value):
        ok = isinstance(entry, Mapping) and set(entry) == {"between", "rank"}
        between = entry.get("between") if ok else None
        if not (ok and isinstance(between, list) and len(between) == 2 and
                all(isinstance(b, str) for b in between) and between[0] != between[1]):
            raise field_error(src, f"correlation[{i}]", entry,
                              "a table with between = [input_a, input_b] and rank = r")
        rank = entry["rank"]
        if isinstance(rank, bool) or not isinstance(rank, (int, float)) or \
                not -1.0 <= rank <= 1.0:
            raise field_error(src, f"correlation[{i}].rank", rank, "a number in [-1, 1]")
    return [dict(e) for e in value]


def _merge_uncertain(tech: Mapping, plan: Mapping) -> dict:
    """The technology's ``[uncertain]`` with the plan's keys on top (energy merged by key)."""
    out = copy.deepcopy(dict(tech))
    for key, value in plan.items():
        if key == "energy" and isinstance(value, Mapping) and isinstance(out.get(key), Mapping):
            out[key] = {**out[key], **copy.deepcopy(dict(value))}
        else:
            out[key] = copy.deepcopy(value)
    return out


def _pair_key(entry: Mapping) -> frozenset:
    return frozenset(entry["between"])


def _build_run(site: SweepSite, tech: Technology, tech_raw: Mapping, plan_unc: Mapping,
               plan_pairs: list, src: str, base_dir: Path) -> tuple[RunDef, UncertainSpec]:
    """Build and validate the case of one site x technology."""
    source = f"{src} (site '{site.name}', technology '{tech.label}')"
    raw = copy.deepcopy(dict(tech_raw))
    raw["site"] = copy.deepcopy(site.table)
    raw["uncertain"] = _merge_uncertain(tech_raw.get("uncertain", {}), plan_unc)
    overridden = {_pair_key(e) for e in plan_pairs}
    own = [e for e in raw.get("correlation", [])
           if not (isinstance(e, Mapping) and isinstance(e.get("between"), list)
                   and all(isinstance(b, str) for b in e["between"])
                   and _pair_key(e) in overridden)]
    raw["correlation"] = []
    case0 = case_from_dict(raw, source=source, base_dir=base_dir)
    names = set(read_spec(replace(case0, correlation=())).names)
    pairs = own + [copy.deepcopy(e) for e in plan_pairs if set(e["between"]) <= names]
    raw["correlation"] = pairs
    spec = read_spec(replace(case0, correlation=tuple(pairs)))
    run = RunDef(site=site.name, technology=tech.label, source=source, base_dir=str(base_dir),
                 raw=raw, lifetime_years=int(case0["case.lifetime_years"]))
    return run, spec


def _check_plan_pairs(plan_pairs: list, names: tuple, src: str) -> None:
    """A plan-level pair must name inputs that some run samples."""
    if plan_pairs:
        correlation_matrix(names, [(*e["between"], float(e["rank"])) for e in plan_pairs],
                           src, key="correlation")


def _common_correlation(runs, specs, names: tuple, src: str):
    """One rank-correlation matrix over ``names`` for the whole sweep, and notes."""
    given: dict[frozenset, tuple[float, str]] = {}
    per_run: list[set] = []
    for run in runs:
        explicit = set()
        for e in run.raw["correlation"]:
            key, rank = _pair_key(e), float(e["rank"])
            explicit.add(key)
            if key in given and given[key][0] != rank:
                a, b = sorted(key)
                raise InputError(f"{src}: correlation between {a} and {b} is {given[key][0]:g} "
                                 f"in technology '{given[key][1]}' but {rank:g} in "
                                 f"'{run.technology}'; common random numbers need one value "
                                 f"for the whole sweep (set it once in the plan)")
            given.setdefault(key, (rank, run.technology))
        per_run.append(explicit)
    if not given:
        return None, []
    pairs = [(*sorted(k), r) for k, (r, _) in given.items()]
    corr = correlation_matrix(names, pairs, src, key="correlation (all technologies)")
    notes = []
    for run, spec, explicit in zip(runs, specs, per_run):
        have = set(spec.names)
        for key, (rank, origin) in given.items():
            if key <= have and key not in explicit:
                a, b = sorted(key)
                note = (f"rank correlation {rank:g} between {a} and {b} (from technology "
                        f"'{origin}') also applies to technology '{run.technology}'")
                if note not in notes:
                    notes.append(note)
    return corr, notes
