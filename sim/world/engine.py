"""The simpy world: trains, devices, supplies and faults playing out a scenario.

:func:`run` builds the layout, the circuit, the device machines and the train
plans, plays the scenario in a :class:`simpy.Environment` and returns a
:class:`sim.trace.Result`.

What happens at one instant (the settle)
----------------------------------------
Everything that changes the circuit - a bridge on or off, a fault, a feeder
opening, a train load or inrush pulse, a device opening, closing or
swapping, a supply switching - is applied to the circuit at once (each
``set_*`` call is cheap) and marks the instant *dirty*; a fired device
deadline marks its device *due*. The first such mark at an instant schedules
one *settle* of that instant as a zero-delay simpy timeout, which runs after
every event already queued for that instant (a fired deadline with nothing
else queued at its instant settles at once: that timeout would be the next
event anyway). The settle then loops:

1. if dirty: solve (``Circuit.update()``, incremental; a cache keyed by the
   whole circuit state - the XOR of 128-bit BLAKE2b digests of its items,
   updated in O(1) per change - returns the solution of a state seen
   before), then
   ``observe(t, i)`` on every device whose current changed (and
   ``observe_supply_v`` on the boosters of a supply whose voltage changed),
   then re-arming each of them once; the episode tracker and the trains'
   power are fed from the same solution (a solve that returns the very
   solution of the previous one tells the devices nothing);
2. of the devices due now, the first in the tie-break order acts
   (``advance``); if its output changed the circuit is updated and the loop
   goes back to 1 before any other device acts.

Tie-break for simultaneous events (deterministic)
-------------------------------------------------
At one instant: (i) topology changes first (trains, faults, actions, pulses -
all applied before the solve; a constant-current supply limit acts within
the solve, see Supplies), then (ii) device deadlines one device at a
time in the order of the feed chain **from the track up** - a device with a
longer chain above it first (reversers, then breakers, then boosters, then
supplies), then by name - and the circuit is re-solved after each device
whose output changed. So a reverser swapping at the very instant its
booster's trip delay runs out wins the race: the booster observes the
cleared current before its deadline is taken, and does not trip.

Time base
---------
Every instant lies on the run's 1 ns grid (:mod:`sim.timebase`): the drivers
schedule at :func:`~sim.timebase.snap_s` of an instant, and the device
machines report their deadlines and events on the same grid, so two
deadlines that differ by float rounding only (``0.75 + 0.003`` and ``0.75 +
0.0005 + 0.0025``) meet at one instant and the tie-break decides, and a
machine's clock never runs ahead of the engine's (intervals of a few
nanoseconds made time run backwards before). The loader refuses non-zero
intervals below :data:`~sim.timebase.T_MIN_S`.

Every run ends with a result
----------------------------
* **Zero-time oscillation guard.** A device whose output changes
  :data:`OSC_CHANGES` times at one instant acts on a current its own changes
  keep changing, without time passing (zero swap, dead and hold-off times; two
  reversers or a self-reversing booster fighting over one short; a
  self-reversing booster on a load). The engine *holds* it as it is (it is
  neither armed nor advanced; its clock follows the run), records RF-RUN-022
  naming every device that changed at that instant, and marks the episodes
  holding them ``unresolved`` with a note. It is released at a later instant
  once no open episode holds it; held a second time it stays held. So the
  short it fought over goes on until something upstream acts, as it would
  with a chattering switch.
* **An instant that does not settle** for another reason (more than
  :data:`MAX_PASSES` passes of one settle, or :data:`MAX_SETTLES_PER_INSTANT`
  settles at one instant) stops the run there with RF-RUN-024, naming the
  circuit items that kept changing; the result covers the run up to it.
* **Event budget.** A run processes at most ``event_budget`` engine events
  (simpy events: deadlines, settles, train steps; :data:`EVENT_BUDGET` by
  default, ``Result.stats["event_budget"]``); one that reaches it stops at
  the next instant with RF-RUN-023 saying where and what was busiest, and
  cannot pass. ``Result.t_end_s`` is where a run stopped.

Solves: ``Circuit.update()`` checks Kirchhoff's current law itself; when that
check fails (a near-zero-current state can defeat its relative tolerance) or
the update is singular or ill-conditioned (``SingularUpdate``), the engine
solves the state in full with ``Circuit.solve()`` and counts it in
``Result.stats["full_solves"]``. A full solve that still misses Kirchhoff's
law (resistances spanning too many orders of magnitude for double precision)
is used, with RF-RUN-025 once per run; a state that cannot be solved at all
stops the run with RF-RUN-026.

Episodes: the tracker of :mod:`sim.world.episodes` is fed every solve (the
short paths' currents, each bridge's per rail, and the changed device
currents) and every device event; its let-through findings (RF-RUN-020,
RF-RUN-021) join the run's findings.

Finding codes (this module)
---------------------------
RF-RUN-007 (warning) a restart tripped again on the keep-alive inrush alone.
RF-RUN-022 (error)   zero-time oscillation: devices held by the guard.
RF-RUN-023 (error)   the run reached its event budget and stopped there.
RF-RUN-024 (error)   an instant that does not settle stopped the run.
RF-RUN-025 (warning) a full solve met Kirchhoff's law only approximately.
RF-RUN-026 (error)   a circuit state that cannot be solved stopped the run.

Trains
------
A train's draw is a rail-to-rail load ``V_nominal / draw_a`` (``V_nominal``
the EMF of the supply at the top of its feed chain) placed at the middle of
the section its locomotive is in; it moves when the locomotive enters another
section (at the train's bridge events). Bridges come from the closed-form
intervals of :mod:`sim.world.trains`. A train has power when the voltage at
one of its locomotives' loads is at least :data:`POWER_FRACTION` of nominal
(:func:`sim.world.trains.has_power`: the load is joined to every rail its
pickups touch, through its bridge while it straddles a gap, whatever device
feeds the section its draw point is in); without power it stops once its keep-alive has run out
(it stands where it is, keeping the bridges it stands on - also one it
reached at the very instant it stopped: a locomotive without keep-alive whose
own bridge takes its power stands on that bridge) and goes on when power
returns; its crossing times are then computed anew from where it stopped.

Inrush at a restart
-------------------
When a device's output closes again after being open, the keep-alive
capacitors of every locomotive on it charge: :func:`sim.circuit.inrush.inrush`
gives ``(i_peak_a, tau_s)`` (peak ``V/R``, time constant ``RC``). The engine
models it as an extra load ``V / i_peak_a`` for ``tau_s``: a rectangular
pulse of the peak current carrying the capacitor's whole charge ``C V``. The
devices observe it like any load, so a restart can trip again on inrush
alone.

Supplies
--------
A supply is a device machine observing its load current; when it limits or
switches off, the engine tells the circuit (``set_supply``; a constant-current
limit as ``i_limit_a``). A constant-current limit acts within the solve:
the circuit is solved again *before* any other device observes, since the
limit is the supply's own characteristic, not a timed protection; a hiccup or
latch switching off takes its turn as a device (supplies last). Every booster
on it observes the sagging terminal voltage and drops out under its
undervoltage level.

Randomness: one ``numpy.random.default_rng(scn.seed)`` passed to every
device constructor (the sample-grid phases), in a fixed order; nothing global.
"""
from __future__ import annotations

