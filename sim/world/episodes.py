"""Short episodes, their outcomes and timing margins, from a stream of facts.

Pure bookkeeping, no simpy and no circuit: the engine feeds an
:class:`EpisodeTracker` three kinds of facts in time order, and it returns
the :class:`sim.trace.Episode` records of the results contract.

1. :meth:`EpisodeTracker.solution` after every circuit solve: the current in
   every short path that exists (wheels bridging a gap, a fault across the
   rails) and the device currents that changed in that solve.
2. :meth:`EpisodeTracker.device_event` for every device event (``detect``,
   ``trip``, ``swapped``, ...).
3. :meth:`EpisodeTracker.interrupt` when a swapping device (a reversing
   controller, or a booster that reverses its own output) changes its output:
   its leads open or exchange. That instant is ``t_cleared`` of the race.

Rules (documented in DEVELOPERS.md by the engine's docstring as well)
--------------------------------------------------------------------
* A **short path** carries short current when its current is above its
  threshold: the lowest sense or trip threshold of the devices upstream of
  the path, but at least :data:`I_FLOOR_A` (0.5 A) - so a bridge between two
  districts whose rails are in phase, carrying a small balancing current,
  is no short.
* Paths are **grouped**: all the bridges of one train form one group (a
  train that moves its short from one end of a reversing section to the
  other, by a swap, keeps one episode open); each fault is its own group.
  An episode of a group opens when the first of its paths carries short
  current and closes when none does once the instant has settled (a short
  that vanishes and returns between two devices acting at one instant stays
  one episode).
* The **devices on the path** are those whose current rose by more than half
  the threshold in a solve of the open episode (at the onset or later, when
  the short moved); their onset instant and current are kept.
* **Outcome**: ``unresolved`` when it is still flowing at the end of the run
  or when two or more swaps happened in it (repeated swaps without clearing,
  even if a trip ended it); otherwise ``tripped`` when a device on its path
  tripped while it was open (``trip`` or ``thermal_trip``, or a supply on
  the chain switching off); otherwise ``swapped`` when a swap interrupted it;
  otherwise ``clean``. ``acted``/``acted_s`` name the device that tripped (or
  swapped) first, and when.
* **Margins** exist when a swapping device detected the short: for every
  other device on the path, ``t_trip - t_cleared``, where ``t_cleared`` is
  the first interrupt by the swapping device (or, when an upstream trip came
  first, ``t_detect + t_swap_s``, when the swap would have interrupted the
  short), and ``t_trip`` is the device's actual trip instant if it tripped,
  else ``would_trip(device, i_onset_a, t_onset_s)`` - the instant it would
  have tripped had the onset current gone on, asked when the device joined
  the path. A device that would never trip
  at that current has no margin. ``margin_s`` is the least margin.
* An **overload** episode is a trip of a device (overcurrent, thermal, or a
  supply limit switching it off) while no open episode has it on its path:
  it starts when the device's current last rose above its threshold (its
  thermal rated current for a thermal trip).
* The episode's ``where`` is the path carrying the most current when it
  opened; ``peak_a`` the largest sum over the group's paths.
* An ``unresolved`` episode has no margins: its swaps did not clear it.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Hashable, Mapping, Optional

from sim.trace import Episode, Event

#: Floor of the short-current threshold of any path, in amperes.
I_FLOOR_A = 0.5

#: Device events that end an episode as "tripped" (the device opened on protection).
TRIPPING = frozenset({"trip", "thermal_trip", "off", "dropout"})
#: Device events that mark a swapping device's detection of the short.
DETECTING = frozenset({"detect", "swap_start"})
#: What ``solution`` returns when it opened and closed nothing (shared, empty).
_NO_EVENTS: tuple = ()
_NO_GROUPS: dict = {}
#: Device events that count as a swap in an episode.
SWAPPING = frozenset({"swapped"})


@dataclass(frozen=True)
class ShortPath:
    """A place where short current can flow.

    ``key`` is the circuit key of the bridge or fault short, ``group`` the
    episode group (``("train", name)`` or ``("fault", index)``), ``kind``
    ``"gap"`` or ``"fault"``, ``where`` the place as printed (a joint name,
    ``"section@at m"``), ``threshold_a`` the current above which it is a
    short.
    """

    key: Hashable
    group: Hashable
    kind: str
    where: str
    train: Optional[str] = None
    threshold_a: float = I_FLOOR_A


class _Open:
    """The bookkeeping of one open episode (a plain slotted class: one is made per
    episode, and the tracker reads its fields in every solve)."""

    __slots__ = ("ep", "threshold_a", "path_i_a", "path_t_s", "would_s", "detect",
                 "interrupt", "trips", "trip_t", "swaps", "active")

    def __init__(self, ep: Episode, threshold_a: float):
        self.ep = ep
        self.threshold_a = threshold_a
        self.path_i_a: dict = {}          # device -> onset current
        self.path_t_s: dict = {}          # device -> onset instant
        self.would_s: dict = {}           # device -> would-trip instant
        self.detect: dict = {}            # swapping device -> t_detect
        self.interrupt: dict = {}         # swapping device -> first interrupt
        self.trips: list = []             # (t, device)
        self.trip_t: dict = {}            # device -> first trip instant
        self.swaps: list = []             # (t, device)
        self.active: set = set()          # path keys carrying short current


class EpisodeTracker:
    """Turns solves and device events into episodes (see the module notes).

    Parameters
    ----------
    would_trip:
        ``would_trip(device, i_a, t_onset_s) -> float | None``: the absolute
        instant the device would trip had ``i_a`` flowed from ``t_onset_s`` on
        (``None``: never). It is called when the device joins the path, so
        the device's own state at that instant can answer it.
    t_swap_s:
        ``t_swap_s(device) -> float | None``: time from detection to
        interruption of a swapping device (``None``: not a swapping device).
    chain:
        ``chain(device) -> tuple[str, ...]``: devices above ``device`` in
        the feed chain (for a supply switching off to count as a trip of the
        episodes of its boosters).
    device_threshold_a:
        Threshold current per device (its trip level, a supply's limit), for
        the onset of an overload episode ended by an overcurrent trip.
    device_rated_a:
        Rated current of each device's thermal replica, for the onset of an
        overload episode ended by a thermal trip.
    """

    def __init__(self, would_trip: Callable[[str, float, float], Optional[float]],
                 t_swap_s: Callable[[str], Optional[float]],
                 chain: Optional[Callable[[str], tuple]] = None,
                 device_threshold_a: Optional[Mapping[str, float]] = None,
                 device_rated_a: Optional[Mapping[str, float]] = None):
        self._would_trip = would_trip
        self._t_swap_s = t_swap_s
        self._chain = chain or (lambda d: ())
        self._dev_thr = dict(device_threshold_a or {})
        self._open: dict[Hashable, _Open] = {}
        self._done: list[Episode] = []
        self._dev_i: dict[str, float] = {}
        self._dev_rated = dict(device_rated_a or {})
        self._dev_rose_s: dict[str, float] = {}
        self._dev_rose_th_s: dict[str, float] = {}
        self._t_last = 0.0
        #: Whether an open episode had no path carrying short current in the last
        #: ``solution``: only then can a closing call with the same currents close one.
        self.pending_close = False
        self._last_groups: dict = _NO_GROUPS   # groups carrying short current, last solution

    # ---------------------------------------------------------------- facts
    def solution(self, t_s: float, short_i_a: Mapping[ShortPath, float],
                 changed: Mapping[str, float], close: bool = True) -> list[Event]:
        """Feed one solve: short-path currents and the changed device currents.

        ``short_i_a`` holds every existing short path with its current
        magnitude; ``changed`` the new current of each device whose current
        changed. With ``close`` False (a solve in the middle of an instant,
        between two devices acting at it) no episode is closed: a short that
        vanishes and comes back within one instant - two reversers swapping at
        the same instant - is one episode; the engine makes a last call with
        ``close`` True once the instant has settled. Returns (a sequence) the ``short`` /
        ``cleared`` events it opened or closed.
        """
        self._t_last = t_s
        if changed:
            before: dict[str, float] = {}
            dev_i = self._dev_i
            thr_d = self._dev_thr
            rated = self._dev_rated
            for d, i in changed.items():
                b = before[d] = dev_i.get(d, 0.0)
                if i > b:
                    thr = thr_d.get(d)
                    if thr is not None and i > thr >= b:
                        self._dev_rose_s[d] = t_s
                    thr = rated.get(d)
                    if thr is not None and i > thr >= b:
                        self._dev_rose_th_s[d] = t_s
                dev_i[d] = i
        opened = self._open
        if not opened and not short_i_a:
            self.pending_close = False
            self._last_groups = _NO_GROUPS
            return _NO_EVENTS
        # currents per group: group -> [largest path, its i, sum, keys]
        groups: dict[Hashable, list] = {}
        for path, i in short_i_a.items():
            if i > path.threshold_a:
                g = groups.get(path.group)
                if g is None:
                    groups[path.group] = [path, i, i, {path.key}]
                else:
                    g[3].add(path.key)
                    g[2] += i
                    if (i, str(path.where)) > (g[1], str(g[0].where)):
                        g[0], g[1] = path, i
        self._last_groups = groups
        if not groups and not (close and opened):
            self.pending_close = bool(opened)
            return _NO_EVENTS
        events: list[Event] = []
        # close the groups that no longer carry short current
        if close and opened:
            self._close_quiet(t_s, groups, events)
        for gkey, (path, _i_max, i_sum, keys) in groups.items():
            op = opened.get(gkey)
            if op is None:
                ep = Episode(start_s=t_s, kind=path.kind, where=path.where, train=path.train,
                             peak_a=i_sum)
                op = opened[gkey] = _Open(ep, path.threshold_a)
                events.append(Event(t_s, path.where, "short",
                                    {"kind": path.kind, "i_a": i_sum, "train": path.train}))
            elif i_sum > op.ep.peak_a:
                op.ep.peak_a = i_sum
            op.active = keys
            if not changed:
                continue
            half = 0.5 * op.threshold_a
            for d, i in changed.items():
                if i - before[d] > half and d not in op.path_i_a:
                    op.path_i_a[d] = i
                    op.path_t_s[d] = t_s
                    if self._t_swap_s(d) is None:
                        op.would_s[d] = self._would_trip(d, i, t_s)
        # every group carrying current is open now: the others can close
        self.pending_close = len(opened) > len(groups)
        return events

    def close_settled(self, t_s: float) -> list[Event]:
        """The closing call once the instant has settled, with the currents of the
        last :meth:`solution` (the same as ``solution(t_s, same currents, {},
        close=True)``, without going over the paths again): close every open
        episode whose group carried no short current in that solution."""
        events: list[Event] = []
        self._close_quiet(t_s, self._last_groups, events)
        self.pending_close = False
        return events

    def _close_quiet(self, t_s: float, groups: Mapping, events: list) -> None:
        """Close every open episode whose group is not in ``groups`` (carries no
        short current), appending its ``cleared`` event."""
        opened = self._open
        for gkey in [g for g in opened if g not in groups]:
            op = opened.pop(gkey)
            op.ep.end_s = t_s
            self._finish(op)
            events.append(Event(t_s, op.ep.where, "cleared",
                                {"kind": op.ep.kind, "outcome": op.ep.outcome}))

    def device_event(self, ev: Event) -> None:
        """Feed one device event."""
        kind = ev.event
        if kind in DETECTING and self._t_swap_s(ev.device) is not None:
            for op in self._involving(ev.device):
                op.detect.setdefault(ev.device, ev.t_s)
        elif kind in SWAPPING:
            for op in self._involving(ev.device):
                op.swaps.append((ev.t_s, ev.device))
        elif kind in TRIPPING:
            ops = self._involving(ev.device, via_chain=True)
            for op in ops:
                op.trips.append((ev.t_s, ev.device))
                op.trip_t.setdefault(ev.device, ev.t_s)
            if not ops and kind != "dropout":
                rose = self._dev_rose_th_s if kind == "thermal_trip" else self._dev_rose_s
                t0 = rose.get(ev.device, ev.t_s)
                self._done.append(Episode(
                    start_s=t0, end_s=ev.t_s, kind="overload", where=ev.device,
                    peak_a=self._dev_i.get(ev.device, 0.0), outcome="tripped",
                    acted=ev.device, acted_s=ev.t_s))

    def interrupt(self, t_s: float, device: str) -> None:
        """A swapping device opened or exchanged its leads at ``t_s``."""
        for op in self._involving(device):
            op.interrupt.setdefault(device, t_s)

    def finish(self, t_end_s: float) -> list[Episode]:
        """Close the bookkeeping at the end of the run; every episode, by start."""
        for gkey in list(self._open):
            op = self._open.pop(gkey)
            op.ep.end_s = None
            self._finish(op, still_open=True)
        return sorted(self._done, key=lambda e: (e.start_s, e.where))

    def involved(self, device: str) -> bool:
        """Whether an open episode has ``device`` on its path."""
        return bool(self._involving(device, via_chain=True))

    @property
    def open_count(self) -> int:
        return len(self._open)

    # -------------------------------------------------------------- helpers
    def _involving(self, device: str, via_chain: bool = False) -> list[_Open]:
        out = []
        for op in self._open.values():
            if device in op.path_i_a:
                out.append(op)
            elif via_chain and any(device in self._chain(d) for d in op.path_i_a):
                out.append(op)
        return out

    def _finish(self, op: _Open, still_open: bool = False) -> None:
        ep = op.ep
        ep.swaps = len(op.swaps)
        first_trip = min(op.trips) if op.trips else None
        first_swap = min(op.swaps) if op.swaps else None
        if still_open or len(op.swaps) >= 2:
            ep.outcome = "unresolved"
        elif first_trip is not None:
            ep.outcome = "tripped"
        elif first_swap is not None or op.interrupt:
            ep.outcome = "swapped"
        else:
            ep.outcome = "clean"
        if first_trip is not None:
            ep.acted_s, ep.acted = first_trip
        elif op.interrupt:
            dev, t = min(op.interrupt.items(), key=lambda kv: (kv[1], kv[0]))
            ep.acted, ep.acted_s = dev, t
        elif first_swap is not None:
            ep.acted_s, ep.acted = first_swap
        if ep.outcome != "unresolved":
            self._margins(op)
        self._done.append(ep)

    def _margins(self, op: _Open) -> None:
        swappers = dict(op.detect)
        for dev, t in op.interrupt.items():
            swappers.setdefault(dev, t)
        if not swappers:
            return
        # the swapping device that clears first
        best: Optional[tuple[float, str]] = None
        for dev, t_det in swappers.items():
            if dev in op.interrupt:
                t_clr = op.interrupt[dev]
            else:
                t_sw = self._t_swap_s(dev)
                if t_sw is None:
                    continue
                t_clr = t_det + t_sw
            if best is None or (t_clr, dev) < best:
                best = (t_clr, dev)
        if best is None:
            return
        t_cleared, swapper = best
        op.ep.t_cleared_s = t_cleared
        margins: dict[str, float] = {}
        for dev, i_a in op.path_i_a.items():
            if dev in swappers:
                continue
            if dev in op.trip_t:
                t_trip = op.trip_t[dev]
            else:
                t_trip = op.would_s.get(dev)
            if t_trip is None or not math.isfinite(t_trip):
                continue
            margins[dev] = t_trip - t_cleared
        op.ep.margins = margins
        if margins:
            op.ep.margin_s = min(margins.values())
