"""Thin simpy drivers: device machines, trains, faults and operator actions.

The device *logic* lives in the pure state machines of :mod:`sim.devices`;
these drivers only turn their deadlines into simpy events and hand what
happens to the world (:class:`sim.world.engine.World`).

Cancellation scheme (device deadlines)
--------------------------------------
A device's next self-timed transition (``next_deadline()``) is scheduled as a
simpy timeout carrying a callback - a *cancellable timeout*: re-arming the
driver (after every observe that changed its current, and after every
advance) replaces the armed timeout, and a timeout that fires after it was
replaced finds that it is no longer the armed one and does nothing. So a
trip delay that the current cuts short (a swap clears the short first) is
cancelled at the instant the current changes, and never acts. This costs one
heap entry per armed deadline and no generator switch, which is what keeps
the event rate high; it is equivalent to the machine-shop pattern (a worker
process interrupted by ``simpy.Interrupt``), which the trains use.

A fired deadline does not act by itself: it marks the device *due* and the
world settles the instant (see the tie-break in :mod:`sim.world.engine`).

Trains (machine-shop pattern)
-----------------------------
A train is a simpy process that sleeps until its next bridge change (a
pickup group starting or ending a bridge over a gapped joint, from the
closed-form intervals of its plan). When it loses power for longer than its
keep-alive, or power comes back, the world interrupts it
(``simpy.Interrupt`` with cause ``"stop"`` or ``"go"``) and it re-plans: a
stopped train keeps the bridges it stands on and has no future ones; a train
going on gets the intervals of its plan from where it stopped.
"""
from __future__ import annotations

import heapq
from typing import TYPE_CHECKING, Optional

import simpy

from sim.timebase import T_TOL_S, snap_s
from sim.trace import Event
from sim.world.trains import Stand, has_power

if TYPE_CHECKING:  # pragma: no cover
    from sim.world.engine import World


_NORMAL = simpy.core.NORMAL


class _Call:
    """The lightest event simpy's ``Environment.step`` can process: a callback
    list and a success flag (no value, no waiting processes). Made for every
    armed deadline, so it carries nothing more."""

    __slots__ = ("callbacks",)
    _ok = True
    _value = None

    def __init__(self, callback):
        self.callbacks = [callback]


class Env(simpy.Environment):
    """A simpy environment that also schedules at an absolute instant."""

    def timeout_at(self, t_s: float):
        """An event that fires at the absolute instant ``t_s`` (not before now).

        ``Environment.timeout(t - now)`` lands on ``now + (t - now)``, which
        float rounding may move off ``t``; this pushes ``t`` itself.
        """
        ev = simpy.Event(self)
        ev._ok = True
        ev._value = None
        heapq.heappush(self._queue, (max(t_s, self._now), simpy.core.NORMAL,
                                     next(self._eid), ev))
        return ev

    def call_at(self, t_s: float, callback):
        """Call ``callback(event)`` at the absolute instant ``t_s`` (not before now).

        The event is a bare callback carrier (``_Call``), not a full
        :class:`simpy.Event`: nothing waits on it, only its callback runs.
        """
        ev = _Call(callback)
        now = self._now
        heapq.heappush(self._queue, (t_s if t_s > now else now, _NORMAL, next(self._eid), ev))
        return ev


class DeviceDriver:
    """Drives one pure device machine through cancellable timeouts.

    Parameters
    ----------
    world : World
        The world to report a due device to.
    name : str
        Device name.
    dev :
        The state machine (``observe``, ``next_deadline``, ``advance``).
    rank : int
        Its place in the tie-break order (lower acts first at one instant).
    """

    __slots__ = ("world", "name", "dev", "rank", "armed_s", "fire_s", "_ev", "kind", "held")

    def __init__(self, world: "World", name: str, dev, rank: int, kind: str):
        self.world = world
        self.name = name
        self.dev = dev
        self.rank = rank
        self.kind = kind
        self.armed_s: Optional[float] = None
        self.fire_s: Optional[float] = None    # armed_s on the 1 ns grid
        self._ev = None
        self.held = False                      # held by the zero-time guard: not armed

    def arm(self) -> None:
        """(Re)schedule the device's next deadline, cancelling the armed one."""
        if self.held:
            return
        d = self.dev.next_deadline()
        if d == self.armed_s and (d is None or self._ev is not None):
            return
        self.armed_s = d
        self._ev = None
        if d is None:
            self.fire_s = None
            return
        env = self.world.env
        t_fire = self.fire_s = snap_s(d)
        if t_fire <= env._now:
            self.world.mark_due(self)
            return
        self._ev = env.call_at(t_fire, self._fire)

    def _fire(self, ev) -> None:
        if ev is not self._ev:
            return  # cancelled: a newer deadline was armed since
        self._ev = None
        self.world.fire_due(self)


