"""Overcurrent trip unit: definite time or inverse time, sampled or continuous sensing.

The unit reads ``min(|I|, full_scale_a)`` (ADC clamp, :mod:`sim.devices.sensing`)
and holds each reading until the next update (piecewise-constant input).

Definite time
    Trips once the reading has been over ``i_above_a`` for ``t_after_s``:
    continuous sensing at ``onset + t_after_s``; sampled sensing after
    ``n = ceil(t_after_s / Ts)`` consecutive samples over threshold, i.e. at the
    first sample at or after the onset plus ``(n - 1)`` periods. A dip under
    the threshold resets the timing only if the sensor can see it: continuous
    sensing sees any dip of positive length, sampled sensing only a dip that
    contains a sample instant.

Inverse time (IEC 60255-151 / IEEE C37.112)
    The operate time ``t(I)`` of :func:`sim.devices.curves.inverse_time_s`
    (``t_after_s`` a lower bound). For a current that changes during timing the
    unit integrates, as the standard's integrating behaviour: trip progress
    grows by ``dt / t(I)`` (continuous) or ``Ts / t(I)`` per sample over
    threshold, and the unit trips when it reaches 1. **Reset choice**: the
    progress resets to zero as soon as the sensor sees the reading at or below
    ``i_above_a`` (instantaneous reset, one of the reset characteristics IEC
    60255-151 allows); there is no disc-emulating slow reset.
"""
from __future__ import annotations

import copy
import math
from typing import Optional

from sim.model import Sense, Trip
from sim.devices.curves import inverse_time_s
from sim.devices.sensing import (
    T_TOL_S, ceil_tol, detect_time_s, reading_a, sample_at_or_after,
    sample_index_at_or_after, samples_in)


class DefiniteTimer:
    """Definite-time detector: over ``threshold_a`` for ``t_delay_s`` (see module doc)."""

    def __init__(self, threshold_a: float, t_delay_s: float, period_s: Optional[float],
                 phase: float):
        self.threshold_a = threshold_a
        self.t_delay_s = t_delay_s
        self.period_s = period_s
        self.phase = phase
        self.t_onset_s: Optional[float] = None
        self.above = False
        self._t_below_s: Optional[float] = None

    def update(self, t_s: float, reading: float) -> None:
        """The (clamped) reading is ``reading`` from ``t_s`` on."""
        over = reading > self.threshold_a
        if over:
            if self.t_onset_s is None or (not self.above and self._dip_seen(t_s)):
                self.t_onset_s = t_s
            self.above = True
            self._t_below_s = None
        elif self.above:
            self.above = False
            self._t_below_s = t_s

    def _dip_seen(self, t_s: float) -> bool:
        """Whether the sensor saw the reading under threshold in ``[t_below, t_s)``."""
        t_below = self._t_below_s
        if t_below is None:
            return True
        if self.period_s is None:
            return t_s > t_below + T_TOL_S
        return sample_at_or_after(t_below, self.period_s, self.phase) < t_s - T_TOL_S

    def due_s(self) -> Optional[float]:
        """The trip instant if the reading stays as it is, or ``None``."""
        if not self.above or self.t_onset_s is None:
            return None
        if self.period_s is None:
            return self.t_onset_s + self.t_delay_s     # detect_time_s, continuous
        return detect_time_s(self.t_onset_s, self.t_delay_s, self.period_s, self.phase)

    def clear(self) -> None:
        """Forget any timing (after a trip, or when the output opens)."""
        self.t_onset_s = None
        self.above = False
        self._t_below_s = None


class InverseTimer:
    """Integrating inverse-time detector (see module doc for the reset choice)."""

    def __init__(self, trip: Trip, period_s: Optional[float], phase: float):
        self.trip = trip
        self.threshold_a = trip.i_above_a
        self.period_s = period_s
        self.phase = phase
        self.progress = 0.0
        self.t_s = 0.0
        self.reading = 0.0
        self.above = False

    def _operate_s(self, reading: float) -> float:
        return inverse_time_s(reading, self.trip)

    def update(self, t_s: float, reading: float) -> None:
        """Integrate progress over ``[t_last, t_s)`` at the old reading, then hold ``reading``."""
        if t_s > self.t_s:
            if self.period_s is None:
                if self.above:
                    op = self._operate_s(self.reading)
                    self.progress += (t_s - self.t_s) / op if op > 0 else math.inf
                elif t_s > self.t_s + T_TOL_S:
                    self.progress = 0.0
            else:
                m = samples_in(self.t_s, t_s, self.period_s, self.phase)
                if m:
                    if self.above:
                        op = self._operate_s(self.reading)
                        self.progress += m * self.period_s / op if op > 0 else math.inf
                    else:
                        self.progress = 0.0
            self.t_s = t_s
        self.reading = reading
        self.above = reading > self.threshold_a

    def due_s(self) -> Optional[float]:
        """The instant progress reaches 1 if the reading stays as it is, or ``None``."""
        if not self.above:
            return None
        op = self._operate_s(self.reading)
        remaining = max(0.0, 1.0 - self.progress)
        if self.period_s is None:
            return self.t_s + remaining * op
        inc = self.period_s / op if op > 0 else math.inf
        m = max(1, ceil_tol(remaining / inc)) if inc != math.inf else 1
        k0 = sample_index_at_or_after(self.t_s, self.period_s, self.phase)
        return (k0 + m - 1 + self.phase) * self.period_s

    def clear(self) -> None:
        """Forget any progress."""
        self.progress = 0.0
        self.above = False
        self.reading = 0.0


class TripUnit:
    """An overcurrent trip unit with its sensor.

    Parameters
    ----------
    trip : sim.model.Trip
        Threshold, delay, optional inverse-time curve.
    sense : sim.model.Sense
        Sample period (``None``: continuous) and ADC full scale.
    phase : float
        The sample-grid phase in ``[0, 1)`` (already drawn when ``sense.phase``
        is ``None``).
    """

    def __init__(self, trip: Trip, sense: Sense, phase: float = 0.0):
        self.trip = trip
        self.sense = sense
        self.phase = phase
        self.full_scale_a = sense.full_scale_a
        if trip.curve is None:
            self.timer = DefiniteTimer(trip.i_above_a, trip.t_after_s, sense.period_s, phase)
        else:
            self.timer = InverseTimer(trip, sense.period_s, phase)

    @property
    def threshold_a(self) -> float:
        return self.trip.i_above_a

    def reads_over(self, i_a: float) -> bool:
        """Whether the sensor reads ``i_a`` as over the threshold (after the clamp)."""
        return reading_a(i_a, self.full_scale_a) > self.trip.i_above_a

    @property
    def timing(self) -> bool:
        """Whether the present reading is over threshold (a trip is being timed)."""
        return self.timer.above

    def update(self, t_s: float, i_a: float) -> None:
        """The current through the device is ``i_a`` from ``t_s`` on."""
        self.timer.update(t_s, reading_a(i_a, self.full_scale_a))

    def due_s(self) -> Optional[float]:
        """When it trips if nothing changes, or ``None``."""
        return self.timer.due_s()

    def clear(self) -> None:
        self.timer.clear()

    def copy(self) -> "TripUnit":
        return copy.deepcopy(self)
