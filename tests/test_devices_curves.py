"""Inverse-time overcurrent curves, IEC 60255-151 / IEEE C37.112.

Check values: the curve table of references.md ("computed with TMS 1"), from
the constants k, alpha, c of IEC 60255-151 and IEEE C37.112. The integrating
behaviour under a changing current is derived by hand in the comments.
"""
import math

import pytest

from sim.devices import BreakerDevice
from sim.devices.curves import curve_time_s, inverse_time_s
from sim.model import Breaker, Feed, Sense, Trip

# (curve, multiple of the setting, operate time in s) -- references.md,
# IEC 60255-151 / IEEE C37.112 constants, TMS 1.
TABLE = [
    ("iec-standard-inverse", 2, 10.029), ("iec-standard-inverse", 10, 2.971),
    ("iec-standard-inverse", 20, 2.267),
    ("iec-very-inverse", 2, 13.5), ("iec-very-inverse", 10, 1.5),
    ("iec-extremely-inverse", 2, 26.667), ("iec-extremely-inverse", 10, 0.808),
    ("ieee-moderately-inverse", 2, 3.803), ("ieee-moderately-inverse", 10, 1.207),
    ("ieee-very-inverse", 2, 7.028), ("ieee-very-inverse", 10, 0.689),
    ("ieee-extremely-inverse", 2, 9.522), ("ieee-extremely-inverse", 10, 0.407),
]


@pytest.mark.parametrize("curve,multiple,t_s", TABLE)
def test_published_curve_values(curve, multiple, t_s):
    assert curve_time_s(multiple, curve) == pytest.approx(t_s, abs=6e-4)
    trip = Trip(2.0, 0.0, curve=curve, tms=1.0)      # Is = 2 A
    assert inverse_time_s(2.0 * multiple, trip) == pytest.approx(t_s, abs=6e-4)


def test_tms_scales_and_lower_bound_applies():
    # IEC very inverse at 10 x: 1.5 s * TMS 0.1 = 0.15 s (linear in TMS, IEC 60255-151)
    assert inverse_time_s(10.0, Trip(1.0, 0.0, "iec-very-inverse", 0.1)) == pytest.approx(0.15)
    # t_after_s is a lower bound (the model's definite minimum time): 20 x gives 13.5/19 s < 1 s
    assert inverse_time_s(20.0, Trip(1.0, 1.0, "iec-very-inverse")) == 1.0
    assert math.isinf(inverse_time_s(1.0, Trip(1.0, 0.0, "iec-very-inverse")))
    assert inverse_time_s(7.0, Trip(5.0, 0.002)) == 0.002          # definite time
    assert math.isinf(inverse_time_s(5.0, Trip(5.0, 0.002)))       # "above", not at


def _breaker(trip, sense=Sense()):
    return BreakerDevice(Breaker("yard", Feed("east"), trip=trip, sense=sense),
                         phase=sense.phase or 0.0)


def test_trip_unit_integrates_a_changing_current():
    # IEC very inverse, Is 1 A: 2 A -> 13.5 s, 10 A -> 1.5 s. Half the time at
    # 2 A (6.75 s, progress 0.5), then 10 A needs 0.5 * 1.5 = 0.75 s more:
    # trip at 7.5 s (integrating rule: progress += dt / t(I)).
    d = _breaker(Trip(1.0, 0.0, "iec-very-inverse"))
    d.observe(0.0, 2.0)
    assert d.next_deadline() == pytest.approx(13.5)
    d.observe(6.75, 10.0)
    assert d.next_deadline() == pytest.approx(7.5)
    ev = d.advance(7.5)
    assert [e.event for e in ev] == ["trip"] and ev[0].t_s == pytest.approx(7.5)


def test_trip_unit_resets_at_once_under_the_setting():
    # instantaneous reset (the documented choice): after a dip under Is the full
    # 13.5 s runs again from the new onset.
    d = _breaker(Trip(1.0, 0.0, "iec-very-inverse"))
    d.observe(0.0, 2.0)
    d.observe(5.0, 0.5)
    assert d.next_deadline() is None
    d.observe(6.0, 2.0)
    assert d.next_deadline() == pytest.approx(19.5)


def test_sampled_inverse_time_lands_on_the_grid():
    # IEC very inverse TMS 0.001 at 10 x: 1.5 ms; Ts 100 us phase 0.5 -> samples at
    # 50, 150, ... us; onset 0 -> first sample 50 us; ceil(1.5 ms / 0.1 ms) = 15
    # samples -> 50 us + 14 * 100 us = 1.45 ms.
    d = _breaker(Trip(1.0, 0.0, "iec-very-inverse", 0.001),
                 Sense(period_s=1e-4, phase=0.5))
    d.observe(0.0, 10.0)
    assert d.next_deadline() == pytest.approx(1.45e-3, abs=1e-12)
