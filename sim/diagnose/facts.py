"""What the diagnosis of one run reads: the run's records and the layout's questions.

:class:`RunFacts` bundles the scenario, its layout, the run's episodes, device
summaries and event summary, the findings the engine made itself, and the
static check results, and answers the questions every cause asks (which
joint is this, which devices feed that section, was a scheduled fault on at
that instant). It reads the episode fields of the results contract
defensively (:func:`ep_get`): ``paths_a``, ``devices``, ``tripped``,
``i2t_a2s`` and ``note`` exist only once the engine reports them.
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any, Optional

from sim.model import Finding, Joint, Scenario

__all__ = ["RunFacts", "ep_get", "DARK_MOST"]

#: "Dark for most of the run": a device's output off for at least this share of
#: the simulated time (the plain meaning of "most").
DARK_MOST = 0.5

_PROTECTION_KINDS = ("booster", "breaker", "reverser")


def ep_get(ep, name: str, default: Any = None) -> Any:
    """Field ``name`` of an episode, ``default`` when the record has none (or None)."""
    v = getattr(ep, name, None)
    return default if v is None else v


@dataclass
class RunFacts:
    """One run's records, its scenario and layout, and the static check results.

    Attributes
    ----------
    episodes : list
        Every short episode of the run (``sim.trace.Episode``), by start.
    devices : dict
        ``{name: DeviceSummary}``.
    summary :
        The run's ``EventSummary`` (counts and first/last instants per device and
        event kind), or ``None``.
    engine_findings : list[Finding]
        Findings the engine made itself (not the per-episode symptoms).
    static : list[Finding]
        The findings of ``railfault check`` for this scenario.
    t_end_s : float
        Where the run stopped.
    log : sim.diagnose.runlog.RunLog, optional
        The run's stands of trains and district dark time (``Result.log``);
        ``None`` for facts made without a run (then a district's dark time is its
        device's own and no train stood).
    """

    scn: Scenario
    layout: Any
    episodes: list
    devices: dict
    summary: Any
    engine_findings: list
    static: list
    t_end_s: float
    log: Any = None
    _joints: dict = field(default_factory=dict, repr=False)
    _phases: Optional[dict] = field(default=None, repr=False)
    _margins: Optional[dict] = field(default=None, repr=False)

    def __post_init__(self):
        self._joints = {j.name: j for j in self.scn.track.joints}

    # ---------------------------------------------------------- track
    def joint(self, where: str) -> Optional[Joint]:
        """The joint a gap episode's ``where`` names (``None``: not a joint)."""
        return self._joints.get(where)

    def phases(self) -> dict:
        """Phase (+1/-1) of every fixed-phase section (:func:`sim.checks.phasing.section_phases`)."""
        if self._phases is None:
            from sim.checks.phasing import section_phases

            self._phases = section_phases(self.scn, self.layout)
        return self._phases

    def out_of_phase(self, joint: Joint) -> Optional[bool]:
        """Whether the rails meet out of phase at ``joint`` (domain.md: they agree when
        ``phase(X) == sign * phase(Y)``); ``None`` when a side has no fixed phase (a
        reversing section, unfed track)."""
        ph = self.phases()
        x, y = joint.ends[0].section, joint.ends[1].section
        if x not in ph or y not in ph:
            return None
        return ph[x] != joint.sign * ph[y]

    def static_margins(self) -> dict:
        """``{reversing device: {upstream device: static margin}}``: each upstream
        device's earliest trip less the device's latest clear
        (:func:`sim.checks.coordination.reversing_margins`)."""
        if self._margins is None:
            from sim.checks.coordination import reversing_margins

            self._margins = reversing_margins(self.scn, self.layout)
        return self._margins

    def reversing_device(self, section: str) -> Optional[str]:
        """The device that changes the polarity of ``section``: the reversing controller
        in its chain, else a booster with ``reverse_on_short`` (``None``: fixed)."""
        chain = self.chain(section)
        for d in chain:
            if d in self.scn.reversers:
                return d
        for d in chain:
            if d in self.scn.boosters and self.scn.boosters[d].reverse_on_short:
                return d
        return None

    def reversers_at(self, joint: Joint) -> tuple[tuple[str, str], ...]:
        """``(device, section)`` of each side of ``joint`` whose polarity a reversing
        device changes (distinct devices, in the joint's order)."""
        out: dict[str, str] = {}
        for e in joint.ends:
            r = self.reversing_device(e.section)
            if r is not None and r not in out:
                out[r] = e.section
        return tuple(out.items())

    def phasing_finding(self, joint: Joint, naming: bool = False) -> Optional[Finding]:
        """The static RF-PHS-001 finding that mends ``joint`` (the one naming it, or -
        unless ``naming`` - the only one there is)."""
        phs = self.static_with("RF-PHS-001")
        pat = re.compile(r"(?<![\w.~-])" + re.escape(joint.name) + r"(?![\w.~-])")
        for f in phs:
            if pat.search(f.message) or pat.search(f.where):
                return f
        return phs[0] if len(phs) == 1 and not naming else None

    def chain(self, section: str) -> tuple[str, ...]:
        """The devices feeding ``section``, nearest first (supplies included)."""
        return self.layout.device_chain(section)

    def protection_chain(self, section: str) -> tuple[str, ...]:
        """The boosters, breakers and reversers feeding ``section``, nearest first."""
        return tuple(d for d in self.chain(section)
                     if self.scn.device_kind(d) in _PROTECTION_KINDS)

    def nearest_device(self, section: str) -> Optional[str]:
        """The protection device nearest a short in ``section`` (TM 5-811-14 4-1:
        the one that should clear it)."""
        chain = self.protection_chain(section)
        return chain[0] if chain else None

    def sections_of(self, device: str) -> tuple[str, ...]:
        """Every section ``device`` feeds, directly or through devices below it."""
        return tuple(s for s in self.scn.track.sections if device in self.chain(s))

    def kind(self, device: str) -> str:
        """``booster``, ``breaker``, ``reverser``, ``supply`` (or ``device``)."""
        return self.scn.device_kind(device) or "device"

    def table(self, device: str) -> str:
        """The file's table of ``device``: ``boosters``, ``breakers``, ``reversers``,
        ``supplies``."""
        return {"booster": "boosters", "breaker": "breakers", "reverser": "reversers",
                "supply": "supplies"}.get(self.kind(device), "devices")

    def named(self, device: str) -> str:
        """``breaker yard``: a device with its kind."""
        return f"{self.kind(device)} {device}"

    # ---------------------------------------------------------- faults
    def fault_of(self, where: str):
        """The scenario short whose place is ``where`` (``"section@12 m"``)."""
        for f in self.scn.faults:
            if f.kind == "short" and f"{f.section}@{f.at_m:g} m" == where:
                return f
        return None

    def fault_on(self, device: str, t0_s: float, t1_s: float):
        """A scenario short in a section fed through ``device`` that was on at some
        instant of ``[t0_s, t1_s]`` (``None``: none)."""
        for f in self.scn.faults:
            if f.kind != "short" or device not in self.chain(f.section):
                continue
            end = None if f.lasts_s is None else f.at_s + f.lasts_s
            if f.at_s <= t1_s and (end is None or end >= t0_s):
                return f
        return None

    # ---------------------------------------------------------- devices
    def dark_s(self, device: str) -> float:
        """The time ``device``'s own output was off (``DeviceSummary.dark_s``)."""
        d = self.devices.get(device)
        return float(getattr(d, "dark_s", 0.0) or 0.0) if d is not None else 0.0

    def district_dark_s(self, device: str) -> float:
        """The time ``device``'s district had no power: it or a device above it off
        (:class:`sim.diagnose.runlog.RunLog`); its own dark time without a log."""
        own = self.dark_s(device)
        if self.log is None:
            return own
        return max(own, self.log.district_dark_s(device, self.t_end_s))

    def dark_most(self, device: str) -> bool:
        """Whether ``device`` was dark for most of the run (:data:`DARK_MOST`)."""
        return self.t_end_s > 0 and self.dark_s(device) >= DARK_MOST * self.t_end_s

    def count(self, device: str, event: str) -> int:
        """How many ``event`` events ``device`` had (0 without a summary)."""
        return self.summary.count(device, event) if self.summary is not None else 0

    def times(self, device: str, event: str):
        """``(first_s, last_s)`` of a device's events of one kind, or ``None``."""
        return self.summary.times(device, event) if self.summary is not None else None

    def static_with(self, code: str) -> list[Finding]:
        """The static findings with ``code``."""
        return [f for f in self.static if f.code == code]

    def static_ref(self, codes, where: Optional[str] = None, names=()) -> str:
        """``"CODE where"`` of the first static *error* with one of ``codes`` (in the
        order given) at ``where`` (any place when ``None``) whose message names every
        one of ``names`` as a word: the ``railfault check`` finding a run cause
        restates (its ``same_as``), or "" when there is none."""
        from sim.diagnose.cause import ref

        pats = [re.compile(r"(?<![\w.~-])" + re.escape(n) + r"(?![\w~-])") for n in names]
        for code in ([codes] if isinstance(codes, str) else codes):
            for f in self.static:
                if f.code != code or f.severity != "error":
                    continue
                if where is not None and f.where != where:
                    continue
                if all(p.search(f.message) for p in pats):
                    return ref(f)
        return ""

    # ---------------------------------------------------------- trains
    def plans(self) -> dict:
        """``{train: TrainPlan}``: the closed-form plans the run played
        (:func:`sim.world.trains.build_trains`), built once."""
        key = "diagnose_plans"
        cache = getattr(self.layout, "cache", None)
        if cache is not None and key in cache:
            return cache[key]
        from sim.world.trains import build_trains

        plans = build_trains(self.scn, self.layout) if self.scn.trains else {}
        if cache is not None:
            cache[key] = plans
        return plans

    def stood_before_s(self, train: str, t_s: float) -> float:
        """How long ``train`` stood without power before ``t_s`` (the log's stands)."""
        if self.log is None:
            return 0.0
        total = 0.0
        for st in self.log.stands:
            if st.train != train or st.t_stop_s >= t_s:
                continue
            end = st.t_go_s if st.t_go_s is not None else t_s
            total += min(end, t_s) - st.t_stop_s
        return total

    def locos_at(self, t_s: float, sections) -> list:
        """The locomotives in ``sections`` at ``t_s`` (:class:`sim.checks.draw.LocoInterval`).

        From the trains' schedules in closed form (:func:`sim.checks.draw.loco_intervals`,
        the motion the run plays), each train's clock held back by the time it stood
        without power before ``t_s`` (a train stands still while it has no power and
        then goes on at its speed, so it is where its schedule puts it that much later).
        """
        from sim.checks.draw import loco_intervals

        secs = set(sections)
        out = []
        for iv in loco_intervals(self.scn, self.layout):
            if iv.section not in secs:
                continue
            tau = t_s - self.stood_before_s(iv.train, t_s)
            if iv.t_on_s <= tau < iv.t_off_s:
                out.append(iv)
        return out
