"""The static check results a run is judged with, and the ones it must show.

``railfault check`` and ``railfault run`` agree: a layout whose static checks
find a short that is never cleared cannot run to a silent PASS. The static
errors that say so (:data:`NEVER_CLEARED`: a coin test that trips no device, a
device whose trip can never be reached through its supply's limit or its
sensing full scale) are brought into the run's findings, marked as static
(their own code, the message prefixed :data:`STATIC_MARK`), and tied by
``because`` to a run cause that makes the same short (a bonded joint out of
phase).

:func:`static_findings` is what ``railfault check`` reports (the static checks
and the circuit checks), computed once for a run.
"""
from __future__ import annotations

from dataclasses import replace

from sim.model import Finding, Scenario
from sim.verdict import sort_findings

__all__ = ["static_findings", "never_cleared", "NEVER_CLEARED", "STATIC_MARK"]

#: Static codes that mean "a short there is never cleared".
NEVER_CLEARED = frozenset({"RF-FAULT-001", "RF-FAULT-003", "RF-FAULT-004", "RF-COORD-007"})

#: How a static finding is marked among a run's findings.
STATIC_MARK = "static check (railfault check): "


def static_findings(scn: Scenario, layout, step_m: float = 0.5) -> list[Finding]:
    """Every finding of ``railfault check``: the static checks, then the circuit checks
    (coin test, trip windows, rail voltage) on points at most ``step_m`` apart."""
    from sim.checks import run_checks
    from sim.circuit import check_findings

    findings = list(run_checks(scn, layout).findings)
    circuit, _rows = check_findings(scn, layout, step_m=step_m)
    return findings + list(circuit)


def _mentions(where: str, names) -> bool:
    parts = set(where.split(" ")[0].split("."))
    return any(n in parts for n in names)


def never_cleared(static: list[Finding], causes=()) -> list[Finding]:
    """The static errors of :data:`NEVER_CLEARED`, marked as static, each tied to the
    first cause (``causes``: :class:`sim.diagnose.cause.Cause`) whose sections or
    devices it names; in the order of ``railfault check`` (:func:`sim.verdict.sort_findings`),
    so that a run does not depend on the order its caller gives them in."""
    out = []
    for f in sort_findings(static):      # the check's order, however the caller lists them
        if f.code not in NEVER_CLEARED or f.severity != "error":
            continue
        because = ""
        for c in causes:
            if c.sections and _mentions(f.where, tuple(c.sections) + tuple(c.dark)):
                because = c.ref
                break
        out.append(replace(f, message=STATIC_MARK + f.message, because=because))
    return out
