"""Result containers that the exporters read; they hold numbers, not behaviour."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from lcoe.case.reader import Case
from lcoe.model import ModelOutput, Site


@dataclass(frozen=True)
class RunResult:
    """Everything one ``lcoe run`` produced.

    Attributes
    ----------
    case : Case
        The validated case.
    site : Site
        Weather and sun used.
    base : ModelOutput
        The deterministic run (one sample at the case's values).
    notes : list of str
        Remarks worth reading (corrections, warnings).
    extras : dict
        Optional blocks added by later stages, by name (``"uncertainty"``, ``"sensitivity"``,
        ``"bankability"``, ...); each exporter reads the ones it knows.
    provenance : dict
        Versions, seed, command line, date.
    """

    case: Case
    site: Site
    base: ModelOutput
    notes: list = field(default_factory=list)
    extras: dict[str, Any] = field(default_factory=dict)
    provenance: dict[str, Any] = field(default_factory=dict)
