"""Build device state machines from the scenario model."""
from __future__ import annotations

from typing import Optional

import numpy as np

from sim.model import Scenario, Sense
from sim.devices.booster import BoosterDevice
from sim.devices.breaker import BreakerDevice
from sim.devices.reverser import ReverserDevice
from sim.devices.supply import SupplyDevice


def grid_phase(sense: Sense, rng: Optional[np.random.Generator]) -> float:
    """The sample-grid phase: ``sense.phase`` if set, else ``rng.random()``.

    Continuous sensing has no grid and draws nothing (phase 0).
    """
    if sense.phase is not None:
        return float(sense.phase)
    if sense.period_s is None:
        return 0.0
    if rng is None:
        raise ValueError("a sampled sensor with no phase needs a random generator")
    return float(rng.random())


def make_device(scn: Scenario, name: str, rng: Optional[np.random.Generator] = None,
                t0_s: float = 0.0):
    """The state machine of the supply, booster, breaker or reverser ``name``.

    Parameters
    ----------
    scn : sim.model.Scenario
    name : str
    rng : numpy.random.Generator
        Draws the sample-grid phase when the device's ``sense.phase`` is ``None``
        (one ``rng.random()`` per sampled device built).
    t0_s : float
        Start time.

    Raises
    ------
    KeyError
        No device of that name.
    """
    kind = scn.device_kind(name)
    if kind == "supply":
        return SupplyDevice(scn.supplies[name], t0_s)
    if kind == "booster":
        m = scn.boosters[name]
        return BoosterDevice(m, grid_phase(m.sense, rng), t0_s)
    if kind == "breaker":
        m = scn.breakers[name]
        return BreakerDevice(m, grid_phase(m.sense, rng), t0_s)
    if kind == "reverser":
        m = scn.reversers[name]
        return ReverserDevice(m, grid_phase(m.sense, rng), t0_s)
    raise KeyError(name)


def make_devices(scn: Scenario, rng: Optional[np.random.Generator] = None,
                 t0_s: float = 0.0) -> dict:
    """Every device of a scenario, by name, built in a fixed order (supplies,
    boosters, breakers, reversers, each in file order) so that the phases drawn
    from ``rng`` depend only on the scenario."""
    out = {}
    for table in (scn.supplies, scn.boosters, scn.breakers, scn.reversers):
        for name in table:
            out[name] = make_device(scn, name, rng, t0_s)
    return out


__all__ = ["grid_phase", "make_device", "make_devices"]