def train_process(world: "World", drv):
    """The simpy process of one train (machine-shop pattern, see module doc).

    ``drv`` is a :class:`sim.world.engine.TrainRun` holding the train's plan
    state; this generator only sleeps until its next bridge change and hands
    it to the world, and catches the world's ``stop``/``go`` interrupts.
    """
    env = world.env
    while True:
        t_next = drv.next_change_s()
        try:
            if t_next is None:
                yield world.never
            else:
                yield env.timeout_at(snap_s(t_next))
                drv.apply_due(env.now)
        except simpy.Interrupt as intr:
            drv.replan(env.now, intr.cause)


def fault_process(world: "World", index: int, fault):
    """Apply one scenario fault at its instant (and end a timed short)."""
    env = world.env
    if fault.at_s > env.now:
        yield env.timeout_at(snap_s(fault.at_s))
    world.apply_fault(index, fault, on=True)
    if fault.kind == "short" and fault.lasts_s is not None:
        yield env.timeout_at(snap_s(fault.at_s + fault.lasts_s))
        world.apply_fault(index, fault, on=False)


def action_process(world: "World", index: int, action):
    """Apply one operator action (a reset) at its instant."""
    env = world.env
    if action.at_s > env.now:
        yield env.timeout_at(snap_s(action.at_s))
    world.apply_action(index, action)


def pulse_process(world: "World", key, section: str, at_m: float, r_ohm: float,
                  t_pulse_s: float):
    """An inrush pulse: a load ``r_ohm`` for ``t_pulse_s`` (see the engine doc)."""
    world.set_load(key, section, at_m, r_ohm)
    yield world.env.timeout_at(snap_s(world.env.now + t_pulse_s))
    world.clear_load(key)


