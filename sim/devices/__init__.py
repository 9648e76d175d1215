"""railfault devices: pure state machines of the protection devices.

No simpy and no circuit in here: the event engine drives each device through
``observe(t_s, i_a)``, ``next_deadline()``, ``advance(t_s)`` and ``reset(t_s)``
(see :mod:`sim.devices.machine`) and reads ``closed`` / ``swapped`` after each
advance.
"""
from __future__ import annotations

from typing import Optional

from sim.devices import curves, restart, sensing, thermal
from sim.devices.booster import BoosterDevice
from sim.devices.breaker import BreakerDevice
from sim.devices.events import EVENT_KINDS, DeviceEvent
from sim.devices.factory import grid_phase, make_device, make_devices
from sim.devices.machine import ProtectionMachine
from sim.devices.reverser import ReverserDevice
from sim.devices.supply import SupplyDevice


def trip_after_s(device, i_a: float, t_s: Optional[float] = None) -> float:
    """When ``device`` would act if ``i_a`` flowed through it from ``t_s`` on.

    Seconds after ``t_s`` (default: the device's last time), counting the
    timing already running in it (the margin "had the short gone on"). A
    booster or breaker acts at its trip (overcurrent or thermal), a reverser at
    the swap that interrupts the current, a hiccup/latch supply at once over
    its limit. ``0.0`` if the output is already open, ``math.inf`` if never.
    The device is not changed.
    """
    return device.trip_after_s(i_a, t_s)


__all__ = [
    "BoosterDevice", "BreakerDevice", "DeviceEvent", "EVENT_KINDS", "ProtectionMachine",
    "ReverserDevice", "SupplyDevice", "curves", "grid_phase", "make_device",
    "make_devices", "restart", "sensing", "thermal", "trip_after_s",
]
