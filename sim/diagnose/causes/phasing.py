"""RF-RUN-031: a gap between fixed-phase districts whose rails meet out of phase.

Two districts of fixed polarity (no reversing controller on either side) meet
at a gap on both rails, and their phases disagree: every wheel set or pickup
that bridges the gap is a short through both districts' devices, and no
reversing controller can clear it. The fix is not a faster device: it is the
fewest settings to change that put the rails in phase, as the phasing check
finds them (:func:`sim.checks.phasing.check_phasing`, called through the static
results, not recomputed). One cause per phasing finding (one set of changes
mends all its joints); the shorts at each joint are grouped under it.
"""
from __future__ import annotations

from sim.diagnose.cause import Cause, ref
from sim.diagnose.facts import RunFacts
from sim.diagnose.groups import EpisodeGroup
from sim.diagnose.text import plural
from sim.model import Finding

__all__ = ["find"]


def find(facts: RunFacts, claimed: set) -> list[Cause]:
    by_fix: dict = {}          # phasing finding (or joint) -> {joint name: [episodes]}
    joints = {}
    for e in facts.episodes:
        if id(e) in claimed or e.kind != "gap" or e.outcome not in ("tripped", "unresolved",
                                                                    "dropout"):
            continue
        j = facts.joint(e.where)
        if j is None or j.gaps != "both" or not facts.out_of_phase(j):
            continue
        phs = facts.phasing_finding(j)
        key = id(phs) if phs is not None else j.name
        by_fix.setdefault(key, ({}, phs))[0].setdefault(j.name, []).append(e)
        joints[j.name] = j
    causes = []
    for per_joint, phs in by_fix.values():
        names = sorted(per_joint, key=lambda n: joints[n].index)
        eps = [e for n in names for e in per_joint[n]]
        parts = []
        for n in names:
            j = joints[n]
            x, y = j.ends[0].section, j.ends[1].section
            dx, dy = facts.layout.district(x), facts.layout.district(y)
            g = EpisodeGroup(n, "gap", per_joint[n])
            parts.append(f"gap {n} between district {dx} ({x}) and district {dy} ({y}): "
                         f"{g.describe()}")
        msg = ("the rails of fixed-polarity districts meet out of phase, so every wheel that "
               "bridges the gap is a short no reversing controller can clear: "
               + "; ".join(parts))
        fix = phs.fix if phs is not None and phs.fix else (
            "make the rails meet in phase at " + ", ".join(names)
            + ": invert one district's booster or swap a section's leads (see railfault check)")
        acted = tuple(dict.fromkeys(e.acted for e in eps if e.acted))
        first = names[0]
        head = (f"gap {first} meets out of phase between fixed districts: "
                f"{plural(len(eps), 'short')}"
                + (f", tripping {', '.join(acted)}" if acted else "")
                + (f" (and {plural(len(names) - 1, 'more gap')})" if len(names) > 1 else ""))
        same = [facts.phasing_finding(joints[n], naming=True) for n in names]
        causes.append(Cause(
            Finding("error", "RF-RUN-031", first, msg, fix, count=len(eps),
                    first_s=min(e.start_s for e in eps), last_s=max(e.start_s for e in eps),
                    same_as=ref(same[0]) if same[0] is not None and same[0].severity == "error"
                    else ""),
            head, episodes=eps, dark=acted))
        claimed.update(id(e) for e in eps)
    return causes
