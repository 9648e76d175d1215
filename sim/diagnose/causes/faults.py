"""Scheduled shorts and overloads: the wrong device clearing them, or clearing them late.

RF-RUN-039 (error)
    A short (a scenario fault, or an overload during one) was cleared by a
    device further up the feed chain than the device nearest it: the whole
    larger district went dark. A coordination failure (US Army TM 5-811-14
    section 4-1: the device nearest the fault must operate first), an error as
    ``railfault check``'s RF-COORD-004/005 is. The message says why the
    nearest device did not act (its threshold above the short's current, its
    sensing full scale, its delay not shorter than the upstream one's once
    sampling is counted) and the fix gives the setting it needs: for a delay,
    the check's own advice (:func:`sim.checks.coordination.nested_advice`,
    enough whatever the sample phases: "3.89 ms or less" against a 4 ms
    delay sampled every 0.1 ms, whose earliest trip is 3.9 ms). Its
    ``same_as`` names the check's finding of the pair when there is one.
RF-RUN-041 (warning)
    A long let-through: a short or overload episode that lasted at least
    :data:`LONG_LET_THROUGH_S` before it ended (an inverse-time or thermal delay,
    a threshold above the short's current, a bridge that ended by itself). Its
    I²t (the episode's ``i2t_a2s``, in A²s) is the heat it put into rails, wire
    and wheels; stated beside the verdict (in the headline). An episode still
    flowing at the end of the run is not one: it is a short not cleared
    (RF-RUN-002, RF-RUN-005); nor is one during which a device carried more than
    its trip level for longer than its trip delay (its ``overruns``): the engine
    reports that let-through itself (RF-RUN-020, RF-RUN-021).
"""
from __future__ import annotations

from sim.diagnose.cause import Cause
from sim.diagnose.facts import RunFacts, ep_get
from sim.diagnose.groups import EpisodeGroup, place_word
from sim.diagnose.text import a2s_text, a_text, dur_text, ms_text
from sim.model import Finding

__all__ = ["find", "find_let_through", "fault_section", "LONG_LET_THROUGH_S"]

#: An episode this long is a long let-through (s): our choice, a tenth of a second,
#: some tens of times the few-ms short-circuit delay of a booster or breaker; not a
#: published limit.
LONG_LET_THROUGH_S = 0.1


def fault_section(facts: RunFacts, e):
    """The section of the scheduled short behind episode ``e`` (``None``: none)."""
    if e.kind == "fault":
        f = facts.fault_of(e.where)
        return f.section if f is not None else None
    if e.kind == "overload" and e.acted:
        f = facts.fault_on(e.acted, e.start_s, e.end_s if e.end_s is not None else facts.t_end_s)
        return f.section if f is not None else None
    return None


def _why(facts: RunFacts, near: str, up: str, peak_a: float) -> tuple[str, str, tuple]:
    """Why ``near`` did not clear a short of ``peak_a`` before ``up`` did, the fix, and
    the static codes that state the same cause."""
    from sim.checks.coordination import nested_advice

    scn = facts.scn
    nd, ud = scn.device(near), scn.device(up)
    if nd.trip.i_above_a >= peak_a:
        return (f"{near} trips only above {a_text(nd.trip.i_above_a)} and the short drew "
                f"{a_text(peak_a)}", f"lower {near}'s trip below {a_text(peak_a)}", ())
    if nd.sense.full_scale_a <= nd.trip.i_above_a:
        return (f"{near} reads at most {a_text(nd.sense.full_scale_a)} (full scale), not above "
                f"its {a_text(nd.trip.i_above_a)} trip",
                f"raise {near}'s sensing full scale above {a_text(nd.trip.i_above_a)}",
                ("RF-COORD-007",))
    advice = []
    if up in scn.boosters or up in scn.breakers:
        advice = [a.text for a in nested_advice(scn, near, up)]
    p_u = ud.sense.period_s
    sampled = (f" sampled every {ms_text(p_u)}" if p_u else "")
    if nd.trip.t_after_s >= ud.trip.t_after_s:
        why = (f"{near} trips after {ms_text(nd.trip.t_after_s)}, not sooner than {up} "
               f"({ms_text(ud.trip.t_after_s)}{sampled})")
    else:
        why = (f"{near}'s delay ({ms_text(nd.trip.t_after_s)}) is only just shorter than "
               f"{up}'s ({ms_text(ud.trip.t_after_s)}{sampled}) once sampling is counted")
    fix = ("any one of these is enough whatever the sample phases: " + "; or ".join(advice)
           if advice else f"set {near}'s trip delay below {ms_text(ud.trip.t_after_s)}")
    return why, fix, ("RF-COORD-004", "RF-COORD-005")


