"""Sequence of operation: what each device did in an episode, and dark time per district.

Pure data for the figures, from the run's result and the bounded trace recorder
(:mod:`sim.world.traces`): no simulation is repeated.

Per episode, one lane per device, from the track up: spans of sensing (short
seen until the swap starts), swapping (``swap_start`` to ``swapped``), dead time
(``swapped`` to ``reclose``), timing towards a trip that did not happen (from
the onset to the instant the device would have tripped had the short gone
on), and dark time (a trip, thermal trip, supply off or undervoltage dropout
until the output closes again), with the trip, swap and restart instants as
marks. The margin of each upstream device is an arrow from the instant the
short was cleared to the instant that device would have tripped: its length is
the episode's margin (``Episode.margins``), negative when the device tripped
first.

The whole-run dark time of a district is the union of the dark spans of its
feeding device and of every device above it (a breaker is dark when its
booster is), from the recorder's spans.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

#: Events that make a device's output dark, and those that end it.
DARK_START = frozenset({"trip", "thermal_trip", "off", "dropout"})
DARK_END = frozenset({"restart", "thermal_resume", "on", "reset"})


@dataclass
class Span:
    lane: str
    kind: str          # sensing | swapping | dead | timing | dark | limit | short
    t0_s: float
    t1_s: float
    label: str = ""


@dataclass
class Mark:
    lane: str
    kind: str          # trip | swapped | restart | give_up | detect
    t_s: float
    label: str = ""


@dataclass
class Arrow:
    """A margin: from ``t_from_s`` (short cleared) to ``t_to_s`` (the upstream
    device's trip, real or would-be); ``margin_s = t_to_s - t_from_s``."""

    lane: str
    t_from_s: float
    t_to_s: float
    margin_s: float
    required_s: float

    @property
    def ok(self) -> bool:
        return self.margin_s >= self.required_s and self.margin_s >= 0.0


@dataclass
class Sequence:
    """The lanes of one episode (times absolute, in s)."""

    index: int
    episode: object
    lanes: list = field(default_factory=list)
    spans: list = field(default_factory=list)
    marks: list = field(default_factory=list)
    arrows: list = field(default_factory=list)
    t0_s: float = 0.0
    t1_s: float = 0.0
    window: object = None


def episode_rank(ep, required_s: float) -> tuple:
    """Sort key, worst first: unresolved; a gap short that tripped or dropped out;
    a negative margin; a margin below the required one; a dropout; a swap; a
    fault or overload that tripped (the protection working); clean. Then the
    least margin, then the start."""
    m = ep.margin_s if ep.margin_s is not None else math.inf
    if ep.outcome == "unresolved":
        r = 0
    elif ep.kind == "gap" and ep.outcome in ("tripped", "dropout"):
        r = 1
    elif m < 0.0:
        r = 2
    elif m < required_s:
        r = 3
    elif ep.outcome == "dropout":
        r = 4
    elif ep.outcome == "swapped":
        r = 5
    elif ep.outcome == "tripped":
        r = 6
    else:
        r = 7
    return (r, m, ep.start_s)


def worst_episodes(result, n: int) -> list[int]:
    """Indices of the ``n`` worst episodes of a result (see :func:`episode_rank`)."""
    req = result.t_margin_required_s
    order = sorted(range(len(result.episodes)),
                   key=lambda k: episode_rank(result.episodes[k], req))
    return order[:n]


def episode_devices(scn, ep) -> list[str]:
    """The lanes of an episode: the devices that carried it (``Episode.devices``), from
    the track up, and the device that acted first when it is not one of them."""
    names = list(ep.devices)
    if ep.acted and ep.acted not in names and scn.device_kind(ep.acted) is not None:
        names.append(ep.acted)
    return names


def sequence_of(scn, index: int, ep, window, required_s: float) -> Sequence:
    """The lanes, spans, marks and margin arrows of one episode."""
    t_end = ep.end_s if ep.end_s is not None else (window.t1_s if window else ep.start_s)
    seq = Sequence(index, ep, window=window)
    short_lane = "short current"
    seq.lanes.append(short_lane)
    seq.spans.append(Span(short_lane, "short", ep.start_s, t_end,
                          f"peak {ep.peak_a:.2f} A"))
    devices = episode_devices(scn, ep)
    seq.lanes.extend(devices)
    t_clear = ep.t_cleared_s
    t_hi = max(t_end, ep.acted_s or t_end)
    events = list(window.events) if window is not None else []
    w_end = window.t1_s if window is not None else t_end
    for d in devices:
        evs = [e for e in events if e.device == d]
        t_swap_start = None
        t_swapped = None
        t_dark = None
        t_limit = None
        for e in evs:
            k = e.event
            if k in ("detect", "swap_start"):
                if t_swap_start is None:
                    seq.spans.append(Span(d, "sensing", ep.start_s, e.t_s, "sensing"))
                t_swap_start = e.t_s
                seq.marks.append(Mark(d, "detect", e.t_s, "swap starts"))
            elif k == "swapped":
                t_swapped = e.t_s
                seq.spans.append(Span(d, "swapping", t_swap_start if t_swap_start is not None
                                      else e.t_s, e.t_s, "swap"))
                seq.marks.append(Mark(d, "swapped", e.t_s, "swapped"))
            elif k == "reclose" and e.data.get("cause") != "undervoltage" and t_swapped is not None:
                seq.spans.append(Span(d, "dead", t_swapped, e.t_s, "dead time"))
                t_swapped = None
            elif k in DARK_START:
                if t_dark is None:
                    t_dark = e.t_s
                seq.marks.append(Mark(d, "trip", e.t_s, {"trip": "trip", "thermal_trip":
                                                         "thermal trip", "off": "off",
                                                         "dropout": "dropout"}[k]))
            elif (k in DARK_END or (k == "reclose" and e.data.get("cause") == "undervoltage")) \
                    and t_dark is not None:
                seq.spans.append(Span(d, "dark", t_dark, e.t_s, "dark"))
                seq.marks.append(Mark(d, "restart", e.t_s, k.replace("_", " ")))
                t_hi = max(t_hi, e.t_s)
                t_dark = None
            elif k == "give_up":
                seq.marks.append(Mark(d, "give_up", e.t_s, "gives up"))
            elif k == "limit":
                if e.data.get("active"):
                    t_limit = e.t_s if t_limit is None else t_limit
                elif t_limit is not None:
                    seq.spans.append(Span(d, "limit", t_limit, e.t_s, "at its limit"))
                    t_limit = None
        if t_dark is not None:
            seq.spans.append(Span(d, "dark", t_dark, max(w_end, t_dark), "dark"))
        if t_limit is not None:
            seq.spans.append(Span(d, "limit", t_limit, max(w_end, t_limit), "at its limit"))
        if t_swapped is not None and d in scn.reversers and scn.reversers[d].t_dead_s > 0:
            t_re = t_swapped + scn.reversers[d].t_dead_s
            seq.spans.append(Span(d, "dead", t_swapped, t_re, "dead time"))
    if t_clear is not None:
        for d, m in sorted((ep.margins or {}).items()):
            if m is None or not math.isfinite(m):
                continue
            t_trip = t_clear + m
            seq.arrows.append(Arrow(d, t_clear, t_trip, m, required_s))
            t_hi = max(t_hi, t_clear)
            tripped = any(mk.lane == d and mk.kind == "trip" for mk in seq.marks)
            if not tripped:
                seq.spans.append(Span(d, "timing", ep.start_s, t_trip,
                                      "timing (would trip)"))
            t_hi = max(t_hi, t_trip)
    seq.t0_s = ep.start_s
    seq.t1_s = max(t_hi, t_end)
    return seq


@dataclass
class DarkLane:
    """Dark time of one district over the run: spans ``[(t0, t1), ...]`` (s)."""

    district: str
    chain: tuple
    spans: list
    total_s: float
    dropped: int = 0


def union(spans) -> list[tuple[float, float]]:
    """The union of intervals, sorted and merged."""
    out: list[list[float]] = []
    for a, b in sorted(spans):
        if out and a <= out[-1][1]:
            out[-1][1] = max(out[-1][1], b)
        else:
            out.append([a, b])
    return [(a, b) for a, b in out]


def natural(name: str) -> tuple:
    """Sort key that puts ``b2`` before ``b10``."""
    import re

    return tuple((0, int(p)) if p.isdigit() else (1, p) for p in re.split(r"(\d+)", name))


def dark_lanes(scn, layout, recorder) -> list[DarkLane]:
    """Dark spans of every district (its feeding device and everything above it)."""
    lanes = []
    for dev in sorted({layout.district(s) for s in scn.track.sections} - {None}, key=natural):
        chain = (dev,) + scn.upstream(dev)
        spans = union(sp for d in chain for sp in recorder.dark.get(d, ()))
        dropped = sum(recorder.dark_dropped.get(d, 0) for d in chain)
        lanes.append(DarkLane(dev, chain, spans, sum(b - a for a, b in spans), dropped))
    return lanes
