"""Trains in closed form: where they are, and when their wheels bridge gaps.

Nothing here steps a clock or uses simpy. A :class:`TrainPlan` turns a train
of the scenario into its consist (:mod:`sim.world.consist`) laid on its route
(:mod:`sim.world.geometry`), and precomputes every interval of *front
distance* ``s`` during which a conducting group bridges a gapped joint
(:class:`BridgeSpan`). Times follow from ``s`` by ``t = t0 + (s - s0)/v``
along a piecewise-constant speed history (:class:`Motion`); a train standing
at a reversal point keeps its bridges.

Bridge geometry (interval arithmetic on axle offsets against joint positions)
-----------------------------------------------------------------------------
Let a gapped joint lie at line point ``x`` of a leg and an axle at offset
``d`` behind the front (``L - d`` after an odd number of reversals). The axle
is over the joint when the front stands at ``u = x + d``.

* A pickup or lighted group with axle offsets ``d_1 < ... < d_n`` joins the
  two sides of the joint from the moment its first axle crosses it until its
  last one does: front range ``[x + d_1, x + d_n]``, which lasts exactly
  ``span / v`` with ``span = d_n - d_1`` at speed ``v``.
* A plain metal wheelset's tread touches the rail over a contact patch of
  length ``c`` centred on the axle; the gap is ``g`` wide, centred on the
  joint. The tread touches both rail ends while ``a + c/2 > x + g/2`` and
  ``a - c/2 < x - g/2`` (``a`` the axle's position): ``|a - x| < (c - g)/2``,
  a front range of length ``c - g``, lasting ``(c - g)/v`` when ``c > g`` and
  never otherwise (``Track.gap_width_m``, ``Track.contact_length_m``).

Rail and resistance reported
----------------------------
``rail`` is named as the circuit's ``set_bridge`` expects: ``"both"`` for
a joint gapped on both rails, ``joint.rail`` (as seen from ``joint.ends[0]``,
passed on unchanged) for a joint gapped on one rail; joints with
``gaps: none`` conduct anyway and are never bridges.

``r_ohm`` is the resistance of the bridge on *each* gapped rail:

* pickup and lighted groups: ``2 * r_wheel_contact + r_join_ohm`` -- one
  wheel contact on each side of the gap, in series with the join (a
  simplification: several pickup wheels on one side are in parallel, which
  only lowers it);
* metal wheelset: ``2 * r_wheel_contact`` -- the tread touches both rail ends.
  On a joint gapped on both rails each of the wheelset's two wheels bridges
  its own rail; the two are reported as one ``"both"`` interval of the same
  duration with this ``r_ohm`` per rail.

Axles of a vehicle's pickup are not counted again as metal wheelsets.

Boundary conventions
--------------------
A span is on for front positions ``s_on_m <= s < s_off_m``. In time it comes
on when the front *leaves* ``s_on_m`` and goes off when the front *reaches*
``s_off_m``; so a bridge held across a reversal lasts through the standing
time. A span still on where the route ends has ``s_off_m = inf`` (the train
stops there, bridging) and a span on at departure has ``s_on_m = 0``.
A :class:`BridgeInterval` already on when its time form is computed (at
``t0_s`` of :meth:`TrainPlan.bridges_in_time`, or at the last change of a
:class:`Motion`) carries that instant as its ``t_on_s``.

Cost
----
Building a plan is linear in (gapped joints on the route) x (conducting
groups). Recomputing the instants after a speed change is a few vectorised
array passes over the spans still ahead; the event records are made only
when read (:class:`BridgeEvents`).

Finding codes (this module)
---------------------------
RF-RUN-027 (warning, info) a train stood without power, its wheels bridging
                           gapped joints, for :data:`T_STAND_REPORT_S` or
                           longer (warning: still standing at the end).
"""
from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import NamedTuple, Optional

import numpy as np

from sim.errors import ScenarioError
from sim.model import Finding, Scenario, Train
from sim.world.consist import METAL, Consist, ConductingGroup, consist_of
from sim.world.geometry import ReversalPoint, RoutePath, build_route

INF = math.inf

__all__ = ["BridgeEvent", "BridgeEvents", "BridgeInterval", "BridgeSpan", "LoadPoint",
           "Motion", "POWER_FRACTION", "Position", "Stand", "TrainPlan", "build_plan",
           "build_trains", "has_power", "stand_findings"]

