"""Inputs declared once for a whole study, and rank correlations between cases.

A comparison reads them from ``lcoe compare ... --shared FILE``; a sweep from its plan. Both
use the same two tables::

    [uncertain]              # one draw per trial for every case that has the input
    "finance.discount_rate" = { dist = "triangular", low = 0.06, mode = 0.075, high = 0.095 }

    [[correlation]]          # between two shared inputs, or an input within every case
    between = ["finance.discount_rate", "finance.inflation"]
    rank = 0.6

    [[correlation]]          # between two cases' own inputs: "<case>/<input>"
    between = ["demo_fixed_tilt/costs.capex_per_kw", "tech_single_axis/costs.capex_per_kw"]
    rank = 0.7

A case is named by its file name without the extension (a sweep's technology label). A case
may repeat a shared input's distribution exactly (so that the file still runs on its own); a
different distribution for a shared input is refused, as are a shared input that no case can
take, an unknown case or input in a correlation, and a malformed entry.
"""

from __future__ import annotations

import copy
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path

from lcoe.case.errors import InputError, did_you_mean, field_error, unknown_key_error
from lcoe.case.reader import Case, read_toml
from lcoe.study.spec import valid_paths

#: Top-level tables of a ``--shared`` file.
SHARED_KEYS = ("uncertain", "correlation")
#: Separator of a case and its input in a cross-case correlation.
CASE_SEP = "/"


@dataclass(frozen=True)
class SharedInputs:
    """Study-level declarations.

    Attributes
    ----------
    source : str
        File named in messages.
    uncertain : dict
        Path -> distribution table, one draw per trial for every case that has the input.
    pairs : list of (str, str, float)
        ``[[correlation]]`` entries as given (``between`` items and rank).
    """

    source: str
    uncertain: dict
    pairs: list

    @property
    def is_empty(self) -> bool:
        return not self.uncertain and not self.pairs


NO_SHARED = SharedInputs(source="", uncertain={}, pairs=[])


def read_pairs(value, src: str) -> list[tuple[str, str, float]]:
    """Check ``[[correlation]]`` entries: ``between = [a, b]`` (two different names), rank."""
    if not isinstance(value, list):
        raise field_error(src, "correlation", value, "a list of [[correlation]] tables")
    out = []
    for i, entry in enumerate(value):
        ok = isinstance(entry, Mapping) and set(entry) == {"between", "rank"}
        between = entry.get("between") if ok else None
        if not (ok and isinstance(between, list) and len(between) == 2 and
                all(isinstance(b, str) for b in between) and between[0] != between[1]):
            raise field_error(src, f"correlation[{i}]", entry,
                              "a table with between = [input_a, input_b] (or "
                              "\"case/input\" names) and rank = r")
        rank = entry["rank"]
        if isinstance(rank, bool) or not isinstance(rank, (int, float)) or \
                not -1.0 <= rank <= 1.0:
            raise field_error(src, f"correlation[{i}].rank", rank, "a number in [-1, 1]")
        out.append((between[0], between[1], float(rank)))
    return out


def read_shared(path: str | Path) -> SharedInputs:
    """Read a ``--shared`` file (see the module docstring)."""
    src = str(path)
    data, _ = read_toml(Path(path), "shared-inputs file")
    for key in data:
        if key not in SHARED_KEYS:
            raise unknown_key_error(src, key, SHARED_KEYS)
    unc = data.get("uncertain", {})
    if not isinstance(unc, Mapping):
        raise field_error(src, "uncertain", unc, "a table [uncertain]")
    if "energy" in unc:
        raise field_error(src, "uncertain.energy", unc["energy"],
                          "nothing here: energy uncertainty belongs to each case's site and "
                          "technology ([uncertain.energy] of the case files)")
    return SharedInputs(source=src, uncertain=dict(unc),
                        pairs=read_pairs(data.get("correlation", []), src))


def merge_uncertain(own: Mapping, shared: Mapping, paths: Sequence[str], src: str,
                    case_src: str) -> tuple[dict, frozenset]:
    """A case's ``[uncertain]`` with the shared inputs it can take.

    Parameters
    ----------
    own : mapping
        The case's own ``[uncertain]`` table.
    shared : mapping
        Path -> distribution table of the study.
    paths : sequence of str
        Inputs the case can make uncertain.
    src, case_src : str
        The study file and the case file (for messages).

    Returns
    -------
    merged : dict
    used : frozenset of str
        Shared paths the case takes.

    Raises
    ------
    InputError
        The case gives a different distribution for a shared input.
    """
    merged = copy.deepcopy(dict(own))
    used = set()
    for key, table in shared.items():
        if key not in paths:
            continue
        if key in own and _without_group(own[key]) != _without_group(table):
            raise InputError(f'{src}: uncertain."{key}" is shared by the whole study, but '
                             f"{case_src} gives it its own distribution: expected one of the "
                             f"two (remove it from the case, or from the shared table), or "
                             f"the same distribution in both")
        merged[key] = copy.deepcopy(table)
        used.add(key)
    return merged, frozenset(used)


