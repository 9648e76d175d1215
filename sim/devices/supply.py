"""Power supply current limit: constant-current, hiccup or latch.

The supply observes its load current (``observe``) and, optionally, its
terminal voltage (``observe_supply_v``). Over ``i_limit_a``:

``constant-current``
    The supply holds its current at the limit and its voltage collapses:
    event ``limit`` (``active: True``); ``limiting`` becomes true and the engine
    solves with ``set_supply(name, i_limit_a=...)``. While limiting, an observed
    current at the limit (within 1e-9 relative) keeps it there. It leaves the
    limit (``limit``, ``active: False``) when the observed current falls under
    the limit (an engine that reports the prospective, unlimited current) or
    when the observed terminal voltage reaches ``v_emf - i_limit * r`` (the
    voltage mode would then deliver no more than the limit: the load has gone;
    needed when the circuit models the limit as an ideal current source).
``hiccup``
    Output off (``off``), on again ``t_off_s`` later (``on``); the engine
    observes the overload again after ``on`` and the cycle repeats as long as
    it stays.
``latch``
    Output off (``off``) until an operator reset (``reset``, then ``on``).

For hiccup and latch, ``t_limit_s`` > 0 (a model field, default 0) makes the
supply first hold its limit at constant current (``limit`` events as above)
and switch off only if the overload lasts ``t_limit_s``; with 0 it switches off
at once.
"""
from __future__ import annotations

import math
from typing import Optional

from sim.model import Supply
from sim.devices.events import DeviceEvent
from sim.devices.sensing import T_TOL_S, check_observation_time
from sim.timebase import snap_s

_LIMIT_REL = 1e-9

#: ``next_deadline`` not known for the present state (it must be computed); a
#: singleton, so that a copied or pickled machine keeps the meaning.
_STALE = False


