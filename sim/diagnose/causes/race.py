"""The race at a reversing section's gap: a controller too slow, blind, or fighting.

RF-RUN-036 (error)
    The reversing device is too slow: an upstream device tripped (or a supply
    switched off) before its swap cleared the short (a negative margin), or
    the margin is below ``require.margin``, or the upstream trip came before
    the device could even detect the short. Only here is the fix "make the
    reversing controller faster", with the figure it must reach: clear within
    ``t_trip - margin`` of the onset, ``t_trip`` being the earliest of the
    upstream trips after the onset in the run and the static earliest trips
    (sampled sensing counted), or lengthen the delay of every device that
    trips too soon by as much. Its ``same_as`` names ``railfault check``'s
    RF-COORD-001/002 of the device when there is one.

    An independent cause: a lost race whose first actor was a supply at its
    limit (RF-RUN-033) is the supply's only when the race would be won without
    the supply acting (:func:`lost_without`: the reverser's time to clear
    against the other upstream devices' trips); otherwise mending the supply
    leaves it lost, and the reverser is a cause of its own.
RF-RUN-037 (error)
    The reversing device never sensed the short: the short drew no more than
    its sense level (or its sensing full scale clamps below it): the fix is its
    sense level, below the most current it carried (its device summary's peak).
RF-RUN-038 (error)
    Two reversing devices on the two sides of one gap swap against each other
    and never clear the short.

The clear time is the run's own (the episode's ``t_cleared_s``) when the
device acted, else the static worst case
(:func:`sim.checks.coordination.clear_time_s`: latest detection plus swap).
"""
from __future__ import annotations

import math
from typing import Optional

from sim.checks.coordination import clear_time_s
from sim.diagnose.cause import Cause
from sim.diagnose.facts import RunFacts, ep_get
from sim.diagnose.groups import EpisodeGroup
from sim.diagnose.text import a_text, ms_text
from sim.model import Finding

__all__ = ["find"]


def _sense_level_a(scn, dev: str):
    d = scn.device(dev)
    if dev in scn.reversers:
        return d.sense_above_a
    return d.sense_reverse_a if d.sense_reverse_a is not None else d.trip.i_above_a


def _carried_a(facts: RunFacts, r: str, e) -> float:
    """The most current reversing device ``r`` carried: its own peak in the run when
    the device summary has it (what it senses), else the episode's peak."""
    d = facts.devices.get(r)
    peak = getattr(d, "peak_a", 0.0) if d is not None else 0.0
    return peak if peak and peak > 0 else e.peak_a


def _slow(facts: RunFacts, e, r: str, req_s: float):
    """``(clear after onset, {device: its trip after onset})`` when ``r`` lost (or
    nearly lost) the race in episode ``e``, else ``None``. The trips are those of
    every device the episode has a margin against (a supply switching off among
    them), or of the device that tripped before ``r`` could even detect."""
    t_clear_s, _ = clear_time_s(facts.scn, r)
    tc = ep_get(e, "t_cleared_s")
    run_clear_s = tc - e.start_s if tc is not None else t_clear_s
    if e.margins and e.margin_s is not None and e.margin_s < req_s:
        return run_clear_s, {d: run_clear_s + m for d, m in e.margins.items()}
    if e.outcome == "tripped" and e.margin_s is None and e.acted and e.acted_s is not None:
        t_trip_s = e.acted_s - e.start_s
        t_swap_s = facts.scn.device(r).t_swap_s
        if t_trip_s < t_clear_s - t_swap_s:      # tripped before it could even detect
            return t_clear_s, {e.acted: t_trip_s}
    return None


def reverser_at(facts: RunFacts, e) -> Optional[str]:
    """The reversing device racing at gap episode ``e`` (``None``: none, or two)."""
    if e.kind != "gap":
        return None
    j = facts.joint(e.where)
    revs = facts.reversers_at(j) if j is not None else ()
    return revs[0][0] if len(revs) == 1 else None


