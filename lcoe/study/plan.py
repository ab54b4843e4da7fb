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
    ghi_kwh_m2_day = [...]   # 12 values (and every other key of a case's [site.monthly])

Each technology is a complete case file (it can be run on its own with ``lcoe run``). The case of
a site x technology is that file with its ``[site]`` table replaced by the plan's site (minus
``name``) and validated by :func:`lcoe.case.reader.case_from_dict`, so a bad site is reported
exactly as
in a case file, with the plan and the site named as the source. The ``[uncertain]`` tables are
merged key by key (``[uncertain.energy]`` too), the plan winning.

Uncertainty follows the study's one sharing rule (:mod:`lcoe.study`): the plan's
``[uncertain]`` inputs are declared once for the whole sweep (one draw per trial for every
site x technology that has the input; a technology may repeat the same distribution, a
different one is refused); the plan's ``[uncertain.energy]`` may give the sites' weather
uncertainty (``interannual_cov``, ``resource_sd``), which replaces the technologies' values
(they describe the technology file's own site); everything else a technology declares is its
own, drawn independently for every site x technology. ``[[correlation]]`` pairs of the plan
name two shared inputs, two inputs within every run that has both, or two technologies' own
inputs as ``"<technology>/<input>"`` (linked at every site).
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

from lcoe.case.errors import InputError, field_error, unknown_key_error
from lcoe.case.reader import Case, case_from_dict, load_case, read_toml
from lcoe.study.design import TrialDesign, build_design, chunk_bounds
from lcoe.study.shared import check_used, merge_uncertain, read_pairs, resolve_pairs
from lcoe.study.spec import UncertainSpec, read_spec, valid_paths
from lcoe.study.trials import StudyRun

#: Keys of the ``[sweep]`` table.
SWEEP_KEYS = ("samples", "seed", "technologies", "chunk_trials", "method")
#: Top-level tables of a plan.
PLAN_KEYS = ("sweep", "sites", "uncertain", "correlation")
#: Defaults of the optional ``[sweep]`` keys.
DEFAULT_SAMPLES = 500
DEFAULT_SEED = 20261201
DEFAULT_CHUNK_TRIALS = 250
#: ``[uncertain.energy]`` keys a plan may give: the weather of its sites.
SITE_ENERGY_KEYS = ("interannual_cov", "resource_sd")
#: Longest site name accepted [characters] (names label table rows and chart ticks).
MAX_NAME_LENGTH = 60
#: Per-trial outputs a sweep keeps of each chunk (:class:`lcoe.study.sweep.RunTrials`); the
#: rest (yearly energy factors, costs, areas: about 40 numbers a trial) is dropped where the
#: chunk is evaluated, so 4 million trials keep about 0.5 GB instead of 1.7 GB.
SWEEP_OUTPUTS = ("X", "lcoe_real_per_kwh", "lcoe_nominal_per_kwh", "energy_kwh")


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
    shared : tuple of str
        The plan's shared inputs this run takes.
    """

    site: str
    technology: str
    source: str
    base_dir: str
    raw: dict
    lifetime_years: int
    shared: tuple = ()

    def case(self) -> Case:
        """The validated :class:`~lcoe.case.reader.Case` of this run."""
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
    study_runs : tuple of StudyRun
        The same runs as the study layer evaluates them.
    design : TrialDesign
        The sweep's trial design (sharing rule, correlations, seed).
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
    study_runs: tuple
    design: TrialDesign
    currency: str
    notes: tuple = field(default_factory=tuple)

    @property
    def chunks(self) -> tuple[tuple[int, int], ...]:
        """(start, stop) trial indices of every chunk (same for every run)."""
        return chunk_bounds(self.samples, self.chunk_trials)

    @property
    def input_names(self) -> tuple:
        """Every sampled input of the runs, in order of first appearance."""
        return tuple(dict.fromkeys(n for r in self.study_runs for n in r.spec.names))


def keep_sweep_outputs(outputs: dict, task) -> dict:
    """What a sweep keeps of a chunk's outputs (:data:`SWEEP_OUTPUTS`; the run's ``finish``)."""
    return {k: outputs[k] for k in SWEEP_OUTPUTS}


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
    plan_energy = _plan_energy(plan_unc.pop("energy", None), src)
    plan_pairs = read_pairs(data.get("correlation", []), src)
    runs, study_runs = [], []
    laws: dict = {}
    for site in sites:
        for tech in techs:
            run, case, spec = _build_run(site, tech, tech_raw[tech.label], plan_unc,
                                         plan_energy, src, base_dir)
            spec = _shared_laws(spec, laws)
            runs.append(run)
            study_runs.append(StudyRun(label=f"{site.name} / {tech.label}",
                                       case_label=tech.label, site=site.name, case=case,
                                       spec=spec, shared=frozenset(run.shared),
                                       finish=keep_sweep_outputs))
    check_used(plan_unc, [frozenset(r.shared) for r in runs], src,
               [t.path for t in techs])
    members = [r.member() for r in study_runs]
    by_site = [[i for i, r in enumerate(runs) if r.site == s.name] for s in sites]
    cross = resolve_pairs(plan_pairs, members, src, groups=by_site)
    design = build_design(members, samples, seed, method, cross, source=src)
    notes = []
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
                     study_runs=tuple(study_runs), design=design,
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


def _plan_energy(value: Any, src: str) -> dict:
    """The plan's ``[uncertain.energy]``: only the sites' weather uncertainty."""
    if value is None:
        return {}
    if not isinstance(value, Mapping):
        raise field_error(src, "uncertain.energy", value, "a table [uncertain.energy]")
    for key in value:
        if key not in SITE_ENERGY_KEYS:
            raise field_error(src, f"uncertain.energy.{key}", value[key],
                              "only the sites' weather (interannual_cov, resource_sd); a "
                              "technology's energy-model uncertainty (model_sd, ...) is its "
                              "own: give it in the technology file")
    return dict(value)


def _shared_laws(spec: UncertainSpec, laws: dict) -> UncertainSpec:
    """``spec`` with each distribution replaced by an equal one met before in ``laws``.

    A technology's own inputs follow the same law at every site; sharing the objects builds
    their quantile tables (Beta-PERT) once per process instead of once per site.
    """
    return replace(spec, dists=[laws.setdefault(repr(d), d) for d in spec.dists])


def _build_run(site: SweepSite, tech: Technology, tech_raw: Mapping, plan_unc: Mapping,
               plan_energy: Mapping, src: str, base_dir: Path
               ) -> tuple[RunDef, Case, UncertainSpec]:
    """Build and validate the case of one site x technology (the case is
    :meth:`RunDef.case`)."""
    source = f"{src} (site '{site.name}', technology '{tech.label}')"
    raw = copy.deepcopy(dict(tech_raw))
    raw["site"] = copy.deepcopy(site.table)
    own = dict(tech_raw.get("uncertain", {}))
    energy = {**dict(own.pop("energy", {}) or {}), **plan_energy}
    raw["uncertain"] = own
    case0 = case_from_dict(raw, source=source, base_dir=base_dir)
    merged, used = merge_uncertain(own, plan_unc, valid_paths(case0), src, tech.path)
    if energy:
        merged["energy"] = energy
    raw["uncertain"] = merged
    case = case_from_dict(raw, source=source, base_dir=base_dir, sha256=raw_sha256(raw))
    spec = read_spec(case)
    run = RunDef(site=site.name, technology=tech.label, source=source, base_dir=str(base_dir),
                 raw=raw, lifetime_years=int(case["case.lifetime_years"]),
                 shared=tuple(sorted(used)))
    return run, case, spec
