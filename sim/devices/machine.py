"""The protection state machine shared by boosters, breakers and reversers.

Pure: no simpy, no circuit. The engine drives it through the device protocol:

``observe(t_s, i_a)``
    The current through the output is ``i_a`` from ``t_s`` on.
``next_deadline()``
    The instant of the next self-timed transition if nothing changes, or
    ``None``. Ask again after every ``observe``/``advance``: a change of current
    moves or cancels it. A deadline may equal the present time (an immediate
    transition, e.g. an undervoltage dropout) and some deadlines are internal
    (the end of a hold-off) and produce no event.
``advance(t_s)``
    Perform the transitions due at or before ``t_s`` and return their
    :class:`~sim.devices.events.DeviceEvent` list, in time order. It stops after
    a transition that changes the output (``closed`` or ``swapped``): what comes
    next depends on the current the changed output carries, which only the
    engine can tell (``observe``); a device whose next transition is due at
    once is simply due again. So a machine never loops on a current that its
    own output has already changed (zero swap, dead and hold-off times).
``reset(t_s)``
    An operator reset.

Output state: ``closed`` (the output conducts) and ``swapped`` (its leads are
exchanged). An ``observe`` later than the pending deadline raises
``ValueError``: the engine must ``advance`` first. At the same instant, an
``observe`` takes effect before a deadline due then (the current "from t_s on"
is what the sensor sees at ``t_s``).

Components
----------
* a trip unit (:class:`~sim.devices.overcurrent.TripUnit`), definite or inverse time;
* an optional thermal replica (IEC 60255-149, :mod:`sim.devices.thermal`);
  a thermal trip opens the output until θ has cooled to ``resume_at``; it does
  not use the restart policy, and an operator reset does not override it;
* a restart policy (:mod:`sim.devices.restart`) after an overcurrent trip;
* optional swap logic (a reversing controller, or a booster reversing its own
  output): a short read over ``sense_a`` for ``t_sense_s`` starts a swap
  (``swap_start``), which interrupts the short ``t_swap_s`` later (``swapped``:
  the leads flip); the output is then open for ``t_dead_s`` (``reclose`` at its
  end). No new swap starts within ``t_hold_off_s`` of the last ``swapped``: a
  short during the hold-off is timed by the trip unit (and the hold-off lasts
  as long as such a timing runs). Outside the hold-off the trip unit sees only
  currents the swap sensor does not read as a short, so that the device swaps
  first and trips only if the short stays after the swap;
* optional undervoltage dropout (``observe_supply_v``).

Ties at one instant are taken in the order: dropout, thermal trip, trip,
swapped, reclose, end of hold-off, swap start, restart, thermal resume,
return from undervoltage.

Time base
---------
Every instant a machine reports (its deadlines and the instants of its
events) lies on the run's 1 ns grid (:func:`sim.timebase.snap_s`): each
candidate transition instant is snapped before the earliest is chosen, so two
transitions within rounding of each other meet at one instant and the tie
order above decides, and the machine's clock never runs ahead of the engine's
(which schedules on the same grid). ``defer(t_s)`` moves a machine's clock on
without acting: the transitions due before ``t_s`` then happen at ``t_s``
(the engine's zero-time oscillation guard, :mod:`sim.world.engine`).
"""
from __future__ import annotations

import copy
import math
from types import MappingProxyType
from dataclasses import dataclass
from typing import Optional

from sim.model import Restart, Sense, Thermal, Trip
from sim.devices.events import DeviceEvent
from sim.devices.overcurrent import TripUnit
from sim.devices.restart import RestartState
from sim.devices.sensing import T_TOL_S, check_observation_time
from sim.devices.thermal import ThermalReplica
from sim.timebase import T_DIGITS, snap_s

#: Transitions processed in one ``advance`` before the machine declares a loop.
MAX_TRANSITIONS = 100_000

#: ``next_deadline`` not known for the present state (it must be computed); a
#: singleton, so that a copied or pickled machine keeps the meaning.
_STALE = False
#: ``(priority, kind)`` of each transition, in the tie order of the module doc.
(_K_DROPOUT, _K_THERMAL_TRIP, _K_TRIP, _K_SWAPPED, _K_RECLOSE, _K_HOLD_END, _K_SWAP_START,
 _K_RESTART, _K_THERMAL_RESUME, _K_UV_RETURN) = tuple(enumerate((
    "dropout", "thermal_trip", "trip", "swapped", "reclose", "hold_end", "swap_start",
    "restart", "thermal_resume", "uv_return")))
