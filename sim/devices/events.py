"""The event record of a run: what a protection device reports to the engine, and
the world's own records (shorts, trains, faults) in the same shape.

It lives with the devices, below the result module (:mod:`sim.trace` re-exports
:class:`Event`), so the devices do not import the result.
"""
from __future__ import annotations

from types import MappingProxyType
from typing import Mapping, NamedTuple

from sim.jsonsafe import clean, num


#: Every event name a device may report (the agreed contract).
EVENT_KINDS = frozenset({
    "detect", "trip", "swap_start", "swapped", "reclose", "restart", "give_up",
    "thermal_trip", "thermal_resume", "limit", "off", "on", "dropout", "reset",
})


_NO_DATA: Mapping = MappingProxyType({})


class Event(NamedTuple):
    """One thing that happened at ``t_s``.

    ``device`` names what it happened to: a device, a train, or the place of a
    short (a joint name such as ``"east-main.b~wye-east.a"``, or
    ``"section@12 m"`` for a fault). ``event`` is the kind: the device event
    kinds of :mod:`sim.devices` (``detect``, ``trip``, ``swap_start``,
    ``swapped``, ``reclose``, ``restart``, ``give_up``, ``thermal_trip``,
    ``thermal_resume``, ``limit``, ``off``, ``on``, ``dropout``, ``reset``)
    and the world's own: ``short`` / ``cleared`` (a short episode opens /
    closes), ``fault`` / ``fault_end`` / ``open`` (scenario faults), ``stop`` /
    ``go`` (a train without / with power again), ``inrush`` (keep-alive
    capacitors charging at a restart), ``end`` (the end of the run).
    A named tuple: cheap to make, immutable.
    """

    t_s: float
    device: str
    event: str
    data: Mapping = _NO_DATA

    def as_dict(self) -> dict:
        d = {"t_s": num(self.t_s), "device": self.device, "event": self.event}
        for k, v in self.data.items():
            if k not in d:
                d[k] = clean(v)
        return d

    def as_tuple(self) -> tuple[float, str]:
        """``(t_s, event)``, the shape of the exact event logs in the tests."""
        return (self.t_s, self.event)


#: One transition of a device at an absolute time ``t_s``: ``(t_s, device, event,
#: data)``, the very record the world keeps (:class:`Event`, a named tuple:
#: cheap to make on every transition). ``data`` carries details (currents in A,
#: ``theta``, the try number, ...), keys named with their units. ``event`` is one of
#: :data:`EVENT_KINDS`; the machines name their events with literals, and the device
#: fuzz test holds every event they report to that set.
DeviceEvent = Event