import hashlib
import math
import operator
import time
from typing import Optional

import numpy as np

from sim.circuit.incremental import SingularUpdate
from sim.circuit.network import KirchhoffError
from sim.diagnose.runlog import RunLog, stand_place
from sim.model import Finding, Scenario
from sim.trace import (DeviceSummary, Event, EventSummary, Result, decide, verdict_findings,
                       SUPPLY_TRIP_EVENTS, TRIP_EVENTS)
from sim.world.episodes import (EpisodeTracker, RailFlow, ShortPath, overrun_findings,
                                short_currents)
from sim.world.processes import (Env, DeviceDriver, TrainRun, action_process, build_runs,
                                 fault_process)
# (POWER_FRACTION: the power rule's, in sim.world.trains; named here too for its readers)
from sim.world.trains import POWER_FRACTION, stand_findings  # noqa: F401

#: Device events after which the output closes on a discharged layout (inrush).
INRUSH_EVENTS = frozenset({"restart", "reset", "thermal_resume"})

#: Relative change of a current below which a device is not told again.
I_REL_TOL = 1e-9
#: Relative change of a supply voltage below which its boosters are not told again.
V_REL_TOL = 1e-9
#: Cache of solutions, entries kept before it is emptied.
CACHE_MAX = 4096
#: ... and values (currents and voltages, over all its solutions) kept before it is
#: emptied: a large layout's solutions are large, and most states of a layout with
#: many trains are never seen twice (about 100 bytes a value: some 100 MB at most).
CACHE_MAX_VALUES = 1_000_000
#: Most passes of one settle before the engine declares a loop it cannot hold
#: (the run then stops there with RF-RUN-024).
MAX_PASSES = 20_000
#: Most settles at one instant before the engine declares such a loop.
MAX_SETTLES_PER_INSTANT = 10_000
#: Output changes of one device at one instant after which it is in a zero-time
#: oscillation and the guard holds it (RF-RUN-022).
OSC_CHANGES = 8
#: Engine events (simpy events processed) a run may take by default: a run that
#: reaches its budget stops there with RF-RUN-023 (``railfault run --budget N``
#: raises it). The development machine takes some 12,000 to 50,000 a second, so
#: this is under half a minute of work; a generated hour of 200 sections and 30
#: trains takes about 4,000, a day of it about 100,000.
EVENT_BUDGET = 250_000

#: Digests of state items kept before the memo is emptied.
DIGESTS_MAX = 100_000

#: Circuit-state keys of device and supply outputs (changes that follow a device
#: transition); every other key is a topology change (bridge, load, short, open feeder).
_OUTPUT_KEYS = frozenset({"d", "p"})
_NO_CHANGES: dict = {}
_NO_PATHS: dict = {}
#: Output of a device not yet applied: closed, not swapped.
_OUT_DEFAULT = (True, False)
#: Stands for the settle event while a settle runs straight from a fired deadline.
_SETTLING = object()
_rank = operator.attrgetter("rank")