#: ``DeviceEvent(t, device, event, data)`` without the named tuple's keyword handling.
_new_event = tuple.__new__
#: The data of an event that carries none (shared, read-only).
_NO_DATA = MappingProxyType({})
#: Decimal places of the run's time grid (``round(t, _DIGITS)`` is
#: :func:`sim.timebase.snap_s`, inlined where it runs several times per event), and
#: half a step of it: an instant below ``t - _HALF_S`` lies on an earlier grid point.
_DIGITS = T_DIGITS
_HALF_S = 0.5 * 10.0 ** -T_DIGITS
_INF = math.inf


@dataclass(frozen=True)
class SwapSetting:
    """Swap logic: sense level and delay, swap time, dead time, hold-off (A, s)."""

    sense_a: float
    t_sense_s: float
    t_swap_s: float
    t_dead_s: float = 0.0
    t_hold_off_s: float = 0.05


@dataclass(frozen=True)
class UndervoltageSetting:
    """Drops out once the supply voltage has stayed under ``v_dropout_v`` for
    ``t_drop_s`` (0: at once); returns ``t_return_s`` after the supply voltage
    has come back to at least ``v_return_v`` (hysteresis)."""

    v_dropout_v: float
    v_return_v: float
    t_return_s: float
    t_drop_s: float = 0.0