def _without_group(table) -> dict:
    """A distribution table without its Sobol group label (which does not change the draws)."""
    return {k: v for k, v in dict(table).items() if k != "group"} \
        if isinstance(table, Mapping) else {"": table}


def apply_shared(cases: Sequence[Case], shared: SharedInputs) -> tuple[list, list]:
    """Cases with the shared inputs merged into their ``[uncertain]``, and the paths each took.

    Raises
    ------
    InputError
        A shared input that no case can take, or a conflicting case-level distribution.
    """
    out, used_by = [], []
    for case in cases:
        merged, used = merge_uncertain(case.uncertain, shared.uncertain, valid_paths(case),
                                       shared.source, case.source)
        out.append(replace(case, uncertain=merged) if used else case)
        used_by.append(used)
    check_used(shared.uncertain, used_by, shared.source, [c.source for c in cases])
    return out, used_by


def check_used(shared: Mapping, used_by: Sequence[frozenset], src: str,
               case_sources: Sequence[str]) -> None:
    """Refuse a shared input that no case takes."""
    taken = set().union(*used_by) if used_by else set()
    for key in shared:
        if key not in taken:
            raise InputError(f'{src}: uncertain."{key}": no case of the study has this input '
                             f"({', '.join(case_sources)}); expected an input that at least "
                             f"one case can make uncertain (e.g. costs.capex_per_kw)")


def resolve_pairs(pairs: Sequence[tuple], members: Sequence, src: str,
                  groups: Sequence[Sequence[int]] | None = None) -> list[tuple]:
    """Study correlations as design pairs ``(member_a, name_a, member_b, name_b, rank)``.

    Parameters
    ----------
    pairs : sequence of (str, str, float)
        As read by :func:`read_pairs`.
    members : sequence of Member
    src : str
    groups : sequence of sequence of int, optional
        Members that a cross-case correlation links (a sweep: the runs at one site); default
        all members together.

    Raises
    ------
    InputError
        An unknown case, an input the case does not sample, a plain name that no case samples,
        or a "case/input" name mixed with a plain name.
    """
    groups = [list(range(len(members)))] if groups is None else groups
    labels = list(dict.fromkeys(m.case_label for m in members))
    out = []
    for i, (a, b, rank) in enumerate(pairs):
        crossed = [CASE_SEP in a, CASE_SEP in b]
        key = f"correlation[{i}].between"
        if crossed[0] != crossed[1]:
            raise field_error(src, key, [a, b], 'two shared or within-case inputs, or two '
                                                '"case/input" names')
        if not crossed[0]:
            hits = [(m, m) for m, mem in enumerate(members) if a in mem.names and b in mem.names]
            if not hits:
                missing = a if not any(a in mem.names for mem in members) else b
                known = {n for mem in members for n in mem.names}
                raise field_error(src, key, missing,
                                  "two uncertain inputs that one case has (or shared ones); "
                                  "for two cases' own inputs use \"case/input\""
                                  + did_you_mean(missing, known))
            out += [(m, a, m, b, rank) for m, _ in hits]
            continue
        (ca, na), (cb, nb) = (x.split(CASE_SEP, 1) for x in (a, b))
        for c, n in ((ca, na), (cb, nb)):
            if c not in labels:
                raise field_error(src, key, f"{c}{CASE_SEP}{n}",
                                  f"a case of the study before '/' ({', '.join(labels)})")
            names = next(mem.names for mem in members if mem.case_label == c)
            if n not in names:
                raise field_error(src, key, f"{c}{CASE_SEP}{n}",
                                  f"an uncertain input of case '{c}' after '/' "
                                  f"({', '.join(names) or 'it has none'})")
            if n in next(mem.shared for mem in members if mem.case_label == c):
                raise field_error(src, key, f"{c}{CASE_SEP}{n}",
                                  "a case's own input (a shared input is one draw for all "
                                  "cases: correlate it by its plain name)")
        for g in groups:
            ma = [m for m in g if members[m].case_label == ca]
            mb = [m for m in g if members[m].case_label == cb]
            if ca == cb and na == nb:
                raise field_error(src, key, [a, b], "two different inputs")
            out += [(x, na, y, nb, rank) for x in ma for y in mb]
    return out