class TrainRun:
    """One train in the world: its :class:`sim.world.trains.Motion`, bridges and load.

    The closed-form motion answers every question (bridges on now, the next
    bridge instants, where the locomotives draw); this class applies the
    answers to the world and reacts to power: ``power_lost`` / ``power_back``
    of the motion void the planned instants, the bridges on are reconciled at
    once and the train's process is interrupted to sleep anew.
    """

    def __init__(self, world: "World", name: str, plan):
        from sim.world.trains import Motion

        self.world = world
        self.name = name
        self.plan = plan
        self.motion = Motion(plan)
        self.bridges: dict = {}          # circuit key -> BridgeInterval on now
        self.pending: list = []          # BridgeEvent, time order
        self.k = 0
        self.proc = None
        self.loads: dict = {}            # circuit key -> (section, chain)
        self.t_stop_s: Optional[float] = None
        self.stopped = False
        self.on_devices: set = set()     # devices it is registered under (power checks)
        self.stands: list = []           # sim.world.trains.Stand, stops on a bridge
        self.v_nominal_v = self._v_nominal()
        self._vehicles = plan.consist.vehicles

    def _v_nominal(self) -> float:
        scn = self.world.scn
        for p in self.plan.load_points(0.0):
            chain = self.world.layout.device_chain(p.section)
            for d in chain:
                if d in scn.supplies:
                    return scn.supplies[d].v_emf_v
        if scn.supplies:
            return next(iter(scn.supplies.values())).v_emf_v
        return 0.0

    # ------------------------------------------------------------ keys
    def _key(self, b):
        return ("br", self.name, b.group_index, b.joint_index)

    def _path(self, b):
        from sim.world.episodes import ShortPath

        w = self.world
        # the joint's name and devices depend on the layout only: found once per joint
        known = w.joint_paths.get(b.joint_index)
        if known is None:
            j = w.scn.track.joints[b.joint_index] if b.joint_index < len(w.scn.track.joints) \
                else None
            if j is None or j.index != b.joint_index:
                j = next(x for x in w.scn.track.joints if x.index == b.joint_index)
            chains = [w.layout.device_chain(e.section) for e in j.ends]
            known = w.joint_paths[b.joint_index] = (j.name, w.path_devices(chains))
        rails = ("left", "right") if b.rail == "both" else (b.rail,)
        return ShortPath(self._key(b), ("train", self.name), "gap", known[0], self.name,
                         known[1], rails)

    # ----------------------------------------------------------- start
    def start(self) -> None:
        """Bridges on at time 0, the loads, and the train's process."""
        t = self.world.env.now
        self._reconcile(t)
        self.pending = self.motion.next_bridge_events(t)
        self.k = 0
        self._place_loads(t)
        self.proc = self.world.env.process(train_process(self.world, self))

    def next_change_s(self) -> Optional[float]:
        nxt = self.pending[self.k].t_s if self.k < len(self.pending) else None
        if self.t_stop_s is not None and not self.stopped:
            nxt = self.t_stop_s if nxt is None else min(nxt, self.t_stop_s)
        return nxt

    def apply_due(self, t_s: float) -> None:
        """Apply every bridge change (and a keep-alive stop) due at ``t_s``."""
        w = self.world
        moved = False
        while self.k < len(self.pending) and self.pending[self.k].t_s <= t_s + T_TOL_S:
            e = self.pending[self.k]
            self.k += 1
            b = e.bridge
            key = self._key(b)
            if e.event == "on":
                self.bridges[key] = b
                w.set_bridge(key, b.joint_index, b.rail, b.r_ohm, self._path(b))
            else:
                self.bridges.pop(key, None)
                w.clear_bridge(key)
            moved = True
        if self.t_stop_s is not None and not self.stopped and self.t_stop_s <= t_s + T_TOL_S:
            self.stopped = True
            self._stand(t_s)
        if moved:
            self._place_loads(t_s)
            self._register()
            w.check_train_later(self.name)      # its pickups may join other rails now

    def replan(self, t_s: float, cause) -> None:
        """Interrupted by the world after a motion change: nothing to do but sleep anew."""

    def _reconcile(self, t_s: float, stopping: bool = False) -> None:
        """Set the bridges on just after ``t_s``, clear the others.

        The instant is taken to the engine's 1 ns resolution: a bridge whose
        recomputed start lies within 1 ns after ``t_s`` (float rounding of a
        re-planned motion) is on now, so a re-plan never drops and re-adds
        the bridge that triggered it.

        With ``stopping`` (the train stands still from ``t_s`` on) every bridge
        that is on at ``t_s`` stays on: a train stands on the bridges it has
        reached. The motion's time form puts a span's start where the front
        *leaves* ``s_on_m``, so a train that stops at the very instant a bridge
        comes on - a locomotive without keep-alive whose own bridge takes its
        power - would otherwise drop that bridge, get its power back, move on,
        bridge again and lose its power again, without end at one instant.
        """
        w = self.world
        want = {self._key(b): b for b in self.motion.active_bridges(t_s + T_TOL_S)}
        if stopping:
            for key, b in self.bridges.items():
                if key not in want and b.t_on_s <= t_s + T_TOL_S < b.t_off_s:
                    want[key] = b
        for key in [k for k in self.bridges if k not in want]:
            del self.bridges[key]
            w.clear_bridge(key)
        for key, b in want.items():
            if key not in self.bridges:
                self.bridges[key] = b
                w.set_bridge(key, b.joint_index, b.rail, b.r_ohm, self._path(b))
        self._register()

    # ------------------------------------------------------------ loads
    def _place_loads(self, t_s: float) -> None:
        """Each locomotive's draw at the middle of the section its draw point is in.

        The draw point lies between the locomotive's first and last pickup
        axle; while those axles stand on both sides of a gapped joint the
        circuit joins them (the group's bridge), so the load is joined to every
        rail its pickups touch (:func:`sim.world.trains.has_power`).
        """
        if self.plan.draw_a <= 0.0 or self.v_nominal_v <= 0.0:
            return
        w = self.world
        s = self.motion.position_s(t_s)
        moved = False
        for p in self.plan.load_points(s):
            key = ("ld", self.name, p.vehicle)
            old = self.loads.get(key)
            if old is not None and old[0] == p.section:
                continue
            sec = w.scn.track.sections[p.section]
            chain = w.layout.device_chain(p.section)
            self.loads[key] = (p.section, chain)
            w.set_load(key, p.section, 0.5 * sec.length_m, self.v_nominal_v / p.draw_a)
            moved = True
        if moved:
            self._register()
            w.check_train_later(self.name)

    def _register(self) -> None:
        """Register the train under every device its power depends on: the feed
        chains of its loads' sections and the devices feeding every joint its
        wheels bridge (power can come through them)."""
        w = self.world
        devs: set = set()
        for _section, chain in self.loads.values():
            devs.update(chain)
        for b in self.bridges.values():
            devs.update(self._path(b).devices)
        if devs == self.on_devices:
            return
        for d in self.on_devices - devs:
            w.trains_on.get(d, set()).discard(self.name)
        for d in devs - self.on_devices:
            w.trains_on.setdefault(d, set()).add(self.name)
        self.on_devices = devs

    # ------------------------------------------------------------ power
    def check_power(self, t_s: float, sol) -> None:
        """Power lost or back, from the voltage at the locomotives' loads
        (:func:`sim.world.trains.has_power`)."""
        if not self.loads:
            return
        load_v = sol.load_v_v
        ok = has_power([load_v.get(key, 0.0) for key in self.loads], self.v_nominal_v)
        m = self.motion
        if ok == m.powered:
            return
        if ok:
            m.power_back(t_s)
            if self.stopped:
                self._went(t_s)
            self.stopped = False
            self.t_stop_s = None
        else:
            self.t_stop_s = m.power_lost(t_s)
            self.stopped = self.t_stop_s <= t_s
        self._reconcile(t_s, stopping=self.stopped)
        if not ok and self.stopped:
            self._stand(t_s)
        self.pending = m.next_bridge_events(t_s + T_TOL_S)
        self.k = 0
        if self.proc is not None and self.proc.is_alive:
            self.proc.interrupt("replan")

    def _stand(self, t_s: float) -> None:
        """The train stops at ``t_s``: the ``stop`` event, and a stand on the gaps
        its wheels bridge (:class:`sim.world.trains.Stand`)."""
        joints = tuple(sorted({self._path(b).where for b in self.bridges.values()}))
        self.world.record_train(t_s, self.name, "stop", {"bridging": joints} if joints else None)
        if joints:
            self.stands.append(Stand(self.name, t_s, None, joints))

    def _went(self, t_s: float) -> None:
        """The train goes on at ``t_s`` after a stop."""
        st = self.stands[-1] if self.stands else None
        if st is not None and st.end_s is None:
            st.end_s = t_s
        self.world.record_train(t_s, self.name, "go")

    # ----------------------------------------------------------- inrush
    def inrush(self, t_s: float, device: Optional[str] = None) -> float:
        """Keep-alive capacitors charge again after their device closes (engine doc):
        those of the locomotives whose load's feed chain holds ``device`` (every
        one with ``None``).

        Returns the longest pulse started (s), 0 with none.
        """
        from sim.circuit.inrush import inrush

        w = self.world
        tau_max = 0.0
        for key, (section, chain) in self.loads.items():
            if device is not None and device not in chain:
                continue
            veh = self._vehicles[key[2]]
            i_peak, tau = inrush(veh, self.v_nominal_v)
            if i_peak <= 0.0 or tau <= 0.0:
                continue
            sec = w.scn.track.sections[section]
            pkey = ("in", self.name, key[2])
            w.env.process(pulse_process(w, pkey, section, 0.5 * sec.length_m,
                                        self.v_nominal_v / i_peak, tau))
            w.record(Event(t_s, self.name, "inrush", {"i_peak_a": i_peak, "tau_s": tau}))
            tau_max = max(tau_max, tau)
        return tau_max


def build_runs(world: "World", plans=None) -> dict:
    """A :class:`TrainRun` per train of the scenario (plans built when ``None``)."""
    if not world.scn.trains:
        return {}
    if plans is None:
        from sim.world.trains import build_trains

        plans = build_trains(world.scn, world.layout)
    return {name: TrainRun(world, name, plans[name]) for name in world.scn.trains}
