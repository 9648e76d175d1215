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

The same cause, seen from the fault: a short that begins while the device
nearest it is already open (tripped, locked out: :meth:`RunLog.open_at
<sim.diagnose.runlog.RunLog.open_at>`) cannot be cleared by that device; when
another device clears it, the short was fed around the open one - through a
train standing across a gap of its district (the run's stands) - and that
device's whole district went dark for it. It is not a coordination failure of
the nearest device (RF-RUN-039 would ask for a faster device that was not in
the circuit at all); the cause claims those fault episodes, names the train
and the gap, and the fix is where trains stand.
"""
from __future__ import annotations

from sim.diagnose.cause import Cause
from sim.diagnose.facts import RunFacts, ep_get
from sim.diagnose.groups import EpisodeGroup, place_word
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


def _standing_across(facts: RunFacts, near: str, t_s: float) -> list[tuple[str, str]]:
    """``[(train, joint)]``: trains standing at ``t_s`` across a gap that joins ``near``'s
    district to another one."""
    mine = set(facts.sections_of(near))
    out = []
    for st in facts.log.stands:
        if st.t_stop_s > t_s or (st.t_go_s is not None and st.t_go_s < t_s):
            continue
        for g in st.gaps:
            j = facts.joint(g)
            if j is not None and len({j.ends[0].section in mine, j.ends[1].section in mine}) == 2:
                out.append((st.train, g))
    return out


def _around(facts: RunFacts, claimed: set) -> list[Cause]:
    """Shorts fed around their nearest device while it was open (module docstring)."""
    from sim.diagnose.causes.faults import fault_section

    if facts.log is None:
        return []
    groups: dict = {}
    for e in facts.episodes:
        # a scheduled short only: an overload is a device's own load (a supply's hiccup
        # shows as one at the instant it switches off, peak 0 A), not a short fed around
        if id(e) in claimed or e.kind != "fault" or not e.acted:
            continue
        if e.outcome not in ("tripped", "dropout", "unresolved"):
            continue
        sec = fault_section(facts, e)
        near = facts.nearest_device(sec) if sec is not None else None
        if near is None or e.acted == near or facts.log.open_at(near, e.start_s) is not True:
            continue
        paths = _standing_across(facts, near, e.start_s)
        key = (e.where, near, e.acted, tuple(paths[:1]))
        groups.setdefault(key, []).append(e)
    causes = []
    for (where, near, up, paths), eps in groups.items():
        g = EpisodeGroup(where, eps[0].kind, eps)
        since = facts.log.opened_s(near, eps[0].start_s)
        msg = (f"{place_word(g.kind)} {where} began while {facts.named(near)}, the device "
               f"nearest it, was open"
               + (f" (since {t_text(since)})" if since is not None else "")
               + ", so it could not clear it: the short was fed around it")
        if paths:
            (train, joint), = paths
            msg += (f" through train {train} standing across {joint} from district "
                    f"{facts.layout.district(_other_side(facts, joint, near))}")
            fix = (f"keep trains from standing across {joint} (see why {train} stood there), "
                   f"so that a short in {near}'s district is not fed from {up}'s while {near} "
                   f"is open")
            place = joint
        else:
            fix = (f"find the path that feeds {near}'s district around {near} while it is "
                   f"open (a train or a wire across a gap of its district)")
            place = where
        msg += f", until {facts.named(up)} acted: all of {up}'s district went dark; {g.describe()}"
        causes.append(Cause(
            Finding("warning", "RF-RUN-035", place, msg, fix, count=g.count, first_s=g.first_s,
                    last_s=g.last_s),
            f"the short at {where} is fed around {near} (open)"
            + (f" through train {paths[0][0]} across {paths[0][1]}" if paths else "")
            + f", taking {up} down",
            episodes=eps, dark=(up,)))
        claimed.update(id(e) for e in eps)
    return causes


def _other_side(facts: RunFacts, joint: str, near: str) -> str:
    j = facts.joint(joint)
    mine = set(facts.sections_of(near))
    x, y = j.ends[0].section, j.ends[1].section
    return y if x in mine else x


def find(facts: RunFacts, claimed: set) -> list[Cause]:
    return _fed_back(facts, claimed) + _around(facts, claimed)


def _fed_back(facts: RunFacts, claimed: set) -> list[Cause]:
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
