"""The running draw of a district, from the trains' schedules.

A device carries the draw of every locomotive standing or running on a section
downstream of it. Which locomotives those are at an instant follows from the
trains' schedules in closed form: each train departs at ``depart``, runs its
route at its speed, stands the wait of each reversal and stops for good at the
route's end (:class:`sim.world.trains.Motion`, the motion the run plays). A
locomotive draws at one point, midway between its first and last pickup axle
(:class:`sim.world.consist.LoadOffset`, as in the run), so at any instant it is
in exactly one section.

Method
------
For a locomotive at offset ``d`` behind the front (``L - d`` after an odd
number of reversals), on a leg of the route laid along one line, the draw point
is in the piece of section ``[u_lo, u_hi)`` while the front distance ``s`` is
in ``[s(u_lo + d), s(u_hi + d))``; the front reaches a distance ``s`` at
``Motion.arrival_s(s)``, so the locomotive is in that section for
``[arrival(s_a), arrival(s_b))`` (the wait at a reversal counts to the leg
that leaves it, where the locomotive is in the same section; on the last leg
the interval runs on for good). The most the locomotives of a set of sections
draw at one instant is a sweep over these intervals, ends before starts at one
instant, over ``[0, duration)``: cost ``O(n log n)`` for ``n`` intervals,
``n`` at most (locomotives) x (sections on their routes).

The schedule does not know what the run will do to it (a train that stalls on a
dead district, a keep-alive running out): the draw is that of the trains on
time. The bound of every train whose route or start visits the district at
once, which does not depend on the schedules, is kept as a note.

Codes
-----
RF-COORD-008 (error)
    A trip (or reverser sense, or self-reversing sense) threshold below the most
    the trains draw in the device's district at one instant by their schedules:
    the device acts on normal running. The finding names the trains and the
    instant.
RF-COORD-009 (info)
    Every train that can enter the district would draw more than the threshold
    if all were in it at once, but by the schedules they never are.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable, Optional

from sim.model import Finding, Scenario

__all__ = ["LocoInterval", "PeakDraw", "loco_intervals", "peak_draw", "check_draw",
           "downstream_sections"]

#: Draws within this of each other are equal (A).
_I_TOL_A = 1e-9


@dataclass(frozen=True)
class LocoInterval:
    """A locomotive in one section for ``[t_on_s, t_off_s)`` (``t_off_s`` inf: for good)."""

    train: str
    vehicle: int
    name: str
    section: str
    t_on_s: float
    t_off_s: float
    draw_a: float


@dataclass(frozen=True)
class PeakDraw:
    """The most a set of sections draws at one instant, by the trains' schedules.

    Attributes
    ----------
    i_a : float
        The most the locomotives in the sections draw together (A).
    t_s : float or None
        The first instant it is drawn (``None`` when nothing draws).
    trains : tuple of str
        The trains drawing it then.
    i_all_a : float
        Every train whose start or route visits the sections, all at once (A).
    all_trains : tuple of str
        Those trains.
    on : tuple of LocoInterval
        The locomotives in the sections at ``t_s``.
    """

    i_a: float
    t_s: Optional[float]
    trains: tuple
    i_all_a: float
    all_trains: tuple
    on: tuple = ()


def loco_intervals(scn: Scenario, layout) -> list[LocoInterval]:
    """Every locomotive's sections over time (module docstring, Method); cached."""
    key = "loco_intervals"
    if key in layout.cache:
        return layout.cache[key]
    from sim.world.trains import Motion, build_trains

    out: list[LocoInterval] = []
    if scn.trains:
        plans = build_trains(scn, layout)
        for name, plan in plans.items():
            motion = Motion(plan)
            legs = plan.path.legs
            for ld in plan.consist.loads:
                for k, leg in enumerate(legs):
                    last = k == len(legs) - 1
                    off = plan.length_m - ld.offset_m if leg.flipped else ld.offset_m
                    for piece in leg.pieces:
                        s_a = max(leg.s_of(piece.u_lo_m + off), leg.s_start_m)
                        s_b = leg.s_of(piece.u_hi_m + off)
                        if not last:
                            s_b = min(s_b, leg.s_end_m)
                        elif s_b > leg.s_end_m or piece is leg.pieces[-1]:
                            s_b = math.inf          # it stands here at the route's end
                        if s_b <= s_a:
                            continue
                        t_on = motion.arrival_s(s_a)
                        t_off = math.inf if s_b == math.inf else motion.arrival_s(s_b)
                        if t_off > t_on:
                            out.append(LocoInterval(name, ld.vehicle, ld.name,
                                                    piece.section, t_on, t_off, ld.draw_a))
    layout.cache[key] = out
    return out


