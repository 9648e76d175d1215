"""The static check results a run is judged with, and the ones it must show.

``railfault check`` and ``railfault run`` agree: a layout whose static checks
find an error cannot run to a silent PASS. A run is one sample of the sample
grids' phases and of the trains' timing, and a static error is a statement
about all of them (the worst sample phase, every train of the schedule, every
point of a district), so a run cannot disprove one: every static error is
brought into the run's findings (:func:`static_errors`), marked as static (its
own code, the message prefixed :data:`STATIC_MARK`), unless a run cause
restates it (the cause's ``same_as`` names it: the same cause, seen in the
run, is listed once, as the run's finding).

A static error brought in is tied by ``because``:

* to a run cause that makes the same short, when it says a short is never
  cleared (:data:`NEVER_CLEARED`: a coin test that trips no device, a device
  whose trip can never be reached through its supply's limit or its sensing
  full scale) and names a section or device of that cause (a bonded joint out
  of phase, a supply at its limit);
* to the run cause that restates its own static root cause (``railfault
  check``'s ``because``), or to that root brought in beside it.

:func:`static_findings` is what ``railfault check`` reports (the static checks
and the circuit checks), computed once for a run.
"""
from __future__ import annotations

from dataclasses import replace

from sim.diagnose.cause import ref
from sim.model import Finding, Scenario
from sim.verdict import sort_findings

__all__ = ["static_findings", "static_errors", "never_cleared", "NEVER_CLEARED",
           "STATIC_MARK"]

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
    devices it names."""
    return [f for f in static_errors(static, causes) if f.code in NEVER_CLEARED]


def static_errors(static: list[Finding], causes=()) -> list[Finding]:
    """Every static error a run must show (module docstring), marked as static, in the
    order of ``railfault check`` (:func:`sim.verdict.sort_findings`, so that a run
    does not depend on the order its caller gives them in); those a cause of
    ``causes`` restates (its finding's ``same_as``) are left out. ``because`` names
    a cause of ``causes`` or another finding of the list that is itself a cause
    (never one that follows from another)."""
    causes = list(causes)
    restated = {c.finding.same_as: c for c in causes if c.finding.same_as}
    errors = [f for f in sort_findings(static) if f.severity == "error"]
    kept = [f for f in errors if ref(f) not in restated]
    refs = {ref(f) for f in kept}
    tie: dict[str, str] = {}
    for f in kept:
        because = ""
        if f.code in NEVER_CLEARED:
            for c in causes:
                if c.sections and _mentions(f.where, tuple(c.sections) + tuple(c.dark)):
                    because = c.ref
                    break
        if not because and f.because:
            if f.because in restated:
                because = restated[f.because].ref
            elif f.because in refs:
                because = f.because
        tie[ref(f)] = because
    # a root that itself follows from a run cause: its followers follow that cause
    for k, because in tie.items():
        seen = set()
        while because in tie and tie[because] and because not in seen:
            seen.add(because)
            because = tie[because]
        tie[k] = because
    return [replace(f, message=STATIC_MARK + f.message, because=tie[ref(f)]) for f in kept]
