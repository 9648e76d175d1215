"""What one run says about the races at the reversing sections' gaps.

A *reversing section* is a section whose feed chain holds a reversing
controller or a booster that reverses on a short; its *gaps* are the gapped
joints at its ends. A run's gap episodes (``Episode.kind == "gap"``, ``where``
the joint ``x.b~y.a``) are the races there. Following the run's verdict rule
(``scenarios/README.md``, Results):

- a race is **lost** when its margin is negative or its outcome is
  ``tripped``, ``dropout`` or ``unresolved`` (:data:`LOST_OUTCOMES`);
- a race **fails** when it is lost or its margin is below ``require.margin``.

:func:`gap_record` gives, per gap, the least margin of its episodes in one run,
whether a race there was lost or failed, and how many episodes it had. The
episode fields read are those of the result contract (``kind``, ``where``,
``outcome``, ``margin_s``); any other field is read with a default.

:func:`crossed_gaps` gives the gapped joints some train's wheels bridged in the
run, with a short there or not: by the train's schedule in closed form
(:class:`sim.world.trains.Motion`, the motion the run plays) up to the train's
first stop without power (the run's stands, :class:`sim.diagnose.runlog.RunLog`:
after it the run leaves the schedule, so nothing later is counted). A gap a
sample crossed with no gap episode was crossed in phase.
"""
from __future__ import annotations

import math
from typing import Iterable, Optional

__all__ = ["LOST_OUTCOMES", "reversing_sections", "reversing_gaps", "gap_record",
           "run_record", "lost", "failing", "crossed_gaps"]

#: Outcomes of a gap episode that lose the race.
LOST_OUTCOMES = frozenset({"tripped", "dropout", "unresolved"})


def reversing_sections(scn) -> list[str]:
    """Sections fed through a reverser or a booster that reverses on a short, in file order."""
    out = []
    for name in scn.track.sections:
        for dev in scn.upstream(name):
            if dev in scn.reversers or (dev in scn.boosters
                                        and scn.boosters[dev].reverse_on_short):
                out.append(name)
                break
    return out


def reversing_gaps(scn) -> dict[str, str]:
    """``{joint name: reversing section}`` for every gapped joint at a reversing section."""
    rev = set(reversing_sections(scn))
    out: dict[str, str] = {}
    for j in scn.track.joints:
        if j.gaps == "none":
            continue
        ends = [e.section for e in j.ends if e.section in rev]
        if ends:
            out[j.name] = "/".join(dict.fromkeys(ends))
    return out


def lost(ep) -> bool:
    """Whether a gap episode lost its race (module docstring)."""
    m = getattr(ep, "margin_s", None)
    return (m is not None and m < 0) or getattr(ep, "outcome", "") in LOST_OUTCOMES


def failing(ep, t_margin_required_s: float) -> bool:
    """Lost, or a margin below the required one."""
    m = getattr(ep, "margin_s", None)
    return lost(ep) or (m is not None and m < t_margin_required_s)


def gap_record(episodes: Iterable, t_margin_required_s: float) -> dict:
    """``{gap: {"margin_s", "lost", "fail", "n"}}`` of one run's gap episodes.

    ``margin_s`` is the least margin of the gap's episodes (``None`` when none
    had one: an unresolved short with no device to race).
    """
    out: dict[str, dict] = {}
    for ep in episodes:
        if getattr(ep, "kind", None) != "gap":
            continue
        rec = out.setdefault(ep.where, {"margin_s": None, "lost": False, "fail": False,
                                        "n": 0})
        rec["n"] += 1
        m = getattr(ep, "margin_s", None)
        if m is not None and math.isfinite(m) and (rec["margin_s"] is None
                                                   or m < rec["margin_s"]):
            rec["margin_s"] = float(m)
        rec["lost"] = rec["lost"] or lost(ep)
        rec["fail"] = rec["fail"] or failing(ep, t_margin_required_s)
    return out


def run_record(result, t_margin_required_s: Optional[float] = None) -> dict:
    """What a sweep keeps of one run: verdict, gaps, trips and dark time per device.

    Devices that never tripped and were never dark are left out (a sweep of a
    large layout keeps its rows small).
    """
    need = result.t_margin_required_s if t_margin_required_s is None else t_margin_required_s
    trips = {n: int(d.trips) for n, d in sorted(result.devices.items()) if d.trips}
    dark = {n: float(d.dark_s) for n, d in sorted(result.devices.items()) if d.dark_s > 0}
    return {"verdict": result.verdict, "gaps": gap_record(result.episodes, need),
            "trips": trips, "dark_s": dark}


def crossed_gaps(scn, layout, result) -> list[str]:
    """The gapped joints a train bridged in ``result``'s run (module docstring), sorted."""
    import math

    from sim.world.trains import Motion, build_trains

    if not scn.trains:
        return []
    t_end_s = result.t_end_s or scn.duration_s
    first_stop: dict = {}
    log = getattr(result, "log", None)
    for st in (log.stands if log is not None else ()):
        first_stop[st.train] = min(first_stop.get(st.train, math.inf), st.t_stop_s)
    joints = scn.track.joints
    out = set()
    for name, plan in build_trains(scn, layout).items():
        motion = Motion(plan)
        until_s = min(t_end_s, first_stop.get(name, math.inf))
        for span in plan.spans:
            j = joints[span.joint_index]
            if j.gaps == "none" or j.name in out:
                continue
            if motion.arrival_s(span.s_on_m) <= until_s:
                out.add(j.name)
    return sorted(out)
