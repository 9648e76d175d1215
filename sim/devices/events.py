"""The events a protection device reports to the engine."""
from __future__ import annotations

from sim.trace import Event

#: Every event name a device may report (the agreed contract).
EVENT_KINDS = frozenset({
    "detect", "trip", "swap_start", "swapped", "reclose", "restart", "give_up",
    "thermal_trip", "thermal_resume", "limit", "off", "on", "dropout", "reset",
})


#: One transition of a device at an absolute time ``t_s``: ``(t_s, device, event,
#: data)``, the very record the world keeps (:class:`sim.trace.Event`, a named tuple:
#: cheap to make on every transition). ``data`` carries details (currents in A,
#: ``theta``, the try number, ...), keys named with their units. ``event`` is one of
#: :data:`EVENT_KINDS`; the machines name their events with literals, and the device
#: fuzz test holds every event they report to that set.
DeviceEvent = Event