#: A train has power when the voltage across a locomotive's pickups is at least this
#: fraction of nominal (a decoder browns out at about half its rail voltage: our
#: choice of threshold, not a published one).
POWER_FRACTION = 0.5


def has_power(load_v: Sequence[float], v_nominal_v: float) -> bool:
    """Whether a train has power: the voltage at one of its locomotives' loads is at
    least :data:`POWER_FRACTION` of ``v_nominal_v``.

    A locomotive's pickup axles are joined electrically, so it draws from the
    most live of the rails they touch. Its load sits at its draw point, between
    its first and last pickup axle; while those axles stand on both sides of a
    gapped joint the circuit joins them through the group's bridge, so the
    voltage at the load is the voltage across the pickups (less the bridge's
    drop at the locomotive's draw, a few millivolts) whichever district its
    draw point is in, dark or not. Power is read from the circuit alone: a
    section whose device is open has power exactly when wheels standing on it
    feed it from a live one (a back-feed), as on a real layout.
    """
    lim = POWER_FRACTION * v_nominal_v
    for v in load_v:
        if (v if v >= 0.0 else -v) >= lim:
            return True
    return False


@dataclass
class Stand:
    """A train standing still, without power, on wheels that bridge gapped joints.

    From its ``stop`` at ``start_s`` to its ``go`` at ``end_s`` (``None``: it
    still stands at the end of the run); ``joints`` names the joints its wheels
    bridge as it stops (a train that stops stands on the bridges it reached).
    """

    train: str
    start_s: float
    end_s: Optional[float]
    joints: tuple

    def duration_s(self, t_end_s: float) -> float:
        """How long it stood, up to ``t_end_s`` when it still stands."""
        return (self.end_s if self.end_s is not None else t_end_s) - self.start_s

    def as_dict(self) -> dict:
        return {"train": self.train, "start_s": self.start_s, "end_s": self.end_s,
                "joints": list(self.joints)}


#: A stand across a gap shorter than this is the instant a short takes, shown by its
#: episode; one this long or longer gets RF-RUN-027 (s; our choice, not a published value).
T_STAND_REPORT_S = 1.0


def stand_findings(stands: Sequence[Stand], t_end_s: float) -> list[Finding]:
    """RF-RUN-027 for every stand of :data:`T_STAND_REPORT_S` or longer: a warning
    when the train still stands at ``t_end_s`` (it never went on), else info."""
    out = []
    for st in stands:
        dur_s = st.duration_s(t_end_s)
        if dur_s < T_STAND_REPORT_S:
            continue
        still = st.end_s is None
        gaps = ", ".join(st.joints)
        msg = (f"train {st.train} stood without power across gap {gaps} for {dur_s:.3f} s "
               f"(from {st.start_s:.6f} s; "
               + ("still standing at the end of the run)" if still
                  else f"went on at {st.end_s:.6f} s)"))
        out.append(Finding(
            "warning" if still else "info", "RF-RUN-027", st.train, msg,
            "find what darkened the districts on both sides of the gap (the shorts and "
            "dark districts reported for that time); the train goes on when one of them "
            "has power again", first_s=st.start_s, last_s=st.start_s))
    return out


class Position(NamedTuple):
    """Where the front stands: section, metres from its ``a`` end, end it heads to."""

    section: str
    at_m: float
    heading: str


class LoadPoint(NamedTuple):
    """A locomotive's draw point: section, metres from its ``a`` end, draw, vehicle index."""

    section: str
    at_m: float
    draw_a: float
    vehicle: int


def _bridge_group(self) -> int:
    """Alias of ``group_index``."""
    return self.group_index


def _bridge_key(self) -> tuple:
    """``(train, group_index, joint_index)``: a key for the circuit's bridge."""
    return (self.train, self.group_index, self.joint_index)


class BridgeSpan(NamedTuple):
    """Front distances during which a conducting group bridges a gapped joint."""

    s_on_m: float
    s_off_m: float
    joint_index: int
    rail: str
    r_ohm: float
    group_index: int
    kind: str
    train: str

    group = property(_bridge_group)
    key = property(_bridge_key)


class BridgeInterval(NamedTuple):
    """Instants at which a conducting group starts and stops bridging a joint.

    ``t_off_s`` is ``inf`` when the train stops while bridging (power lost, end
    of route) and nothing yet says when it goes on.
    """

    t_on_s: float
    t_off_s: float
    joint_index: int
    rail: str
    r_ohm: float
    group_index: int
    kind: str
    train: str
    s_on_m: float
    s_off_m: float

    group = property(_bridge_group)
    key = property(_bridge_key)


