"""The events a protection device reports to the engine."""
from __future__ import annotations

from dataclasses import dataclass, field

#: Every event name a device may report (the agreed contract).
EVENT_KINDS = frozenset({
    "detect", "trip", "swap_start", "swapped", "reclose", "restart", "give_up",
    "thermal_trip", "thermal_resume", "limit", "off", "on", "dropout", "reset",
})


@dataclass(frozen=True)
class DeviceEvent:
    """One transition of a device at an absolute time ``t_s``.

    ``data`` carries details (currents in A, ``theta``, the try number, ...),
    keys named with their units.
    """

    t_s: float
    device: str
    event: str
    data: dict = field(default_factory=dict)

    def __post_init__(self):
        if self.event not in EVENT_KINDS:
            raise ValueError(f"unknown device event {self.event!r}")

    def as_dict(self) -> dict:
        """Flat record ``{t_s, device, event, **data}`` for the JSON event log."""
        return {"t_s": self.t_s, "device": self.device, "event": self.event, **self.data}
