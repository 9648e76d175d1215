"""RF-RUN-032: a bonded joint whose rails meet out of phase, a dead short across a district.

A joint bonded on both rails (``gaps: none``), or on one (``gaps: one``), whose
two sections are in opposite phase (``phase(X) != sign * phase(Y)``, domain.md)
joins the district's two rails through the joiners: a short from the first
instant, whatever the trains do. In the run it is the root cause of every
overload of the devices feeding it that no scheduled fault explains (they trip,
restart, trip again); those episodes, and the static findings about its
sections and devices, are tied to it by ``because``. The fix is the phasing
check's (:func:`sim.checks.phasing.check_phasing`, the fewest settings to change).
"""
from __future__ import annotations

from sim.diagnose.cause import Cause, ref
from sim.diagnose.facts import RunFacts
from sim.diagnose.groups import EpisodeGroup
from sim.model import Finding

__all__ = ["find"]

_HOW = {"none": "bonded joint", "one": "joint gapped on one rail only"}


def _phase_word(facts: RunFacts, section: str) -> str:
    sec = facts.scn.track.sections[section]
    word = "normal" if facts.phases()[section] > 0 else "inverted"
    leads = ", leads swapped" if sec.leads is not None and sec.leads < 0 else ""
    return f"{section} in {word} phase{leads}"


def find(facts: RunFacts, claimed: set) -> list[Cause]:
    causes = []
    for j in facts.scn.track.joints:
        if j.gaps not in _HOW or not facts.out_of_phase(j):
            continue
        x, y = j.ends[0].section, j.ends[1].section
        devs = tuple(dict.fromkeys(facts.protection_chain(x) + facts.protection_chain(y)))
        eps = [e for e in facts.episodes
               if id(e) not in claimed and e.kind == "overload" and e.where in devs
               and facts.fault_on(e.where, e.start_s,
                                  e.end_s if e.end_s is not None else facts.t_end_s) is None]
        district = devs[0] if devs else "?"
        msg = (f"{_HOW[j.gaps]} {j.name} joins {_phase_word(facts, x)} to "
               f"{_phase_word(facts, y)} across a {'straight' if j.sign > 0 else 'crossed'} "
               f"joint: its rails meet out of phase, a dead short across district {district} "
               f"from the first instant")
        if eps:
            g = EpisodeGroup(district, "overload", eps)
            msg += f"; {facts.named(district)}: {g.describe()}"
        phs = facts.phasing_finding(j)
        fix = phs.fix if phs is not None and phs.fix else (
            f"swap the leads of {y} (or of {x}) so that the rails meet in phase at {j.name}")
        where = j.name
        sections = tuple(s for s in facts.scn.track.sections
                         if set(facts.protection_chain(s)) & set(devs))
        same = facts.phasing_finding(j, naming=True)
        causes.append(Cause(
            Finding("error", "RF-RUN-032", where, msg, fix,
                    same_as=ref(same) if same is not None and same.severity == "error" else "",
                    count=max(1, len(eps)),
                    first_s=min((e.start_s for e in eps), default=None),
                    last_s=max((e.start_s for e in eps), default=None)),
            f"{_HOW[j.gaps]} {j.name} meets out of phase: a dead short across district "
            f"{district}",
            episodes=eps, dark=devs, sections=sections))
        claimed.update(id(e) for e in eps)
    return causes
