"""A bounded recorder of exact current traces around short episodes (for reports).

Between two events every current of the engine is constant (the circuit is
resistive and only changes at events), so the trace of a current is exact when
its value is kept at every solve where it changed: a step function, no
sampling. Keeping every solve of a long run would cost memory in proportion to
its length; this recorder keeps only *windows* around what a report shows, and
bounds each of them.

How it is fed (opt-in: ``sim.world.run(scn, traces=TraceRecorder())``)
---------------------------------------------------------------------
* :meth:`TraceRecorder.attach` wraps the world's ``record`` (every event passes
  through it);
* :meth:`TraceRecorder.solution` is called after every solve with the solution
  and the short paths that exist;
* :meth:`TraceRecorder.output` is called when a device's or supply's output
  starts or stops conducting (the engine's dark-time bookkeeping);
* :meth:`TraceRecorder.finish` at the end of the run.

Windows
-------
A window opens ``pre_s`` before a ``short`` event (an episode opening) and
closes ``post_s`` after the matching ``cleared`` event; a protective action
(``trip``, ``thermal_trip``, ``off``, ``dropout``) outside any open window opens
a window of its own from ``pre_s`` before it to ``post_s`` after it. The
solves and events of the last :data:`RING` instants are kept (references, no
copies), so a window opened at ``t`` starts with the exact currents from
``t - pre_s`` on, and with the events recorded just before it opened (a
supply's limit acts within the solve that opens an episode).
Inside a window the recorder keeps, per device, supply and short, the value at
every instant it changed (the last value of an instant where several solves
happened), and every event.

Bounds (stated in the report)
-----------------------------
* at most ``max_windows`` windows are kept: when a closed window would exceed
  that, the least severe one goes (severity: still open at the end, repeated
  swaps or a protective action, then a swap, then nothing; ties keep the
  earlier one), and :attr:`TraceRecorder.dropped` counts those that went;
* at most ``max_points`` change points and ``max_events`` events per window;
  past that the window stops recording and is marked ``truncated``;
* at most ``max_spans`` dark spans per device over the whole run
  (:attr:`TraceRecorder.dark`); past that the spans are counted, not kept.

So the memory is bounded by ``max_windows * (max_points + max_events)`` small
tuples plus ``RING`` solution references and the dark spans, whatever the
length of the run. The engine's result (episodes, margins, device summary) does
not depend on whether a recorder is attached.
"""
from __future__ import annotations

import heapq
import math
from collections import deque
from dataclasses import dataclass, field
from typing import Optional

#: Solves kept for the context before a window opens (references to solutions).
RING = 64
#: Protective actions that open a window of their own.
ACTIONS = frozenset({"trip", "thermal_trip", "off", "dropout"})
#: Events that make a window severe (a protective device acted).
SEVERE = ACTIONS | frozenset({"give_up"})
#: Relative change of a current below which no new point is kept.
I_REL_TOL = 1e-9


def short_key(kind: str, where: str, train: Optional[str]) -> str:
    """The series name of a short's total current: ``short:train:NAME`` for the
    bridges of a train, ``short:WHERE`` for a fault or another short path."""
    return f"short:train:{train}" if train else f"short:{where}"


def _group_key(path) -> str:
    return short_key(path.kind, path.where, path.train)


@dataclass
class TraceWindow:
    """The recorded currents and events of one window (see the module doc).

    ``series`` maps a device, supply or short (``short:...``) to its change
    points ``[(t_s, i_a), ...]``: the current is ``i_a`` from ``t_s`` until the
    next point (or ``t1_s``). ``events`` are the world's events in the window.
    ``places`` the short places (``where``) whose episodes it covers.
    """

    t0_s: float
    t1_s: float
    trigger: str
    places: list = field(default_factory=list)
    series: dict = field(default_factory=dict)
    events: list = field(default_factory=list)
    n_points: int = 0
    truncated: bool = False
    open_at_end: bool = False
    #: internal: when the window stops (inf while its short flows)
    _until_s: float = math.inf
    _open_shorts: set = field(default_factory=set)

    @property
    def severity(self) -> int:
        """4 still open at the end, 3 repeated swaps or a protective action,
        1 a swap, 0 nothing (the order in which windows are kept)."""
        if self.open_at_end:
            return 4
        swaps = sum(1 for e in self.events if e.event == "swapped")
        if swaps >= 2 or any(e.event in SEVERE for e in self.events):
            return 3
        return 1 if swaps else 0

    def covers(self, t0_s: float, t1_s: float) -> bool:
        """Whether ``[t0_s, t1_s]`` lies in the window (within 1 ns)."""
        return self.t0_s <= t0_s + 1e-9 and t1_s <= self.t1_s + 1e-9

    def value_at(self, name: str, t_s: float) -> Optional[float]:
        """The current of ``name`` at ``t_s`` (the step function), or ``None``."""
        pts = self.series.get(name)
        if not pts or t_s < pts[0][0] - 1e-12:
            return None
        val = pts[0][1]
        for t, i in pts:
            if t <= t_s + 1e-12:
                val = i
            else:
                break
        return val


