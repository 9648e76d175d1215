"""Booster: overcurrent trip, optional thermal replica, restart policy, optional
self-reversing on a short, and supply undervoltage dropout.

Undervoltage hysteresis (our design choice, from memory of how undervoltage
lockouts are usually built, not a published value): the booster drops out at
once when its supply voltage is under ``v_undervoltage_v``, and closes again
(event ``reclose`` with ``cause: undervoltage``) once the voltage has stayed at or
above ``UV_RETURN_FACTOR * v_undervoltage_v`` (5 % higher) for
``UV_RETURN_DELAY_S``. The delay also keeps a supply that sags under the load it
feeds from flapping in zero time.
"""
from __future__ import annotations

from sim.model import Booster
from sim.devices.machine import ProtectionMachine, SwapSetting, UndervoltageSetting

#: Return level of the undervoltage dropout, as a multiple of ``v_undervoltage_v``.
UV_RETURN_FACTOR = 1.05
#: How long the voltage must stay at the return level before the output closes (s).
UV_RETURN_DELAY_S = 0.1


class BoosterDevice(ProtectionMachine):
    """A booster's state machine.

    With ``reverse_on_short`` the booster, on a short read over
    ``sense_reverse_a`` (default: the trip threshold) for ``t_sense_reverse_s``,
    swaps its own output (``swap_start``, then ``swapped`` after ``t_swap_s``),
    holds off ``t_hold_off_s``, and trips by ``trip`` if the short stays.

    Parameters
    ----------
    model : sim.model.Booster
    phase : float
        Sample-grid phase in ``[0, 1)``.
    t0_s : float
        Start time.
    """

    kind = "booster"

    def __init__(self, model: Booster, phase: float = 0.0, t0_s: float = 0.0):
        self.model = model
        swap = None
        if model.reverse_on_short:
            sense_a = (model.sense_reverse_a if model.sense_reverse_a is not None
                       else model.trip.i_above_a)
            swap = SwapSetting(sense_a=sense_a, t_sense_s=model.t_sense_reverse_s,
                               t_swap_s=model.t_swap_s, t_dead_s=0.0,
                               t_hold_off_s=model.t_hold_off_s)
        uv = None
        if model.v_undervoltage_v > 0.0:
            uv = UndervoltageSetting(model.v_undervoltage_v,
                                     UV_RETURN_FACTOR * model.v_undervoltage_v,
                                     UV_RETURN_DELAY_S, model.t_undervoltage_s)
        super().__init__(model.name, model.trip, model.sense, phase, model.restart,
                         thermal=model.thermal, swap=swap, undervoltage=uv, t0_s=t0_s)
