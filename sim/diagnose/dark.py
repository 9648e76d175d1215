"""Districts dark for most of the run: which cause keeps each one dark.

A device whose own output was off for at least :data:`sim.diagnose.facts.DARK_MOST`
of the simulated time (``DeviceSummary.dark_s``) heads the run, with the time its
district was dark (``DeviceSummary.district_dark_s``: it or a device above it
off, the figure a club means by "dark"; :mod:`sim.diagnose.runlog`). It is charged to
the worst cause that darkens it (one that is not the protection at work before
one that is; errors before warnings), whose finding then says so. The
verdict rule (issue: a run in which a district is dark for most of the time
because of a short the layout makes itself is not a PASS): unless that cause is
a scheduled short cleared by the device nearest it, its finding becomes an
error. A dark device no cause accounts for gets RF-RUN-040.

RF-RUN-040 (error)
    A device dark for most of the run that no short of the run explains.
"""
from __future__ import annotations

from dataclasses import replace

from sim.diagnose.cause import Cause
from sim.diagnose.facts import RunFacts
from sim.diagnose.text import dur_text, share_text
from sim.model import Finding
from sim.verdict import severity_rank

__all__ = ["attribute_dark", "dark_text"]


def dark_text(facts: RunFacts, device: str) -> str:
    """``booster east dark for 27.304 s of 30.000 s (91 %)``: the time its district had
    no power (it or a device above it off: :meth:`RunFacts.district_dark_s`), the one
    figure of a district's dark time."""
    d = facts.district_dark_s(device)
    return (f"{facts.named(device)} dark for {dur_text(d)} of {dur_text(facts.t_end_s)} "
            f"({share_text(d, facts.t_end_s)})")


def attribute_dark(facts: RunFacts, causes: list[Cause]) -> list[Cause]:
    """Charge every device dark for most of the run to a cause (module docstring).

    Sets ``cause.darkened`` (devices, darkest first), escalates the cause and adds the
    dark time to its message; returns the RF-RUN-040 causes for the devices no cause
    accounts for.
    """
    dark = sorted((d for d in facts.devices if facts.dark_most(d)),
                  key=lambda d: (-facts.district_dark_s(d), d))
    extra = []
    for dev in dark:
        cands = [c for c in causes if dev in c.dark]
        text = dark_text(facts, dev)
        if not cands:
            extra.append(Cause(
                Finding("error", "RF-RUN-040", dev,
                        f"{text}, and no short of this run explains it",
                        f"look at {dev}'s events (railfault run --events)"),
                text, dark=(dev,), protection=False))
            extra[-1].darkened.append(dev)
            continue
        c = min(cands, key=lambda c: (c.protection, severity_rank(c.finding.severity)))
        c.darkened.append(dev)
        if not c.protection:
            c.escalate("error")
        dark_s = facts.district_dark_s(dev)
        if f"dark for {dur_text(dark_s)}" not in c.finding.message:
            c.finding = replace(c.finding, message=f"{c.finding.message}; {text}")
    return extra
