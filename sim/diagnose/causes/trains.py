"""RF-RUN-030: a train longer than the reversing section it runs through.

A train whose outermost conducting axles are further apart than the reversing
zone is long bridges both of its gaps at once: whatever polarity the
controller chooses, one end is a short, every swap moves it to the other end,
and an upstream device trips in the end *(common practice: a reversing section
must be longer than the longest train; domain.md, "Rules of thumb")*. The span
and the zone come from the train-length check
(:func:`sim.checks.train_length.long_trains`); this module ties the run's
failing shorts of that train at that zone's gaps to it. The fix is the length,
not a faster controller.
"""
from __future__ import annotations

from sim.checks.train_length import long_trains
from sim.diagnose.cause import Cause
from sim.diagnose.facts import RunFacts
from sim.diagnose.groups import EpisodeGroup
from sim.diagnose.text import mm_text
from sim.model import Finding

__all__ = ["find"]


def find(facts: RunFacts, claimed: set) -> list[Cause]:
    causes = []
    for lt in long_trains(facts.scn, facts.layout):
        zone = set(lt.zone)
        eps = []
        for e in facts.episodes:
            if id(e) in claimed or e.kind != "gap" or e.train != lt.train:
                continue
            if e.outcome not in ("tripped", "unresolved", "dropout"):
                continue
            j = facts.joint(e.where)
            if j is not None and {j.ends[0].section, j.ends[1].section} & zone:
                eps.append(e)
        if not eps:
            continue
        name = " + ".join(lt.zone)
        vi, vname, ai, pos = lt.first
        vj, wname, aj, pos2 = lt.last
        g = EpisodeGroup(eps[0].where, "gap", eps)
        joints = ", ".join(dict.fromkeys(e.where for e in eps))
        msg = (f"train {lt.train} spans {mm_text(lt.span_m)} between its outermost conducting "
               f"axles ({vname} axle {ai + 1} at {mm_text(pos)} to {wname} axle {aj + 1} at "
               f"{mm_text(pos2)} from the front), longer than reversing section {name} (fed by "
               f"{lt.reverser}), {mm_text(lt.zone_m)}: it bridges both gaps at once, so every "
               f"swap moves the short to the other end; at {joints}: {g.describe()}")
        fix = (f"lengthen {name} by more than {mm_text(lt.short_m)} (to more than "
               f"{mm_text(lt.span_m)}), or bring {lt.train}'s conducting span under "
               f"{mm_text(lt.zone_m)}: fewer or closer pickups, or rearrange the consist "
               f"(lighted cars and metal wheels conduct too)")
        acted = tuple(dict.fromkeys(e.acted for e in eps if e.acted))
        causes.append(Cause(
            Finding("error", "RF-RUN-030", facts.scn.where("trains", lt.train, "consist"), msg,
                    fix, count=len(eps), first_s=g.first_s, last_s=g.last_s),
            f"train {lt.train} ({mm_text(lt.span_m)} between conducting axles) is longer than "
            f"reversing section {name} ({mm_text(lt.zone_m)})",
            episodes=eps, dark=acted))
        claimed.update(id(e) for e in eps)
    return causes