class TraceRecorder:
    """Keeps exact current traces in bounded windows (see the module doc).

    Parameters
    ----------
    pre_s, post_s : float
        Context kept before a window's trigger and after its end (s).
    max_windows : int
        Windows kept (the most severe ones).
    max_points, max_events : int
        Change points and events kept per window.
    max_spans : int
        Dark spans kept per device.
    """

    def __init__(self, pre_s: float = 0.002, post_s: float = 0.01, max_windows: int = 48,
                 max_points: int = 4000, max_events: int = 1000, max_spans: int = 10000):
        self.pre_s = float(pre_s)
        self.post_s = float(post_s)
        self.max_windows = int(max_windows)
        self.max_points = int(max_points)
        self.max_events = int(max_events)
        self.max_spans = int(max_spans)
        self._ring: deque = deque(maxlen=RING)
        self._recent: deque = deque(maxlen=RING)   # the last events, for a window's start
        self._active: list[TraceWindow] = []
        self._by_place: dict[str, TraceWindow] = {}
        self._kept: list = []            # heap of (severity, -t0, serial, window)
        self._serial = 0
        self.dropped = 0
        self.dark: dict[str, list] = {}
        self.dark_dropped: dict[str, int] = {}
        self._dark_since: dict[str, float] = {}
        self.t_end_s: Optional[float] = None
        self._world = None

    # ---------------------------------------------------------------- feeding
    def attach(self, world) -> None:
        """Wrap ``world.record`` so that every event passes through :meth:`event`."""
        self._world = world
        inner = world.record
        seen = self.event

        def record(ev):
            inner(ev)
            seen(ev)

        world.record = record

    def solution(self, t_s: float, sol, currents) -> None:
        """A solve at ``t_s``: ``sol`` (a circuit Solution), ``currents`` the current of
        every short path that exists (``{ShortPath: A}``, the engine's own figures: a
        bridge's over every rail it joins), or ``None`` when there is none."""
        shorts = None
        if currents:
            shorts = {}
            for p, i in currents.items():
                g = _group_key(p)
                shorts[g] = shorts.get(g, 0.0) + i
        entry = (t_s, sol.device_i_a, sol.supply_i_a, shorts)
        self._ring.append(entry)
        if self._active:
            self._close_due(t_s)
            for w in self._active:
                self._take(w, entry, t_s)

    def event(self, ev) -> None:
        """One event of the world (device, short, train, fault)."""
        t = ev.t_s
        if self._active:
            self._close_due(t)
        kind = ev.event
        if kind == "short":
            w = self._by_place.get(ev.device)
            if w is None:
                w = self._join_or_open(t, f"short at {ev.device}")
                self._by_place[ev.device] = w
            if ev.device not in w.places:
                w.places.append(ev.device)
            w._open_shorts.add(ev.device)
            w._until_s = math.inf
        elif kind == "cleared":
            w = self._by_place.get(ev.device)
            if w is not None:
                w._open_shorts.discard(ev.device)
                if not w._open_shorts:
                    w._until_s = t + self.post_s
        elif kind in ACTIONS and ev.device != "world":
            if not any(w.t0_s <= t <= w._until_s for w in self._active):
                w = self._join_or_open(t, f"{kind} of {ev.device}")
                w._until_s = t + self.post_s
        for w in self._active:
            if w.t0_s <= t <= w._until_s:
                self._keep_event(w, ev)
        self._recent.append(ev)

    def _keep_event(self, w: TraceWindow, ev) -> None:
        if len(w.events) < self.max_events:
            w.events.append(ev)
        else:
            w.truncated = True

    def output(self, name: str, t_s: float, conducting: bool) -> None:
        """A device's or supply's output conducts (or not) from ``t_s`` on."""
        since = self._dark_since.get(name)
        if not conducting and since is None:
            self._dark_since[name] = t_s
        elif conducting and since is not None:
            del self._dark_since[name]
            self._add_span(name, since, t_s)

    def finish(self, t_end_s: float) -> None:
        """Close every window and dark span at the end of the run."""
        self.t_end_s = float(t_end_s)
        for name, since in list(self._dark_since.items()):
            self._add_span(name, since, t_end_s)
        self._dark_since.clear()
        for w in list(self._active):
            if w._open_shorts:
                w.open_at_end = True
            self._close(w, min(w._until_s, t_end_s))
        self._active.clear()
        self._by_place.clear()

    # ---------------------------------------------------------------- results
    @property
    def windows(self) -> list[TraceWindow]:
        """The kept windows, by start time."""
        return sorted((w for *_, w in self._kept), key=lambda w: (w.t0_s, w.trigger))

    def window_for(self, start_s: float, end_s: Optional[float], where: str = "") -> \
            Optional[TraceWindow]:
        """The kept window holding an episode from ``start_s`` to ``end_s``
        (``None``: still flowing at the end), preferring one that names ``where``."""
        t1 = end_s if end_s is not None else (self.t_end_s or start_s)
        best = None
        for w in self.windows:
            if w.covers(start_s, t1):
                if where and where in w.places:
                    return w
                best = best or w
        return best

    # --------------------------------------------------------------- internal
    def _add_span(self, name: str, t0: float, t1: float) -> None:
        spans = self.dark.setdefault(name, [])
        if len(spans) < self.max_spans:
            spans.append((t0, t1))
        else:
            self.dark_dropped[name] = self.dark_dropped.get(name, 0) + 1

    def _join_or_open(self, t: float, trigger: str) -> TraceWindow:
        """An active window that already holds ``t`` (a short at the same time
        elsewhere joins it), or a new one seeded from the ring."""
        for w in self._active:
            if w.t0_s <= t <= w._until_s:
                return w
        w = TraceWindow(t0_s=max(0.0, t - self.pre_s), t1_s=t, trigger=trigger)
        ring = list(self._ring)
        start = 0
        for k, entry in enumerate(ring):
            if entry[0] <= w.t0_s:
                start = k
        if ring and ring[start][0] > w.t0_s:
            w.t0_s = ring[start][0]
        for entry in ring[start:]:
            self._take(w, entry, max(entry[0], w.t0_s))
        for ev in self._recent:       # events of the same instants, recorded before it opened
            if ev.t_s >= w.t0_s:
                self._keep_event(w, ev)
        self._active.append(w)
        return w

    def _take(self, w: TraceWindow, entry, t: float) -> None:
        if w.truncated:
            return
        _, dev_i, sup_i, shorts = entry
        series = w.series
        n = 0
        for table in (dev_i, sup_i, shorts or {}):
            for name, i in table.items():
                pts = series.get(name)
                if pts is None:
                    series[name] = [(t, i)]
                    n += 1
                    continue
                t_last, i_last = pts[-1]
                if abs(i - i_last) <= I_REL_TOL * max(1.0, abs(i)):
                    continue
                if t_last == t:
                    pts[-1] = (t, i)
                else:
                    pts.append((t, i))
                    n += 1
        # a short that no longer exists in the circuit carries nothing
        for name, pts in series.items():
            if name.startswith("short:") and (not shorts or name not in shorts) \
                    and pts[-1][1] != 0.0:
                if pts[-1][0] == t:
                    pts[-1] = (t, 0.0)
                else:
                    pts.append((t, 0.0))
                    n += 1
        w.n_points += n
        if t > w.t1_s:
            w.t1_s = t
        if w.n_points >= self.max_points:
            w.truncated = True

    def _close_due(self, t: float) -> None:
        for w in [w for w in self._active if t > w._until_s]:
            self._active.remove(w)
            self._close(w, w._until_s)

    def _close(self, w: TraceWindow, t_end: float) -> None:
        w.t1_s = max(w.t1_s, t_end)
        for place in w.places:
            if self._by_place.get(place) is w:
                del self._by_place[place]
        self._serial += 1
        item = (w.severity, -w.t0_s, -self._serial, w)
        if len(self._kept) < self.max_windows:
            heapq.heappush(self._kept, item)
        else:
            heapq.heappushpop(self._kept, item)
            self.dropped += 1