class SupplyDevice:
    """A supply's state machine (protocol as in :mod:`sim.devices.machine`).

    Parameters
    ----------
    model : sim.model.Supply
    t0_s : float
        Start time (output on).
    """

    kind = "supply"

    def __init__(self, model: Supply, t0_s: float = 0.0):
        self.model = model
        self.name = model.name
        self.i_limit_a = model.i_limit_a
        self.t_limit_s = float(getattr(model, "t_limit_s", 0.0) or 0.0)
        self.on = True
        self.limiting = False
        self.swapped = False
        self.trips = 0
        self.peak_a = 0.0
        self._t = t0_s
        self._i = 0.0
        self._released = False                    # limiting, but the voltage says the load went
        self._t_limit_since: Optional[float] = None
        self._t_on: Optional[float] = None        # hiccup: back on
        self._cc = model.on_limit == "constant-current"
        self._limits_first = self._cc or self.t_limit_s > 0.0
        self._v_knee_v = model.v_emf_v - self.i_limit_a * model.r_ohm
        self._nd = _STALE                         # next_deadline(), until the state changes

    @property
    def closed(self) -> bool:
        """Whether the output is on."""
        return self.on

    @property
    def t_s(self) -> float:
        return self._t

    # ------------------------------------------------------------ inputs
    def _over(self) -> bool:
        if self.limiting:
            return (not self._released) and self._i >= self.i_limit_a * (1.0 - _LIMIT_REL)
        return self._i > self.i_limit_a

    def _check_fast(self, t_s: float) -> None:
        """``_check_time`` without the calls when the time is in order."""
        t = self._t
        nd = self._nd
        if nd is _STALE:
            nd = self.next_deadline()
        if t_s < t - T_TOL_S or (nd is not None and t_s > nd + T_TOL_S):
            self._check_time(t_s)                 # raises, with the message

    def observe(self, t_s: float, i_a: float) -> None:
        """The load current is ``i_a`` from ``t_s`` on."""
        self._check_fast(t_s)
        self._nd = _STALE
        if t_s > self._t:
            self._t = t_s
        i = i_a if i_a >= 0.0 else -i_a
        self._i = i
        # what it delivers: a demand above the limit is held at the limit (or switched off)
        d = i if i < self.i_limit_a else self.i_limit_a
        if d > self.peak_a:
            self.peak_a = d

    def observe_supply_v(self, t_s: float, v_v: float) -> None:
        """The terminal voltage is ``v_v`` from ``t_s`` on (ends a constant-current limit)."""
        self._check_fast(t_s)
        if t_s > self._t:
            self._t = t_s
            self._nd = _STALE             # (a deadline "now" moves with the time)
        if self.limiting:
            self._nd = _STALE
            self._released = v_v >= self._v_knee_v * (1.0 - _LIMIT_REL)

    # ------------------------------------------------------------ protocol
    def _next(self):
        """``(time, priority, kind)`` of the next transition, or ``None``."""
        if self.on:
            want = self._over()
            if self._limits_first:
                if want != self.limiting:
                    return (self._t, 0, "limit")
                if self.limiting and not self._cc:
                    return (snap_s(self._t_limit_since + self.t_limit_s), 1, "off")
            elif want:
                return (self._t, 1, "off")
        elif self._t_on is not None:
            return (snap_s(self._t_on), 2, "on")
        return None

    def next_deadline(self) -> Optional[float]:
        """The instant of the next transition, or ``None`` (kept until the state changes)."""
        nd = self._nd
        if nd is _STALE:
            c = self._next()
            if c is None:
                nd = None
            else:
                t = self._t
                nd = t if t > c[0] else c[0]      # max(c[0], t)
            self._nd = nd
        return nd

    def advance(self, t_s: float) -> list[DeviceEvent]:
        """Perform the next transition due at or before ``t_s`` (each one changes the
        supply's output, so it stops after one: the engine must solve again, as
        in :mod:`sim.devices.machine`); return its events."""
        if t_s < self._t - T_TOL_S:
            raise ValueError(f"{self.name}: advance({t_s!r}) is before the last time {self._t!r}")
        t_s = snap_s(t_s)
        self._nd = _STALE
        events: list[DeviceEvent] = []
        c = self._next()
        if c is not None and c[0] <= t_s:
            t = max(c[0], self._t)
            self._t = t
            if c[2] == "limit":
                self.limiting = not self.limiting
                self._released = False
                self._t_limit_since = t if self.limiting else None
                events.append(DeviceEvent(t, self.name, "limit",
                                          {"active": self.limiting, "i_a": self._i,
                                           "i_limit_a": self.i_limit_a}))
            elif c[2] == "off":
                hiccup = self.model.on_limit == "hiccup"
                self.on = False
                self.limiting = False
                self._released = False
                self._t_limit_since = None
                self.trips += 1
                self._t_on = t + self.model.t_off_s if hiccup else None
                events.append(DeviceEvent(t, self.name, "off",
                                          {"i_a": self._i,
                                           "on_in_s": self.model.t_off_s if hiccup else None}))
            else:
                self._t_on = None
                self.on = True
                events.append(DeviceEvent(t, self.name, "on", {}))
        if t_s > self._t:
            self._t = t_s
        return events

    def defer(self, t_s: float) -> None:
        """Move the clock to ``t_s`` without acting (as :meth:`ProtectionMachine.defer`)."""
        t_s = snap_s(t_s)
        if t_s > self._t:
            self._t = t_s
            self._nd = _STALE

    def reset(self, t_s: float) -> list[DeviceEvent]:
        """Operator reset: an off supply comes on at once."""
        self._check_time(t_s)
        self._nd = _STALE
        self._t = max(self._t, t_s)
        events = [DeviceEvent(self._t, self.name, "reset", {})]
        if not self.on:
            self.on = True
            self._t_on = None
            events.append(DeviceEvent(self._t, self.name, "on", {}))
        return events

    def trip_after_s(self, i_a: float, t_s: Optional[float] = None) -> float:
        """Time until the output goes off if ``i_a`` flowed from ``t_s`` on.

        Hiccup/latch over the limit: ``t_limit_s`` (less what has already run
        of it); 0 when already off; ``inf`` otherwise (a constant-current
        supply never switches off).
        """
        if not self.on:
            return 0.0
        if self.model.on_limit == "constant-current" or not abs(i_a) > self.i_limit_a:
            return math.inf
        t0 = self._t if t_s is None else max(t_s, self._t)
        if self.limiting and self._t_limit_since is not None:
            return max(0.0, self._t_limit_since + self.t_limit_s - t0)
        return self.t_limit_s

    def _check_time(self, t_s: float) -> None:
        check_observation_time(self.name, self._t, t_s, self.next_deadline())
