"""The headline of a run: its worst problems first, one line per cause.

Order (worst first):

1. causes that keep a district dark for most of the run (not the protection at
   work), the darkest first;
2. the other errors, then the warnings, each by how often they happened;
3. districts dark for most of the run because a scheduled short was cleared by
   the device nearest it (the protection at work, said so).

A line is the cause's own short text, led by the dark district when there is
one: ``booster east-bst dark for 27.304 s of 30.000 s (91 %): gap
loop1.b~loop2.a meets out of phase ...``. The static errors no run cause
accounts for: those that say a short is never cleared share one line, after
the districts kept dark; the others share the last line.
"""
from __future__ import annotations

from sim.diagnose.cause import Cause
from sim.diagnose.dark import dark_text
from sim.diagnose.facts import RunFacts
from sim.diagnose.static import NEVER_CLEARED
from sim.model import Finding
from sim.verdict import severity_rank

__all__ = ["rank_causes", "headline_lines"]


def _rank(facts: RunFacts, c: Cause) -> tuple:
    share = max((facts.district_dark_s(d) for d in c.darkened), default=0.0)
    sev = severity_rank(c.finding.severity)
    if c.darkened and not c.protection:
        group = 0
    elif sev <= 1:
        group = 1
    elif c.darkened:
        group = 2
    else:
        group = 3
    first = c.finding.first_s if c.finding.first_s is not None else float("inf")
    return (group, -share, sev, -c.finding.count, first, c.finding.code, c.finding.where)


def rank_causes(facts: RunFacts, causes: list[Cause]) -> list[Cause]:
    """The causes, worst first (module docstring)."""
    return sorted(causes, key=lambda c: _rank(facts, c))


def _place(where: str) -> str:
    """A static finding's place, short: its key path without the line, and a section
    without ``track.sections.``."""
    place = where.split(" ")[0]
    return place[len("track.sections."):] if place.startswith("track.sections.") else place


def _static_lines(static: list[Finding]) -> list[str]:
    """The static errors no run cause accounts for: those that say a short is never
    cleared on one line, the others on another."""
    loose = [f for f in static if not f.because]
    out = []
    for never, head in ((True, "railfault check finds shorts that are never cleared: "),
                        (False, "railfault check also finds: ")):
        by_code: dict[str, list[str]] = {}
        for f in loose:
            if (f.code in NEVER_CLEARED) == never:
                by_code.setdefault(f.code, []).append(_place(f.where))
        if by_code:
            out.append(head + "; ".join(f"{code} {', '.join(dict.fromkeys(ws))}"
                                        for code, ws in by_code.items()))
    return out


def headline_lines(facts: RunFacts, ranked: list[Cause], static: list[Finding]) -> list[str]:
    """One line per cause that is a problem or darkens a district, worst first (module
    docstring); the static errors no cause accounts for share a line or two, after
    the dark districts."""
    lines = []
    static_lines = _static_lines(static)
    also = [x for x in static_lines if x.startswith("railfault check also")]
    static_lines = [x for x in static_lines if x not in also]
    for c in ranked:
        if static_lines and not (c.darkened and not c.protection):
            lines += static_lines
            static_lines = []
        if severity_rank(c.finding.severity) > 1 and not c.darkened:
            continue
        if c.darkened:
            lead = "; ".join(dark_text(facts, d) for d in c.darkened)
            if c.finding.code == "RF-RUN-040":
                lines.append(lead + ", and no short of this run explains it")
            else:
                lines.append(f"{lead}: {c.headline}")
        else:
            lines.append(c.headline)
    return lines + static_lines + also
