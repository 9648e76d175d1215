"""Electronic circuit breaker: the booster's trip logic on a sub-district."""
from __future__ import annotations

from sim.model import Breaker
from sim.devices.machine import ProtectionMachine


class BreakerDevice(ProtectionMachine):
    """A breaker's state machine: trip unit, optional thermal replica, its own restart.

    Parameters
    ----------
    model : sim.model.Breaker
    phase : float
        Sample-grid phase in ``[0, 1)`` (``model.sense.phase`` if set).
    t0_s : float
        Start time.
    """

    kind = "breaker"

    def __init__(self, model: Breaker, phase: float = 0.0, t0_s: float = 0.0):
        self.model = model
        super().__init__(model.name, model.trip, model.sense, phase, model.restart,
                         thermal=model.thermal, t0_s=t0_s)
