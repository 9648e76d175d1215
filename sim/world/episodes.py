"""Short and overload episodes: onset, outcome, margins and let-through, from a stream of facts.

Pure bookkeeping, no simpy and no circuit: the engine feeds an
:class:`EpisodeTracker` these facts in time order, and it returns the
:class:`sim.trace.Episode` records of the results contract.

1. :meth:`EpisodeTracker.solution` after every circuit solve: the current of
   every short path that exists (wheels bridging a gap, a fault across the
   rails), per rail, and the new current of every device whose current changed.
2. :meth:`EpisodeTracker.device_event` for every device event (``detect``,
   ``trip``, ``swapped``, ``dropout``, ``off``, ...).
3. :meth:`EpisodeTracker.interrupt` when a swapping device (a reversing
   controller, or a booster that reverses its own output) changes its output:
   its leads open or exchange. That instant is ``t_cleared`` of the race.
4. :meth:`EpisodeTracker.force_unresolved` from the engine's zero-time
   oscillation guard (devices acting again and again without time passing).

Rules (summarised in DEVELOPERS.md, "Episodes")
-----------------------------------------------
* **Paths and groups.** A *short path* is a bridge of one conducting group of
  wheels over a gapped joint, or a scenario fault; its ``devices`` are the
  devices that feed it, the feed chains of the sections on both sides, from
  the track upwards. Paths are grouped: all the bridges of one train form one
  group (a train that moves its short from one end of a reversing section to
  the other by a swap keeps one episode), each fault is its own group.
* **Short current** (:func:`short_currents`). A fault is a short by
  definition: its current is its short current. A train's bridges carry a
  short only where they drive current from one side of a source to the other:
  each rail a bridge joins has a *side* (:mod:`sim.world.sides`: ``+`` or
  ``0`` of a supply through the device outputs of the moment, or dark). A
  bridge joining ``+`` to ``0`` counts its current at both sides; one joining
  two rails of the same side (districts in phase) carries only balancing
  current and counts nothing; one joining a live rail to a dark one counts only
  when that dark rail (with the dark rails a fault joins to it) is reached
  from both sides of a source - otherwise it is a train's load fed back into a
  dark district, not a short. The group's current ``I_G`` is the most counted
  at one side: the two rails of a bridge over a joint gapped on both rails
  that form one series loop (two isolated supplies) count once, two parallel
  paths from ``+`` to ``0`` (both rails into one supply) add, and ``I_G``
  never exceeds what a supply delivers.
* **Onset: what each device carries.** A fault's episode opens when its
  current exceeds :data:`I_FLOOR_A` (0.5 A), whatever the devices do: a fault
  under every trip level is an episode from its onset and, still flowing at
  the end, ``unresolved``. A train's group opens an episode when some device ``d`` of its paths
  carries more than its own threshold ``T_d`` -
  its sense level (the lower of its swap sense level and its trip level), or
  for a supply its current limit (a supply at its limit carries exactly the
  limit) - *because of the short*: ``I_d > T_d`` and ``I_d - I_G <= T_d``
  (without the group's current the device would not be over its threshold,
  so a bridge carrying a small balancing current beside an overloaded booster
  is no short), with ``I_G > I_FLOOR_A``.
* **End.** The episode ends when the short current stops: when ``I_G`` is at
  or under :data:`I_FLOOR_A` once the instant has settled (a short that
  vanishes and returns between two devices acting at one instant stays one
  episode). ``end_s`` is that instant, ``None`` when it still flows at the
  end. When the current stopped at a swap, the episode stays open through the
  swapping device's dead time (the short may come back at the reclose, moved
  to the other end of its section, and is then the same episode) but
  ``end_s`` is still the instant the current stopped, not the reclose.
* **Figures.** ``peak_a`` is the largest ``I_G`` (the figure an upstream device
  sees); ``paths_a`` the largest current of each rail path (``"joint (left
  rail)"``, a fault by its place); ``i2t_a2s`` the let-through ``integral
  I_G^2 dt`` over the episode, exact for the engine's piecewise-constant
  currents; ``devices`` the devices of its paths, track upwards; ``tripped``
  each of them that tripped, dropped out or switched off in it, with the first
  instant, and every other booster on a supply of the episode that dropped
  out in it (its supply's collapse followed from the short).
* **Outcome.** ``unresolved`` when it still flows at the end, when two or more
  swaps happened in it (swaps that do not clear), or when the zero-time guard
  stepped in (``note`` says so). Otherwise the first device that acted names
  it: a trip (``trip``, ``thermal_trip``) or a supply switching off (``off``,
  hiccup or latch) is ``tripped`` with ``acted`` that device; a booster's
  undervoltage ``dropout`` is ``dropout`` with ``acted`` its **supply** (the
  booster dropped out because the supply's voltage collapsed at its limit).
  Otherwise ``swapped`` when a swap interrupted it, else ``clean``. Ties at
  one instant go by the order the engine reported the events.
* **Margins** exist when a swapping device detected the short. ``t_cleared``
  is the first interrupt by a swapping device (or, when a trip came first,
  ``t_detect + t_swap_s``). For every other device of the episode: a device
  that tripped (or dropped out) in it at ``t_trip <= t_cleared`` has the
  negative margin ``t_trip - t_cleared`` (how late the swap was); one that
  tripped later has none (never a positive margin against a device that
  tripped); one that did not trip has ``t_would - t_cleared``, ``t_would``
  being when it would have tripped had the current it carried when it joined
  the episode gone on (``None``: never, no margin). ``margin_s`` is the least.
  An ``unresolved`` episode has no margins: its swaps did not clear it.
* **Overload episodes** (kind ``overload``, ``where`` the device): a trip of
  a device (overcurrent, thermal, a supply switching off) that no episode
  holds, from when its current last rose over its trip level (its thermal
  rated current for a thermal trip; a supply: its limit) to the trip; a
  booster's dropout that no episode holds, as a ``dropout`` episode of
  its supply from when the supply reached its limit; and a let-through
  (below) that no episode holds. A trip that ends a run over the trip level
  begun in an episode already closed, and a booster's dropout while its supply
  is switched off by an episode, belong to that episode (one hiccup is counted
  once).
* **Let-through over the trip level.** A protective device is *over* while it
  carries more than its trip level. An over run longer than the device's
  longest definite delay (``t_allow_s``: the trip delay, a sampled sensor's
  last sample of it, and for a swapping device its sense delay and swap time
  before that) means its delay is long - an inverse-time curve at a low
  multiple, a sensor clamped below the trip level - or that it never trips.
  Such a run is never silent: it belongs to the short episode holding the
  device, to the overload episode of its trip, or else to an overload episode
  of its own, and gives a finding with the device's I^2 t over the run
  (:func:`overrun_findings`).

Finding codes (this module)
---------------------------
RF-RUN-020 (warning) a device carried more than its trip level for longer than
                     its trip delay before it tripped: its let-through I^2 t.
RF-RUN-021 (error)   a device carried more than its trip level for longer than
                     its trip delay and did not trip (the current stopped
                     otherwise, or still flows at the end).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Hashable, Mapping, NamedTuple, Optional, Sequence

from sim.model import Finding
from sim.timebase import T_TOL_S
from sim.trace import Episode, Event

#: Current at or under which a short path carries no short (A): a bridge between
#: districts in phase carries a small balancing current at most.
I_FLOOR_A = 0.5
#: A supply at its limit reports the limit itself; "over" is within this of it.
_LIMIT_REL = 1e-9

#: Device events that end an episode as "tripped" or "dropout".
TRIPPING = frozenset({"trip", "thermal_trip", "off", "dropout"})
#: Device events that mark a swapping device's detection of the short.
DETECTING = frozenset({"detect", "swap_start"})
#: Device events that count as a swap in an episode.
SWAPPING = frozenset({"swapped"})
#: Device events after which an output conducts again (a swap's dead time over; a
#: supply on again, or reset).
RECLOSING = frozenset({"reclose", "on", "reset"})
#: What ``solution`` returns when it opened and closed nothing (shared, empty).
_NO_EVENTS: tuple = ()
_NO_GROUPS: dict = {}
_NO_RAILS: dict = {}


@dataclass(frozen=True)
class ShortPath:
    """A place where short current can flow.

    ``key`` is the circuit key of the bridge or fault short, ``group`` the
    episode group (``("train", name)`` or ``("fault", index)``), ``kind``
    ``"gap"`` or ``"fault"``, ``where`` the place as printed (a joint name,
    ``"section@at m"``), ``devices`` the devices feeding it (track upwards),
    ``rails`` the names of the rails a bridge joins (``("left", "right")``
    for a joint gapped on both, one name for a one-rail gap; empty for a
    fault).
    """

    key: Hashable
    group: Hashable
    kind: str
    where: str
    train: Optional[str] = None
    devices: tuple = ()
    rails: tuple = ()
    #: The ``paths_a`` keys of its rails (``"j (left rail)"``; a fault: its place).
    rail_names: tuple = field(init=False, compare=False)

    def __post_init__(self) -> None:
        names = (tuple(f"{self.where} ({r} rail)" for r in self.rails) if self.rails
                 else (self.where,))
        object.__setattr__(self, "rail_names", names)


class Overrun(NamedTuple):
    """A device over its trip level for longer than its longest definite delay."""

    device: str
    t_start_s: float
    duration_s: float
    t_allow_s: float
    i_trip_a: float
    peak_a: float
    i2t_a2s: float
    tripped: bool
    still: bool          # still over at the end of the run


class RailFlow(NamedTuple):
    """The current over one rail of a short path and the sides it joins.

    ``i_a`` is the magnitude of the current; ``side_x`` and ``side_y`` are the
    sides of the two rails it joins (:mod:`sim.world.sides`: ``("+", supply)``,
    ``("0", supply)`` or ``("dark", ...)``). A fault joins its section's left
    rail to its right rail.
    """

    i_a: float
    side_x: Hashable
    side_y: Hashable


def _live(side) -> bool:
    return side[0] != "dark"


def short_currents(flows: Mapping[ShortPath, Sequence[RailFlow]]
                   ) -> tuple[dict, dict]:
    """The short current of every path and every group (module notes, "Short current").

    Parameters
    ----------
    flows
        Per existing short path, one :class:`RailFlow` per rail it joins (a fault:
        one, its current from rail to rail).

    Returns
    -------
    (per_path, per_group)
        ``{ShortPath: A}`` and ``{group: A}``: a fault's own current; for the
        bridges of a train, the most current driven from one side of a source
        to the other through them, counted at each side (``+`` and ``0`` of
        each supply) it reaches; see the module notes.
    """
    # dark rails joined by a fault carrying current are one conductor ("cluster")
    parent: dict = {}

    def find(x):
        root = x
        while parent.get(root, root) != root:
            root = parent[root]
        while x != root:
            parent[x], x = root, parent.get(x, x)
        return root

    reach: list = []                       # (live side, dark side) joined by a short element
    for path, fl in flows.items():
        for i, sx, sy in fl:
            lx, ly = _live(sx), _live(sy)
            if path.kind == "fault":
                if i <= I_FLOOR_A:
                    continue
                if not lx and not ly:
                    rx, ry = find(sx), find(sy)
                    if rx != ry:
                        parent[rx] = ry
                    continue
            if lx != ly:
                reach.append((sx, sy) if lx else (sy, sx))
    # a dark cluster reached from both sides of a source conducts a short
    signs: dict = {}
    for live, dark in reach:
        signs.setdefault(find(dark), set()).add(live[0])
    shorted = {c for c, sg in signs.items() if len(sg) > 1}
    per_path: dict = {}
    acc_group: dict = {}
    for path, fl in flows.items():
        g = acc_group.setdefault(path.group, {})
        if path.kind == "fault":
            i = sum(f.i_a for f in fl)
            per_path[path] = i
            g[None] = g.get(None, 0.0) + i
            continue
        acc: dict = {}
        for i, sx, sy in fl:
            lx, ly = _live(sx), _live(sy)
            if lx and ly:
                if sx[0] != sy[0]:                    # + to 0: across the source
                    acc[sx] = acc.get(sx, 0.0) + i
                    acc[sy] = acc.get(sy, 0.0) + i
            elif lx and shorted and find(sy) in shorted:     # into a dark short
                acc[sx] = acc.get(sx, 0.0) + i
            elif ly and shorted and find(sx) in shorted:
                acc[sy] = acc.get(sy, 0.0) + i
        per_path[path] = max(acc.values()) if acc else 0.0
        for sd, v in acc.items():
            g[sd] = g.get(sd, 0.0) + v
    per_group = {g: (max(a.values()) if a else 0.0) for g, a in acc_group.items()}
    return per_path, per_group


class _Open:
    """The bookkeeping of one open short episode (slotted: read on every solve)."""

    __slots__ = ("ep", "devs", "would_s", "detect", "interrupt", "acts", "swaps",
                 "i_last", "t_last", "i2t", "paths", "forced", "keys", "dead", "quiet_s")

    def __init__(self, ep: Episode, t_s: float):
        self.ep = ep
        self.devs: set = set()            # devices of its paths so far
        self.would_s: dict = {}           # device -> would-trip instant
        self.detect: dict = {}            # swapping device -> t_detect
        self.interrupt: dict = {}         # swapping device -> first interrupt
        self.acts: list = []              # (t, seq, device, kind): trips, offs, dropouts
        self.swaps: list = []             # (t, device)
        self.i_last = 0.0                 # I_G since t_last (for the I^2 t)
        self.t_last = t_s
        self.i2t = 0.0
        self.paths: dict = {}             # rail path name -> peak A
        self.forced = ""                  # the guard's note, when it stepped in
        self.keys: set = set()            # keys of the paths whose devices have joined
        self.dead: dict = {}              # swapping device -> reclose instant (dead time)
        self.quiet_s: Optional[float] = None   # when its current stopped, close deferred


class _Over:
    """A device over its trip level (one run)."""

    __slots__ = ("t0", "f0", "peak", "ep")

    def __init__(self, t0: float, f0: float, i: float):
        self.t0 = t0
        self.f0 = f0
        self.peak = i
        self.ep: Optional[Episode] = None   # the episode that holds it


class EpisodeTracker:
    """Turns solves and device events into episodes (see the module notes).

    Parameters
    ----------
    would_trip:
        ``would_trip(device, i_a, t_onset_s) -> float | None``: the absolute
        instant the device would trip had ``i_a`` flowed from ``t_onset_s`` on
        (``None``: never). Asked when the device joins an episode, right after
        it observed its current, so its own state can answer.
    t_swap_s:
        ``t_swap_s(device) -> float | None``: time from detection to
        interruption of a swapping device (``None``: not a swapping device).
    sense_threshold_a:
        Per device, the current over which it reacts to a short (``T_d`` of the
        onset rule); for a supply, its current limit.
    supplies:
        The names of the supplies (a supply is "over" at its limit).
    trip_threshold_a:
        Per protective device, its trip level; per supply, its limit (overload
        onsets and over runs).
    allow_s:
        Per protective device, the longest it may carry more than its trip
        level before a definite-time trip (the over-run rule).
    rated_a:
        Rated current of each device's thermal replica (onset of an overload
        episode ended by a thermal trip).
    supply_of:
        Per booster, its supply (``acted`` of a dropout).
    order:
        Every device in the order "from the track upwards" (``devices``).
    t_dead_s:
        Per swapping device, its dead time (its output open after a swap): an
        episode whose current stops at a swap waits for the reclose before it
        closes (module notes, "End").
    """

    def __init__(self, would_trip: Callable[[str, float, float], Optional[float]],
                 t_swap_s: Callable[[str], Optional[float]],
                 sense_threshold_a: Optional[Mapping[str, float]] = None,
                 supplies: Sequence[str] = (),
                 trip_threshold_a: Optional[Mapping[str, float]] = None,
                 allow_s: Optional[Mapping[str, float]] = None,
                 rated_a: Optional[Mapping[str, float]] = None,
                 supply_of: Optional[Mapping[str, str]] = None,
                 order: Sequence[str] = (),
                 t_dead_s: Optional[Mapping[str, float]] = None):
        self._would_trip = would_trip
        self._t_dead = {d: v for d, v in (t_dead_s or {}).items() if v > 0.0}
        self._t_swap_s = t_swap_s
        self._supplies = frozenset(supplies)
        sense = dict(sense_threshold_a or {})
        # onset thresholds: a supply is "over" at its limit (it reports the limit)
        self._onset_thr = {d: (v * (1.0 - _LIMIT_REL) if d in self._supplies else v)
                           for d, v in sense.items()}
        trip = dict(trip_threshold_a or {})
        self._trip_thr = dict(trip)
        self._over_thr = {d: (v * (1.0 - _LIMIT_REL) if d in self._supplies else v)
                          for d, v in trip.items()}
        self._allow = dict(allow_s or {})
        self._rated = dict(rated_a or {})
        self._supply_of = dict(supply_of or {})
        self._rank = {d: k for k, d in enumerate(order)}
        self._open: dict[Hashable, _Open] = {}
        self._done: list[Episode] = []
        self._dev_i: dict[str, float] = {}
        self._f: dict[str, float] = {}          # integral of I^2 dt per device, to _t_f
        self._t_f: dict[str, float] = {}
        self._over: dict[str, _Over] = {}       # devices over their trip level (or limit)
        self._rose_th: dict[str, tuple] = {}    # device -> (t, F) when it rose over rated
        self._trip_ep: dict[str, Episode] = {}  # device -> overload episode of its last trip
        self._tripped_s: dict[str, float] = {}  # device -> its last trip instant
        self._dropout_ep: dict[str, Episode] = {}   # supply -> its last dropout episode
        self._off_ep: dict[str, Episode] = {}   # supply switched off -> the episode holding it
        self._seq = 0
        #: Whether an open episode had no path carrying short current in the last
        #: ``solution``: only then can a closing call with the same currents close one.
        self.pending_close = False
        self._last_groups: dict = _NO_GROUPS   # groups carrying short current, last solution

    # ---------------------------------------------------------------- facts
    def solution(self, t_s: float, short_i_a: Mapping[ShortPath, float],
                 changed: Mapping[str, float], close: bool = True,
                 rail_i_a: Optional[Mapping[ShortPath, tuple]] = None,
                 group_i_a: Optional[Mapping[Hashable, float]] = None) -> list[Event]:
        """Feed one solve: short-path currents and the changed device currents.

        ``short_i_a`` holds every existing short path with its short current
        (:func:`short_currents`); ``group_i_a`` the short current of each group
        (without it, a group's current is the sum over its paths); ``rail_i_a``
        the magnitude over each rail (``ShortPath.rails`` order), for
        ``paths_a`` (a path without it is entered by its place, with its total).
        ``changed`` is the new current of each device whose current changed.
        With ``close`` False (a solve in the middle of an instant, between two
        devices acting at it) no episode is closed; the engine makes a last call
        with ``close`` True, or :meth:`close_settled`, once the instant has
        settled. Returns the ``short`` / ``cleared`` events it opened or closed.
        """
        if changed:
            self._account(t_s, changed)
        opened = self._open
        if not opened and not short_i_a:
            self.pending_close = False
            self._last_groups = _NO_GROUPS
            return _NO_EVENTS
        # currents per group: group -> [paths above the floor, I_G]
        groups: dict[Hashable, list] = {}
        if group_i_a is None:
            for path, i in short_i_a.items():
                if i > I_FLOOR_A:
                    g = groups.get(path.group)
                    if g is None:
                        groups[path.group] = [[path], i]
                    else:
                        g[0].append(path)
                        g[1] += i
        else:
            for path, i in short_i_a.items():
                i_g = group_i_a.get(path.group, 0.0)
                if i_g <= I_FLOOR_A or i <= 0.0:
                    continue
                g = groups.get(path.group)
                if g is None:
                    groups[path.group] = [[path], i_g]
                else:
                    g[0].append(path)
            for g in groups.values():       # the paths that carry it (the largest, at least)
                if len(g[0]) > 1:
                    top = max(g[0], key=lambda p: (short_i_a[p], str(p.where)))
                    g[0] = [p for p in g[0] if short_i_a[p] > I_FLOOR_A or p is top]
        for op in opened.values():          # I^2 t of the open episodes, to t_s
            if t_s > op.t_last:
                op.i2t += op.i_last * op.i_last * (t_s - op.t_last)
                op.t_last = t_s
            op.i_last = 0.0
        events: list[Event] = []
        if close and opened:
            self._close_quiet(t_s, groups, events)
        live: dict = {}
        for gkey, (paths, i_g) in groups.items():
            op = opened.get(gkey)
            if op is None:
                if not self._onset(paths, i_g):
                    continue
                path = max(paths, key=lambda p: (short_i_a[p], str(p.where)))
                ep = Episode(start_s=t_s, kind=path.kind, where=path.where, train=path.train,
                             peak_a=i_g)
                op = opened[gkey] = _Open(ep, t_s)
                events.append(Event(t_s, path.where, "short",
                                    {"kind": path.kind, "i_a": i_g, "train": path.train}))
            elif i_g > op.ep.peak_a:
                op.ep.peak_a = i_g
            op.i_last = i_g
            op.quiet_s = None
            live[gkey] = True
            rails = rail_i_a or _NO_RAILS
            for path in paths:
                vals = rails.get(path)
                if vals is None:
                    names, vals = (path.where,), (short_i_a[path],)
                else:
                    names = path.rail_names
                for name, v in zip(names, vals):
                    if v > op.paths.get(name, 0.0):
                        op.paths[name] = v
                if path.key not in op.keys:         # a path new to the episode
                    op.keys.add(path.key)
                    for d in path.devices:
                        if d not in op.devs:
                            self._join(op, d, t_s)
        if opened and self._over:
            for op in opened.values():
                for d in op.devs:
                    ov = self._over.get(d)
                    if ov is not None and ov.ep is None:
                        ov.ep = op.ep
        self._last_groups = live
        # every group carrying current is open now: the others can close
        self.pending_close = len(opened) > len(live)
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

    def device_event(self, ev: Event) -> None:
        """Feed one device event."""
        kind = ev.event
        if kind in DETECTING:
            if self._t_swap_s(ev.device) is not None:
                for op in self._involving(ev.device):
                    op.detect.setdefault(ev.device, ev.t_s)
        elif kind in SWAPPING:
            t_dead = self._t_dead.get(ev.device)
            for op in self._involving(ev.device):
                op.swaps.append((ev.t_s, ev.device))
                if t_dead is not None:
                    op.dead[ev.device] = ev.t_s + t_dead
        elif kind in TRIPPING:
            self._seq += 1
            d, t = ev.device, ev.t_s
            ops = self._involving(d)
            if not ops and kind == "dropout" and d in self._supply_of:
                # a booster beside the short, on the same supply: its dropout
                # follows from the episode that holds the supply, or from the
                # supply's switching off
                sup = self._supply_of[d]
                ops = self._involving(sup)
                if not ops:
                    ep = self._off_ep.get(sup)
                    if ep is not None:
                        self._attach(ep, d, t)
                        return
            for op in ops:
                op.acts.append((t, self._seq, d, kind))
            if kind != "dropout":
                self._tripped_s[d] = t
            if ops:
                if kind == "off":
                    self._off_ep[d] = ops[0].ep
                return
            ep = self._late(self._supply_of.get(d, d) if kind == "dropout" else d)
            if ep is not None:
                self._attach(ep, d, t)
            else:
                ep = self._overload(ev)
            if kind == "off":
                self._off_ep[d] = ep
        elif kind in RECLOSING:
            for op in self._involving(ev.device):
                op.dead.pop(ev.device, None)
            if kind != "reclose":
                self._off_ep.pop(ev.device, None)

    def interrupt(self, t_s: float, device: str) -> None:
        """A swapping device opened or exchanged its leads at ``t_s``."""
        for op in self._involving(device):
            op.interrupt.setdefault(device, t_s)

    def force_unresolved(self, t_s: float, devices: Sequence[str], note: str) -> Episode:
        """The engine's zero-time guard stepped in at ``t_s`` for ``devices``.

        Every open episode holding one of them becomes ``unresolved`` with
        ``note``; when none holds them, an ``unresolved`` overload episode of
        the first device is made. Returns the (first) episode marked.
        """
        marked = [op for d in devices for op in self._involving(d)]
        for op in marked:
            if not op.forced:
                op.forced = note
        if marked:
            return marked[0].ep
        ep = Episode(start_s=t_s, kind="overload", where=devices[0], end_s=t_s,
                     outcome="unresolved", devices=self._ordered(devices), note=note)
        self._done.append(ep)
        return ep

    def finish(self, t_end_s: float) -> list[Episode]:
        """Close the bookkeeping at the end of the run; every episode, by start."""
        for op in self._open.values():
            if t_end_s > op.t_last:
                op.i2t += op.i_last * op.i_last * (t_end_s - op.t_last)
                op.t_last = t_end_s
        for d in list(self._over):
            self._end_over(d, t_end_s, still=True)
        for gkey in list(self._open):
            op = self._open.pop(gkey)
            # (one whose current stopped at a swap, waiting for the reclose: closed)
            op.ep.end_s = op.quiet_s
            self._finish(op, still_open=op.quiet_s is None)
        return sorted(self._done, key=lambda e: (e.start_s, e.where))

    def involved(self, device: str) -> bool:
        """Whether an open episode has ``device`` among its devices."""
        return bool(self._involving(device))

    @property
    def open_count(self) -> int:
        return len(self._open)

    # ------------------------------------------------------------ devices
    def _account(self, t_s: float, changed: Mapping[str, float]) -> None:
        """Device currents: the running integral of I^2 dt, over runs, rated crossings."""
        dev_i = self._dev_i
        f = self._f
        t_f = self._t_f
        over_thr = self._over_thr
        over = self._over
        rated = self._rated
        for d, i in changed.items():
            b = dev_i.get(d, 0.0)
            t0 = t_f.get(d, 0.0)
            if t_s > t0:
                f[d] = f.get(d, 0.0) + b * b * (t_s - t0)
            t_f[d] = t_s
            dev_i[d] = i
            thr = over_thr.get(d)
            if thr is not None:
                ov = over.get(d)
                if i > thr:
                    if ov is None:
                        over[d] = _Over(t_s, f.get(d, 0.0), i)
                    elif i > ov.peak:
                        ov.peak = i
                elif ov is not None:
                    self._end_over(d, t_s, still=False)
            thr = rated.get(d)
            if thr is not None and i > thr >= b:
                self._rose_th[d] = (t_s, f.get(d, 0.0))

    def _i2t_to(self, d: str, t_s: float) -> float:
        """The running integral of ``I_d^2 dt`` from the start of the run to ``t_s``."""
        i = self._dev_i.get(d, 0.0)
        return self._f.get(d, 0.0) + i * i * max(0.0, t_s - self._t_f.get(d, t_s))

    def _end_over(self, d: str, t_s: float, still: bool) -> None:
        """A device's over run ends (its current fell, or the run ended)."""
        ov = self._over.pop(d)
        allow = self._allow.get(d)
        dur = t_s - ov.t0
        if allow is None or dur <= allow + T_TOL_S:
            return
        t_trip = self._tripped_s.get(d)
        tripped = t_trip is not None and ov.t0 <= t_trip <= t_s
        rec = Overrun(d, ov.t0, dur, allow, self._trip_thr[d], ov.peak,
                      self._i2t_to(d, t_s) - ov.f0, tripped, still)
        ep = ov.ep
        if ep is None and tripped:
            ep = self._trip_ep.get(d)
            if ep is not None and ep.acted_s != t_trip:
                ep = None
        if ep is None:
            ep = Episode(start_s=ov.t0, kind="overload", where=d,
                         end_s=None if still else t_s, peak_a=ov.peak,
                         outcome="unresolved" if still else "clean",
                         devices=[d], i2t_a2s=rec.i2t_a2s)
            self._done.append(ep)
        ep.overruns.append(rec)

    def _overload(self, ev: Event) -> Episode:
        """A trip, switch-off or dropout that no episode holds: an overload episode."""
        d, t = ev.device, ev.t_s
        if ev.event == "dropout":
            sup = self._supply_of.get(d, d)
            ep = self._dropout_ep.get(sup)
            if ep is not None and ep.acted_s == t:          # another booster, same instant
                self._attach(ep, d, t)
                return ep
            ov = self._over.get(sup)
            t0, f0, peak = ((ov.t0, ov.f0, ov.peak) if ov is not None
                            else (t, self._i2t_to(sup, t), self._dev_i.get(sup, 0.0)))
            ep = Episode(start_s=t0, kind="overload", where=sup, end_s=t, peak_a=peak,
                         outcome="dropout", acted=sup, acted_s=t,
                         devices=self._ordered({d, sup}), tripped={d: t},
                         i2t_a2s=self._i2t_to(sup, t) - f0)
            self._dropout_ep[sup] = ep
            self._done.append(ep)
            return ep
        if ev.event == "thermal_trip" and d in self._rose_th:
            t0, f0 = self._rose_th[d]
            peak = self._dev_i.get(d, 0.0)
        elif d in self._over:
            ov = self._over[d]
            t0, f0, peak = ov.t0, ov.f0, ov.peak
        else:
            t0, f0, peak = t, self._i2t_to(d, t), self._dev_i.get(d, 0.0)
        ep = Episode(start_s=t0, end_s=t, kind="overload", where=d, peak_a=peak,
                     outcome="tripped", acted=d, acted_s=t, devices=[d], tripped={d: t},
                     i2t_a2s=self._i2t_to(d, t) - f0)
        self._trip_ep[d] = ep
        self._done.append(ep)
        return ep

    # -------------------------------------------------------------- helpers
    def _onset(self, paths: list, i_g: float) -> bool:
        """Whether the group of ``paths`` carrying ``i_g`` opens an episode: a fault
        always (it is a short by definition), a train's bridges when some device
        of them carries more than its threshold because of ``i_g`` (module notes,
        onset)."""
        if paths[0].kind == "fault":
            return True
        thr = self._onset_thr
        dev_i = self._dev_i
        for path in paths:
            for d in path.devices:
                t = thr.get(d)
                if t is not None:
                    i = dev_i.get(d, 0.0)
                    if i > t and i - i_g <= t:
                        return True
        return False

    def _join(self, op: _Open, d: str, t_s: float) -> None:
        """Device ``d`` carries the episode's current from ``t_s`` on."""
        op.devs.add(d)
        if self._t_swap_s(d) is None:
            op.would_s[d] = self._would_trip(d, self._dev_i.get(d, 0.0), t_s)
        ov = self._over.get(d)
        if ov is not None and ov.ep is None:
            ov.ep = op.ep

    def _ordered(self, devices) -> list:
        rank = self._rank
        return sorted(devices, key=lambda d: (rank.get(d, len(rank)), d))

    def _involving(self, device: str) -> list[_Open]:
        return [op for op in self._open.values() if device in op.devs]

    def _close_quiet(self, t_s: float, groups: Mapping, events: list) -> None:
        """Close every open episode whose group is not in ``groups`` (carries no
        short current), appending its ``cleared`` event; ``end_s`` is the instant
        its current stopped. One whose current stopped at a swap waits for the
        swapping device's reclose (module notes, "End")."""
        opened = self._open
        for gkey in [g for g in opened if g not in groups]:
            op = opened[gkey]
            if op.quiet_s is None:
                op.quiet_s = t_s
            if op.dead and self._waiting(op, t_s):
                continue
            del opened[gkey]
            op.ep.end_s = op.quiet_s
            self._finish(op)
            events.append(Event(t_s, op.ep.where, "cleared",
                                {"kind": op.ep.kind, "outcome": op.ep.outcome}))

    @staticmethod
    def _waiting(op: _Open, t_s: float) -> bool:
        """Whether a swapping device of ``op`` is in its dead time at ``t_s`` (the
        short may come back at its reclose, moved to the other end of its section)."""
        for dev, t_reclose in list(op.dead.items()):
            if t_s <= t_reclose + T_TOL_S:
                return True
            del op.dead[dev]                          # it never reclosed (tripped, held)
        return False

    def _late(self, d: str) -> Optional[Episode]:
        """A closed episode in which ``d``'s present run over its trip level (a
        supply: at its limit) began: a trip that ends that run belongs to it."""
        ov = self._over.get(d)
        if ov is None or ov.ep is None or ov.t0 < ov.ep.start_s - T_TOL_S:
            return None
        if any(op.ep is ov.ep for op in self._open.values()):
            return None
        return ov.ep

    def _attach(self, ep: Episode, d: str, t_s: float) -> None:
        """``d`` tripped, switched off or dropped out at ``t_s`` in the closed ``ep``."""
        ep.tripped.setdefault(d, t_s)
        if d not in ep.devices:
            ep.devices = self._ordered(set(ep.devices) | {d})

    def _finish(self, op: _Open, still_open: bool = False) -> None:
        ep = op.ep
        ep.swaps = len(op.swaps)
        ep.i2t_a2s = op.i2t
        ep.paths_a = dict(op.paths)
        ep.devices = self._ordered(op.devs)
        tripped: dict = {}
        for t, _, d, _k in sorted(op.acts):
            tripped.setdefault(d, t)
        ep.tripped = tripped
        first = min(op.acts) if op.acts else None
        first_swap = min(op.swaps) if op.swaps else None
        if op.forced:
            ep.note = op.forced
        if still_open or len(op.swaps) >= 2 or op.forced:
            ep.outcome = "unresolved"
        elif first is not None:
            ep.outcome = "dropout" if first[3] == "dropout" else "tripped"
        elif first_swap is not None or op.interrupt:
            ep.outcome = "swapped"
        else:
            ep.outcome = "clean"
        if first is not None:
            t, _, d, kind = first
            ep.acted = self._supply_of.get(d, d) if kind == "dropout" else d
            ep.acted_s = t
        elif op.interrupt:
            dev, t = min(op.interrupt.items(), key=lambda kv: (kv[1], kv[0]))
            ep.acted, ep.acted_s = dev, t
        elif first_swap is not None:
            ep.acted_s, ep.acted = first_swap
        if ep.outcome != "unresolved":
            self._margins(op, tripped)
        self._done.append(ep)

    def _margins(self, op: _Open, tripped: Mapping[str, float]) -> None:
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
        t_cleared, _swapper = best
        op.ep.t_cleared_s = t_cleared
        margins: dict[str, float] = {}
        for dev in op.devs:
            if dev in swappers:
                continue
            t_trip = tripped.get(dev)
            if t_trip is not None:
                if t_trip <= t_cleared + T_TOL_S:
                    margins[dev] = t_trip - t_cleared      # it tripped first: how late
                continue                                   # never positive against a trip
            t_would = op.would_s.get(dev)
            if t_would is None or not math.isfinite(t_would):
                continue
            margins[dev] = t_would - t_cleared
        op.ep.margins = margins
        if margins:
            op.ep.margin_s = min(margins.values())


def overrun_findings(episodes: Sequence[Episode]) -> list[Finding]:
    """The let-through findings of a run's episodes (``RF-RUN-020``, ``RF-RUN-021``).

    One finding per over run (module notes): the device, how long it carried
    more than its trip level against its longest definite delay, the peak
    current and the I^2 t it let through over the run, and the episode's own
    let-through.
    """
    out: list[Finding] = []
    for ep in episodes:
        for r in ep.overruns:
            what = (f"{r.device} carried more than its trip level of {r.i_trip_a:g} A "
                    f"(up to {r.peak_a:.3g} A) for {r.duration_s:.6g} s from "
                    f"{r.t_start_s:.6g} s, longer than its trip delay of "
                    f"{r.t_allow_s * 1e3:.6g} ms; it let through I2t = {r.i2t_a2s:.4g} A2s")
            at = f" ({ep.kind} episode at {ep.where}, I2t {ep.i2t_a2s:.4g} A2s)"
            if r.tripped:
                out.append(Finding(
                    "warning", "RF-RUN-020", r.device,
                    f"{what} before it tripped{at}: the heat goes into rails, wire and "
                    "wheels while its delay runs",
                    "check that the wiring carries this I2t; a shorter delay or a "
                    "definite-time trip clears it sooner"))
            else:
                how = ("and still does at the end of the run" if r.still
                       else "and did not trip: something else stopped the current")
                out.append(Finding(
                    "error", "RF-RUN-021", r.device,
                    f"{what} {how}{at}: a short that does not trip can start a fire",
                    "lower the trip level below the short current, raise the sensing "
                    "full scale above it, or shorten the delay"))
    return out
