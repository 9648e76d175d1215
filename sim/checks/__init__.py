"""Static checks of a scenario: what can be told from the settings and the track alone.

Each check is a function ``check_xxx(scn, layout) -> list[Finding]`` in a module
of its own; :data:`CHECKS` lists them (adding a check is one line there).
:func:`run_checks` runs them all and sorts the findings by severity (error,
warning, info), then code, then place.

=============  ============  ==============================================
module         codes         what
=============  ============  ==============================================
polarity       RF-POL-*      balance of the signed track graph (Harary 1953)
coverage       RF-COV-*      reversing sections gapped and needed
gaps           RF-GAP-*      district boundaries, unfed track
phasing        RF-PHS-*      rails in phase at every joint, minimal fix
train_length   RF-LEN-*      trains against reversing sections
coordination   RF-COORD-*    the reversing race, breaker order, thresholds
=============  ============  ==============================================

Example
-------
>>> # doctest: +SKIP
>>> report = run_checks(scn, build_layout(scn))
>>> [f.code for f in report.findings if f.severity == "error"]
[]
"""
from __future__ import annotations

from dataclasses import dataclass, field

from sim.checks.coordination import check_coordination
from sim.checks.coverage import check_coverage
from sim.checks.gaps import check_gaps
from sim.checks.phasing import check_phasing
from sim.checks.polarity import check_polarity, reversing_cycles
from sim.checks.train_length import check_train_length
from sim.model import Finding, Scenario
from sim.verdict import SEVERITY_ORDER, sort_findings

__all__ = ["CHECKS", "CheckReport", "run_checks", "SEVERITY_ORDER"]

#: Every static check, in the order they run.
CHECKS = (
    check_polarity,
    check_coverage,
    check_gaps,
    check_phasing,
    check_train_length,
    check_coordination,
)


@dataclass
class CheckReport:
    """Findings of the static checks and the reversing loops of the track.

    ``reversing`` holds one ``{"cycle": [sections], "covered_by": [sections]}``
    per fundamental unbalanced cycle of the full track (see
    :func:`sim.checks.polarity.reversing_cycles`).
    """

    findings: list[Finding] = field(default_factory=list)
    reversing: list[dict] = field(default_factory=list)

    @property
    def errors(self) -> list[Finding]:
        return [f for f in self.findings if f.severity == "error"]

    @property
    def ok(self) -> bool:
        """No error finding."""
        return not self.errors


def run_checks(scn: Scenario, layout, checks=CHECKS) -> CheckReport:
    """Run every static check; findings sorted by severity, code, then where."""
    findings: list[Finding] = []
    for check in checks:
        findings.extend(check(scn, layout))
    findings = sort_findings(findings)
    reversing = [{"cycle": list(c["cycle"]), "covered_by": list(c["covered_by"])}
                 for c in reversing_cycles(scn, layout)]
    return CheckReport(findings, reversing)