def _sweep(intervals: Iterable[LocoInterval], t_end_s: float, weight=None):
    """``(most total weight, first instant, intervals on then)`` over ``[0, t_end_s)``;
    the weight of an interval is its draw unless ``weight(interval)`` says otherwise."""
    intervals = list(intervals)
    w = (lambda iv: iv.draw_a) if weight is None else weight
    events = []
    for iv in intervals:
        t_on = max(iv.t_on_s, 0.0)
        if t_on >= t_end_s or iv.t_off_s <= t_on:
            continue
        events.append((t_on, 1, iv))
        if iv.t_off_s < t_end_s:
            events.append((iv.t_off_s, 0, iv))
    events.sort(key=lambda e: (e[0], e[1]))      # ends before starts at one instant
    cur, best, best_t = 0.0, 0.0, None
    i = 0
    while i < len(events):
        t = events[i][0]
        while i < len(events) and events[i][0] == t:
            _, on, iv = events[i]
            cur += w(iv) if on else -w(iv)
            i += 1
        if cur > best + _I_TOL_A:
            best, best_t = cur, t
    on_then = ()
    if best_t is not None:
        on_then = tuple(iv for iv in intervals
                        if max(iv.t_on_s, 0.0) <= best_t < iv.t_off_s)
    return best, best_t, on_then


def peak_draw(scn: Scenario, layout, sections: Iterable[str], weight=None) -> PeakDraw:
    """The most the trains draw in ``sections`` at one instant (module docstring).

    With ``weight`` (a function of a :class:`LocoInterval`) the instant is the one
    where the sum of the weights is largest (e.g. draw plus keep-alive inrush), and
    ``i_a`` is that sum.
    """
    secs = set(sections)
    ivs = [iv for iv in loco_intervals(scn, layout) if iv.section in secs]
    best, t, on_then = _sweep(ivs, scn.duration_s, weight)
    trains = tuple(sorted({iv.train for iv in on_then}))
    visit = _visits(scn, layout)
    all_trains = tuple(sorted(t for t, ss in visit.items() if ss & secs))
    plans_draw = _train_draw(scn, layout)
    i_all = sum(plans_draw[t] for t in all_trains)
    return PeakDraw(best, t, trains, i_all, all_trains, on_then)


def _visits(scn: Scenario, layout) -> dict:
    """``{train: sections its start and route visit}``."""
    key = "train_visits"
    if key not in layout.cache:
        layout.cache[key] = {name: {leg.section for leg in layout.route_path(tr)}
                             | {tr.start.section} for name, tr in scn.trains.items()}
    return layout.cache[key]


def _train_draw(scn: Scenario, layout) -> dict:
    """``{train: the draw of all its locomotives}``."""
    key = "train_draw"
    if key not in layout.cache:
        from sim.world.consist import consist_of
        layout.cache[key] = {name: consist_of(scn, tr).draw_a
                             for name, tr in scn.trains.items()}
    return layout.cache[key]


def downstream_sections(scn: Scenario, layout, device: str) -> tuple:
    """The sections whose feed chain holds ``device``, in file order."""
    return tuple(s for s in scn.track.sections if device in layout.device_chain(s))


def _levels(scn: Scenario, kind: str, dev) -> list:
    levels = [("trip threshold", dev.trip.i_above_a, "trip")]
    if kind == "reverser":
        levels.append(("sense threshold", dev.sense_above_a, "sense"))
    if kind == "booster" and dev.reverse_on_short and dev.sense_reverse_a:
        levels.append(("reverse sense threshold", dev.sense_reverse_a, "sense_reverse"))
    return levels


def check_draw(scn: Scenario, layout) -> list[Finding]:
    """Thresholds against the trains' running draw (RF-COORD-008, RF-COORD-009)."""
    findings = []
    if not scn.trains:
        return findings
    for kind, table in (("booster", scn.boosters), ("breaker", scn.breakers),
                        ("reverser", scn.reversers)):
        for name, dev in table.items():
            secs = downstream_sections(scn, layout, name)
            if not secs:
                continue
            pk = peak_draw(scn, layout, secs)
            if pk.i_all_a <= 0.0:
                continue
            for what, level, key in _levels(scn, kind, dev):
                where = scn.where(kind + "s", name, key)
                if pk.i_a > level:
                    findings.append(Finding(
                        "error", "RF-COORD-008", where,
                        f"{kind} {name} has a {what} of {level:g} A, but by their "
                        f"schedules the trains in its district at {pk.t_s:.2f} s "
                        f"({', '.join(pk.trains)}) draw {pk.i_a:.3g} A: it acts on normal "
                        f"running",
                        f"raise the {what} above {pk.i_a:.3g} A, split the district, or "
                        f"keep those trains apart"))
                elif pk.i_all_a > level:
                    findings.append(Finding(
                        "info", "RF-COORD-009", where,
                        f"the {len(pk.all_trains)} trains that can enter {kind} {name}'s "
                        f"district would draw {pk.i_all_a:.3g} A all at once, above its "
                        f"{what} of {level:g} A; by their schedules at most {pk.i_a:.3g} A"
                        + (f" (at {pk.t_s:.2f} s)" if pk.t_s is not None else "")
                        + " is drawn at one instant"))
    return findings
