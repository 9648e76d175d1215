"""The diagnosis of a run: from its records to one finding per cause and a headline.

:func:`diagnose` takes a run's :class:`sim.trace.Result` (episodes, device
summaries, event summary, the engine's own findings), the scenario, its layout
and the static check results, and returns the result with its findings
rebuilt, its ``headline`` and its verdict (:func:`sim.verdict.decide`):

1. the specific causes claim the episodes they explain, most specific first:
   a bonded joint out of phase (the root cause of what follows from it), a
   train longer than its reversing section, a gap out of phase between fixed
   districts, a short fed back through a train, a supply at its limit, a
   keep-alive lock-out, the reversing race, a short cleared by a device other
   than the nearest (:mod:`sim.diagnose.causes`);
2. every episode's symptoms (:mod:`sim.diagnose.symptoms`) are grouped by place;
   a group whose episodes a cause explains follows from it (``because``, its
   severity no worse than the cause's); the others are causes of their own;
3. long let-throughs, the engine's own findings (grouped), districts dark for
   most of the run (:mod:`sim.diagnose.dark`), trains that stood without power
   for long (:mod:`sim.diagnose.stands`, tied to the cause that took their
   power) and every static error of
   ``railfault check`` that no run cause restates (:mod:`sim.diagnose.static`)
   are added;
4. the causes are ranked (:mod:`sim.diagnose.headline`): the findings list each
   cause followed by what follows from it, worst first.
"""
from __future__ import annotations

from dataclasses import replace
from typing import Optional

from sim.diagnose.cause import Cause
from sim.diagnose.causes import SPECIFIC
from sim.diagnose.causes.fallback import symptom_cause
from sim.diagnose.causes.faults import find_let_through
from sim.diagnose.causes.inrush import ENGINE_CODE as INRUSH_CODE
from sim.diagnose.dark import attribute_dark
from sim.diagnose.facts import RunFacts
from sim.diagnose.groups import EpisodeGroup, SymptomGroup, symptom_groups
from sim.diagnose.headline import headline_lines, rank_causes
from sim.diagnose.reported import group_reported
from sim.diagnose.cause import ref
from sim.diagnose.stands import ENGINE_CODE as STAND_ENGINE_CODE, engine_stand_owner, find_stands
from sim.diagnose.static import static_errors, static_findings
from sim.diagnose.symptoms import SYMPTOM_CODES
from sim.model import Finding, Scenario
from sim.verdict import decide, severity_rank

__all__ = ["diagnose", "diagnose_facts", "Diagnosis"]


class Diagnosis:
    """Findings (causes, each followed by what follows from it) and headline lines."""

    __slots__ = ("findings", "headline", "causes")

    def __init__(self, findings: list[Finding], headline: list[str], causes: list[Cause]):
        self.findings = findings
        self.headline = headline
        self.causes = causes


def _capped(f: Finding, cause: Cause) -> Finding:
    """``f`` tied to ``cause``, no more severe than it."""
    sev = f.severity
    if severity_rank(sev) < severity_rank(cause.finding.severity):
        sev = cause.finding.severity
    return replace(f, severity=sev, because=cause.ref)


def _timed(f: Finding, cause: Cause) -> Finding:
    """An engine finding of several occurrences without instants takes its cause's
    (the occurrences are the episodes the cause explains)."""
    if f.count > 1 and f.first_s is None and cause.finding.first_s is not None:
        return replace(f, first_s=cause.finding.first_s, last_s=cause.finding.last_s)
    return f