def lost_without(facts: RunFacts, e, skip) -> bool:
    """Whether the race at gap episode ``e`` is lost even if the devices in ``skip``
    (a supply at its limit) did not act: its reversing device's time to clear
    against the trip of every *other* device upstream, with the required margin.

    Mending ``skip`` then leaves the race lost, so the episode does not follow from
    it alone: the reversing device is a cause of its own. The figures are the run's
    (the episode's margins against the devices that carried the short); when no
    other device carried it (the supply held the current under their levels), the
    static worst case (:func:`sim.checks.coordination.reversing_margins`: every
    upstream device's earliest trip against the reverser's latest clear).
    """
    r = reverser_at(facts, e)
    if r is None:
        return False
    req_s = facts.scn.t_margin_required_s
    skip = set(skip)
    others = [m for d, m in (e.margins or {}).items() if d not in skip and m is not None]
    if others:
        return min(others) < req_s
    static = facts.static_margins().get(r, {})
    ms = [m for d, m in static.items() if d not in skip]
    return bool(ms) and min(ms) < req_s


def _delay_word(facts: RunFacts, dev: str) -> str:
    return "switches off" if facts.kind(dev) == "supply" else "trips"


def _lengthen(facts: RunFacts, dev: str, by_s: float) -> str:
    if facts.kind(dev) == "supply":
        return (f"let {dev} hold its current limit more than {ms_text(by_s)} longer before it "
                f"switches off")
    return f"lengthen {dev}'s trip delay by more than {ms_text(by_s)}"


def find(facts: RunFacts, claimed: set) -> list[Cause]:
    scn = facts.scn
    req_s = scn.t_margin_required_s
    slow: dict[str, list] = {}
    blind: dict[str, list] = {}
    fight: dict[str, list] = {}
    for e in facts.episodes:
        if id(e) in claimed or e.kind != "gap":
            continue
        j = facts.joint(e.where)
        if j is None:
            continue
        revs = facts.reversers_at(j)
        if not revs:
            continue
        if len(revs) >= 2 and e.outcome == "unresolved":
            fight.setdefault(j.name, []).append(e)
            continue
        r = revs[0][0]
        hit = _slow(facts, e, r, req_s)
        if hit is not None:
            slow.setdefault(r, []).append((e, hit))
        elif e.outcome == "tripped" and not e.margins:
            lvl = _sense_level_a(scn, r)
            fs = scn.device(r).sense.full_scale_a
            if _carried_a(facts, r, e) <= lvl or fs <= lvl:
                blind.setdefault(r, []).append(e)
    causes = []
    for r, rows in slow.items():
        causes.append(_slow_cause(facts, r, rows))
        claimed.update(id(e) for e, _ in rows)
    for r, eps in blind.items():
        lvl = _sense_level_a(scn, r)
        fs = scn.device(r).sense.full_scale_a
        g = EpisodeGroup(eps[0].where, "gap", eps)
        peak = max(_carried_a(facts, r, e) for e in eps)
        why = (f"its sensing reads at most {a_text(fs)} (full scale), not above its "
               f"{a_text(lvl)} sense level" if fs <= lvl else
               f"it carried at most {a_text(peak)}, not above its {a_text(lvl)} sense level")
        fix = (f"raise {r}'s sensing full scale above {a_text(lvl)}" if fs <= lvl else
               f"lower {r}'s sense level below {a_text(peak)}")
        acted = tuple(dict.fromkeys(e.acted for e in eps if e.acted))
        causes.append(Cause(
            Finding("error", "RF-RUN-037", g.where,
                    f"reversing controller {r} never sensed the short: {why}; {g.describe()}",
                    fix, count=g.count, first_s=g.first_s, last_s=g.last_s),
            f"reversing controller {r} never senses the short at {g.where}",
            episodes=eps, dark=acted))
        claimed.update(id(e) for e in eps)
    for jname, eps in fight.items():
        j = facts.joint(jname)
        (ra, sa), (rb, sb) = facts.reversers_at(j)[:2]
        da = scn.device(ra)
        ta = getattr(da, "t_sense_s", getattr(da, "t_sense_reverse_s", 0.0))
        g = EpisodeGroup(jname, "gap", eps)
        acted = tuple(dict.fromkeys(e.acted for e in eps if e.acted))
        causes.append(Cause(
            Finding("error", "RF-RUN-038", jname,
                    f"reversing controllers {ra} ({sa}) and {rb} ({sb}) on the two sides of gap "
                    f"{jname} both sense the short and swap against each other: {g.describe()}",
                    f"let one of them act at this gap: feed {sa} or {sb} from a plain booster "
                    f"or breaker unless it closes a reversing loop, or give {rb} a sense delay "
                    f"above {ms_text(ta + da.t_swap_s)} ({ra}'s sense delay plus its swap "
                    f"time) so that it finds the short already cleared",
                    count=g.count, first_s=g.first_s, last_s=g.last_s),
            f"reversing controllers {ra} and {rb} fight at gap {jname}",
            episodes=eps, dark=acted))
        claimed.update(id(e) for e in eps)
    return causes


