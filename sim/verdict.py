"""The one verdict and severity rule of railfault: for `check`, `faultmap` and `run` alike.

A result *fails* when any of its findings is an error; warnings and notes (``info``)
never decide a verdict. Findings are listed worst first: by severity
(:data:`SEVERITY_ORDER`), then code, then place. The library API (:mod:`sim.api`),
the command line and the event engine all call these two functions, so a script
and ``railfault`` always agree.
"""
from __future__ import annotations

from typing import Iterable

from sim.model import Finding

__all__ = ["SEVERITY_ORDER", "SEVERITIES", "decide", "sort_findings"]

#: Severities from the worst; an unknown severity sorts after all of them.
SEVERITY_ORDER = {"error": 0, "warning": 1, "info": 2}
SEVERITIES = tuple(SEVERITY_ORDER)


def decide(findings: Iterable[Finding]) -> str:
    """``"fail"`` when any finding is an error, else ``"pass"``."""
    return "fail" if any(f.severity == "error" for f in findings) else "pass"


def sort_findings(findings: Iterable[Finding]) -> list[Finding]:
    """Findings worst first: severity (:data:`SEVERITY_ORDER`), then code, then place."""
    return sorted(findings, key=lambda f: (SEVERITY_ORDER.get(f.severity, len(SEVERITY_ORDER)),
                                           f.code, f.where))