def diagnose_facts(facts: RunFacts) -> Diagnosis:
    """The causes, findings and headline of one run's facts (module docstring)."""
    claimed: set = set()
    causes: list[Cause] = []
    for find in SPECIFIC:
        causes.extend(find(facts, claimed))
    specific = list(causes)
    # symptoms: split each group between the causes that explain its episodes
    follows: list[tuple[SymptomGroup, Cause]] = []
    req_s = facts.scn.t_margin_required_s
    for sg in symptom_groups(facts.episodes, req_s):
        rest = list(sg.group.episodes)
        for c in specific:
            mine = [e for e in rest if c.explains(e)]
            if mine:
                rest = [e for e in rest if not c.explains(e)]
                follows.append((SymptomGroup(sg.code, sg.severity,
                                             EpisodeGroup(sg.where, sg.group.kind, mine)), c))
        if rest:
            causes.append(symptom_cause(facts, SymptomGroup(
                sg.code, sg.severity, EpisodeGroup(sg.where, sg.group.kind, rest))))
    reported: list[tuple[Finding, Cause]] = []
    # a long let-through of episodes one specific cause explains follows from it
    for lt in find_let_through(facts):
        owners = [c for c in specific if all(c.explains(e) for e in lt.episodes)]
        if owners:
            reported.append((lt.finding, owners[0]))
        else:
            causes.append(lt)
    # the engine's own findings: tied to the lock-out cause of their device, or their own
    lockouts = {c.finding.where: c for c in specific if c.finding.code == "RF-RUN-034"}
    engine_stands = []
    for f in group_reported(facts.engine_findings):
        if f.code == STAND_ENGINE_CODE:
            engine_stands.append(f)          # tied to their stand's cause below
            continue
        owner = lockouts.get(f.where) if f.code == INRUSH_CODE else None
        if owner is None:
            causes.append(Cause(f, f"{f.where}: {f.message}"))
        else:
            reported.append((f, owner))
    causes.extend(attribute_dark(facts, causes))
    # trains that stood without power for long: tied to the cause that took their power
    for f, owner in find_stands(facts, causes):
        if owner is None:
            causes.append(Cause(f, f.message))
        else:
            reported.append((f, owner))
    for f in engine_stands:
        owner = engine_stand_owner(facts, f, causes)
        if owner is None:
            causes.append(Cause(f, f"{f.where}: {f.message}"))
        else:
            reported.append((f, owner))
    static = static_errors(facts.static, specific)
    ranked = rank_causes(facts, causes)
    findings: list[Finding] = []
    for c in ranked:
        findings.append(c.finding)
        findings += [_capped(sg.finding(t_margin_required_s=req_s), c)
                     for sg, owner in follows if owner is c]
        findings += [_capped(_timed(f, c), c) for f, owner in reported if owner is c]
        findings += [f for f in static if f.because == c.ref]
    for f in static:
        if not f.because:
            findings.append(f)
            findings += [g for g in static if g.because == ref(f)]
    return Diagnosis(findings, headline_lines(facts, ranked, static), ranked)


def diagnose(scn: Scenario, result, layout=None, static: Optional[list] = None,
             step_m: float = 0.5):
    """A run's result with one finding per cause, its headline and its verdict.

    Parameters
    ----------
    scn : Scenario
        The scenario that was run.
    result : sim.trace.Result
        What the engine returned (:func:`sim.world.engine.run`).
    layout : sim.layout.Layout, optional
        The scenario's layout (built when not given).
    static : list of Finding, optional
        The findings of ``railfault check`` for ``scn`` (computed, with coin-test
        points ``step_m`` apart, when not given).

    Returns
    -------
    sim.trace.Result
        A copy of ``result`` with ``findings``, ``headline`` and ``verdict`` set, and
        each device's ``district_dark_s``.
    """
    if layout is None:
        from sim.layout import build_layout

        layout = build_layout(scn)
    if static is None:
        static = static_findings(scn, layout, step_m=step_m)
    facts = RunFacts(scn=scn, layout=layout, episodes=list(result.episodes),
                     devices=dict(result.devices), summary=result.summary,
                     engine_findings=[f for f in result.findings if f.code not in SYMPTOM_CODES],
                     static=list(static), t_end_s=result.t_end_s,
                     log=getattr(result, "log", None))
    d = diagnose_facts(facts)
    devices = {n: replace(s, district_dark_s=facts.district_dark_s(n))
               if hasattr(s, "district_dark_s") else s for n, s in result.devices.items()}
    return replace(result, findings=d.findings, headline=d.headline, verdict=decide(d.findings),
                   devices=devices)
