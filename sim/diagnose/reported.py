"""The engine's own findings of a run, one per code and place.

The engine reports some things as they happen (a restart tripped on inrush,
RF-RUN-007; the codes of RF-RUN-020 to 029): one finding per occurrence.
:func:`group_reported` gathers them by severity, code and place into one finding
with ``count`` and the first and last instants (when the findings carry them),
keeping the first one's text; the diagnosis then ties them to their cause.
"""
from __future__ import annotations

from dataclasses import replace
from typing import Iterable

from sim.model import Finding

__all__ = ["group_reported"]


def group_reported(findings: Iterable[Finding]) -> list[Finding]:
    """One finding per ``(severity, code, where)``, in the order of first occurrence."""
    groups: dict[tuple, list[Finding]] = {}
    for f in findings:
        groups.setdefault((f.severity, f.code, f.where), []).append(f)
    out = []
    for fs in groups.values():
        if len(fs) == 1:
            out.append(fs[0])
            continue
        firsts = [f.first_s for f in fs if f.first_s is not None]
        lasts = [f.last_s for f in fs if f.last_s is not None]
        n = sum(f.count for f in fs)
        out.append(replace(fs[0], message=f"{fs[0].message} ({n} times in all)", count=n,
                           first_s=min(firsts) if firsts else None,
                           last_s=max(lasts) if lasts else None))
    return out