class BridgeEvent(NamedTuple):
    """A bridge coming ``"on"`` or going ``"off"`` at ``t_s``."""

    t_s: float
    event: str
    bridge: BridgeInterval


# --------------------------------------------------------------- trajectory
@dataclass(frozen=True)
class _Seg:
    """Front motion ``s(t) = s_a + v (t - t_a)`` for ``t_a <= t < t_b``."""

    t_a: float
    t_b: float
    s_a: float
    s_b: float
    v: float
    kind: str      # "depart" | "move" | "wait" (reversal) | "hold" (stopped) | "end"
    rev: int       # index of the first reversal not yet served
    v_cmd: float   # the commanded speed during the segment


def _segments(revs: tuple[ReversalPoint, ...], end_m: float, t: float, s: float, v: float,
              i: int, wait_left: Optional[float], t_stop: Optional[float],
              t_go: Optional[float] = None) -> list[_Seg]:
    """The front's motion from ``(t, s)`` at commanded speed ``v``.

    The train stands until ``t_go`` (its departure) if that is later, stands
    ``wait_left`` (the reversal's full wait when ``None``) at reversal ``i`` if
    it is there, moves at ``v``, stands the full wait at each further reversal
    point, stops for good at ``end_m``, and from ``t_stop`` on (a keep-alive
    running out) moves no more.
    """
    segs: list[_Seg] = []
    if t_go is not None and t < t_go:
        segs.append(_Seg(t, t_go, s, s, 0.0, "depart", i, v))
        t = t_go
    while True:
        if t_stop is not None and t_stop <= t:
            v, t_stop = 0.0, None
        if i < len(revs) and revs[i].s_m <= s:
            w = revs[i].t_wait_s if wait_left is None else max(0.0, wait_left)
            wait_left = None
            segs.append(_Seg(t, t + w, s, s, 0.0, "wait", i, v))
            t, i = t + w, i + 1
            continue
        target = revs[i].s_m if i < len(revs) else end_m
        if s >= end_m and i >= len(revs):
            segs.append(_Seg(t, INF, s, s, 0.0, "end", i, v))
            return segs
        if v <= 0.0:
            segs.append(_Seg(t, INF, s, s, 0.0, "hold", i, v))
            return segs
        t_arr = t + (target - s) / v
        if t_stop is not None and t_stop < t_arr:
            s1 = min(target, s + v * (t_stop - t))
            segs.append(_Seg(t, t_stop, s, s1, v, "move", i, v))
            t, s = t_stop, s1
            continue
        segs.append(_Seg(t, t_arr, s, target, v, "move", i, v))
        t, s = t_arr, target


def _seg_at(segs: list[_Seg], t: float) -> _Seg:
    for seg in segs:
        if t < seg.t_b:
            return seg
    return segs[-1]


def _s_at(segs: list[_Seg], t: float) -> float:
    seg = _seg_at(segs, t)
    if t <= seg.t_a or seg.v == 0.0:
        return seg.s_a
    return min(seg.s_b, seg.s_a + seg.v * (t - seg.t_a))


def _arrival(segs: list[_Seg], s: float) -> float:
    """The first instant the front stands at ``s`` or beyond (``inf``: never)."""
    for seg in segs:
        if seg.s_b >= s:
            if seg.kind == "move" and s > seg.s_a:
                return seg.t_a + (s - seg.s_a) / seg.v
            return seg.t_a
    return INF