def find(facts: RunFacts, claimed: set) -> list[Cause]:
    groups: dict = {}
    for e in facts.episodes:
        if id(e) in claimed or e.outcome != "tripped" or not e.acted:
            continue
        sec = fault_section(facts, e)
        if sec is None:
            continue
        near = facts.nearest_device(sec)
        if near is None or e.acted == near or e.acted not in facts.chain(sec):
            continue
        groups.setdefault((e.where, e.acted, near), []).append(e)
    causes = []
    for (where, up, near), eps in groups.items():
        g = EpisodeGroup(where, eps[0].kind, eps)
        why, fix, codes = _why(facts, near, up, g.peak_a)
        same = ""
        if codes == ("RF-COORD-007",):
            same = facts.static_ref(codes, facts.scn.where(facts.table(near), near, "sense"))
        elif codes:
            same = facts.static_ref(codes, facts.scn.where(facts.table(near), near, "trip"),
                                    names=(up,))
        msg = (f"{place_word(g.kind)} {where} was cleared by {facts.named(up)}, not by "
               f"{facts.named(near)}, the device nearest it, so all of {up}'s district went "
               f"dark: {why}; {g.describe()}")
        causes.append(Cause(
            Finding("error", "RF-RUN-039", where, msg, fix, count=g.count, first_s=g.first_s,
                    last_s=g.last_s, same_as=same),
            f"the short at {where} is cleared by {up}, not by {near} nearest it",
            episodes=eps, dark=(up,)))
        claimed.update(id(e) for e in eps)
    return causes


def find_let_through(facts: RunFacts) -> list[Cause]:
    """RF-RUN-041 for every place whose episodes let a short current through for
    :data:`LONG_LET_THROUGH_S` or longer (module docstring)."""
    groups: dict = {}
    for e in facts.episodes:
        if e.end_s is None or ep_get(e, "overruns"):
            continue
        if e.end_s - e.start_s >= LONG_LET_THROUGH_S:
            groups.setdefault(e.where, []).append(e)
    causes = []
    for where, eps in groups.items():
        g = EpisodeGroup(where, eps[0].kind, eps)
        longest = max(e.end_s - e.start_s for e in eps)
        i2t = g.i2t_max_a2s
        dev = next((e.acted for e in eps if e.acted), None)
        msg = (f"{place_word(g.kind)} {where}: {g.noun()} lasting up to {dur_text(longest)} at up "
               f"to {a_text(g.peak_a)}"
               + (f", letting through up to {a2s_text(i2t)}" if i2t is not None else "")
               + f": heat in rails, wire and wheels ({g.span_text()})")
        fix = ((f"make {dev} act sooner at {a_text(g.peak_a)} (a lower threshold or a shorter "
                f"delay), or check that the wiring and rails carry {a_text(g.peak_a)} for "
                f"{dur_text(longest)}") if dev else
               f"make the devices feeding {where} act sooner at {a_text(g.peak_a)}")
        causes.append(Cause(
            Finding("warning", "RF-RUN-041", where, msg, fix, count=g.count, first_s=g.first_s,
                    last_s=g.last_s),
            f"long let-through at {where}: {dur_text(longest)}"
            + (f", {a2s_text(i2t)}" if i2t is not None else ""),
            episodes=eps))
    return causes
