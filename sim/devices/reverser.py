"""Reversing controller: senses the short of a polarity mismatch and swaps its leads.

Sequence (see :mod:`sim.devices.machine` for the shared rules): a current read
over ``sense_above_a`` for ``t_sense_s`` (sampled by its ``sense`` record, if
any) is detected: ``swap_start``. ``t_swap_s`` later the short is interrupted:
``swapped`` (``swapped`` flips); a swap once started completes, even if the
current goes away meanwhile (the switch is already moving). With ``t_dead_s`` > 0 the output is then open
for the dead time and closes at ``reclose``. Within ``t_hold_off_s`` of the last
``swapped`` it does not swap again: a short then is timed by ``trip`` and, if it
lasts, trips the reverser, which restarts by its policy. Two reversers facing
each other across a gap each swap on the same short; being deterministic, the
machines reproduce the fight (see their ``swaps`` counters).
"""
from __future__ import annotations

from sim.model import Reverser
from sim.devices.machine import ProtectionMachine, SwapSetting


class ReverserDevice(ProtectionMachine):
    """A reversing controller's state machine.

    :meth:`trip_after_s` answers when it would *interrupt* a current: at its
    ``swapped`` (or a ``trip`` during hold-off).

    Parameters
    ----------
    model : sim.model.Reverser
    phase : float
        Sample-grid phase in ``[0, 1)``.
    t0_s : float
        Start time.
    """

    kind = "reverser"
    interrupt_events = frozenset({"swapped", "trip"})

    def __init__(self, model: Reverser, phase: float = 0.0, t0_s: float = 0.0):
        self.model = model
        swap = SwapSetting(sense_a=model.sense_above_a, t_sense_s=model.t_sense_s,
                           t_swap_s=model.t_swap_s, t_dead_s=model.t_dead_s,
                           t_hold_off_s=model.t_hold_off_s)
        super().__init__(model.name, model.trip, model.sense, phase, model.restart,
                         swap=swap, t0_s=t0_s)
