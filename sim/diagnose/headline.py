"""The headline of a run: its worst problems first, one line per cause.

Order (worst first):

1. causes that keep a district dark for most of the run (not the protection at
   work), the darkest first;
2. the other errors, then the warnings, each by how often they happened;
3. districts dark for most of the run because a scheduled short was cleared by
   the device nearest it (the protection at work, said so).

A line is the cause's own short text, led by the dark district when there is
one: ``booster east-bst dark for 27.304 s of 30.000 s (91 %): gap
loop1.b~loop2.a meets out of phase ...``. The static errors that say a short is
never cleared, when no run cause accounts for them, share one line.
"""
from __future__ import annotations

from sim.diagnose.cause import Cause
from sim.diagnose.dark import dark_text
from sim.diagnose.facts import RunFacts
from sim.model import Finding
from sim.verdict import severity_rank

__all__ = ["rank_causes", "headline_lines"]


def _rank(facts: RunFacts, c: Cause) -> tuple:
    share = max((facts.dark_s(d) for d in c.darkened), default=0.0)
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


def _static_line(static: list[Finding]) -> str | None:
    loose = [f for f in static if not f.because]
    if not loose:
        return None
    by_code: dict[str, list[str]] = {}
    for f in loose:
        place = f.where.split(" ")[0]
        if place.startswith("track.sections."):
            place = place[len("track.sections."):]
        by_code.setdefault(f.code, []).append(place)
    return ("railfault check finds shorts that are never cleared: "
            + "; ".join(f"{code} {', '.join(ws)}" for code, ws in by_code.items()))


def headline_lines(facts: RunFacts, ranked: list[Cause], static: list[Finding]) -> list[str]:
    """One line per cause that is a problem or darkens a district, worst first (module
    docstring); the static never-cleared errors no cause accounts for share one line,
    after the dark districts."""
    lines = []
    static_line = _static_line(static)
    for c in ranked:
        if static_line and not (c.darkened and not c.protection):
            lines.append(static_line)
            static_line = None
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
    if static_line:
        lines.append(static_line)
    return lines