class World:
    """One run of a scenario (see the module doc). Use :func:`run`.

    Parameters
    ----------
    scn : Scenario
    until_s : float, optional
        Stop here instead of at ``scn.duration_s``.
    keep_events : bool
        Keep every event (``--events``); otherwise only the bounded summary.
    layout, circuit, devices, trains :
        Pre-built parts (tests and benchmarks); built from ``scn`` when ``None``.
    event_budget : int
        The most engine events the run may take (:data:`EVENT_BUDGET`).
    """

    def __init__(self, scn: Scenario, until_s: Optional[float] = None,
                 keep_events: bool = False, layout=None, circuit=None, devices=None,
                 plans=None, event_budget: int = EVENT_BUDGET, traces=None):
        from sim.layout import build_layout
        from sim.circuit import build_circuit

        self.scn = scn
        self.t_end_s = float(scn.duration_s if until_s is None else until_s)
        self.event_budget = int(event_budget)
        self.n_steps = 0                      # engine events processed
        self.env = Env()
        self.never = self.env.event()
        self.summary = EventSummary(keep_events)
        self.log = RunLog.of(scn)             # stands of trains, district dark time
        self.layout = layout if layout is not None else build_layout(scn)
        self.circuit = circuit if circuit is not None else build_circuit(scn, self.layout)
        rng = np.random.default_rng(scn.seed)
        self._init_devices(devices, rng)
        self._cache: dict = {}                # state key -> [solution, short-path currents or None]
        self._cache_values = 0                # values held by the cached solutions (about)
        self._sol_key = None                  # state key of the last solve
        self._state: dict = {}
        self._state_digest: dict = {}         # key -> digest of its present item
        self._hash = 0
        self._digests: dict = {}
        self._dirty = False
        self._episode_pass = False
        self._t_settle = -1.0
        self._n_same = 0
        self._inrush_until: dict[str, float] = {}
        self._due: set = set()
        self._settle_ev = None
        self._sol = None
        self._i: dict[str, float] = {n: 0.0 for n in self.drivers}
        self._v_supply: dict[str, float] = {}
        self._dark_since: dict[str, Optional[float]] = {n: None for n in self.drivers}
        self._dark_s: dict[str, float] = {n: 0.0 for n in self.drivers}
        self._out: dict[str, tuple] = {}
        self.paths: dict = {}                 # circuit key -> ShortPath (existing paths)
        self._path_comps: dict = {}           # circuit key -> rail components it joins
        self._sides = None                    # sim.world.sides.Sides, made when first needed
        self.joint_paths: dict = {}           # joint index -> (name, devices feeding it)
        self._osc_t = -1.0                    # instant of the output-change counts
        self._osc_n: dict[str, int] = {}      # device -> output changes at that instant
        self._frozen: dict = {}               # held driver -> (instant held, times held)
        self.n_degraded = 0                   # full solves that missed Kirchhoff's law
        self.n_solves = 0
        self.n_full_solves = 0
        self.t_circuit_s = 0.0
        self.n_cache_hits = 0
        self.n_settles = 0
        self.n_changes = 0
        self.n_topology = 0                   # circuit changes that are not device outputs
        self.n_transitions = 0                # device events reported by the machines
        self.record = self.summary.record     # bound once: called for every event
        rated = {n: scn.device(n).thermal.i_rated_a for n in self.drivers
                 if self.kinds[n] != "supply" and getattr(scn.device(n), "thermal", None)}
        supply_of = {b: bo.supply for b, bo in scn.boosters.items()}
        self.tracker = EpisodeTracker(self._would_trip, self._t_swap_of,
                                      sense_threshold_a=self._sense_thr,
                                      supplies=self.supply_names,
                                      trip_threshold_a=self._thr_dev,
                                      allow_s=self._allow, rated_a=rated,
                                      supply_of=supply_of, order=self.order,
                                      t_dead_s={n: scn.reversers[n].t_dead_s
                                                for n in scn.reversers})
        self.findings: list[Finding] = []
        self._init_trains(plans)
        self.traces = traces                  # opt-in recorder (sim.world.traces)
        if traces is not None:
            traces.attach(self)

    # ----------------------------------------------------------- devices
    def _init_devices(self, devices, rng) -> None:
        from sim.devices import make_device

        scn = self.scn
        names = (list(scn.supplies) + list(scn.boosters) + list(scn.breakers)
                 + list(scn.reversers))
        kinds = {n: scn.device_kind(n) for n in names}
        if devices is None:
            devices = {n: make_device(scn, n, rng) for n in names}
        depth = {n: len(scn.upstream(n)) for n in names}
        order = sorted(names, key=lambda n: (-depth[n], n))
        self.order = order
        self.supply_names = [n for n in order if kinds[n] == "supply"]
        # supplies that hold their limit at constant current (for a while, or for good)
        self.cc_supplies = {n for n in self.supply_names
                            if math.isfinite(scn.supplies[n].i_limit_a)
                            and (scn.supplies[n].on_limit == "constant-current"
                                 or getattr(scn.supplies[n], "t_limit_s", 0.0) > 0.0)}
        self._v_seen: dict[str, float] = {}
        # passes of the supply loop of one solve (each limit may enter and leave)
        self._n_supply_passes = 2 * len(self.cc_supplies) + 2
        self.protect_order = [n for n in order if kinds[n] != "supply"]
        self._sup_changed: dict = {}
        self.drivers: dict[str, DeviceDriver] = {
            n: DeviceDriver(self, n, devices[n], order.index(n), kinds[n]) for n in names}
        self.kinds = kinds
        # per supply, once: (name, driver, machine, its observe_supply_v or None, holds its limit)
        self._supply_rows = tuple(
            (n, self.drivers[n], self.drivers[n].dev,
             getattr(self.drivers[n].dev, "observe_supply_v", None), n in self.cc_supplies)
            for n in self.supply_names)
        # per protective device, once: (name, driver)
        self._protect_rows = tuple((n, self.drivers[n]) for n in self.protect_order)
        # boosters per supply (undervoltage), chains, thresholds, swap times
        self.boosters_of: dict[str, list[str]] = {s: [] for s in scn.supplies}
        for b, bo in scn.boosters.items():
            self.boosters_of.setdefault(bo.supply, []).append(b)
        # per supply, once: its boosters as (driver, observe_supply_v or None)
        self._booster_rows = tuple(
            (sup, tuple((self.drivers[b], getattr(self.drivers[b].dev, "observe_supply_v", None))
                        for b in bs))
            for sup, bs in self.boosters_of.items())
        self._chains = {n: scn.upstream(n) for n in names}
        # plain protection machines (a trip unit, no swap logic): they answer
        # "when would it trip" from their own deadlines (see _would_trip)
        self._plain = frozenset(
            n for n in names if getattr(devices[n], "trip_unit", None) is not None
            and getattr(devices[n], "swap", True) is None
            and hasattr(devices[n], "replica"))
        self._thr_dev: dict[str, float] = {}
        self._t_swap: dict[str, float] = {}
        for n in names:
            rec = scn.device(n)
            if kinds[n] == "supply":
                if math.isfinite(rec.i_limit_a):
                    self._thr_dev[n] = rec.i_limit_a
                continue
            self._thr_dev[n] = rec.trip.i_above_a
            if kinds[n] == "reverser":
                self._t_swap[n] = rec.t_swap_s
            elif kinds[n] == "booster" and rec.reverse_on_short:
                self._t_swap[n] = rec.t_swap_s
        from sim.checks.coordination import latest_trip_s

        # the onset threshold of each device (episodes: its sense level or trip
        # level, a supply's limit) and how long it may carry more than its trip
        # level before a definite-time trip (sampling counted, and for a swapping
        # device its sense delay and swap time before that)
        self._sense_thr: dict[str, float] = {}
        self._allow: dict[str, float] = {}
        for n in names:
            rec = scn.device(n)
            if kinds[n] == "supply":
                if math.isfinite(rec.i_limit_a):
                    self._sense_thr[n] = rec.i_limit_a
                continue
            period = rec.sense.period_s
            allow = latest_trip_s(rec.trip.t_after_s, period)
            if kinds[n] == "reverser":
                self._sense_thr[n] = min(rec.sense_above_a, rec.trip.i_above_a)
                allow += latest_trip_s(rec.t_sense_s, period) + rec.t_swap_s
            else:
                lo = rec.trip.i_above_a
                if kinds[n] == "booster" and rec.reverse_on_short:
                    if rec.sense_reverse_a:
                        lo = min(lo, rec.sense_reverse_a)
                    allow += latest_trip_s(rec.t_sense_reverse_s, period) + rec.t_swap_s
                self._sense_thr[n] = lo
            self._allow[n] = allow

    def _t_swap_of(self, dev: str) -> Optional[float]:
        return self._t_swap.get(dev)

    def _would_trip(self, dev: str, i_a: float, t_s: float) -> Optional[float]:
        """When ``dev`` would trip had ``i_a`` gone on from ``t_s`` (None: never).

        Asked right after the device observed ``i_a`` at ``t_s``: a plain
        protection machine (no swap logic) then already holds the answer, the
        deadline of its trip unit and of its thermal replica; any other device
        answers through its ``trip_after_s`` (which simulates a copy).
        """
        m = self.drivers[dev].dev
        if dev in self._plain and m.closed:
            d = m.trip_unit.due_s()
            rep = m.replica
            if rep is not None:
                d2 = rep.trip_deadline_s()
                if d2 is not None and (d is None or d2 < d):
                    d = d2
            return d
        dt = m.trip_after_s(i_a, t_s)
        if dt is None or not math.isfinite(dt):
            return None
        return t_s + dt

    def path_devices(self, chains: list[tuple]) -> tuple:
        """The devices feeding a short path through the given feed chains, from the
        track upwards (the tie-break order), each once."""
        devs = {d for ch in chains for d in ch if d in self.drivers}
        return tuple(sorted(devs, key=lambda d: self.drivers[d].rank))

    # ----------------------------------------------------------- trains
    def _init_trains(self, plans) -> None:
        # trains registered under every device of their chain (power checks)
        self.trains_on: dict[str, set] = {n: set() for n in self.drivers}
        self._check_trains: set = set()
        self.train_runs: dict[str, TrainRun] = build_runs(self, plans)

    def check_train_later(self, name: str) -> None:
        """Check this train's power after the next solve (its load moved)."""
        self._check_trains.add(name)

    def record_train(self, t_s: float, name: str, event: str, data=None) -> None:
        self.record(Event(t_s, name, event) if data is None else Event(t_s, name, event, data))
        self.log.train(t_s, name, event, stand_place(self, name) if event == "stop" else None)

    def output_closed(self, dev: str) -> bool:
        """Whether a device's output (or a supply) conducts, as last applied."""
        st = self._out.get(dev)
        return True if st is None else bool(st[0])

    def chain_closed(self, chain) -> bool:
        """Whether every device of a feed chain conducts (``output_closed`` of each)."""
        out = self._out
        for dev in chain:
            st = out.get(dev)
            if st is not None and not st[0]:
                return False
        return True

    # ------------------------------------------------ circuit state (cheap)
    def _digest(self, item) -> int:
        """A 128-bit digest of one state item (``repr`` is exact for floats)."""
        d = self._digests.get(item)
        if d is None:
            if len(self._digests) > DIGESTS_MAX:
                self._digests.clear()
            d = int.from_bytes(hashlib.blake2b(repr(item).encode(), digest_size=16).digest(),
                               "little")
            self._digests[item] = d
        return d

    def _put(self, key, value) -> None:
        """Record one item of the circuit state; the state key is the XOR of the
        items' 128-bit digests (Zobrist hashing), kept up to date in O(1)."""
        sd = self._state_digest
        h = self._hash
        old = sd.pop(key, None)
        if old is not None:
            h ^= old
        if value is None:
            self._state.pop(key, None)
        else:
            self._state[key] = value
            item = (key, value)
            d = self._digests.get(item)
            if d is None:
                d = self._digest(item)
            sd[key] = d
            h ^= d
        self._hash = h
        self.n_changes += 1
        if key[0] not in _OUTPUT_KEYS:
            self.n_topology += 1
        self._dirty = True
        if self._settle_ev is None:
            self._schedule_settle()

    def set_bridge(self, key, joint_index: int, rail: str, r_ohm: float, path: ShortPath) -> None:
        self.circuit.set_bridge(key, joint_index, rail, r_ohm)
        self.paths[key] = path
        self._put(("b", key), (joint_index, rail, r_ohm))

    def clear_bridge(self, key) -> None:
        if self.paths.pop(key, None) is not None:
            self.circuit.clear_bridge(key)
            self._put(("b", key), None)

    def set_load(self, key, section: str, at_m: float, r_ohm: float) -> None:
        if self._state.get(("l", key)) == (section, at_m, r_ohm):
            return
        self.circuit.set_load(key, section, at_m, r_ohm)
        self._put(("l", key), (section, at_m, r_ohm))

    def clear_load(self, key) -> None:
        if ("l", key) in self._state:
            self.circuit.clear_load(key)
            self._put(("l", key), None)

    # ------------------------------------------------------ faults, actions
    def apply_fault(self, index: int, fault, on: bool) -> None:
        """A scenario fault begins (``on``) or a timed short ends."""
        t = self.env.now
        if fault.kind == "short":
            key = ("fault", index)
            where = f"{fault.section}@{fault.at_m:g} m"
            if on:
                self.circuit.set_short(key, fault.section, fault.at_m, fault.r_ohm)
                chain = self.layout.device_chain(fault.section)
                self.paths[key] = ShortPath(key, ("fault", index), "fault", where, None,
                                            self.path_devices([chain]))
                self._put(("s", key), (fault.section, fault.at_m, fault.r_ohm))
                self.record(Event(t, where, "fault", {"r_ohm": fault.r_ohm}))
            else:
                self.circuit.clear_short(key)
                self.paths.pop(key, None)
                self._put(("s", key), None)
                self.record(Event(t, where, "fault_end"))
        elif fault.kind == "open":
            self.circuit.set_feeder_open(fault.section, fault.feeder, True)
            self._put(("o", fault.section, fault.feeder), True)
            self.record(Event(t, f"{fault.section} feeder {fault.feeder}", "open"))

    def apply_action(self, index: int, action) -> None:
        """An operator action: a reset of a device."""
        if action.kind != "reset":
            return
        drv = self.drivers.get(action.device)
        if drv is None:
            return
        t = self.env.now
        evs = drv.dev.reset(t) or []
        for e in evs:
            self._device_event(e)
        self._apply_output(drv, inrush=True)
        drv.arm()

    # ------------------------------------------------------------ settle
    def mark_due(self, drv: DeviceDriver) -> None:
        self._due.add(drv)
        self._schedule_settle()

    def fire_due(self, drv: DeviceDriver) -> None:
        """A device deadline fired (the last thing its simpy event does).

        The settle of this instant must run after every event already queued
        for it; when nothing else is queued at this instant the settle timeout
        would be the very next event, so the settle runs at once instead (one
        simpy event less per device transition, same order).
        """
        self._due.add(drv)
        if self._settle_ev is None:
            env = self.env
            q = env._queue
            if not q or q[0][0] > env._now:
                self._settle(_SETTLING)
            else:
                self._schedule_settle()

    def _mark_dirty(self) -> None:
        self._dirty = True
        self._schedule_settle()

    def _schedule_settle(self) -> None:
        if self._settle_ev is None:
            env = self.env
            self._settle_ev = env.call_at(env._now, self._settle)

    def _settle(self, _ev) -> None:
        self._settle_ev = _ev          # no second settle is scheduled while this one runs
        self.n_settles += 1
        t = self.env._now
        if t == self._t_settle:
            self._n_same += 1
            if self._n_same > MAX_SETTLES_PER_INSTANT:
                self._not_settling(t)
        else:
            self._t_settle, self._n_same = t, 0
        due = self._due
        for _ in range(MAX_PASSES):
            if self._dirty:
                self._solve_and_observe(t)
                continue
            if not due:
                if self._episode_pass:
                    self._episode_pass = False
                    for e in self.tracker.close_settled(t):
                        self.record(e)
                if self._frozen and self._release(t):
                    continue                              # a released device may be due
                self._settle_ev = None
                return
            if len(due) == 1:
                drv = due.pop()
            else:
                drv = min(due, key=_rank)
                due.discard(drv)
            f = drv.fire_s
            if f is None or f > t:                        # not due at this instant
                drv.arm()
                continue
            drv.armed_s = drv.fire_s = None
            evs = drv.dev.advance(t)                      # (deadlines are on the 1 ns grid)
            inrush = False
            for e in evs:
                self._device_event(e)
                if not inrush:
                    k = e.event
                    inrush = k in INRUSH_EVENTS or (
                        k == "reclose" and e.data.get("cause") == "undervoltage")
            self._apply_output(drv, inrush)
            drv.arm()
        self._not_settling(t)

    # ---------------------------------------------------- zero-time guard
    def _count_change(self, drv: DeviceDriver, t: float) -> None:
        """Count an output change of ``drv`` at ``t``; hold it when it oscillates."""
        if t != self._osc_t:
            self._osc_t = t
            self._osc_n = {}
        n = self._osc_n[drv.name] = self._osc_n.get(drv.name, 0) + 1
        if n >= OSC_CHANGES:
            self._hold(drv, t)

    def _hold(self, drv: DeviceDriver, t: float) -> None:
        """The zero-time oscillation guard (module doc): hold ``drv`` as it is.

        A device whose output changed :data:`OSC_CHANGES` times at one instant
        acts on a current its own changes keep changing, without time passing
        (zero swap, dead and hold-off times, two reversers or a self-reversing
        booster fighting over one short). Physically it would chatter until
        something upstream acts; the engine holds its output as it is, records
        RF-RUN-022 naming every device that changed at that instant, and marks
        the episodes holding them ``unresolved``. The device is released once
        no open episode holds it (at a later instant); held a second time, it
        stays held for the rest of the run.
        """
        _, times = self._frozen.get(drv, (t, 0))
        drv.held = True
        drv._ev = None
        drv.armed_s = drv.fire_s = None
        self._due.discard(drv)
        self._frozen[drv] = (t, times + 1)
        who = sorted((d for d, n in self._osc_n.items() if n >= 2), key=lambda d: (
            self.drivers[d].rank, d)) or [drv.name]
        for_good = times >= 1
        note = (f"zero-time oscillation at {t:.9g} s: "
                + ", ".join(f"{d} changed its output {self._osc_n.get(d, 0)} times" for d in who)
                + " without time passing; "
                f"{drv.name} is held as it is "
                + ("for the rest of the run" if for_good else
                   "until the current it acts on stops"))
        self.findings.append(Finding(
            "error", "RF-RUN-022", drv.name,
            note + " (its swap, dead and hold-off times add up to zero, or devices fight "
            "over one short)",
            "give the swapping devices non-zero swap, dead and hold-off times (a real switch "
            "takes time), and let one device only reverse each section"))
        self.tracker.force_unresolved(t, who, note)

    def _release(self, t: float) -> bool:
        """Release the held devices that no open episode holds any more (at a later
        instant than the one they were held at, and held once only); whether any was."""
        released = False
        for drv, (since, times) in list(self._frozen.items()):
            if times >= 2 or t <= since or self.tracker.involved(drv.name):
                continue
            del self._frozen[drv]
            drv.held = False
            drv.dev.defer(t)
            drv.arm()
            released = True
        return released

    def _not_settling(self, t: float) -> None:
        """The instant does not settle and no device oscillates: stop the run here.

        Finds what keeps changing (the circuit-state items that differ from one
        pass to the next over a few more passes) for the finding (RF-RUN-024).
        """
        seen: dict = {}
        due = self._due
        for _ in range(64):
            before = dict(self._state)
            if self._dirty:
                self._solve_and_observe(t)
            elif due:
                drv = min(due, key=_rank)
                due.discard(drv)
                drv.armed_s = drv.fire_s = None
                for e in drv.dev.advance(t):
                    self._device_event(e)
                self._apply_output(drv)
                drv.arm()
            else:
                break
            for k in set(before) | set(self._state):
                if before.get(k) != self._state.get(k):
                    seen[k] = seen.get(k, 0) + 1
        what = ", ".join(sorted({_describe_key(k) for k in seen})) or "nothing in the circuit"
        raise _StopRun(Finding(
            "error", "RF-RUN-024", "world",
            f"the run stopped at {t:.9g} s: that instant does not settle (a zero-time loop "
            f"the engine cannot hold; changing: {what}); what follows it is not simulated",
            "report this layout to the railfault developers"))

    def _solve(self):
        self.n_solves += 1
        key = self._hash
        self._sol_key = key
        ent = self._cache.get(key)
        if ent is not None:
            self.n_cache_hits += 1
            return ent[0]
        t0 = time.perf_counter()
        try:
            sol = self.circuit.update()
        except (KirchhoffError, SingularUpdate):
            # the incremental update failed its own Kirchhoff check or met an
            # ill-conditioned change: solve the state in full
            self.n_full_solves += 1
            sol = self._full_solve()
        self.t_circuit_s += time.perf_counter() - t0
        # (each device, supply, load and short has two values: current and lead
        # currents, current and voltage)
        weight = (2 * (len(sol.device_i_a) + len(sol.supply_i_a) + len(sol.load_v_v)
                       + len(sol.short_i_a)) + len(sol.bridge_i_a) + 1)
        if len(self._cache) >= CACHE_MAX or self._cache_values + weight > CACHE_MAX_VALUES:
            self._cache.clear()
            self._cache_values = 0
        self._cache[key] = [sol, None]
        self._cache_values += weight
        return sol

    def _full_solve(self):
        """The last resort of a solve (module doc, Solves): a full solve, checked;
        one that misses Kirchhoff's law is used with RF-RUN-025; one that cannot
        be had stops the run (RF-RUN-026)."""
        t = self.env._now
        try:
            sol = self.circuit.solve(check=False)
        except (SingularUpdate, ValueError, FloatingPointError, ArithmeticError) as exc:
            raise _StopRun(Finding(
                "error", "RF-RUN-026", "world",
                f"the run stopped at {t:.9g} s: the circuit of that instant cannot be solved "
                f"({exc}); what follows it is not simulated",
                "check the resistances: a supply, wire or fault of (nearly) zero ohm in "
                "series with another makes the network singular")) from None
        if not sol.kcl_ok:
            self.n_degraded += 1
            if self.n_degraded == 1:
                self.findings.append(Finding(
                    "warning", "RF-RUN-025", "world",
                    f"the circuit at {t:.9g} s was solved only to a Kirchhoff residual of "
                    f"{sol.kcl_residual_a:.3g} A (its resistances span too many orders of "
                    "magnitude for double precision): the figures of such instants are "
                    "approximate",
                    "give the supplies, wires and faults resistances within the trade's "
                    "ranges"))
        return sol

    def _solve_supplies(self, t: float):
        """Solve, letting every supply's current limit act within the solve.

        A constant-current limit is the supply's own characteristic, not a
        timed protection: a supply that holds its limit (constant-current
        mode, or hiccup/latch with a hold time) and whose observed current or
        terminal voltage calls for entering or leaving the limit is advanced
        at once and the circuit solved again before any other device observes
        the currents. (A supply switching off - at once, or when its hold time
        runs out - is a protective action and takes its turn in the tie-break
        order, after the devices below it.)
        """
        sol = self._solve()
        cur = self._i
        v_seen = self._v_seen
        for _ in range(self._n_supply_passes):
            sup_i = sol.supply_i_a
            sup_v = sol.supply_v_v
            for name, drv, m, observe_v, is_cc in self._supply_rows:
                seen = False
                i = sup_i.get(name, 0.0)
                di = i - cur[name]
                if di != 0.0:
                    ai = i if i >= 0.0 else -i
                    # abs(i - old) > I_REL_TOL * max(1.0, abs(i)), without the calls
                    if (di if di >= 0.0 else -di) > I_REL_TOL * (ai if ai > 1.0 else 1.0):
                        cur[name] = i
                        if self._sup_changed is _NO_CHANGES:
                            self._sup_changed = {}
                        self._sup_changed[name] = i
                        m.observe(t, i)
                        seen = True
                v = sup_v.get(name)
                if v is not None:
                    v_old = v_seen.get(name)
                    if v_old is not None:
                        dv = v - v_old
                        av = v if v >= 0.0 else -v
                        new_v = (dv if dv >= 0.0 else -dv) > V_REL_TOL * (av if av > 1.0 else 1.0)
                    else:
                        new_v = True
                    if new_v:
                        v_seen[name] = v
                        if observe_v is not None:
                            observe_v(t, v)
                            seen = True
                if not seen:
                    continue
                if is_cc:
                    d = m.next_deadline()
                    # a transition the observation itself calls for (into or out of
                    # the limit), not a timer armed before that comes due now
                    if d is not None and d <= t and d != drv.armed_s:
                        if drv.held:
                            continue
                        for e in m.advance(t):
                            self._device_event(e)
                        self._apply_output(drv)
                drv.arm()
            if not self._dirty:
                return sol
            self._dirty = False
            sol = self._solve()
        return sol

    def _solve_and_observe(self, t: float) -> None:
        if self._frozen:
            for drv in self._frozen:           # held devices observe from here on
                drv.dev.defer(t)
        self._dirty = False
        self._sup_changed = _NO_CHANGES
        sol = self._solve_supplies(t) if self._supply_rows else self._solve()
        prev = self._sol
        self._sol = sol
        if self.traces is not None:
            self.traces.solution(t, sol, self._trace_currents(sol) if self.paths else None)
        if prev is None:
            for f in getattr(sol, "findings", ()) or ():
                if isinstance(f, Finding):
                    self.findings.append(f)
        changed = _NO_CHANGES
        if sol is not prev:
            # (the same solution as the last solve: every current and voltage was
            # told then, within the tolerances, so there is nothing to tell)
            dev_i = sol.device_i_a
            cur = self._i
            told: dict = {}                 # drivers to re-arm, each once, in order
            for name, drv in self._protect_rows:
                i = dev_i.get(name, 0.0)
                di = i - cur[name]
                if di == 0.0:
                    continue
                ai = i if i >= 0.0 else -i
                # abs(i - old) > I_REL_TOL * max(1.0, abs(i)), without the calls
                if (di if di >= 0.0 else -di) > I_REL_TOL * (ai if ai > 1.0 else 1.0):
                    cur[name] = i
                    if changed is _NO_CHANGES:
                        changed = {}
                    changed[name] = i
                    drv.dev.observe(t, i)
                    told[drv] = None
            # supply voltage -> boosters (undervoltage)
            sv = sol.supply_v_v
            v_sup = self._v_supply
            for s, boosters in self._booster_rows:
                v = sv.get(s)
                if v is None:
                    continue
                v_old = v_sup.get(s)
                if v_old is not None:
                    dv = v - v_old
                    av = v if v >= 0.0 else -v
                    if (dv if dv >= 0.0 else -dv) <= V_REL_TOL * (av if av > 1.0 else 1.0):
                        continue
                v_sup[s] = v
                for drv, fn in boosters:
                    if fn is not None:
                        fn(t, v)
                        told[drv] = None
            # re-arm once after every observation of this solve (arming twice
            # would only leave a cancelled timeout behind)
            for drv in told:
                drv.arm()
        sup_changed = self._sup_changed     # (the supplies' changes, from _solve_supplies)
        if sup_changed:
            if changed is _NO_CHANGES:
                changed = sup_changed
            else:
                changed.update(sup_changed)
        # short paths -> episodes (closing waits for the settled instant)
        if self.paths or self.tracker.open_count:
            currents, rails, groups = self._short_currents(sol)
            for e in self.tracker.solution(t, currents, changed, close=False, rail_i_a=rails,
                                           group_i_a=groups):
                self.record(e)
            # the closing call once the instant settles (same currents) can only
            # close an open episode whose paths carry no short current now
            self._episode_pass = self.tracker.pending_close
        elif changed:
            self.tracker.solution(t, _NO_PATHS, changed, close=False)
        # trains' power
        if self.train_runs:
            todo = self._check_trains
            self._check_trains = set()
            trains_on = self.trains_on
            for name in changed:
                on = trains_on.get(name)
                if on:
                    todo |= on
            if todo:
                runs = self.train_runs
                for tr in (sorted(todo) if len(todo) > 1 else todo):
                    runs[tr].check_power(t, sol)

    def _short_currents(self, sol) -> tuple:
        """``({ShortPath: I}, {ShortPath: per-rail I}, {group: I})`` of every
        existing short path: the short current of each path and group by the
        rule of :func:`sim.world.episodes.short_currents` (the sides each rail
        joins, :mod:`sim.world.sides`), and each bridge's current over each rail
        it joins. The paths that exist and the device outputs are part of the
        circuit state, so the currents are kept per state key beside its cached
        solution and made once per state.
        """
        ent = self._cache.get(self._sol_key)
        if ent is not None and ent[0] is not sol:
            ent = None
        if ent is not None and ent[1] is not None:
            return ent[1]
        sides = self._sides
        if sides is None:
            from sim.world.sides import Sides
            sides = self._sides = Sides(self.circuit.topo)
        from sim.world.sides import output_reader
        output = output_reader(self._out)
        f_open = self.circuit.feeders_open
        memo: dict = {}
        br = sol.bridge_rail_i_a
        si = sol.short_i_a
        flows = {}
        rails = {}
        for k, path in self.paths.items():
            comps = self._path_comps.get(k)
            if comps is None:
                comps = self._path_comps[k] = self._comps_of(sides, k, path)
            if path.kind == "fault":
                i = si.get(k, 0.0)
                r = (i if i >= 0.0 else -i,)
            else:
                r = br.get(k, (0.0,) * len(comps))
                rails[path] = r
            flows[path] = [RailFlow(i, sides.side(cx, output, f_open, memo),
                                    sides.side(cy, output, f_open, memo))
                           for i, (cx, cy) in zip(r, comps)]
        currents, groups = short_currents(flows)
        out = (currents, rails, groups)
        if ent is not None:
            ent[1] = out
        return out

    def _comps_of(self, sides, key, path) -> tuple:
        """The static rail components each rail of a short path joins."""
        if path.kind == "fault":
            return (sides.section_rails(self.scn.faults[key[1]].section),)
        return sides.joint_rails(key[3], path.rails)

    def _trace_currents(self, sol) -> dict:
        """For the trace recorder: one path of each group with the group's short
        current (the recorder sums its paths per group)."""
        currents, _, groups = self._short_currents(sol)
        out: dict = {}
        seen: set = set()
        for path in currents:
            if path.group not in seen:
                seen.add(path.group)
                out[path] = groups.get(path.group, 0.0)
        return out

    # ------------------------------------------------------- device output
    def _device_event(self, e) -> None:
        # (a device event is already the world's record, sim.trace.Event)
        self.n_transitions += 1
        self.record(e)
        self.tracker.device_event(e)
        if (e.event == "trip" and self._inrush_until
                and self._inrush_until.get(e.device, -1.0) >= e.t_s):
            self._inrush_until.pop(e.device, None)
            if not self.tracker.involved(e.device):
                self.findings.append(Finding(
                    "warning", "RF-RUN-007", e.device,
                    f"{e.device} tripped again at {e.t_s:.6g} s while the keep-alive "
                    "capacitors of the trains on it were charging after its restart: "
                    "the restart fails on inrush alone",
                    "raise the trip delay above the inrush time, or limit the charging "
                    "current of the keep-alives"))

    def _apply_output(self, drv: DeviceDriver, inrush: bool = False) -> None:
        m = drv.dev
        name = drv.name
        if drv.kind == "supply":
            state = self._supply_state(m)
            if self._out.get(name, (True, math.inf)) != state:
                t = self.env._now
                on, i_lim = state
                self.circuit.set_supply(name, on=on, i_limit_a=i_lim)
                self._put(("p", name), state)
                self._dark(name, t, on)
                self._out[name] = state
                self._count_change(drv, t)
            return
        closed = m.closed
        swapped = m.swapped
        old = self._out.get(name, _OUT_DEFAULT)
        if closed == old[0] and swapped == old[1]:
            return
        t = self.env._now
        self._out[name] = (closed, swapped)
        self.circuit.set_device(name, closed=closed, swapped=swapped)
        self._put(("d", name), (closed, swapped))
        self._dark(name, t, closed)
        self._count_change(drv, t)
        if name in self._t_swap and (swapped != old[1] or (old[0] and not closed)):
            self.tracker.interrupt(t, name)
        if closed and not old[0] and inrush:
            tau_max = 0.0
            for run in sorted(self.trains_on.get(name, ())):
                tau_max = max(tau_max, self.train_runs[run].inrush(t, name))
            if tau_max > 0.0:
                self._inrush_until[name] = t + tau_max

    @staticmethod
    def _supply_state(m) -> tuple:
        """``(on, i_limit_a)``: the limit the circuit must hold (inf: none)."""
        on = bool(getattr(m, "on", getattr(m, "closed", True)))
        i_lim = m.i_limit_a if getattr(m, "limiting", False) else math.inf
        return (on, i_lim)

    def _dark(self, name: str, t: float, conducting: bool) -> None:
        if self.traces is not None:
            self.traces.output(name, t, conducting)
        self.log.output(name, t, conducting)
        since = self._dark_since[name]
        if not conducting and since is None:
            self._dark_since[name] = t
        elif conducting and since is not None:
            self._dark_s[name] += t - since
            self._dark_since[name] = None

    # ----------------------------------------------------------- events
    def record(self, ev: Event) -> None:
        self.summary.record(ev)

    # -------------------------------------------------------------- run
    def run(self) -> Result:
        """Play the scenario to the end and return its :class:`Result`."""
        wall0 = time.perf_counter()
        env = self.env
        for n in self.order:
            self._apply_output(self.drivers[n])
        for idx, f in enumerate(self.scn.faults):
            env.process(fault_process(self, idx, f))
        for idx, a in enumerate(self.scn.actions):
            env.process(action_process(self, idx, a))
        for run in self.train_runs.values():
            run.start()
        self._mark_dirty()
        for drv in self.drivers.values():
            drv.arm()
        try:
            self._play()
        except _StopRun as stop:
            self.findings.append(stop.finding)
            self.t_end_s = env._now
        return self._result(time.perf_counter() - wall0)

    def _play(self) -> None:
        """``env.run(until=t_end)`` within the event budget (events at exactly
        ``t_end`` are not played); a run that reaches its budget stops there
        (RF-RUN-023)."""
        env = self.env
        q = env._queue
        step = env.step
        t_end = self.t_end_s
        n = self.n_steps
        budget = self.event_budget
        try:
            while q and q[0][0] < t_end:
                if n >= budget:
                    env._now = q[0][0]        # nothing happens before the next event
                    raise _StopRun(self._budget_finding(q[0][0]))
                step()
                n += 1
        finally:
            self.n_steps = n
        env._now = t_end

    def _budget_finding(self, t: float) -> Finding:
        """RF-RUN-023: where the run stopped on its event budget, and what was busiest."""
        busiest = sorted(self.summary.entries.items(), key=lambda kv: -kv[1].count)[:3]
        what = ", ".join(f"{dev} {kind} x{e.count:,}" for (dev, kind), e in busiest)
        return Finding(
            "error", "RF-RUN-023", "world",
            f"the run stopped at {t:.9g} s of {self.t_end_s:.9g} s: it reached its budget of "
            f"{self.event_budget:,} engine events" + (f" (most: {what})" if what else "")
            + "; what follows is not simulated, so the run cannot pass",
            "simulate a shorter time (--until), or look at the device or train that acts "
            "so often")

    def _result(self, wall_s: float) -> Result:
        t_end = self.t_end_s
        self.record(Event(t_end, "world", "end"))
        episodes = self.tracker.finish(t_end)
        self.log.finish(t_end)
        if self.traces is not None:
            self.traces.finish(t_end)
        devices: dict[str, DeviceSummary] = {}
        for name, drv in self.drivers.items():
            m = drv.dev
            since = self._dark_since[name]
            dark = self._dark_s[name] + (t_end - since if since is not None else 0.0)
            s = self.summary
            tm = getattr(m, "theta_max", None)
            if tm is None and getattr(m, "theta", None) is not None:
                tm = m.theta
            devices[name] = DeviceSummary(
                kind=drv.kind,
                trips=sum(s.count(name, k) for k in
                          (SUPPLY_TRIP_EVENTS if drv.kind == "supply" else TRIP_EVENTS)),
                swaps=s.count(name, "swapped"),
                restarts=s.count(name, "restart"),
                dark_s=dark,
                peak_a=float(getattr(m, "peak_a", 0.0) or 0.0),
                max_thermal=None if tm is None else float(tm))
        stands = sorted((st for run in self.train_runs.values() for st in run.stands),
                        key=lambda st: (st.start_s, st.train))
        findings = (list(self.findings) + overrun_findings(episodes)
                    + stand_findings(stands, t_end)
                    + verdict_findings(episodes, self.scn.t_margin_required_s))
        scn = self.scn
        return Result(
            title=scn.title, path=scn.path, sha256=scn.sha256, seed=scn.seed,
            duration_s=scn.duration_s, verdict=decide(findings), findings=findings,
            episodes=episodes, devices=devices,
            events=list(self.summary.events) if self.summary.keep_events else None,
            summary=self.summary, t_end_s=t_end, log=self.log,
            t_margin_required_s=scn.t_margin_required_s,
            stands=stands,
            stats={"events": self.summary.n_events, "solves": self.n_solves,
                   "transitions": self.n_transitions, "topology": self.n_topology,
                   "cache_hits": self.n_cache_hits, "full_solves": self.n_full_solves,
                   "settles": self.n_settles,
                   "changes": self.n_changes, "wall_s": wall_s,
                   "circuit_s": self.t_circuit_s, "engine_events": self.n_steps,
                   "event_budget": self.event_budget, "degraded_solves": self.n_degraded})