def _interval_times(s_on: np.ndarray, s_off: np.ndarray, segs: list[_Seg], t0: float,
                    s0: float) -> tuple[np.ndarray, np.ndarray]:
    """On and off instants of front ranges ``[s_on, s_off)`` along ``segs``.

    A range comes on when the front leaves ``s_on`` (at ``t0`` if it is on
    already: ``s_on < s0``, or ``s_on = 0`` with ``s0 = 0``, on since
    departure) and goes off when the front reaches ``s_off``; ``inf`` for
    never. Within one move segment ``t_off = t_on + (s_off - s_on)/v``, so a
    duration is exactly ``(s_off - s_on)/v`` up to one rounding.
    """
    n = len(s_on)
    t_on = np.full(n, INF)
    t_off = np.full(n, INF)
    already = (s_on < s0) | ((s_on <= 0.0) & (s0 <= 0.0))
    t_on[already] = t0
    seg_b = np.full(n, -INF)
    seg_v = np.ones(n)
    moves = [g for g in segs if g.kind == "move"]
    if moves:
        ms_a = np.array([g.s_a for g in moves])
        ms_b = np.array([g.s_b for g in moves])
        mt_a = np.array([g.t_a for g in moves])
        mv = np.array([g.v for g in moves])
        j = np.searchsorted(ms_b, s_on, side="right")    # first move with s_b > s_on
        ok = ~already & (j < len(moves))
        jj = j[ok]
        t_on[ok] = mt_a[jj] + np.maximum(0.0, s_on[ok] - ms_a[jj]) / mv[jj]
        seg_b[ok] = ms_b[jj]
        seg_v[ok] = mv[jj]
    finite = np.isfinite(s_off) & np.isfinite(t_on)
    same = finite & (s_off <= seg_b)
    t_off[same] = t_on[same] + (s_off[same] - s_on[same]) / seg_v[same]
    other = finite & ~same
    if other.any():
        sa = np.array([g.s_a for g in segs])
        sb = np.array([g.s_b for g in segs])
        ta = np.array([g.t_a for g in segs])
        v = np.array([g.v if g.kind == "move" else 0.0 for g in segs])
        s = s_off[other]
        k = np.searchsorted(sb, s, side="left")           # first segment with s_b >= s
        reach = k < len(segs)
        kk = np.where(reach, k, 0)
        moving = (v[kk] > 0.0) & (s > sa[kk])
        dt = np.where(moving, (s - sa[kk]) / np.where(v[kk] > 0.0, v[kk], 1.0), 0.0)
        t_off[other] = np.where(reach, ta[kk] + dt, INF)
    return t_on, t_off


class _IntervalTable:
    """Bridge intervals as arrays (span index, on and off instants), sorted.

    Sorted by on instant, then off instant, joint and group index; the
    :class:`BridgeInterval` records are made on demand.
    """

    def __init__(self, plan: "TrainPlan", segs: list[_Seg], t0: float, s0: float,
                 t_end: float = INF):
        idx = plan._candidates(s0)
        s_on, s_off = plan._a_on[idx], plan._a_off[idx]
        t_on, t_off = _interval_times(s_on, s_off, segs, t0, s0)
        keep = (s_off > s0) & (t_on < INF) & (t_on < t_end)
        idx, t_on, t_off = idx[keep], t_on[keep], t_off[keep]
        order = np.lexsort((plan._a_group[idx], plan._a_joint[idx], t_off, t_on))
        self.spans = plan._spans
        self.idx = idx[order]
        self.t_on = t_on[order]
        self.t_off = t_off[order]
        self.joint = plan._a_joint[self.idx]
        self.group = plan._a_group[self.idx]
        self._made: dict[int, BridgeInterval] = {}

    def __len__(self) -> int:
        return len(self.idx)

    def interval(self, i: int) -> BridgeInterval:
        b = self._made.get(i)
        if b is None:
            sp = self.spans[int(self.idx[i])]
            b = BridgeInterval(float(self.t_on[i]), float(self.t_off[i]), sp.joint_index,
                               sp.rail, sp.r_ohm, sp.group_index, sp.kind, sp.train,
                               sp.s_on_m, sp.s_off_m)
            self._made[i] = b
        return b

    def intervals(self, rows=None) -> list[BridgeInterval]:
        rows = range(len(self)) if rows is None else rows
        return [self.interval(int(i)) for i in rows]


class BridgeEvents(Sequence):
    """A read-only, time-ordered sequence of :class:`BridgeEvent`.

    Indexing, ``len`` and iteration work as on a list; the records are made
    when they are read, so a long route costs little to recompute.
    """

    _NAMES = ("off", "on")

    def __init__(self, table: _IntervalTable, t_s: float, until_s: float):
        on = np.flatnonzero((table.t_on > t_s) & (table.t_on <= until_s))
        off = np.flatnonzero((table.t_off > t_s) & (table.t_off <= until_s)
                             & (table.t_off != INF))
        t = np.concatenate([table.t_off[off], table.t_on[on]])
        kind = np.concatenate([np.zeros(len(off), int), np.ones(len(on), int)])
        which = np.concatenate([off, on]).astype(int)
        order = np.lexsort((table.group[which], table.joint[which], kind, t))
        self._table = table
        self._t = t[order]
        self._kind = kind[order]
        self._which = which[order]

    def __len__(self) -> int:
        return len(self._t)

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self[k] for k in range(*i.indices(len(self)))]
        if i < 0:
            i += len(self)
        if not 0 <= i < len(self):
            raise IndexError(i)
        return BridgeEvent(float(self._t[i]), self._NAMES[int(self._kind[i])],
                           self._table.interval(int(self._which[i])))

    def __repr__(self) -> str:
        return f"BridgeEvents({len(self)} events)"


