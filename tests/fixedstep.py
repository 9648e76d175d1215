"""A deliberately plain fixed-step reference simulator (tests and benchmarks only).

It re-implements the protection LOGIC of the devices independently of
:mod:`sim.devices` - from the scenario model and the rules written in the
design documents - and steps a clock: at every step of ``dt_s`` (10 us by
default) it builds the circuit state, takes the currents (the circuit's
solve, cached by state), and updates every device's counters and timers for
that step. A timer that completes during a step acts at the end of the step.
Its only purpose is to cross-check the event engine's event times (which it
matches within one step when every setting is a multiple of the step) and
outcomes, and to be the slow reference of the speed benchmark.

The logic, per device, per step ``[t, t + dt)`` at the current ``i`` of the
state at ``t``:

* **trip unit** - continuous sensing: the time over ``i_above_a`` grows by
  ``dt``, any step at or under resets it, a trip when it reaches
  ``t_after_s``; sampled sensing: at each sample instant ``(k + phase) Ts`` in
  the step, a reading ``min(i, full_scale)`` over threshold adds one to a
  count, one at or under resets it, a trip at the sample where the count
  reaches ``ceil(t_after_s / Ts)`` (at least 1); inverse time: progress grows
  by ``dt / t(I)`` (IEC 60255-151) and resets at or under the threshold.
* **thermal replica** - ``theta <- x + (theta - x) exp(-dt / tau)`` (the exact
  step of IEC 60255-149's balance), trip at ``trip_at``, resume at
  ``resume_at``.
* **restart** - after a trip, wait per policy (manual: none; retry: ``every``;
  back-off: ``first * factor^n`` capped), counted down step by step; the
  count of tries starts over when the output stayed up longer than
  ``max(10 x trip delay, longest wait)``.
* **swap logic** (reverser, self-reversing booster) - armed: a current over
  the sense level for ``t_sense_s`` starts a swap; the trip unit only sees
  currents under the sense level; swapping: neither detector sees current
  for ``t_swap_s``, then the leads flip; dead: the output is open for
  ``t_dead_s``; hold: for ``t_hold_off_s`` after the flip the trip unit sees
  every current (and the hold lasts while a trip is being timed).
* **undervoltage** (boosters) - out at once under ``v_undervoltage_v``, back
  after the supply voltage has stayed at or over the return level for the
  return delay.
* **supply** - over its limit: hiccup (off ``t_off_s``, then on), latch (off)
  or constant-current (the circuit holds the limit).

* **trains** - the front distance ``s`` is stepped: within a step the train
  waits out a reversal (the wait runs whatever the power does), moves at its
  speed from its departure while it has power or keep-alive left, and stops
  at the route end; a conducting group bridges a joint while ``s`` lies in
  one of the plan's spans (route geometry, :meth:`TrainPlan.spans`). Each
  locomotive draws ``V_nominal / draw`` at the middle of the section its draw
  point is in, placed at the start and again at every step in which the
  train's bridges changed (the engine's documented rule). After each solve a
  train has power when the voltage at one of its loads is at least half the
  nominal voltage and every device above that load conducts; without power it
  runs on for its keep-alive time and then stops (``stop``), and goes on when
  power returns (``go``). When a device closes again after a trip, a thermal
  lockout, an undervoltage dropout or a reset, every locomotive with a
  keep-alive whose load it feeds draws ``V / i_peak`` for ``tau`` (the
  engine's rectangular inrush pulse, :func:`sim.circuit.inrush.inrush`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from sim.model import Scenario

#: Default step of the reference (s).
DT_S = 1e-5
_EPS = 1e-12
#: A train has power at half its nominal voltage (as the engine's POWER_FRACTION).
POWER_FRACTION = 0.5
#: Device events after which a closing output charges the keep-alives.
_INRUSH_CAUSES = ("restart", "reset", "thermal_resume")


class _RefTrain:
    """A train stepped along its route (module doc: trains)."""

    def __init__(self, name: str, plan, layout, scn: Scenario):
        self.name = name
        self.plan = plan
        self.spans = plan.spans
        self.revs = list(plan.reversal_points)
        self.end_m = plan.route_length_m
        self.v = plan.speed_mps
        self.depart = plan.depart_s
        self.keep_alive = plan.t_keep_alive_s
        self.s = 0.0
        self.rev_k = 0                     # next reversal point
        self.wait_left: Optional[float] = None
        self.powered = True
        self.t_stop: Optional[float] = None   # keep-alive runs out here
        self.stopped = False
        self.layout = layout
        self.vehicles = plan.consist.vehicles
        self.v_nom = 0.0
        pts = plan.load_points(0.0)
        for p in pts:
            for d in layout.device_chain(p.section):
                if d in scn.supplies:
                    self.v_nom = scn.supplies[d].v_emf_v
                    break
            if self.v_nom:
                break
        if not self.v_nom and scn.supplies:
            self.v_nom = next(iter(scn.supplies.values())).v_emf_v
        self.sections = scn.track.sections
        self.loads: dict = {}              # key -> (section, at_m, r_ohm, chain)
        self.pulses: dict = {}             # key -> (section, at_m, r_ohm, t_end)
        self.bridges: frozenset = self._bridges()
        self._place_loads()

    def _bridges(self) -> frozenset:
        s = self.s
        return frozenset(k for k, b in enumerate(self.spans) if b.s_on_m <= s + _EPS < b.s_off_m)

    def _place_loads(self) -> None:
        if self.plan.draw_a <= 0.0 or self.v_nom <= 0.0:
            return
        for p in self.plan.load_points(self.s):
            key = ("ld", self.name, p.vehicle)
            old = self.loads.get(key)
            if old is not None and old[0] == p.section:
                continue
            self.loads[key] = (p.section, 0.5 * self.sections[p.section].length_m,
                               self.v_nom / p.draw_a, self.layout.device_chain(p.section))

    def bridge_items(self):
        for k in self.bridges:
            b = self.spans[k]
            yield ("ref-br", self.name, b.group_index, b.joint_index), b

    def load_items(self, t: float):
        for key, (sec, at, r, _chain) in self.loads.items():
            yield key, (sec, at, r)
        for key, (sec, at, r, t_end) in self.pulses.items():
            if t < t_end - _EPS:
                yield key, (sec, at, r)

    def check_power(self, t: float, sol, conducting, ev: list) -> None:
        if not self.loads:
            return
        # a keep-alive running out at this very instant acts first (the engine's
        # tie-break: trains before devices), even if power is back at it
        if (not self.powered and self.t_stop is not None and not self.stopped
                and self.t_stop <= t + _EPS):
            self.stopped = True
            ev.append((t, self.name, "stop"))       # (due now: on the step grid)
        ok = any(abs(sol.load_v_v.get(key, 0.0)) >= POWER_FRACTION * self.v_nom
                 and all(conducting(d) for d in chain)
                 for key, (_s, _a, _r, chain) in self.loads.items())
        if ok == self.powered:
            return
        self.powered = ok
        if ok:
            if self.stopped:
                ev.append((t, self.name, "go"))
            self.stopped = False
            self.t_stop = None
        else:
            self.t_stop = t + self.keep_alive
            if self.t_stop <= t + _EPS:
                self.stopped = True
                ev.append((t, self.name, "stop"))

    def inrush(self, t: float, device: str) -> None:
        from sim.circuit.inrush import inrush
        for key, (sec, at, _r, chain) in self.loads.items():
            if device not in chain:
                continue
            i_peak, tau = inrush(self.vehicles[key[2]], self.v_nom)
            if i_peak > 0.0 and tau > 0.0:
                self.pulses[("in", self.name, key[2])] = (sec, at, self.v_nom / i_peak, t + tau)

    def step(self, t: float, dt: float, ev: list) -> None:
        """Move over ``[t, t + dt)``; bridges and loads as they stand at ``t + dt``."""
        now, t1 = t, t + dt
        # it may move until t_run: not at all when stopped, until its keep-alive
        # runs out when unpowered (t_stop set), the whole step otherwise
        if self.stopped:
            t_run = now
        elif self.t_stop is not None:
            t_run = min(t1, self.t_stop)
        else:
            t_run = t1
        while now < t1 - _EPS:
            if self.wait_left is not None:
                use = min(self.wait_left, t1 - now)
                self.wait_left -= use
                now += use
                if self.wait_left <= _EPS:
                    self.wait_left = None
                continue
            start = max(now, self.depart)
            if start >= t_run - _EPS or self.s >= self.end_m - _EPS:
                break
            target = self.revs[self.rev_k].s_m if self.rev_k < len(self.revs) else self.end_m
            avail = t_run - start
            if self.s + self.v * avail >= target - _EPS:
                now = start + (target - self.s) / self.v
                self.s = target
                if self.rev_k < len(self.revs):
                    self.wait_left = self.revs[self.rev_k].t_wait_s
                    self.rev_k += 1
                continue
            self.s += self.v * avail
            now = start + avail
        if self.t_stop is not None and not self.stopped and self.t_stop < t1 - _EPS:
            self.stopped = True
            ev.append((self.t_stop, self.name, "stop"))
        new = self._bridges()
        if new != self.bridges:
            self.bridges = new
            self._place_loads()


def _ceil_int(x: float) -> int:
    r = round(x)
    return int(r) if abs(x - r) <= 1e-9 * max(1.0, abs(x)) else int(math.ceil(x))


def _waits(restart):
    """Waits of a restart policy, as a list generator (independent of sim.devices)."""
    n = 0
    wait = restart.first_s
    while True:
        if restart.policy == "manual":
            return
        if restart.tries is not None and n >= restart.tries:
            return
        if restart.policy == "retry":
            yield restart.every_s
        else:
            yield min(wait, restart.cap_s)
            if wait < restart.cap_s:
                wait *= restart.factor
        n += 1


class _Trip:
    """Plain trip unit: continuous, sampled or inverse time."""

    def __init__(self, trip, sense, phase: float):
        self.thr = trip.i_above_a
        self.delay = trip.t_after_s
        self.trip = trip
        self.period = sense.period_s
        self.fs = sense.full_scale_a
        self.phase = phase
        self.acc = 0.0
        self.count = 0
        self.n = max(1, _ceil_int(self.delay / self.period)) if self.period else 1

    def clear(self):
        self.acc = 0.0
        self.count = 0

    def _operate_s(self, r: float) -> float:
        from sim.model import CURVES
        if self.trip.curve is None:
            return self.delay
        k, a, c = CURVES[self.trip.curve]
        m = r / self.thr
        return max(self.delay, self.trip.tms * (k / (m ** a - 1.0) + c))

    def step(self, t: float, dt: float, i: float) -> Optional[float]:
        """Feed one step; returns the trip instant if it trips in this step."""
        r = min(abs(i), self.fs)
        if self.period is None:
            if r > self.thr:
                if self.trip.curve is None:
                    self.acc += dt
                    if self.acc >= self.delay - _EPS:
                        return t + dt
                else:
                    self.acc += dt / self._operate_s(r)
                    if self.acc >= 1.0 - 1e-9:
                        return t + dt
            else:
                self.acc = 0.0
            return None
        k = _ceil_int(t / self.period - self.phase)
        ts = (k + self.phase) * self.period
        while ts < t + dt - _EPS:
            if ts >= t - _EPS:
                if r > self.thr:
                    if self.trip.curve is None:
                        self.count += 1
                        if self.count >= self.n:
                            return ts
                    else:
                        self.acc += self.period / self._operate_s(r)
                        if self.acc >= 1.0 - 1e-9:
                            return ts
                else:
                    self.count = 0
                    self.acc = 0.0
            k += 1
            ts = (k + self.phase) * self.period
        return None


class RefProtection:
    """Plain step-by-step model of a booster, breaker or reverser."""

    def __init__(self, name: str, kind: str, rec, phase: float):
        self.name = name
        self.kind = kind
        self.rec = rec
        self.trip = _Trip(rec.trip, rec.sense, phase)
        self.sense = None
        self.swap = None
        if kind == "reverser":
            from sim.model import Trip
            self.sense = _Trip(Trip(rec.sense_above_a, rec.t_sense_s), rec.sense, phase)
            self.swap = (rec.t_swap_s, rec.t_dead_s, rec.t_hold_off_s)
        elif kind == "booster" and rec.reverse_on_short:
            from sim.model import Trip
            lvl = rec.sense_reverse_a if rec.sense_reverse_a is not None else rec.trip.i_above_a
            self.sense = _Trip(Trip(lvl, rec.t_sense_reverse_s), rec.sense, phase)
            self.swap = (rec.t_swap_s, 0.0, rec.t_hold_off_s)
        self.thermal = getattr(rec, "thermal", None)
        self.theta = 0.0
        self.theta_max = 0.0 if self.thermal is not None else None
        self.thermal_open = False
        self.trip_open = False
        self.uv_open = False
        self.swapped = False
        self.mode = "armed"
        self.timer = 0.0           # remaining time of swapping / dead
        self.hold_left = 0.0
        self.hold_ext = False
        self.restart_left: Optional[float] = None
        self.waits = iter(_waits(rec.restart))
        self.t_last_restart: Optional[float] = None
        longest = (rec.restart.cap_s if rec.restart.policy == "backoff"
                   else rec.restart.every_s if rec.restart.policy == "retry" else 0.0)
        self.t_stable = max(10.0 * rec.trip.t_after_s, longest)
        self.uv_left: Optional[float] = None
        self.peak_a = 0.0

    @property
    def closed(self) -> bool:
        return not (self.trip_open or self.thermal_open or self.uv_open or self.mode == "dead")

    def _do_trip(self, t, ev):
        self.trip_open = True
        self.mode = "armed"
        self.hold_ext = False
        self.trip.clear()
        if self.sense:
            self.sense.clear()
        if self.t_last_restart is not None and t - self.t_last_restart > self.t_stable:
            self.waits = iter(_waits(self.rec.restart))
            self.t_last_restart = None
        w = next(self.waits, None)
        self.restart_left = w
        ev.append((t, self.name, "trip"))
        if w is None and self.rec.restart.policy != "manual":
            ev.append((t, self.name, "give_up"))

    def step(self, t: float, dt: float, i: float, v_supply: Optional[float], ev: list):
        i = abs(i) if self.closed else 0.0
        self.peak_a = max(self.peak_a, i)
        # thermal replica
        if self.thermal is not None:
            th = self.thermal
            x = (i / th.i_rated_a) ** 2 if th.law == "square" else i / th.i_rated_a
            self.theta = x + (self.theta - x) * math.exp(-dt / th.tau_s)
            self.theta_max = max(self.theta_max, self.theta)
            if not self.thermal_open and self.theta >= th.trip_at:
                self.theta = th.trip_at           # the replica is held at its level
                self.thermal_open = True
                self.mode = "armed"
                self.trip.clear()
                ev.append((t + dt, self.name, "thermal_trip"))
                return
            if self.thermal_open and self.theta <= th.resume_at:
                self.theta = th.resume_at
                self.thermal_open = False
                ev.append((t + dt, self.name, "thermal_resume"))
        # undervoltage (boosters)
        if self.kind == "booster" and v_supply is not None and self.rec.v_undervoltage_v > 0:
            from sim.devices.booster import UV_RETURN_DELAY_S, UV_RETURN_FACTOR
            lvl = self.rec.v_undervoltage_v
            if not self.uv_open and v_supply < lvl:
                self.uv_open = True
                self.mode = "armed"
                self.trip.clear()
                ev.append((t, self.name, "dropout"))
                return
            if self.uv_open:
                if v_supply >= UV_RETURN_FACTOR * lvl:
                    self.uv_left = (UV_RETURN_DELAY_S if self.uv_left is None
                                    else self.uv_left) - dt
                    if self.uv_left <= _EPS:
                        self.uv_open = False
                        self.uv_left = None
                        ev.append((t + dt, self.name, "reclose"))
                else:
                    self.uv_left = None
                return
        # restart countdown
        if self.trip_open:
            if self.restart_left is not None:
                self.restart_left -= dt
                if self.restart_left <= _EPS:
                    self.trip_open = False
                    self.restart_left = None
                    self.t_last_restart = t + dt
                    ev.append((t + dt, self.name, "restart"))
            return
        if self.thermal_open:
            return
        # swap logic and trip unit
        if self.swap is None:
            tt = self.trip.step(t, dt, i)
            if tt is not None:
                self._do_trip(tt, ev)
            return
        t_swap, t_dead, t_hold = self.swap
        if self.mode == "armed":
            st = self.sense.step(t, dt, i)
            seen = i if min(i, self.sense.fs) <= self.sense.thr else 0.0
            tt = self.trip.step(t, dt, seen)
            if tt is not None:
                self._do_trip(tt, ev)
                return
            if st is not None:
                self.mode = "swapping"
                self.timer = t_swap - (t + dt - st)
                self.sense.clear()
                self.trip.clear()
                ev.append((st, self.name, "swap_start"))
                if self.timer <= _EPS:
                    self._flip(t + dt + self.timer, ev)
            return
        if self.mode == "swapping":
            self.trip.clear()
            self.timer -= dt
            if self.timer <= _EPS:
                self._flip(t + dt, ev)
            return
        if self.mode == "dead":
            self.hold_left -= dt
            self.timer -= dt
            if self.timer <= _EPS:
                self.mode = "hold"
                ev.append((t + dt, self.name, "reclose"))
            return
        # hold
        tt = self.trip.step(t, dt, i)
        if tt is not None:
            self._do_trip(tt, ev)
            return
        timing = min(i, self.trip.fs) > self.trip.thr
        if self.hold_ext:
            if not timing:
                self.mode = "armed"
                self.hold_ext = False
            return
        self.hold_left -= dt
        if self.hold_left <= _EPS:
            if timing:
                self.hold_ext = True
            else:
                self.mode = "armed"

    def _flip(self, t, ev):
        t_swap, t_dead, t_hold = self.swap
        self.swapped = not self.swapped
        ev.append((t, self.name, "swapped"))
        self.hold_left = t_hold
        self.hold_ext = False
        if t_dead > 0:
            self.mode = "dead"
            self.timer = t_dead
        else:
            self.mode = "hold"

    def reset(self, t, ev):
        self.trip_open = False
        self.restart_left = None
        self.waits = iter(_waits(self.rec.restart))
        self.t_last_restart = None
        self.mode = "armed"
        self.trip.clear()
        if self.sense:
            self.sense.clear()
        ev.append((t, self.name, "reset"))


class RefSupply:
    """Plain supply: hiccup, latch or constant-current limit."""

    def __init__(self, name: str, rec):
        self.name = name
        self.kind = "supply"
        self.rec = rec
        self.on = True
        self.limiting = False
        self.t_on: Optional[float] = None
        self.peak_a = 0.0
        self.theta_max = None
        self.swapped = False

    @property
    def closed(self) -> bool:
        return self.on

    def pre_step(self, t, ev) -> None:
        """Before the step's solve: a hiccup's off time that ends at ``t``."""
        if not self.on and self.t_on is not None and t >= self.t_on - _EPS:
            self.on = True
            self.t_on = None
            ev.append((t, self.name, "on"))

    def step(self, t, dt, i, v, ev):
        i = abs(i)
        self.peak_a = max(self.peak_a, i)
        lim = self.rec.i_limit_a
        if not self.on:
            return
        if self.rec.on_limit == "constant-current":
            over = i >= lim * (1 - 1e-9) if self.limiting else i > lim
            if over != self.limiting:
                self.limiting = over
                ev.append((t, self.name, "limit"))
            return
        if i > lim:
            self.on = False
            self.t_on = t + self.rec.t_off_s if self.rec.on_limit == "hiccup" else None
            ev.append((t, self.name, "off"))

    def reset(self, t, ev):
        ev.append((t, self.name, "reset"))
        if not self.on:
            self.on = True
            self.t_on = None
            ev.append((t, self.name, "on"))


@dataclass
class RefResult:
    """What the reference saw: its event list and per-device counts."""

    events: list = field(default_factory=list)      # (t_s, device, event)
    devices: dict = field(default_factory=dict)     # name -> {trips, swaps, restarts, peak_a}
    steps: int = 0
    solves: int = 0

    def times(self, device: str, event: str) -> list[float]:
        return [t for t, d, e in self.events if d == device and e == event]


def simulate(scn: Scenario, t_end_s: Optional[float] = None, dt_s: float = DT_S,
             layout=None, plans=None) -> RefResult:
    """Step the scenario from 0 to ``t_end_s`` with a fixed step ``dt_s``.

    Parameters
    ----------
    scn : Scenario
    t_end_s : float, optional
        Default ``scn.duration_s``.
    dt_s : float
        The step (s).
    layout, plans :
        Pre-built layout and train plans (built from ``scn`` when ``None``).

    Returns
    -------
    RefResult
    """
    from sim.circuit import build_circuit
    from sim.devices.factory import grid_phase
    from sim.layout import build_layout

    t_end = scn.duration_s if t_end_s is None else t_end_s
    layout = layout if layout is not None else build_layout(scn)
    circuit = build_circuit(scn, layout)
    rng = np.random.default_rng(scn.seed)
    devs: dict = {}
    for name, rec in scn.supplies.items():
        devs[name] = RefSupply(name, rec)
    for table, kind in ((scn.boosters, "booster"), (scn.breakers, "breaker"),
                        (scn.reversers, "reverser")):
        for name, rec in table.items():
            devs[name] = RefProtection(name, kind, rec, grid_phase(rec.sense, rng))
    depth = {n: len(scn.upstream(n)) for n in devs}
    order = sorted(devs, key=lambda n: (-depth[n], n))
    # supplies step first: a booster sees 0 V from the step its supply goes off
    step_order = list(scn.supplies) + [n for n in order if n not in scn.supplies]
    # trains, stepped along their routes
    trains = []
    if scn.trains:
        from sim.world.trains import build_trains
        plans = plans if plans is not None else build_trains(scn, layout)
        trains = [_RefTrain(name, plans[name], layout, scn) for name in sorted(plans)]
    active: dict = {}
    loads: dict = {}

    def conducting(name):
        d = devs[name]
        return d.on if d.kind == "supply" else d.closed

    was_closed = {n: True for n in devs}
    was_uv = {n: False for n in devs}
    faults = [(f.at_s, f.at_s + f.lasts_s if (f.kind == "short" and f.lasts_s is not None)
               else math.inf, k, f) for k, f in enumerate(scn.faults)]
    actions = sorted((a.at_s, k, a) for k, a in enumerate(scn.actions))
    cache: dict = {}
    res = RefResult()
    applied: dict = {}
    n = int(round(t_end / dt_s))
    ev: list = []
    a_next = 0
    for k in range(n):
        t = k * dt_s
        # topology at t
        active = {key: b for tr in trains for key, b in tr.bridge_items()}
        loads = {key: v for tr in trains for key, v in tr.load_items(t)}
        while a_next < len(actions) and actions[a_next][0] <= t + _EPS:
            a = actions[a_next][2]
            if a.kind == "reset" and a.device in devs:
                devs[a.device].reset(t, ev)
            a_next += 1
        for name in scn.supplies:
            devs[name].pre_step(t, ev)
        state = []
        for name in order:
            d = devs[name]
            if d.kind == "supply":
                state.append((name, d.on, d.limiting))
            else:
                state.append((name, d.closed, d.swapped))
        bkeys = tuple(sorted((b.joint_index, b.rail, b.r_ohm, key[1:3])
                             for key, b in active.items()))
        lkeys = tuple(sorted(loads.items()))
        fkeys = tuple(kf for (t0, t1, kf, f) in faults if t0 <= t + _EPS < t1 + _EPS
                      and (t1 == math.inf or t < t1 - _EPS))
        skey = (tuple(state), bkeys, fkeys, lkeys)
        sol = cache.get(skey)
        if sol is None:
            res.solves += 1
            _apply(circuit, scn, devs, active, fkeys, faults, applied, loads)
            sol = circuit.solve()
            cache[skey] = sol
        # trains: power from this solve and the outputs as they stand at t
        if trains:
            for tr in trains:
                tr.check_power(t, sol, conducting, ev)
        n_before = len(ev)
        # devices
        for name in step_order:
            d = devs[name]
            if d.kind == "supply":
                i = sol.supply_i_a.get(name, 0.0)
                v = None
            else:
                i = sol.device_i_a.get(name, 0.0)
                v = None
                if d.kind == "booster":
                    v = sol.supply_v_v.get(d.rec.supply) if devs[d.rec.supply].on else 0.0
            d.step(t, dt_s, i, v, ev)
        # trains: the motion over the step
        for tr in trains:
            tr.step(t, dt_s, ev)
        # outputs closing again after a trip, lockout, dropout or reset: inrush
        for name, d in devs.items():
            if d.kind == "supply":
                continue
            closed = d.closed
            if closed and not was_closed[name] and trains:
                cause = any(dn == name and (e in _INRUSH_CAUSES
                                            or (e == "reclose" and was_uv[name]))
                            for _, dn, e in ev[n_before:])
                if cause:
                    for tr in trains:
                        tr.inrush(t + dt_s, name)
            was_closed[name] = closed
            was_uv[name] = d.uv_open
    res.steps = n
    res.events = sorted(ev, key=lambda e: (e[0], order.index(e[1]) if e[1] in order else -1))
    for name, d in devs.items():
        res.devices[name] = {
            "trips": sum(1 for _, dn, e in ev if dn == name and e in ("trip", "thermal_trip", "off")),
            "swaps": sum(1 for _, dn, e in ev if dn == name and e == "swapped"),
            "restarts": sum(1 for _, dn, e in ev if dn == name and e == "restart"),
            "peak_a": d.peak_a, "max_thermal": d.theta_max}
    return res


def _apply(circuit, scn, devs, active, fkeys, faults, applied, loads=None) -> None:
    """Bring the circuit to the reference's present state (plain: set everything)."""
    for name, d in devs.items():
        if d.kind == "supply":
            st = (d.on, d.rec.i_limit_a if d.limiting else math.inf)
            if applied.get(name) != st:
                circuit.set_supply(name, on=st[0], i_limit_a=st[1])
                applied[name] = st
        else:
            st = (d.closed, d.swapped)
            if applied.get(name) != st:
                circuit.set_device(name, closed=st[0], swapped=st[1])
                applied[name] = st
    want_b = {("ref", key): b for key, b in active.items()}
    have_b = applied.setdefault("_bridges", set())
    for key in list(have_b):
        if key not in want_b:
            circuit.clear_bridge(key)
            have_b.discard(key)
    for key, b in want_b.items():
        if key not in have_b:
            circuit.set_bridge(key, b.joint_index, b.rail, b.r_ohm)
            have_b.add(key)
    have_l = applied.setdefault("_loads", {})
    want_l = loads or {}
    for key in [k for k in have_l if k not in want_l]:
        circuit.clear_load(key)
        del have_l[key]
    for key, (sec, at, r) in want_l.items():
        if have_l.get(key) != (sec, at, r):
            circuit.set_load(key, sec, at, r)
            have_l[key] = (sec, at, r)
    have_f = applied.setdefault("_faults", set())
    want_f = set(fkeys)
    for (t0, t1, kf, f) in faults:
        key = ("ref-fault", kf)
        if f.kind == "short":
            if kf in want_f and kf not in have_f:
                circuit.set_short(key, f.section, f.at_m, f.r_ohm)
                have_f.add(kf)
            elif kf not in want_f and kf in have_f:
                circuit.clear_short(key)
                have_f.discard(kf)
        elif f.kind == "open" and kf in want_f and kf not in have_f:
            circuit.set_feeder_open(f.section, f.feeder, True)
            have_f.add(kf)
