"""RF-RUN-033: a supply at its current limit that takes its boosters down.

When a short (or the load) asks a supply for more than its current limit, a
constant-current supply holds the limit and its voltage collapses: every
booster on it drops out on undervoltage (outcome ``dropout``, acted by the
supply); a hiccup or latching supply switches off and every booster on it goes
dark (outcome ``tripped``, acted by the supply). Either way the boosters'
own short protection never acts when their trip threshold is at or above what
the supply can deliver, and every district on that supply goes down for a
short in one of them. The fix is the supply's size against the boosters'
trip thresholds (or fewer boosters on it), with the figures; not a faster
reversing controller.

Read from the episodes (``dropout`` / ``tripped`` with ``acted`` a supply)
and, for the undervoltage drop-outs that no episode records, from the event
summary (``dropout`` of each booster, ``limit`` and ``off`` of the supply).
A race at a reversing gap that the supply acted first in is the supply's only
when mending the supply would win it
(:func:`sim.diagnose.causes.race.lost_without`); otherwise the reversing
controller is a cause of its own (RF-RUN-036) and claims it.
"""
from __future__ import annotations

from sim.diagnose.cause import Cause, ref
from sim.diagnose.causes.race import lost_without
from sim.diagnose.facts import RunFacts
from sim.diagnose.groups import EpisodeGroup
from sim.diagnose.text import a_text, ms_text, plural, t_text
from sim.model import Finding

__all__ = ["find"]


def find(facts: RunFacts, claimed: set) -> list[Cause]:
    scn = facts.scn
    causes = []
    for s, sup in scn.supplies.items():
        on_it = [b for b, bst in scn.boosters.items() if bst.supply == s]
        eps = [e for e in facts.episodes if id(e) not in claimed and e.acted == s
               and e.outcome in ("dropout", "tripped") and not lost_without(facts, e, (s,))]
        drops = {b: facts.count(b, "dropout") for b in on_it}
        drops = {b: n for b, n in drops.items() if n}
        n_limit = facts.count(s, "limit")
        n_off = facts.count(s, "off")
        if not eps and not (drops and (n_limit or n_off)):
            continue
        limit_a = sup.i_limit_a
        switched = sup.on_limit in ("hiccup", "latch") and n_off > 0
        if switched:
            first, last = facts.times(s, "off") or (None, None)
            what = (f"supply {s} switched off at its {a_text(limit_a)} current limit "
                    f"{plural(n_off, 'time')} ({sup.on_limit}), taking down every booster on "
                    f"it: {', '.join(on_it)}")
        else:
            times = [facts.times(b, "dropout") for b in drops] or [facts.times(s, "limit")]
            times = [t for t in times if t]
            first = min((t[0] for t in times), default=None)
            last = max((t[1] for t in times), default=None)
            who = ", ".join(f"{b} ({plural(n, 'time')})" for b, n in drops.items()) or \
                ", ".join(on_it)
            uv = sorted({scn.boosters[b].v_undervoltage_v for b in (drops or on_it)})
            what = (f"supply {s} held its {a_text(limit_a)} current limit and its voltage "
                    f"fell below the boosters' {', '.join(f'{v:g} V' for v in uv)} undervoltage "
                    f"level: {who} dropped out instead of tripping")
        if eps:
            g = EpisodeGroup(s, eps[0].kind, eps)
            what += f"; {g.describe()}"
            first = g.first_s if first is None else min(first, g.first_s)
            last = g.last_s if last is None else max(last, g.last_s)
        trips = {b: scn.boosters[b].trip.i_above_a for b in on_it}
        blind = [b for b, i in trips.items() if i >= limit_a]
        if blind:
            what += ("; " + ", ".join(f"{b} trips only above {a_text(trips[b])}" for b in blind)
                     + f", more than {s} can deliver, so "
                     + ("it" if len(blind) == 1 else "they") + " can never clear a short")
        if blind:
            need_a = max(trips.values())
            fix = (f"give {s} a current limit above {a_text(need_a)} (the highest trip "
                   f"threshold of its boosters) so that a booster trips before the supply "
                   f"limits, or put fewer boosters on it ({len(on_it)} share its "
                   f"{a_text(limit_a)}); or set the trip of {' and '.join(blind)} below "
                   f"{a_text(limit_a)}")
        else:
            slowest = max(on_it, key=lambda b: scn.boosters[b].trip.t_after_s)
            delay = scn.boosters[slowest].trip.t_after_s
            what += ("; the boosters on it trip below its limit, but it acts first")
            fix = (f"give {s} more current than its {a_text(limit_a)} (a larger supply), or put "
                   f"fewer boosters on it ({len(on_it)} share it)")
            if sup.on_limit in ("hiccup", "latch"):
                fix += (f"; or let it hold its limit for longer than {ms_text(delay)} ({slowest}'s "
                        f"trip delay) before it switches off, so that the booster on the short "
                        f"trips first")
        dark = tuple([s] + on_it)
        n = len(eps) or sum(drops.values()) or n_off or n_limit
        # check's RF-COORD-010 (a booster on it slower than its switch-off) is this cause
        same = ""
        if switched:
            same = next((ref(f) for b in on_it for f in facts.static_with("RF-COORD-010")
                         if f.severity == "error"
                         and f.where.split(" (line")[0] == f"boosters.{b}.trip"), "")
        causes.append(Cause(
            Finding("error", "RF-RUN-033", s, what, fix, count=max(1, n), first_s=first,
                    last_s=last, same_as=same),
            f"supply {s} at its {a_text(limit_a)} limit "
            + ("switches off, taking down " if switched else "browns out ")
            + ", ".join(on_it if switched or not drops else drops)
            + (f" (from {t_text(first)})" if first is not None else ""),
            episodes=eps, dark=dark,
            sections=tuple(x for b in on_it for x in facts.sections_of(b))))
        claimed.update(id(e) for e in eps)
    return causes