# -------------------------------------------------------------------- plan
class TrainPlan:
    """A train's consist on its route, with its bridges in closed form.

    Attributes
    ----------
    name : str
    train : sim.model.Train
    consist : Consist
    path : RoutePath
    groups : tuple of ConductingGroup
        Offsets from the front as the train departs.
    length_m, route_length_m, speed_mps, depart_s : float
    draw_a : float
        Sum of the locomotives' draw.
    t_keep_alive_s : float
        The largest keep-alive among the locomotives.
    reversal_points : tuple of ReversalPoint
        Front distances where the direction flips, with their standing times.
    """

    def __init__(self, scn: Scenario, train: Train, consist: Consist, path: RoutePath):
        self.name = train.name
        self.train = train
        self.consist = consist
        self.path = path
        self.groups: tuple[ConductingGroup, ...] = consist.groups
        self.length_m = consist.length_m
        self.route_length_m = path.route_length_m
        self.speed_mps = float(train.speed_mps)
        self.depart_s = float(train.depart_s)
        self.draw_a = consist.draw_a
        self.t_keep_alive_s = consist.t_keep_alive_s
        self.reversal_points: tuple[ReversalPoint, ...] = path.reversals
        self.r_wheel_contact_ohm = float(scn.track.r_wheel_contact_ohm)
        self.gap_width_m = float(scn.track.gap_width_m)
        self.contact_length_m = float(scn.track.contact_length_m)
        self.vehicle_names = tuple(v.name for v in consist.vehicles)
        self._spans = self._compute_spans()
        self._a_on = np.array([sp.s_on_m for sp in self._spans], dtype=float)
        self._a_off = np.array([sp.s_off_m for sp in self._spans], dtype=float)
        self._a_joint = np.array([sp.joint_index for sp in self._spans], dtype=int)
        self._a_group = np.array([sp.group_index for sp in self._spans], dtype=int)
        self._a_open = np.flatnonzero(self._a_off == INF)
        finite = self._a_off[self._a_off != INF] - self._a_on[self._a_off != INF]
        self._longest_m = float(finite.max()) if len(finite) else 0.0

    # ------------------------------------------------------------ where
    def _clamp(self, s_m: float) -> float:
        return min(max(s_m, 0.0), self.route_length_m)

    def position(self, s_m: float, after_reversal: bool = False) -> Position:
        """Where the front stands at front distance ``s_m``.

        At a reversal point the front is the one arriving (before the flip)
        unless ``after_reversal``; ``s_m`` is clamped to the route.
        """
        s = self._clamp(s_m)
        leg = self.path.leg_at(s, after_reversal)
        u = leg.u_of(s)
        p = leg.piece_at(u)
        return Position(p.section, p.at(u), p.heading)

    def _offset(self, leg, d_m: float) -> float:
        return self.length_m - d_m if leg.flipped else d_m

    def sections_occupied(self, s_m: float) -> tuple[str, ...]:
        """The sections under the train at front distance ``s_m``, front first."""
        s = self._clamp(s_m)
        leg = self.path.leg_at(s)
        u_f = leg.u_of(s)
        if self.length_m <= 0.0:
            return (leg.piece_at(u_f).section,)
        out: list[str] = []
        for p in reversed(leg.pieces):
            if p.u_lo_m < u_f and p.u_hi_m > u_f - self.length_m and p.section not in out:
                out.append(p.section)
        return tuple(out) or (leg.piece_at(u_f).section,)

    def load_points(self, s_m: float) -> list[LoadPoint]:
        """Every locomotive's draw point at front distance ``s_m``.

        The draw point is midway between the locomotive's first and last
        pickup axle (:class:`sim.world.consist.LoadOffset`).
        """
        s = self._clamp(s_m)
        leg = self.path.leg_at(s)
        u_f = leg.u_of(s)
        out: list[LoadPoint] = []
        for ld in self.consist.loads:
            u = u_f - self._offset(leg, ld.offset_m)
            p = leg.piece_at(u)
            out.append(LoadPoint(p.section, p.at(u), ld.draw_a, ld.vehicle))
        return out

    # ---------------------------------------------------------- bridges
    def _group_ranges(self, g: ConductingGroup, leg, x_m: float) -> list[tuple[float, float]]:
        offs = [self._offset(leg, d) for d in g.axle_offsets_m]
        if g.kind == METAL:
            half = 0.5 * (self.contact_length_m - self.gap_width_m)
            if half <= 0.0:
                return []
            return [(x_m + d - half, x_m + d + half) for d in offs]
        lo, hi = min(offs), max(offs)
        return [(x_m + lo, x_m + hi)] if hi > lo else []

    def _compute_spans(self) -> list[BridgeSpan]:
        legs = self.path.legs
        r_wc = self.r_wheel_contact_ohm
        pending: dict[tuple, tuple[float, str, float, str]] = {}
        out: list[BridgeSpan] = []

        def emit(key, s_on, s_off, rail, r, kind):
            out.append(BridgeSpan(s_on, s_off, key[0], rail, r, key[1], kind, self.name))

        for k, leg in enumerate(legs):
            last = k == len(legs) - 1
            if not last and leg.s_end_m <= leg.s_start_m:
                continue  # the train does not move on this leg: bridges stay as they are
            still_open: dict[tuple, tuple[float, str, float, str]] = {}
            for jm in leg.joints:
                joint = jm.joint
                if joint.gaps == "none":
                    continue
                rail = "both" if joint.gaps == "both" else joint.rail
                for gi, g in enumerate(self.groups):
                    r = 2.0 * r_wc + (0.0 if g.kind == METAL else g.r_join_ohm)
                    for lo, hi in self._group_ranges(g, leg, jm.u_m):
                        s_on, s_off = leg.s_of(lo), leg.s_of(hi)
                        clipped_lo = s_on <= leg.s_start_m
                        clipped_hi = False
                        if clipped_lo:
                            s_on = leg.s_start_m
                        if last:
                            if s_off > leg.s_end_m:
                                s_off = INF
                        elif s_off >= leg.s_end_m:
                            s_off, clipped_hi = leg.s_end_m, True
                        if s_off <= s_on or (s_on >= leg.s_end_m and not clipped_lo):
                            continue  # over before the leg, or never reached
                        key = (joint.index, gi)
                        if clipped_lo and key in pending:
                            s_on = pending.pop(key)[0]
                        if clipped_hi:
                            still_open[key] = (s_on, rail, r, g.kind)
                        else:
                            emit(key, s_on, s_off, rail, r, g.kind)
            for key, (s_on, rail, r, kind) in pending.items():
                emit(key, s_on, leg.s_start_m, rail, r, kind)
            pending = still_open
        for key, (s_on, rail, r, kind) in pending.items():
            emit(key, s_on, legs[-1].s_end_m, rail, r, kind)
        out.sort(key=lambda b: (b.s_on_m, b.s_off_m, b.joint_index, b.group_index))
        return out

    @property
    def spans(self) -> tuple[BridgeSpan, ...]:
        """Every bridge span of the route, by ``s_on_m``."""
        return tuple(self._spans)

    def bridges(self, s_from_m: float, s_to_m: float, speed_mps: Optional[float] = None):
        """Spans on for some front position in ``[s_from_m, s_to_m]``.

        That is every :class:`BridgeSpan` with ``s_on_m <= s_to_m`` and
        ``s_off_m > s_from_m``; ``bridges(s, s)`` gives the bridges on just
        after the front passes ``s``.

        With a third argument this is the time form of the interface contract,
        ``bridges(t0_s, s0_m, speed_mps)``: the same as
        ``bridges_in_time(t0_s, s0_m, speed_mps)`` (a list of
        :class:`BridgeInterval`).
        """
        if speed_mps is not None:
            return self.bridges_in_time(s_from_m, s_to_m, speed_mps)
        return [sp for sp in self._spans if sp.s_on_m <= s_to_m and sp.s_off_m > s_from_m]

    def bridges_in_time(self, t0_s: float, s0_m: float, speed_mps: float,
                        t_end_s: float = INF,
                        wait_left_s: Optional[float] = None) -> list[BridgeInterval]:
        """Bridge intervals for a front at ``s0_m`` at ``t0_s`` moving at ``speed_mps``.

        The train stands for the wait of every reversal point at or ahead of
        ``s0_m`` (``wait_left_s`` instead for one at ``s0_m`` itself) and stops
        at the route end. Intervals on at ``t0_s`` (with ``s0_m = 0``: every
        interval on at departure) are given ``t_on_s = t0_s``;
        intervals that start at or after ``t_end_s`` are left out. Times are
        ``t = t0 + (s - s0)/v`` plus the standing times passed (exact).
        """
        i = next((k for k, r in enumerate(self.reversal_points) if r.s_m >= s0_m),
                 len(self.reversal_points))
        segs = _segments(self.reversal_points, self.route_length_m, t0_s, s0_m,
                         float(speed_mps), i, wait_left_s, None)
        return _IntervalTable(self, segs, t0_s, s0_m, t_end_s).intervals()

    def _candidates(self, s0_m: float) -> np.ndarray:
        """Indices of the spans that may still be on at or after ``s0_m``.

        Spans are sorted by ``s_on_m``; one that starts more than the longest
        finite span before ``s0_m`` is over, unless it never ends.
        """
        i = int(np.searchsorted(self._a_on, s0_m - self._longest_m, side="left"))
        head = self._a_open[self._a_open < i]
        return np.concatenate([head, np.arange(i, len(self._spans))]).astype(int)