def _slow_cause(facts: RunFacts, r: str, rows: list) -> Cause:
    """RF-RUN-036 for reversing device ``r`` from its lost races ``[(episode, (clear,
    {device: trip after onset}))]`` (module docstring).

    The time it must clear within is the least of the run's trips after the onset
    and the static earliest trips of the devices upstream
    (:func:`sim.checks.coordination.reversing_margins`, sampled sensing counted:
    ``(n - 1) Ts``), less the required margin: enough whatever the sample phases,
    as the static advice is.
    """
    scn = facts.scn
    req_s = scn.t_margin_required_s
    eps = [e for e, _ in rows]
    have_s = max(h[0] for _, h in rows)
    trips: dict[str, float] = {}
    for _, (_, ts) in rows:
        for d, t in ts.items():
            trips[d] = min(t, trips.get(d, t))
    t_static, _ = clear_time_s(scn, r)
    earliest = {d: m + t_static for d, m in facts.static_margins().get(r, {}).items()}
    dev, trip_s = min(trips.items(), key=lambda kv: (kv[1], kv[0]))
    need_s = min([trip_s] + list(earliest.values())) - req_s
    gain_s = have_s - need_s
    _, how = clear_time_s(scn, r)
    g = EpisodeGroup(eps[0].where, "gap", eps)
    joints = ", ".join(dict.fromkeys(e.where for e in eps))
    msg = (f"reversing controller {r} clears a short at its gap {ms_text(have_s)} after the "
           f"onset (set: {how}), but {facts.named(dev)} {_delay_word(facts, dev)} "
           f"{ms_text(trip_s)} after it")
    if req_s > 0:
        msg += f", and the required margin is {ms_text(req_s)}"
    sups = {d for d in trips if facts.kind(d) == "supply"}
    if dev in sups:
        rest = {d: t for d, t in trips.items() if d not in sups}
        if rest:
            d2, t2 = min(rest.items(), key=lambda kv: (kv[1], kv[0]))
            if t2 < have_s:
                msg += (f"; without {dev} acting, {facts.named(d2)} trips {ms_text(t2)} after "
                        f"the onset: the race is still lost by {ms_text(have_s - t2)}, so "
                        f"mending {dev} alone does not win it")
            elif t2 - have_s < req_s:
                msg += (f"; without {dev} acting, {facts.named(d2)} trips {ms_text(t2)} after "
                        f"the onset: the race is won by only {ms_text(t2 - have_s)}")
    msg += f": at {joints}: {g.describe()}"
    late: dict[str, float] = {}
    for d in set(trips) | set(earliest):
        t = min(trips.get(d, math.inf), earliest.get(d, math.inf))
        if t < have_s + req_s:
            late[d] = t
    upstream = " and ".join(_lengthen(facts, d, have_s + req_s - t)
                            for d, t in sorted(late.items(), key=lambda kv: (kv[1], kv[0])))
    if need_s > 0:
        fix = (f"make {r} clear within {ms_text(need_s)} of the onset, {ms_text(gain_s)} "
               f"faster than now (a shorter sense delay or swap time), or {upstream}")
    else:
        fix = (f"{upstream}: {r} cannot clear before {ms_text(need_s + req_s)} less the "
               f"required margin")
    acted = tuple(dict.fromkeys(e.acted for e in eps if e.acted and e.outcome == "tripped"))
    where = scn.where("reversers" if r in scn.reversers else "boosters", r)
    return Cause(
        Finding("error", "RF-RUN-036", where, msg, fix, count=len(eps), first_s=g.first_s,
                last_s=g.last_s,
                same_as=facts.static_ref(("RF-COORD-001", "RF-COORD-002"), where)),
        f"reversing controller {r} is too slow: clears {ms_text(have_s)} after the onset, "
        f"{dev} {_delay_word(facts, dev)} after {ms_text(trip_s)}",
        episodes=eps, dark=acted)