class ProtectionMachine:
    """A protected output (see the module doc for the protocol and its rules).

    Parameters
    ----------
    name : str
        Device name, copied into its events.
    trip : sim.model.Trip
    sense : sim.model.Sense
    phase : float
        Sample-grid phase in ``[0, 1)``.
    restart : sim.model.Restart
    thermal : sim.model.Thermal, optional
    swap : SwapSetting, optional
    undervoltage : UndervoltageSetting, optional
    t0_s : float
        Start time (output closed, replica cold).
    """

    kind = "device"
    #: Events that answer "when would it interrupt the current" (trip_after_s).
    interrupt_events = frozenset({"trip", "thermal_trip"})

    def __init__(self, name: str, trip: Trip, sense: Sense, phase: float,
                 restart: Restart, thermal: Optional[Thermal] = None,
                 swap: Optional[SwapSetting] = None,
                 undervoltage: Optional[UndervoltageSetting] = None, t0_s: float = 0.0):
        self.name = name
        self.phase = phase
        self.trip_unit = TripUnit(trip, sense, phase)
        self.swap = swap
        self.sense_unit = (TripUnit(Trip(swap.sense_a, swap.t_sense_s), sense, phase)
                           if swap is not None else None)
        self.replica = ThermalReplica(thermal, 0.0, t0_s) if thermal is not None else None
        self.restart = RestartState(restart, trip.t_after_s)
        self.undervoltage = undervoltage
        self.swapped = False
        self.trips = 0
        self.swaps = 0
        self.restarts = 0
        self.peak_a = 0.0
        self._t = t0_s
        self._i = 0.0
        self._v: Optional[float] = None
        self._trip_open = False
        self._thermal_open = False
        self._uv_open = False
        self._t_restart: Optional[float] = None
        self._t_uv_drop: Optional[float] = None
        self._t_uv_return: Optional[float] = None
        self._mode = "armed"          # armed | swapping | dead | hold
        self._t_swap_end: Optional[float] = None
        self._t_reclose: Optional[float] = None
        self._t_hold_end: Optional[float] = None
        self._hold_extended = False
        self._timer = self.trip_unit.timer     # (the trip unit's detector, used on every feed)
        self._fs_a = self.trip_unit.full_scale_a
        self._refresh_closed()
        self._feed(t0_s)
        self._nc = _STALE             # _next(), kept until the state it depends on changes

    # ------------------------------------------------------------ state
    def _refresh_closed(self) -> None:
        """``closed``: whether the output conducts (a plain attribute, read on every
        event; refreshed after every transition and reset, the only changes of it)."""
        self.closed = not (self._trip_open or self._thermal_open or self._uv_open
                           or self._mode == "dead")

    @property
    def given_up(self) -> bool:
        """Whether the restart policy has given up (off until reset)."""
        return self.restart.given_up

    @property
    def theta(self) -> Optional[float]:
        """θ of the thermal replica at the last update (``None`` without one)."""
        return None if self.replica is None else self.replica.theta

    @property
    def theta_max(self) -> Optional[float]:
        return None if self.replica is None else self.replica.theta_max

    @property
    def t_s(self) -> float:
        """Time of the last observation or transition."""
        return self._t

    def _event(self, t_s: float, event: str, data=_NO_DATA) -> DeviceEvent:
        return _new_event(DeviceEvent, (t_s, self.name, event, data))

    # -------------------------------------------------------- protocol
    def observe(self, t_s: float, i_a: float) -> None:
        """The current through the output is ``i_a`` from ``t_s`` on."""
        t = self._t
        self._check_order(t_s, t)
        self._nc = _STALE
        if t_s < t:
            t_s = t
        i = i_a if i_a >= 0.0 else -i_a
        self._i = i
        if i > self.peak_a:
            self.peak_a = i
        if self.replica is not None:
            self.replica.update(t_s, i)
        if (self._mode == "hold" and self._hold_extended
                and not self.trip_unit.reads_over(i)):
            self._mode = "armed"
            self._hold_extended = False
        self._t = t_s
        self._feed(t_s)

    def observe_supply_v(self, t_s: float, v_v: float) -> None:
        """The supply voltage at the device is ``v_v`` from ``t_s`` on (undervoltage)."""
        t = self._t
        self._check_order(t_s, t)
        if t_s > t:
            self._t = t_s
        else:
            t_s = t
        self._v = v_v
        uv = self.undervoltage
        if uv is None:
            return          # (the next transition does not depend on the time or voltage)
        # only the undervoltage instants depend on the voltage: the kept next
        # transition stays valid unless one of them changes
        if self._uv_open:
            if v_v >= uv.v_return_v:
                if self._t_uv_return is None:
                    self._t_uv_return = t_s + uv.t_return_s
                    self._nc = _STALE
            elif self._t_uv_return is not None:
                self._t_uv_return = None
                self._nc = _STALE
        else:
            if v_v < uv.v_dropout_v:
                if self._t_uv_drop is None:
                    self._t_uv_drop = t_s + uv.t_drop_s
                    self._nc = _STALE
            elif self._t_uv_drop is not None:
                self._t_uv_drop = None
                self._nc = _STALE

    def next_deadline(self) -> Optional[float]:
        """The instant of the next self-timed transition, or ``None``.

        The next transition (``_next``, which depends on the state but not on
        the present time) is kept from one call to the next until an
        ``observe``, ``observe_supply_v`` (with undervoltage), ``advance`` or
        ``reset`` changes that state (the engine asks several times per event).
        """
        c = self._nc
        if c is _STALE:
            c = self._nc = self._next()
        if c is None:
            return None
        t = self._t
        return t if t > c[0] else c[0]      # max(c[0], t)

    def advance(self, t_s: float) -> list[DeviceEvent]:
        """Perform the transitions due at or before ``t_s``, up to and including the
        first that changes the output (module doc); return their events."""
        if t_s < self._t - T_TOL_S:
            raise ValueError(f"{self.name}: advance({t_s!r}) is before the last time {self._t!r}")
        t_s = snap_s(t_s)
        self._nc = _STALE
        events: list[DeviceEvent] = []
        for _ in range(MAX_TRANSITIONS):
            c = self._next()
            if c is None or c[0] > t_s:
                self._nc = c        # the next transition of the state it leaves
                break
            tt = c[0] if c[0] > self._t else self._t
            self._t = tt
            closed, swapped = self.closed, self.swapped
            _TRANSITIONS[c[2]](self, tt, events)
            self._refresh_closed()
            self._feed(tt)
            if self.closed is not closed or self.swapped is not swapped:
                break               # the engine must tell the new current first
        else:
            raise RuntimeError(f"{self.name}: more than {MAX_TRANSITIONS} transitions at one time")
        if t_s > self._t:
            self._t = t_s
        return events

    def defer(self, t_s: float) -> None:
        """Move the clock to ``t_s`` without acting: transitions due before it
        happen at ``t_s`` (the engine's zero-time oscillation guard)."""
        t_s = snap_s(t_s)
        if t_s > self._t:
            self._t = t_s

    def reset(self, t_s: float) -> list[DeviceEvent]:
        """Operator reset: close a tripped or given-up output, count tries from zero.

        A thermal lockout is not overridden (it ends at ``thermal_resume``).
        """
        self._check_time(t_s)
        self._nc = _STALE
        t_s = max(t_s, self._t)
        self._t = t_s
        self._trip_open = False
        self._t_restart = None
        self.restart.reset()
        self._cancel_swap()
        self.trip_unit.clear()
        self._refresh_closed()
        self._feed(t_s)
        return [self._event(t_s, "reset")]

    def trip_after_s(self, i_a: float, t_s: Optional[float] = None) -> float:
        """How long after ``t_s`` the output would interrupt ``i_a`` held from ``t_s`` on.

        Works on a copy: the device itself is not changed. ``t_s`` defaults to
        the last time the device saw; its present timing state (a trip delay
        already running, θ of the replica) counts. For boosters and breakers
        the answer is the first ``trip`` or ``thermal_trip``; for a reversing
        controller the first ``swapped`` or ``trip``. ``0.0`` if the output is
        already open, ``inf`` if it never acts.
        """
        t0 = self._t if t_s is None else max(t_s, self._t)
        m = self._clone()
        for _ in range(MAX_TRANSITIONS):
            nd = m.next_deadline()
            if nd is None or nd > t0 + T_TOL_S:
                break
            m.advance(nd)
        if not m.closed:
            return 0.0
        m.observe(t0, i_a)
        for _ in range(MAX_TRANSITIONS):
            nd = m.next_deadline()
            if nd is None:
                return math.inf
            for e in m.advance(nd):
                if e.event in self.interrupt_events:
                    return e.t_s - t0
        return math.inf

    # --------------------------------------------------------- internals
    def _clone(self) -> "ProtectionMachine":
        """An independent copy (settings are frozen records and are shared)."""
        m = copy.copy(self)
        for attr in ("trip_unit", "sense_unit"):
            unit = getattr(self, attr)
            if unit is not None:
                u = copy.copy(unit)
                u.timer = copy.copy(unit.timer)
                setattr(m, attr, u)
        m._timer = m.trip_unit.timer
        if self.replica is not None:
            m.replica = copy.copy(self.replica)
        m.restart = copy.copy(self.restart)
        return m

    def _check_order(self, t_s: float, t: float) -> None:
        """``_check_time`` in a few comparisons when the time is in order (every
        observation passes here; the kept next transition is computed if stale)."""
        c = self._nc
        if c is _STALE:
            c = self._nc = self._next()
        if t_s < t - T_TOL_S or (c is not None and t_s > (c[0] if c[0] > t else t) + T_TOL_S):
            self._check_time(t_s)                 # raises, with the message

    def _check_time(self, t_s: float) -> None:
        check_observation_time(self.name, self._t, t_s, self.next_deadline())

    def _feed(self, t_s: float) -> None:
        """Give each detector the current it may see in the present state
        (the trip unit's reading is ``min(|I|, full scale)``, its ADC clamp)."""
        i = self._i if self.closed else 0.0
        fs = self._fs_a
        if self.sense_unit is None or self._mode == "hold":
            self._timer.update(t_s, i if i < fs else fs)
            if self.sense_unit is not None:
                self.sense_unit.update(t_s, 0.0)
            return
        trip_in = 0.0
        sense_in = 0.0
        if self._mode == "armed":
            sense_in = i
            if not self.sense_unit.reads_over(i):
                trip_in = i
        self._timer.update(t_s, trip_in if trip_in < fs else fs)
        self.sense_unit.update(t_s, sense_in)

    def _next(self):
        """``(t, priority, kind)`` of the next transition (the earliest on the 1 ns
        grid; at one instant the lowest priority, the tie order of the module
        doc), or ``None``.

        Candidates are visited in priority order and only one strictly earlier
        on the grid replaces the best, which is ``min`` over ``(snap(t),
        priority)`` without building the candidate list or snapping every
        candidate (this runs several times per event).
        """
        best_t = best = None
        lim = _INF          # a candidate earlier on the grid than the best: d < lim
        d = self._t_uv_drop
        if d is not None:
            best_t, best = round(d, _DIGITS), _K_DROPOUT
            lim = best_t - _HALF_S
        rep = self.replica
        if rep is not None and not self._thermal_open:
            d = rep.trip_deadline_s()
            if d is not None and d < lim:
                best_t, best = round(d, _DIGITS), _K_THERMAL_TRIP
                lim = best_t - _HALF_S
        d = self._timer.due_s()
        if d is not None and d < lim:
            best_t, best = round(d, _DIGITS), _K_TRIP
            lim = best_t - _HALF_S
        if self.swap is not None:
            mode = self._mode
            if mode == "swapping":
                d = self._t_swap_end
                if d < lim:
                    best_t, best = round(d, _DIGITS), _K_SWAPPED
                    lim = best_t - _HALF_S
            elif mode == "dead":
                d = self._t_reclose
                if d < lim:
                    best_t, best = round(d, _DIGITS), _K_RECLOSE
                    lim = best_t - _HALF_S
            elif mode == "hold" and not self._hold_extended:
                d = self._t_hold_end
                if d < lim:
                    best_t, best = round(d, _DIGITS), _K_HOLD_END
                    lim = best_t - _HALF_S
            d = self.sense_unit.timer.due_s()
            if d is not None and d < lim:
                best_t, best = round(d, _DIGITS), _K_SWAP_START
                lim = best_t - _HALF_S
        d = self._t_restart
        if d is not None and d < lim:
            best_t, best = round(d, _DIGITS), _K_RESTART
            lim = best_t - _HALF_S
        if rep is not None and self._thermal_open:
            d = rep.resume_deadline_s()
            if d is not None and d < lim:
                best_t, best = round(d, _DIGITS), _K_THERMAL_RESUME
                lim = best_t - _HALF_S
        d = self._t_uv_return
        if d is not None and d < lim:
            best_t, best = round(d, _DIGITS), _K_UV_RETURN
        return None if best is None else (best_t,) + best

    def _cancel_swap(self) -> None:
        self._mode = "armed"
        self._t_swap_end = None
        self._t_reclose = None
        self._t_hold_end = None
        self._hold_extended = False
        if self.sense_unit is not None:
            self.sense_unit.clear()

    # transitions --------------------------------------------------------
    def _on_dropout(self, t, events):
        self._t_uv_drop = None
        self._uv_open = True
        self._cancel_swap()
        self.trip_unit.clear()
        events.append(self._event(t, "dropout", {"v_v": self._v}))

    def _on_thermal_trip(self, t, events):
        self.replica.update(t, self._i)
        self.replica.set_theta(self.replica.setting.trip_at)
        self._thermal_open = True
        self._cancel_swap()
        self.trip_unit.clear()
        events.append(self._event(t, "thermal_trip", {"theta": self.replica.theta, "i_a": self._i}))

    def _on_trip(self, t, events):
        self.trips += 1
        self._trip_open = True
        self._cancel_swap()
        self.trip_unit.clear()
        wait = self.restart.on_trip(t)
        self._t_restart = None if wait is None else t + wait
        events.append(self._event(t, "trip", {"i_a": self._i, "restart_in_s": wait}))
        if wait is None and self.restart.given_up:
            events.append(self._event(t, "give_up", {"tries": self.restart.tries_used}))

    def _on_swapped(self, t, events):
        sw = self.swap
        self.swapped = not self.swapped
        self.swaps += 1
        self._t_swap_end = None
        self._t_hold_end = t + sw.t_hold_off_s
        self._hold_extended = False
        if sw.t_dead_s > 0.0:
            self._mode = "dead"
            self._t_reclose = t + sw.t_dead_s
        else:
            self._mode = "hold"
        events.append(self._event(t, "swapped", {"swapped": self.swapped, "swaps": self.swaps}))

    def _on_reclose(self, t, events):
        self._t_reclose = None
        self._mode = "hold"
        events.append(self._event(t, "reclose"))

    def _on_hold_end(self, t, events):
        if self.trip_unit.timing:
            self._hold_extended = True
        else:
            self._mode = "armed"
            self._t_hold_end = None

    def _on_swap_start(self, t, events):
        self._mode = "swapping"
        self._t_swap_end = t + self.swap.t_swap_s
        self.sense_unit.clear()
        events.append(self._event(t, "swap_start", {"i_a": self._i}))

    def _on_restart(self, t, events):
        self._t_restart = None
        self._trip_open = False
        self.restarts += 1
        n = self.restart.on_restart(t)
        self._cancel_swap()
        events.append(self._event(t, "restart", {"attempt": n}))

    def _on_thermal_resume(self, t, events):
        self.replica.update(t, self._i)
        self.replica.set_theta(self.replica.setting.resume_at)
        self._thermal_open = False
        events.append(self._event(t, "thermal_resume", {"theta": self.replica.theta}))

    def _on_uv_return(self, t, events):
        self._t_uv_return = None
        self._uv_open = False
        events.append(self._event(t, "reclose", {"cause": "undervoltage", "v_v": self._v}))


#: Transition handlers by kind (``advance`` dispatches through this table).
_TRANSITIONS = {k: getattr(ProtectionMachine, "_on_" + k) for k in (
    "dropout", "thermal_trip", "trip", "swapped", "reclose", "hold_end", "swap_start",
    "restart", "thermal_resume", "uv_return")}
