"""The trial design of a study: which random number every input of every run reads.

A study is one or more runs (a case at a site). Every trial of the study draws, from one seed:

- one uniform per *column* of the design, and
- one standard normal year-to-year weather score per site and operating year.

Which column an input of a run reads is the sharing rule (the same in ``lcoe run``,
``lcoe compare`` and ``lcoe sweep``):

- an input declared once for the whole study (a sweep plan's ``[uncertain]``, a comparison's
  ``--shared`` file) is one column read by every run;
- a site's weather is one draw per trial per site: its year-to-year scores and its
  ``energy.resource`` column (``[uncertain.energy] resource_sd``) are read by every run at the
  site (each run maps the uniform through its own standard deviation, so the ranks agree);
- everything else a run declares (its own ``[uncertain]`` inputs, ``energy.model`` and other
  ``*_sd`` components) is its own column, independent of the other runs, unless the study
  declares a rank correlation between two runs' inputs.

Rank correlations (within a run, between shared inputs, or across runs) form one target matrix
over the columns, imposed by Iman & Conover (1982) on each connected group of correlated
columns.

Blocks: the trials are split into blocks of at most :data:`BLOCK_TRIALS` (fixed by the number
of trials alone); block ``b`` draws from ``SeedSequence(seed, spawn_key=(0, b))``, Latin
hypercube (or plain random) within the block. Any range of trials can then be drawn by any
process, so results never depend on how the trials are chunked or which worker evaluates them.

Shapes: ``n`` trials, ``D`` columns, ``S`` sites, ``L`` years (longest lifetime).
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from lcoe.case.errors import InputError
from lcoe.case.rng import make_rng
from lcoe.uncertainty.sampling import (
    correlation_matrix,
    iman_conover,
    latin_hypercube,
    random_uniform,
)

#: Largest block of trials drawn as one Latin hypercube [trials].
BLOCK_TRIALS = 1000
#: First element of the spawn key of the trial blocks (sensitivity designs use other children).
TRIALS_STREAM = 0
#: Sampled name of the site's long-term resource factor.
RESOURCE = "energy.resource"
#: Block draws kept per process (a chunk evaluation may need a block another chunk drew).
_CACHE_LIMIT = 8
_BLOCKS: dict = {}


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


@dataclass(frozen=True)
class Member:
    """A run of the study as the design sees it.

    Attributes
    ----------
    label : str
        Unique label of the run (names it in notes and columns).
    case_label : str
        The case (technology) it runs: cross-case correlations name it.
    site : str
        The site key: runs with the same key share the site's weather draws.
    names : tuple of str
        Its sampled inputs in the order of its :class:`~lcoe.study.spec.UncertainSpec`.
    shared : frozenset of str
        Those of ``names`` declared once for the whole study.
    corr_pairs : tuple of (str, str, float)
        Its own rank correlations between its inputs.
    lifetime_years : int
    """

    label: str
    case_label: str
    site: str
    names: tuple
    shared: frozenset
    corr_pairs: tuple
    lifetime_years: int


@dataclass(frozen=True)
class TrialDesign:
    """Columns, correlation and seed of a study (plain data, sent to worker processes).

    Attributes
    ----------
    seed : int
    samples : int
        Trials.
    method : str
        ``"lhs"`` or ``"random"`` within each block.
    columns : tuple of str
        Column labels: the input's path, with ``[site]`` or ``[run]`` when it is not shared.
    kinds : tuple of str
        ``"study"``, ``"site"`` or ``"run"`` per column.
    groups : tuple of tuple of int
        Connected groups of correlated columns (Iman-Conover is applied per group).
    group_corr : tuple of numpy.ndarray
        Target rank correlation of each group, (g, g) in the group's column order; columns
        outside every group are uncorrelated. :attr:`corr` assembles the (D, D) matrix (a
        sweep of many sites has tens of thousands of columns, so the design never holds it).
    sites : tuple of str
        Site keys (rows of the weather scores).
    member_columns : tuple of tuple of int
        For each member, the column of each of its inputs.
    member_sites : tuple of int
    life_max : int
        Years of weather scores drawn [years].
    block_trials : int
    """

    seed: int
    samples: int
    method: str
    columns: tuple
    kinds: tuple
    groups: tuple
    group_corr: tuple = field(compare=False)
    sites: tuple
    member_columns: tuple
    member_sites: tuple
    life_max: int
    block_trials: int = BLOCK_TRIALS
    fingerprint: str = field(default="", compare=False)

    @property
    def blocks(self) -> tuple[tuple[int, int], ...]:
        """(start, stop) of every block of trials."""
        return chunk_bounds(self.samples, self.block_trials)

    @property
    def corr(self) -> np.ndarray | None:
        """(D, D) target rank correlation (None when no columns are correlated)."""
        if not self.groups:
            return None
        out = np.eye(len(self.columns))
        for group, c in zip(self.groups, self.group_corr):
            out[np.ix_(group, group)] = c
        return out

    def draws(self, start: int, stop: int, columns=None,
              site: int | None = None) -> tuple[np.ndarray, np.ndarray]:
        """Uniforms (n, D) and weather scores (S, n, L) of trials [start, stop).

        ``columns`` (a list of column indices) and ``site`` (a site's row) select before the
        blocks are joined: uniforms (n, len(columns)) and scores (n, L).
        """
        if not 0 <= start < stop <= self.samples:
            raise ValueError(f"trials [{start}, {stop}) outside [0, {self.samples})")
        us, zs = [], []
        for b, (a, c) in enumerate(self.blocks):
            if c <= start or a >= stop:
                continue
            u, z = self._block(b)
            lo, hi = max(start, a) - a, min(stop, c) - a
            us.append(u[lo:hi] if columns is None else u[lo:hi, columns])
            zs.append(z[:, lo:hi] if site is None else z[site, lo:hi])
        return np.concatenate(us), np.concatenate(zs, axis=0 if site is not None else 1)

    def _block(self, b: int) -> tuple[np.ndarray, np.ndarray]:
        key = (self.fingerprint, b)
        if key not in _BLOCKS:
            if len(_BLOCKS) >= _CACHE_LIMIT:
                _BLOCKS.pop(next(iter(_BLOCKS)))
            _BLOCKS[key] = block_draws(self, b)
        return _BLOCKS[key]

    def member_draws(self, m: int, start: int, stop: int) -> tuple[np.ndarray, np.ndarray]:
        """Member m's uniforms (n, d_m) and year-to-year scores (n, its lifetime)."""
        return self.draws(start, stop, list(self.member_columns[m]), self.member_sites[m])


def block_draws(design: TrialDesign, b: int) -> tuple[np.ndarray, np.ndarray]:
    """Random numbers of block ``b``: uniforms (n_b, D) and weather scores (S, n_b, L).

    The generator is ``SeedSequence(seed, spawn_key=(0, b))``: uniforms first (Latin
    hypercube or random), then the Iman-Conover reordering of each correlated group, then the
    standard normal scores.
    """
    a, c = design.blocks[b]
    n = c - a
    rng = make_rng(np.random.SeedSequence(design.seed, spawn_key=(TRIALS_STREAM, b)))
    d = len(design.columns)
    if d:
        u = (latin_hypercube if design.method == "lhs" else random_uniform)(n, d, rng)
        for group, c in zip(design.groups, design.group_corr):
            idx = list(group)
            u[:, idx] = iman_conover(u[:, idx], c, rng)
    else:
        u = np.empty((n, 0))
    z = rng.standard_normal((len(design.sites), n, design.life_max))
    return u, z


def column_key(member: Member, index: int, name: str) -> tuple:
    """Which column an input reads (the sharing rule)."""
    if name in member.shared:
        return ("study", name)
    if name == RESOURCE:
        return ("site", member.site, name)
    return ("run", index, name)


def build_design(members: Sequence[Member], samples: int, seed: int, method: str = "lhs",
                 cross_pairs: Sequence[tuple] = (), source: str = "study",
                 block_trials: int = BLOCK_TRIALS) -> TrialDesign:
    """The design of a study (see the module docstring).

    Parameters
    ----------
    members : sequence of Member
    samples : int
        Trials (>= 2).
    seed : int
    method : {"lhs", "random"}
    cross_pairs : sequence of (int, str, int, str, float)
        Rank correlations between input ``name_a`` of member ``a`` and ``name_b`` of member
        ``b`` (checked by the caller).
    source : str
        Named in errors (the plan or the shared file).
    block_trials : int

    Raises
    ------
    InputError
        The same pair of shared columns given two different ranks; a matrix that is not
        positive definite; blocks too small for the correlated groups.
    """
    if samples < 2:
        raise InputError(f"--samples {samples}: expected at least 2 trials")
    keys: dict[tuple, int] = {}
    labels, kinds, member_columns = [], [], []
    for i, m in enumerate(members):
        cols = []
        for name in m.names:
            key = column_key(m, i, name)
            if key not in keys:
                keys[key] = len(labels)
                kinds.append(key[0])
                labels.append(name if key[0] == "study" or len(members) == 1 else
                              f"{name} [{m.site if key[0] == 'site' else m.label}]")
            cols.append(keys[key])
        member_columns.append(tuple(cols))
    given: dict[frozenset, tuple] = {}

    def add(ca: int, cb: int, rank: float, origin: str) -> None:
        k = frozenset((ca, cb))
        if k in given and given[k][0] != rank:
            raise InputError(f"{source}: rank correlation between {labels[ca]} and "
                             f"{labels[cb]} is {given[k][0]:g} in {given[k][1]} but {rank:g} "
                             f"in {origin}: expected one value, since they share these inputs")
        given[k] = (rank, origin)

    for i, m in enumerate(members):
        for a, b, rank in m.corr_pairs:
            ca, cb = member_columns[i][m.names.index(a)], member_columns[i][m.names.index(b)]
            if kinds[ca] != kinds[cb] and len(members) > 1:
                shared_one, own = (a, b) if kinds[ca] != "run" else (b, a)
                raise InputError(f"{source}: {m.label} correlates {own} (its own input) with "
                                 f"{shared_one} (one draw for the whole study): expected both "
                                 f"declared once for the study, or neither")
            add(ca, cb, float(rank), m.label)
    for ma, na, mb, nb, rank in cross_pairs:
        add(member_columns[ma][members[ma].names.index(na)],
            member_columns[mb][members[mb].names.index(nb)], float(rank), source)
    links = [(min(k), max(k), r) for k, (r, _) in given.items() if len(k) == 2 and r != 0.0]
    pairs = [(labels[a], labels[b], r) for a, b, r in links]
    groups = _groups(len(labels), links)
    group_of = {j: k for k, g in enumerate(groups) for j in g}
    by_group: list[list] = [[] for _ in groups]
    for link in links:
        by_group[group_of[link[0]]].append(link)
    group_corr = tuple(_group_matrix(g, own, labels, source)
                       for g, own in zip(groups, by_group))
    if groups:
        smallest = min(c - a for a, c in chunk_bounds(samples, block_trials))
        largest = max(len(g) for g in groups)
        if smallest <= largest:
            raise InputError(f"{source}: {samples} trials: expected more trials than the "
                             f"{largest} correlated inputs that the rank correlation reorders")
    sites = tuple(dict.fromkeys(m.site for m in members))
    life_max = max((m.lifetime_years for m in members), default=1)
    fp = hashlib.sha256(repr((seed, samples, method, labels, kinds, pairs, sites, life_max,
                              block_trials)).encode()).hexdigest()
    return TrialDesign(seed=int(seed), samples=int(samples), method=method,
                       columns=tuple(labels), kinds=tuple(kinds), groups=groups,
                       group_corr=group_corr, sites=sites, member_columns=tuple(member_columns),
                       member_sites=tuple(sites.index(m.site) for m in members),
                       life_max=life_max, block_trials=block_trials, fingerprint=fp)


def _groups(d: int, links: Sequence[tuple]) -> tuple:
    """Connected groups (more than one column, each sorted, ordered by their first column) of
    the graph of correlated columns ``links`` = (a, b, rank) among ``d`` columns."""
    parent = list(range(d))

    def root(j: int) -> int:
        while parent[j] != j:
            parent[j] = parent[parent[j]]
            j = parent[j]
        return j

    for a, b, _ in links:
        ra, rb = root(a), root(b)
        if ra != rb:
            parent[max(ra, rb)] = min(ra, rb)
    members: dict[int, list] = {}
    for j in sorted({c for a, b, _ in links for c in (a, b)}):
        members.setdefault(root(j), []).append(j)
    return tuple(sorted(tuple(g) for g in members.values()))


def _group_matrix(group: tuple, links: Sequence[tuple], labels: Sequence[str],
                  source: str) -> np.ndarray:
    """The checked (g, g) target rank correlation of one connected group of columns, from the
    group's ``links`` (a, b, rank).

    The design's (D, D) matrix is block diagonal in these groups, so it is positive definite
    exactly when every group's matrix is (its eigenvalues are those of the groups and ones).
    """
    pairs = [(labels[a], labels[b], r) for a, b, r in links]
    return correlation_matrix([labels[j] for j in group], pairs, source, key="correlation")
