"""RF-RUN-035: a short fed back through a train that bridges a district gap.

A train standing across the gap between two districts whose rails meet in
phase joins them: nothing flows through it in normal running, but a short in
one district is then fed from the other one too, through the train's wheels.
The device nearest the short trips; the neighbour keeps feeding it through the
train until it trips as well (its whole district goes dark for a short that is
not in it) or, if the current through the train stays under its trip, never:
the short is not cleared.

Seen in a run as a gap episode of the train at an in-phase joint that overlaps
a fault episode in a district on one side of it. The cause claims the train's
episodes; the fault's own episodes stay what they are (the nearest device
clearing its part is the protection at work). Severity: warning when the
neighbour cleared it, error when the short stayed.
"""
from __future__ import annotations

from sim.diagnose.cause import Cause
from sim.diagnose.facts import RunFacts, ep_get
from sim.diagnose.text import a_text, t_text
from sim.model import Finding

__all__ = ["find"]


def _overlap(a, b, t_end_s: float) -> bool:
    a1 = a.end_s if a.end_s is not None else t_end_s
    b1 = b.end_s if b.end_s is not None else t_end_s
    return a.start_s <= b1 and b.start_s <= a1


def _pair(facts: RunFacts, g, faults):
    """``(fault episode, joint, the device nearest the short, the neighbour side's
    section, its first device)`` when gap episode ``g`` feeds a fault back, else None."""
    j = facts.joint(g.where)
    if j is None or facts.out_of_phase(j) is not False:
        return None
    x, y = j.ends[0].section, j.ends[1].section
    for f in faults:
        fault = facts.fault_of(f.where)
        if fault is None or not _overlap(f, g, facts.t_end_s):
            continue
        own = facts.protection_chain(fault.section)
        if not own:
            continue
        near = own[0]
        sides = [s for s in (x, y) if near in facts.protection_chain(s)]
        if len(sides) != 1:
            continue
        other = y if sides[0] == x else x
        feeders = [d for d in facts.protection_chain(other) if d not in own]
        if feeders:
            return f, j, near, other, feeders[0]
    return None


def find(facts: RunFacts, claimed: set) -> list[Cause]:
    faults = [e for e in facts.episodes if e.kind == "fault"]
    found: dict = {}
    for g in facts.episodes:
        if id(g) in claimed or g.kind != "gap" or not g.train:
            continue
        hit = _pair(facts, g, faults)
        if hit is not None:
            f, j, near, other, nb = hit
            found.setdefault((j.name, f.where, g.train), []).append((g, hit))
    causes = []
    for (jname, fwhere, train), pairs in found.items():
        gs = [g for g, _ in pairs]
        fs = list({id(h[0]): h[0] for _, h in pairs}.values())
        _, j, near, other, nb = pairs[0][1]
        fault = facts.fault_of(fwhere)
        i_train_a = 0.0
        for g in gs:
            paths = ep_get(g, "paths_a", {})
            i_train_a = max(i_train_a, max(paths.values()) if paths else g.peak_a)
        f0, g0 = fs[0], gs[0]
        tripped = ep_get(f0, "tripped", {})
        t_near = tripped.get(near) if tripped else (f0.acted_s if f0.acted == near else None)
        cleared = all(g.outcome == "tripped" for g in gs)
        n = len(gs)
        msg = (f"the short at {fwhere} was fed back through train {train} standing across "
               f"{jname} from district {facts.layout.district(other)} ({other})"
               + (f" once {near}, the device nearest it, had tripped at {t_text(t_near)}"
                  if t_near is not None else "")
               + f": {a_text(i_train_a)} through the train's wheels from {t_text(g0.start_s)}"
               + (f" ({n} times, the last from {t_text(gs[-1].start_s)})" if n > 1 else ""))
        if cleared:
            msg += (f", until {g0.acted} tripped at {t_text(g0.acted_s)}: its whole district "
                    f"went dark for a short that is not in it")
            fix = (f"keep trains from standing across {jname} (put the district gap where "
                   f"trains do not stop), so that a short in {fault.section} takes down "
                   f"{near} alone")
        else:
            msg += (f": the short was not cleared (the current through the train stays under "
                    f"{nb}'s {a_text(facts.scn.device(nb).trip.i_above_a)} trip)")
            fix = (f"set {nb}'s trip below {a_text(i_train_a)} (the current it feeds "
                   f"through the train), and keep trains from standing across {jname}")
        dark = tuple(dict.fromkeys(g.acted for g in gs if g.acted))
        causes.append(Cause(
            Finding("warning" if cleared else "error", "RF-RUN-035", jname, msg, fix, count=n,
                    first_s=g0.start_s, last_s=gs[-1].start_s),
            f"the short at {fwhere} is fed back through train {train} across {jname}"
            + (f", taking {g0.acted} down too" if cleared else ", and is not cleared"),
            episodes=gs, dark=dark))
        claimed.update(id(e) for e in gs)
    return causes