class _StopRun(Exception):
    """The run cannot go on (event budget, an instant that does not settle, a
    circuit that cannot be solved): it stops at the present instant with
    ``finding``, and its result says so."""

    def __init__(self, finding: Finding):
        super().__init__(finding.message)
        self.finding = finding


def _describe_key(key) -> str:
    """A circuit-state key as a reader knows it (RF-RUN-024)."""
    kind = key[0]
    if kind == "d":
        return f"device {key[1]}"
    if kind == "p":
        return f"supply {key[1]}"
    if kind == "b":
        return f"bridge of train {key[1][1]}" if isinstance(key[1], tuple) and \
            len(key[1]) > 1 else "a bridge"
    if kind == "l":
        return f"load of train {key[1][1]}" if isinstance(key[1], tuple) and \
            len(key[1]) > 1 else "a load"
    return str(key)


def run(scn: Scenario, until_s: Optional[float] = None, keep_events: bool = False,
        event_budget: int = EVENT_BUDGET, traces=None) -> Result:
    """Play a scenario and return its result.

    Parameters
    ----------
    scn : Scenario
        A loaded scenario (:func:`sim.scenario.load`).
    until_s : float, optional
        Simulate up to this instant instead of ``scn.duration_s``.
    keep_events : bool
        Keep every event in ``Result.events`` (``railfault run --events``);
        without it events are only summarised (bounded memory).
    event_budget : int
        The most engine events the run may take; a run that reaches it stops
        there with a finding (RF-RUN-023). Stated in ``Result.stats``.
    traces : sim.world.traces.TraceRecorder, optional
        Records exact current traces around the episodes, bounded (for reports).

    Returns
    -------
    sim.trace.Result

    Examples
    --------
    >>> from sim.scenario import load                      # doctest: +SKIP
    >>> res = run(load("scenarios/cinder-ridge.yaml"))     # doctest: +SKIP
    >>> res.verdict                                        # doctest: +SKIP
    'pass'
    """
    return World(scn, until_s=until_s, keep_events=keep_events,
                 event_budget=event_budget, traces=traces).run()
