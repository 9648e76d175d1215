"""Events, the bounded event summary, and the run Result with its JSON.

A run produces a stream of :class:`Event` records (device transitions, shorts
opening and closing, trains stopping and going on, faults; the record is defined
with the devices in :mod:`sim.devices.events` and re-exported here). Without
``keep_events`` the stream is *summarised as it happens* by
:class:`EventSummary` - a count and the first and last instant per
``(device, event)`` pair - so that memory stays bounded by the number of
devices times the number of event kinds, however long the session. With
``keep_events`` every event is also kept in order, for ``--events`` and for
the exact event logs of the tests.

The :class:`Result` is what :func:`sim.world.run` returns; :meth:`Result.as_dict`
gives the ``railfault-result/1`` JSON object fixed by the scenario format
contract (``scenarios/README.md``, section "Results"): ``format``, ``scenario``,
``seed``, ``duration_s``, ``verdict``, ``findings``, ``episodes``, ``devices``,
``headline``, ``t_end_s`` (where the run stopped), ``event_budget`` and, with
``--events``, ``events``. Times are in seconds and currents in
amperes; a quantity that does not exist (no margin, no thermal replica) is
``null``, never an infinity.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Iterable, Optional

from sim.devices.events import Event  # noqa: F401  (re-exported: the record of a run)
from sim.jsonsafe import clean, num
from sim.model import Finding
# The verdict rule and the per-episode findings live in sim.verdict and sim.diagnose;
# these names stay importable from here until every caller has moved.
from sim.diagnose.symptoms import verdict_findings  # noqa: F401  (re-exported)
from sim.verdict import decide  # noqa: F401  (re-exported)

#: Format tag of the result JSON.
RESULT_FORMAT = "railfault-result/1"

#: Event kinds that count as a trip of a device (for ``trips``).
TRIP_EVENTS = frozenset({"trip", "thermal_trip"})
#: Event kinds that count as a trip of a supply (its limit switching it off).
SUPPLY_TRIP_EVENTS = frozenset({"off"})
#: Event kinds that count as a swap (a reverser or a reversing booster).
SWAP_EVENTS = frozenset({"swapped"})
#: Event kinds that count as a restart attempt.
RESTART_EVENTS = frozenset({"restart"})


# JSON-safe values (one implementation, below the devices: sim/jsonsafe.py)
_num = num
_clean = clean


@dataclass
class SummaryEntry:
    """Count and first/last instants of one ``(device, event)`` pair."""

    count: int = 0
    first_s: float = math.nan
    last_s: float = math.nan

    def as_dict(self) -> dict:
        return {"count": self.count, "first_s": _num(self.first_s),
                "last_s": _num(self.last_s)}


class EventSummary:
    """Events summarised as they happen; memory bounded by devices x kinds.

    Parameters
    ----------
    keep_events:
        Also keep every event, in order (``--events``). Without it, only the
        per ``(device, event)`` counts and first/last instants are kept.

    Notes
    -----
    Recording is O(1) per event. The summary holds one
    :class:`SummaryEntry` per distinct ``(device, event)`` pair, so a one-hour
    session costs the same memory as a one-minute one.
    """

    __slots__ = ("keep_events", "events", "entries", "n_events")

    def __init__(self, keep_events: bool = False):
        self.keep_events = bool(keep_events)
        self.events: list[Event] = []
        self.entries: dict[tuple[str, str], SummaryEntry] = {}
        self.n_events = 0

    def record(self, ev: Event) -> None:
        """Count ``ev`` (and keep it with ``keep_events``)."""
        self.n_events += 1
        t, device, event, _ = ev
        key = (device, event)
        entry = self.entries.get(key)
        if entry is None:
            entry = self.entries[key] = SummaryEntry(0, t, t)
        entry.count += 1
        entry.last_s = t
        if self.keep_events:
            self.events.append(ev)

    def count(self, device: str, event: str) -> int:
        """How many ``event`` events ``device`` had."""
        e = self.entries.get((device, event))
        return e.count if e else 0

    def times(self, device: str, event: str) -> tuple[float, float] | None:
        """``(first_s, last_s)`` of a pair, ``None`` when it never happened."""
        e = self.entries.get((device, event))
        return (e.first_s, e.last_s) if e else None

    def as_dict(self) -> dict:
        """``{device: {event: {count, first_s, last_s}}}``."""
        out: dict[str, dict] = {}
        for (dev, kind), e in sorted(self.entries.items()):
            out.setdefault(dev, {})[kind] = e.as_dict()
        return out


# --------------------------------------------------------------- episodes
#: Outcomes of an episode (the results contract).
OUTCOMES = ("clean", "swapped", "tripped", "dropout", "unresolved")


@dataclass
class Episode:
    """One short (or overload) episode, as the results contract lists it.

    The rules that fill it are those of :mod:`sim.world.episodes`.

    ``kind`` is ``gap`` (wheels bridging mismatched rails), ``fault`` (a
    scenario short) or ``overload`` (a device tripped, dropped out or let a
    current over its trip level through with no short open). ``start_s`` is
    the onset, ``end_s`` when the short current stopped (``None``: still
    flowing at the end). ``outcome`` is ``clean`` (the current stopped with no
    device acting), ``swapped`` (a swap interrupted it), ``tripped`` (a device
    tripped, or a supply switched off: ``acted`` names it), ``dropout``
    (boosters dropped out on undervoltage: ``acted`` names their supply) or
    ``unresolved`` (still flowing at the end, swapped again and again without
    clearing, or stopped by the engine's zero-time guard: see ``note``).

    ``peak_a`` is the total current through the short (the sum over its
    bridging paths and rails, what an upstream device carries), ``paths_a``
    the peak of each rail path; ``devices`` the devices that carried it, from
    the track upwards; ``tripped`` each of them that tripped, dropped out or
    switched off in it, with its first instant; ``i2t_a2s`` the let-through
    ``integral I^2 dt`` of the episode in A^2 s. ``margins`` maps a device to
    ``t_trip - t_cleared`` in seconds: positive or negative for a device that
    did not trip, only negative (or zero) for one that tripped first;
    ``margin_s`` is the least of them.

    ``swaps``, ``t_cleared_s`` and ``overruns`` (the over-threshold runs of
    :func:`sim.world.episodes.overrun_findings`) are kept for the findings and
    are not part of the JSON.
    """

    start_s: float
    kind: str
    where: str
    train: Optional[str] = None
    end_s: Optional[float] = None
    peak_a: float = 0.0
    outcome: str = "unresolved"
    acted: Optional[str] = None
    acted_s: Optional[float] = None
    margins: dict = field(default_factory=dict)
    margin_s: Optional[float] = None
    swaps: int = 0
    t_cleared_s: Optional[float] = None
    paths_a: dict = field(default_factory=dict)
    devices: list = field(default_factory=list)
    tripped: dict = field(default_factory=dict)
    i2t_a2s: float = 0.0
    note: str = ""
    overruns: list = field(default_factory=list)

    def as_dict(self) -> dict:
        d = {
            "start_s": _num(self.start_s), "end_s": _num(self.end_s),
            "kind": self.kind, "where": self.where, "train": self.train,
            "peak_a": _num(self.peak_a), "outcome": self.outcome,
            "acted": self.acted, "acted_s": _num(self.acted_s),
            "margins": {k: _num(v) for k, v in sorted(self.margins.items())},
            "margin_s": _num(self.margin_s),
            "paths_a": {k: _num(v) for k, v in sorted(self.paths_a.items())},
            "devices": list(self.devices),
            "tripped": {k: _num(v) for k, v in sorted(self.tripped.items())},
            "i2t_a2s": _num(self.i2t_a2s),
        }
        if self.note:
            d["note"] = self.note
        return d


# ---------------------------------------------------------------- devices
@dataclass
class DeviceSummary:
    """What one device did during a run (the ``devices`` table of the JSON).

    ``dark_s`` is the total time its output was not conducting (for a supply:
    switched off by its limit); ``district_dark_s`` the time its district had
    no power - it or a device above it off (set by the run's diagnosis from
    :class:`sim.diagnose.runlog.RunLog`; ``None`` until then); ``peak_a`` the
    largest current it carried,
    ``max_thermal`` the highest thermal-replica level reached (``None`` for a
    device without one).
    """

    kind: str
    trips: int = 0
    swaps: int = 0
    restarts: int = 0
    dark_s: float = 0.0
    peak_a: float = 0.0
    max_thermal: Optional[float] = None
    district_dark_s: Optional[float] = None

    def as_dict(self) -> dict:
        d = {"kind": self.kind, "trips": self.trips, "swaps": self.swaps,
             "restarts": self.restarts, "dark_s": _num(self.dark_s),
             "peak_a": _num(self.peak_a), "max_thermal": _num(self.max_thermal)}
        if self.district_dark_s is not None:
            d["district_dark_s"] = _num(self.district_dark_s)
        return d


# ------------------------------------------------------------------ result
@dataclass
class Result:
    """The outcome of one run of a scenario.

    ``events`` is the full event list when the run kept events
    (``keep_events=True``), else ``None``; ``summary`` is always there.
    ``t_end_s`` is where the run stopped (``until_s`` or the scenario's
    duration; earlier when it reached its event budget or could not go on,
    with a finding saying so). ``stats`` holds engine counters (events
    handled, solves) and ``event_budget``, the most engine events the run
    could take. ``headline`` lists the worst problems first, one line per
    cause (filled by the run's diagnosis). ``stands`` lists the trains that
    stopped without power while their wheels bridged gapped joints
    (:class:`sim.world.trains.Stand`: train, start, end or ``None``, joints).
    ``log`` is the run's :class:`sim.diagnose.runlog.RunLog` (where trains
    stood, the dark time of each district), read by the diagnosis; not part of
    the JSON.
    """

    title: str
    path: str
    sha256: str
    seed: int
    duration_s: float
    verdict: str
    findings: list = field(default_factory=list)
    episodes: list = field(default_factory=list)
    devices: dict = field(default_factory=dict)
    events: Optional[list] = None
    summary: Optional[EventSummary] = None
    t_end_s: float = 0.0
    t_margin_required_s: float = 0.0
    stats: dict = field(default_factory=dict)
    headline: list = field(default_factory=list)
    #: Trains that stopped without power on wheels bridging gapped joints
    #: (``sim.world.trains.Stand``), by start.
    stands: list = field(default_factory=list)
    log: Optional[object] = None

    @property
    def passed(self) -> bool:
        return self.verdict == "pass"

    def event_log(self, kinds: Optional[Iterable[str]] = None,
                  device: Optional[str] = None) -> list[tuple[float, str]]:
        """``[(t_s, event), ...]`` of the kept events, optionally filtered."""
        if self.events is None:
            raise ValueError("the run did not keep events (use keep_events=True)")
        ks = set(kinds) if kinds is not None else None
        return [e.as_tuple() for e in self.events
                if (ks is None or e.event in ks) and (device is None or e.device == device)]

    def as_dict(self) -> dict:
        """The ``railfault-result/1`` JSON object (JSON-safe: no infinities)."""
        d = {
            "format": RESULT_FORMAT,
            "scenario": {"title": self.title, "path": self.path, "sha256": self.sha256},
            "seed": self.seed,
            "duration_s": _num(self.duration_s),
            "verdict": self.verdict,
            "findings": [f.as_dict() if isinstance(f, Finding) else _clean(f)
                         for f in self.findings],
            "episodes": [e.as_dict() for e in self.episodes],
            "devices": {n: s.as_dict() for n, s in sorted(self.devices.items())},
            "headline": list(self.headline),
            "t_end_s": _num(self.t_end_s),
            "event_budget": self.stats.get("event_budget"),
            "stands": [_clean(s.as_dict()) for s in self.stands],
        }
        if self.events is not None:
            d["events"] = [e.as_dict() for e in self.events]
        return d
