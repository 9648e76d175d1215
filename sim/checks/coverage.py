"""Reversing sections: isolated on both rails, and actually needed.

A reversing section changes polarity while a train is inside it, so every
joint between it and track that does not switch with it must be gapped on
both rails (see ``domain.md``, "Reversing section"). Joints between sections of
the same reversing controller switch together and need no gap.

Codes
-----
RF-COV-001 (error)
    A joint of a reverser-fed section with track outside that reverser's
    district is not gapped on both rails: when the controller swaps, the
    ungapped rail joins opposite polarities (a dead short) or the section
    cannot swap at all. Fix: gap both rails at that joint.
RF-COV-002 (warning)
    A reverser-fed section lies on no unbalanced cycle of the track (see
    :func:`sim.checks.polarity.sections_on_unbalanced_cycles`): it never needs
    to reverse, and a plain district would do.
RF-COV-003 (error)
    A joint between the district of a booster that reverses its own output
    (``reverse_on_short``) and track fed by another booster is not gapped on
    both rails.
"""
from __future__ import annotations

from sim.checks.polarity import reverser_of, reversing_cycles, sections_on_unbalanced_cycles
from sim.layout import joint_where
from sim.model import Finding, Scenario

__all__ = ["check_coverage"]


def check_coverage(scn: Scenario, layout) -> list[Finding]:
    """Gaps around reversing sections (RF-COV-001, -003) and unneeded ones (RF-COV-002)."""
    findings: list[Finding] = []
    # a section on an unbalanced fundamental cycle is on an unbalanced cycle; only the
    # others need the (exact, costlier) block search
    on_fundamental = {s for c in reversing_cycles(scn, layout) for s in c["cycle"]}
    on_cycle = None
    reported = set()
    for s in scn.track.sections:
        rv = reverser_of(scn, layout, s)
        if rv is None:
            continue
        for nb in layout.neighbours(s):
            j = nb.joint
            if j.index in reported or j.gaps == "both":
                continue
            if nb.section != s and reverser_of(scn, layout, nb.section) == rv:
                continue
            if nb.section == s:
                continue
            reported.add(j.index)
            what = "bonded" if j.gaps == "none" else "gapped on one rail only"
            findings.append(Finding(
                "error", "RF-COV-001", joint_where(scn, j),
                f"reversing section {s} (fed by {rv}) meets {nb.section} at joint {j.name}, "
                f"which is {what}: when {rv} swaps, the rails across it meet in opposite "
                f"polarity",
                f"gap both rails at joint {j.name} (gaps: both)"))
        if s not in on_fundamental and on_cycle is None:
            on_cycle = sections_on_unbalanced_cycles(layout)
        if s not in on_fundamental and s not in on_cycle:
            findings.append(Finding(
                "warning", "RF-COV-002", scn.where("track", "sections", s),
                f"section {s} is fed by reversing controller {rv} but lies on no reversing "
                f"loop, wye or turntable: it never needs to reverse",
                f"feed {s} from a plain booster or breaker"))
    for s in scn.track.sections:
        if reverser_of(scn, layout, s) is not None:
            continue
        b = scn.booster_of(layout.district(s)) if layout.district(s) else None
        if b is None or not scn.boosters[b].reverse_on_short:
            continue
        for nb in layout.neighbours(s):
            j = nb.joint
            if j.index in reported or j.gaps == "both" or nb.section == s:
                continue
            d_other = layout.district(nb.section)
            b_other = scn.booster_of(d_other) if d_other else None
            if b_other == b and reverser_of(scn, layout, nb.section) is None:
                continue
            reported.add(j.index)
            findings.append(Finding(
                "error", "RF-COV-003", joint_where(scn, j),
                f"booster {b} reverses its own output, but its section {s} meets "
                f"{nb.section} (fed by {d_other or 'nothing'}) at joint {j.name}, which is "
                f"not gapped on both rails",
                f"gap both rails at joint {j.name} (gaps: both)"))
    return findings
