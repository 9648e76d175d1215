"""One cause of a run's trouble: its finding, its headline line, what it explains.

Every module of :mod:`sim.diagnose.causes` returns :class:`Cause` records. A
cause has exactly one finding (with its fix); the episodes it explains have
their symptom lines tied to it by ``because``; the devices it keeps dark let
the diagnosis put it at the head of the run when a district is dark for most
of it.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace

from sim.model import Finding

__all__ = ["Cause", "ref"]


def ref(f: Finding) -> str:
    """``"CODE where"``: how a finding that follows from ``f`` names it (``because``)."""
    return f"{f.code} {f.where}"


@dataclass
class Cause:
    """A cause found in a run (module docstring).

    Attributes
    ----------
    finding : Finding
        The cause's one finding, with the fix that mends it.
    headline : str
        Its line in ``Result.headline`` (the dark-district prefix is added by the
        diagnosis).
    episodes : list
        The episodes it explains.
    dark : tuple
        Devices whose darkness it accounts for.
    protection : bool
        The protection at work: a scheduled short cleared by the device nearest
        it. A district kept dark by such a cause does not fail the run.
    sections : tuple
        Sections it makes a short in (static findings located there follow from it).
    darkened : list
        The devices dark for most of the run charged to it (:mod:`sim.diagnose.dark`).
    """

    finding: Finding
    headline: str
    episodes: list = field(default_factory=list)
    dark: tuple = ()
    protection: bool = False
    sections: tuple = ()
    darkened: list = field(default_factory=list)
    _ids: frozenset = field(default=frozenset(), init=False, repr=False)

    def __post_init__(self):
        self._ids = frozenset(id(e) for e in self.episodes)

    @property
    def ref(self) -> str:
        return ref(self.finding)

    def explains(self, ep) -> bool:
        """Whether ``ep`` is one of the episodes this cause explains."""
        return id(ep) in self._ids

    def escalate(self, severity: str = "error") -> None:
        """Raise the finding's severity (a district dark for most of the run)."""
        if self.finding.severity != severity:
            self.finding = replace(self.finding, severity=severity)