def build_plan(scn: Scenario, train: Train, layout=None) -> TrainPlan:
    """The :class:`TrainPlan` of one train (raises ScenarioError on a bad route).

    ``layout`` (:class:`sim.layout.Layout`) follows the route; it is built
    when not given.
    """
    consist = consist_of(scn, train)
    path = build_route(scn, train, consist.length_m, layout)
    return TrainPlan(scn, train, consist, path)


def build_trains(scn: Scenario, layout=None) -> dict[str, TrainPlan]:
    """Every train of ``scn`` as a :class:`TrainPlan`, by name.

    ``layout`` (:class:`sim.layout.Layout`) follows the routes (its
    :meth:`~sim.layout.Layout.route_path`); it is built once when not given.

    Raises
    ------
    ScenarioError
        With every problem of every train (unknown vehicles, routes whose
        sections do not join, trains that do not fit).
    """
    plans: dict[str, TrainPlan] = {}
    problems = []
    if layout is None and scn.trains:
        from sim.layout import build_layout
        layout = build_layout(scn, check_routes=False)
    for name, train in scn.trains.items():
        try:
            plans[name] = build_plan(scn, train, layout)
        except ScenarioError as exc:
            problems.extend(exc.problems)
    if problems:
        raise ScenarioError(problems)
    return plans


