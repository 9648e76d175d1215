"""The one verdict rule and the one severity order of every command.

``railfault check``, ``faultmap`` and ``run`` (and the library functions behind
them) decide their verdict here and sort their findings here, so that the same
finding weighs the same everywhere:

* severities, worst first: ``error``, ``warning``, ``info``;
* the verdict is ``"fail"`` when any finding is an ``error``, else ``"pass"``.

What makes a run's finding an error (a gap short that tripped a device, a
district dark for most of the run because of a short the layout makes itself,
a short that ``check`` finds is never cleared, ...) is decided by
:mod:`sim.diagnose`; this module only weighs the findings it is given. It
imports nothing of the project but :class:`sim.model.Finding`, so every module
can use it without an import cycle.
"""
from __future__ import annotations

from typing import Iterable

from sim.model import Finding

__all__ = ["SEVERITIES", "SEVERITY_ORDER", "severity_rank", "finding_key", "sort_findings",
           "decide", "worst_severity"]

#: Severities, worst first.
SEVERITIES = ("error", "warning", "info")
#: Rank of each severity (0 is the worst).
SEVERITY_ORDER = {s: i for i, s in enumerate(SEVERITIES)}


def severity_rank(severity: str) -> int:
    """0 for ``error``, 1 for ``warning``, 2 for ``info``, 3 for anything else."""
    return SEVERITY_ORDER.get(severity, len(SEVERITIES))


def finding_key(f: Finding) -> tuple:
    """Sort key of a finding: severity (worst first), then code, then place."""
    return (severity_rank(f.severity), f.code, f.where)


def sort_findings(findings: Iterable[Finding]) -> list[Finding]:
    """The findings by :func:`finding_key` (a new list)."""
    return sorted(findings, key=finding_key)


def worst_severity(findings: Iterable[Finding]) -> str | None:
    """The worst severity among ``findings`` (``None`` for none)."""
    ranks = [severity_rank(f.severity) for f in findings]
    return SEVERITIES[min(ranks)] if ranks and min(ranks) < len(SEVERITIES) else None


def decide(findings: Iterable[Finding]) -> str:
    """``"fail"`` when any finding is an error, else ``"pass"``."""
    return "fail" if any(f.severity == "error" for f in findings) else "pass"
