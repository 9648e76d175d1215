"""Symptoms no specific cause explains: each is a cause of its own.

A group of symptoms (:func:`sim.diagnose.groups.symptom_groups`) left over once
every specific cause has claimed its episodes becomes a cause with its own
finding. RF-RUN-010 groups are the protection at work when every episode is a
scheduled short (or an overload during one) cleared by the device nearest it
(US Army TM 5-811-14 section 4-1): a district they keep dark does not fail the
run. An unresolved fault (RF-RUN-005) gets the setting that would clear it.
"""
from __future__ import annotations

from sim.diagnose.cause import Cause
from sim.diagnose.causes.faults import fault_section
from sim.diagnose.facts import RunFacts
from sim.diagnose.groups import SymptomGroup, place_word
from sim.diagnose.text import a_text

__all__ = ["symptom_cause"]


def _protection(facts: RunFacts, sg: SymptomGroup) -> bool:
    for e in sg.group.episodes:
        sec = fault_section(facts, e)
        if sec is None or e.acted != facts.nearest_device(sec):
            return False
    return True


def _unresolved_fix(facts: RunFacts, sg: SymptomGroup) -> str:
    sec = None
    for e in sg.group.episodes:
        sec = fault_section(facts, e) or sec
    if sec is None:
        return ""
    near = facts.nearest_device(sec)
    if near is None:
        return f"feed {sec} through a device that trips on a short"
    peak = sg.group.peak_a
    i_trip = facts.scn.device(near).trip.i_above_a
    if i_trip >= peak:
        return (f"lower {near}'s trip below {a_text(peak)} (it trips above {a_text(i_trip)}; "
                f"the short drew {a_text(peak)})")
    return f"find why {near} does not trip on {a_text(peak)} (railfault check, faultmap)"


def symptom_cause(facts: RunFacts, sg: SymptomGroup) -> Cause:
    """The cause standing for a symptom group nothing else explains."""
    g = sg.group
    fix = ""
    protection = False
    if sg.code == "RF-RUN-010":
        protection = _protection(facts, sg)
        if protection:
            acted = ", ".join(g.acted())
            head = (f"the scheduled short at {g.where}, cleared by {acted}, the device nearest it "
                    f"(the protection at work)")
        else:
            head = f"{place_word(g.kind)} {g.where}: {g.noun()} with no scheduled short"
    elif sg.code == "RF-RUN-005":
        fix = _unresolved_fix(facts, sg)
        head = f"the short at {g.where} is not cleared"
    else:
        head = f"{place_word(g.kind)} {g.where}: {g.noun()}, {g.outcome_text()}"
    finding = sg.finding(fix=fix, t_margin_required_s=facts.scn.t_margin_required_s)
    acted = tuple(dict.fromkeys(e.acted for e in g.episodes
                                if e.acted and e.outcome in ("tripped", "dropout", "unresolved")))
    return Cause(finding, head, episodes=list(g.episodes), dark=acted, protection=protection)
