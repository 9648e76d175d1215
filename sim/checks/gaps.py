"""District boundaries: gaps between power districts, and track fed by nothing.

Districts are separated by gaps on both rails, or on one rail on a
common-rail layout (see ``domain.md``, "Power district"). Joints between a
reversing district (a reverser's, or a booster's with ``reverse_on_short``) and
another are left to :mod:`sim.checks.coverage` (RF-COV-001, RF-COV-003), so
that one mistake gives one finding.

Codes
-----
RF-GAP-001 (error)
    A bonded joint (``gaps: none``) between sections of two districts: the two
    devices' outputs are in parallel through the rails, so neither protects its
    district alone and a short draws from both. Fix: gap both rails there.
RF-GAP-002 (warning)
    A joint gapped on one rail only between two districts: common-rail wiring.
    The devices share the ungapped rail; it works only if their outputs share
    that side of the signal, and a short current can return through the other
    district.
RF-GAP-003 (info)
    A gapped joint inside one district: not needed for protection (fine for
    occupancy detection).
RF-GAP-004 (error)
    A section fed by nothing: no feed of its own and no bonded joint to a fed
    section. It is dead track.
"""
from __future__ import annotations

from sim.layout import joint_where
from sim.model import Finding, Scenario

__all__ = ["check_gaps"]


def _reverses(scn: Scenario, device: str) -> bool:
    """A reverser, or a device under a booster that reverses its own output."""
    if device in scn.reversers:
        return True
    b = scn.booster_of(device)
    return b is not None and scn.boosters[b].reverse_on_short


def check_gaps(scn: Scenario, layout) -> list[Finding]:
    """District boundaries (RF-GAP-001..003) and unfed track (RF-GAP-004)."""
    findings: list[Finding] = []
    for j in scn.track.joints:
        x, y = j.ends[0].section, j.ends[1].section
        dx, dy = layout.district(x), layout.district(y)
        if dx is None or dy is None:
            continue
        if dx == dy and (j.gaps == "none" or x == y):
            continue
        where = joint_where(scn, j, "gaps")
        if dx != dy and any(_reverses(scn, d) for d in (dx, dy)):
            continue          # a reversing district's joints: the coverage check's job
        if dx != dy:
            if j.gaps == "none":
                findings.append(Finding(
                    "error", "RF-GAP-001", where,
                    f"bonded joint {j.name} joins district {dx} ({x}) to district {dy} "
                    f"({y}): {dx} and {dy} are in parallel through the rails",
                    f"gap both rails at joint {j.name} (gaps: both)"))
            elif j.gaps == "one":
                findings.append(Finding(
                    "warning", "RF-GAP-002", where,
                    f"joint {j.name} between districts {dx} and {dy} is gapped on the "
                    f"{j.rail} rail only (common-rail wiring): {dx} and {dy} share the "
                    f"other rail",
                    f"gap both rails at joint {j.name} unless the layout is wired "
                    f"common-rail on purpose"))
        elif j.gaps != "none" and x != y:
            findings.append(Finding(
                "info", "RF-GAP-003", where,
                f"joint {j.name} is gapped but both sides are in district {dx}: not needed "
                f"for protection"))
    for s in layout.unfed:
        findings.append(Finding(
            "error", "RF-GAP-004", scn.where("track", "sections", s),
            f"section {s} has no feed and no bonded joint to a fed section: it is dead track",
            f"give {s} a feed (feed: <device>) or bond it to a fed section"))
    return findings