# ------------------------------------------------------------------ motion
class Motion:
    """A train's front distance over time, with stops and restarts.

    Pure state: the engine tells it what happens (speed commands, power lost
    and back) and asks it for positions and bridge instants.

    The motion is piecewise linear: the train stands at ``s = 0`` from time 0
    (or its departure, if earlier) until it departs, moves at its commanded
    speed, stands ``t_wait_s`` at every reversal point (the wait runs whatever
    the power does), and stops for good at the route end. Speed changes are instant (no acceleration or braking:
    a simplification; a model train stopping on dead track, or starting again
    under its decoder's momentum, takes a fraction of a second that is left
    out).

    Cancel and recompute
    --------------------
    Every call that changes the motion (:meth:`set_speed`, :meth:`power_lost`,
    :meth:`power_back`) voids every instant given before for times after it.
    After such a call at ``t`` the engine should take :meth:`active_bridges`
    at ``t`` (the bridges on just after ``t``: set the ones it lacks, clear the
    ones it has that are not there) and schedule :meth:`next_bridge_events`
    from ``t`` (strictly later instants only).

    Parameters
    ----------
    plan : TrainPlan
    depart_s : float, optional
        Departure instant (the train's ``depart_s`` by default).
    speed_mps : float, optional
        Nominal speed (the train's ``speed_mps`` by default).
    """

    def __init__(self, plan: TrainPlan, depart_s: Optional[float] = None,
                 speed_mps: Optional[float] = None):
        self.plan = plan
        self.v_nominal_mps = plan.speed_mps if speed_mps is None else float(speed_mps)
        self.depart_s = plan.depart_s if depart_s is None else float(depart_s)
        self._t_ref = min(0.0, self.depart_s)
        self._s_ref = 0.0
        self._rev = 0
        self._wait: Optional[float] = None
        self._v = self.v_nominal_mps
        self._t_stop: Optional[float] = None
        self.powered = True
        self._t_power_stop = INF
        self._t_end: Optional[float] = None
        self._build()

    # ------------------------------------------------------------ state
    def _build(self) -> None:
        self._cache: Optional[_IntervalTable] = None
        self._segs = _segments(self.plan.reversal_points, self.plan.route_length_m,
                               self._t_ref, self._s_ref, self._v, self._rev, self._wait,
                               self._t_stop, self.depart_s)

    def _rebase(self, t_s: float) -> None:
        t = max(t_s, self._t_ref)
        seg = _seg_at(self._segs, t)
        self._s_ref = _s_at(self._segs, t)
        self._rev = seg.rev
        if seg.kind == "end" and self._t_end is None:
            self._t_end = seg.t_a
        self._wait = (seg.t_b - t) if seg.kind == "wait" else None
        self._v = seg.v_cmd
        if self._t_stop is not None and self._t_stop <= t:
            self._v, self._t_stop = 0.0, None
        self._t_ref = t

    def position_s(self, t_s: float) -> float:
        """Front distance at ``t_s`` (0 before departure)."""
        if t_s <= self._t_ref:
            return self._s_ref
        return _s_at(self._segs, t_s)

    def speed_mps(self, t_s: float) -> float:
        """Actual speed at ``t_s`` (0 while standing)."""
        if t_s < self._t_ref:
            return 0.0
        return _seg_at(self._segs, t_s).v

    @property
    def stop_at_s(self) -> Optional[float]:
        """When a pending keep-alive stop takes effect (``None`` if none)."""
        return self._t_stop

    def arrival_s(self, s_m: float) -> float:
        """When the front reaches ``s_m`` under the current motion (``inf``: never).

        For a point already passed before the last change of motion, the
        instant of that change.
        """
        return _arrival(self._segs, s_m)

    @property
    def end_s(self) -> float:
        """When the train reaches the end of its route (``inf`` if it does not)."""
        if self._t_end is not None:
            return self._t_end
        return _arrival(self._segs, self.plan.route_length_m)

    # ---------------------------------------------------------- commands
    def set_speed(self, t_s: float, speed_mps: float) -> None:
        """Run at ``speed_mps`` from ``t_s`` on (a pending keep-alive stop stays)."""
        self._rebase(t_s)
        self._v = float(speed_mps)
        self._build()

    def power_lost(self, t_s: float) -> float:
        """Power is lost at ``t_s``: run on for ``t_keep_alive_s``, then stop.

        Returns the instant the train stops (``t_s`` itself without a
        keep-alive). A second loss while already unpowered changes nothing and
        returns the same instant.
        """
        if not self.powered:
            return self._t_power_stop
        self.powered = False
        t_stop = t_s + self.plan.t_keep_alive_s
        self._t_power_stop = t_stop
        self._rebase(t_s)
        if t_stop <= self._t_ref:
            self._v, self._t_stop = 0.0, None
        else:
            self._t_stop = t_stop
        self._build()
        return t_stop

    def power_back(self, t_s: float) -> None:
        """Power returns at ``t_s``: run at the nominal speed again.

        If the keep-alive has not run out yet the pending stop is cancelled and
        the train never stopped.
        """
        if self.powered:
            return
        self.powered = True
        self._rebase(t_s)
        self._t_stop = None
        self._v = self.v_nominal_mps
        self._build()

    # ---------------------------------------------------------- bridges
    def _table(self) -> _IntervalTable:
        if self._cache is None:
            self._cache = _IntervalTable(self.plan, self._segs, self._t_ref, self._s_ref)
        return self._cache

    def active_bridges(self, t_s: float) -> list[BridgeInterval]:
        """The bridges on just after ``t_s`` (``t_on_s <= t_s < t_off_s``)."""
        tab = self._table()
        return tab.intervals(np.flatnonzero((tab.t_on <= t_s) & (t_s < tab.t_off)))

    def next_bridge_events(self, t_s: float, until_s: float = INF) -> "BridgeEvents":
        """Every bridge on/off instant after ``t_s`` (and up to ``until_s``).

        Strictly later than ``t_s``; in time order, ``"off"`` before ``"on"``
        at one instant, then by joint and group index. A read-only sequence
        (:class:`BridgeEvents`: index it, take its ``len``, iterate it).
        """
        return BridgeEvents(self._table(), t_s, until_s)
