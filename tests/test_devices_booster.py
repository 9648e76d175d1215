"""Booster and breaker state machines: exact event logs for tiny sequences.

Expected instants are derived by hand from the definite-time rule (trip when
over the threshold for longer than the delay, domain.md) and the settings in
each test.
"""
import pytest

from sim.devices import BoosterDevice, BreakerDevice, trip_after_s
from sim.model import Booster, Breaker, Feed, Restart, Sense, Trip


def booster(**kw):
    kw.setdefault("trip", Trip(5.0, 0.002))
    return BoosterDevice(Booster("east", "psu", **kw), phase=0.0)


def names(events):
    return [(round(e.t_s, 12), e.event) for e in events]


def test_trip_after_delay_exact_log():
    # trip 5 A after 2 ms, continuous: 7 A from 0 s -> trip at 0.002 s
    b = booster()
    b.observe(0.0, 7.0)
    assert b.next_deadline() == 0.002
    assert names(b.advance(0.002)) == [(0.002, "trip")]
    assert not b.closed and b.trips == 1


def test_current_drop_cancels_the_deadline():
    b = booster()
    b.observe(0.0, 7.0)
    b.observe(0.0015, 3.0)
    assert b.next_deadline() is None
    assert b.advance(0.002) == [] and b.closed
    # a new onset times the full delay again: 0.003 + 0.002
    b.observe(0.003, 9.0)
    assert b.next_deadline() == pytest.approx(0.005)


def test_observe_at_the_deadline_wins_and_past_it_is_refused():
    b = booster()
    b.observe(0.0, 7.0)
    b.observe(0.002, 0.0)                  # the current from 2 ms on is 0: no trip
    assert b.advance(0.002) == []
    b.observe(0.01, 7.0)
    with pytest.raises(ValueError):
        b.observe(0.02, 0.0)               # past the 0.012 s deadline: advance first
    with pytest.raises(ValueError):
        b.advance(0.005)                   # time going back


def test_at_threshold_is_not_above():
    b = booster()
    b.observe(0.0, 5.0)
    assert b.next_deadline() is None


def test_trip_after_s_counts_the_running_timing_and_leaves_state():
    b = booster(trip=Trip(5.0, 0.003))
    assert trip_after_s(b, 10.0, 0.0) == pytest.approx(0.003)
    b.observe(0.001, 10.0)
    assert trip_after_s(b, 10.0, 0.002) == pytest.approx(0.002)   # 1 ms already run
    assert b.next_deadline() == pytest.approx(0.004)              # unchanged
    assert trip_after_s(b, 4.0) == float("inf")


def test_reverse_on_short_swaps_first_and_trips_only_if_the_short_stays():
    # sense at the trip threshold (7 A) after 0.5 ms, swap 4 ms, trip 2 ms:
    # swap_start 0.5 ms, swapped 4.5 ms -- no trip at 2 ms, the swap goes first.
    m = dict(trip=Trip(7.0, 0.002), reverse_on_short=True, t_sense_reverse_s=0.0005,
             t_swap_s=0.004, t_hold_off_s=0.05, restart=Restart("manual"))
    b = booster(**m)
    b.observe(0.0, 20.0)
    log = b.advance(b.next_deadline())
    log += b.advance(b.next_deadline())
    assert names(log) == [(0.0005, "swap_start"), (0.0045, "swapped")]
    assert b.swapped and b.closed
    b.observe(0.0045, 0.0)                 # the swap cleared it
    assert b.next_deadline() == pytest.approx(0.0545)   # end of hold-off (internal)
    assert b.advance(0.0545) == [] and b.next_deadline() is None
    # the same, but the short stays after the swap: trip 2 ms after it (6.5 ms)
    b2 = booster(**m)
    b2.observe(0.0, 20.0)
    b2.advance(0.0005)
    b2.advance(0.0045)
    b2.observe(0.0045, 20.0)
    assert names(b2.advance(b2.next_deadline())) == [(0.0065, "trip")]
    assert b2.swaps == 1 and b2.trips == 1


def test_undervoltage_dropout_and_return_with_hysteresis():
    # drops under 7 V at once; returns once >= 7.35 V (5 % hysteresis) for 0.1 s
    b = booster(v_undervoltage_v=7.0)
    b.observe_supply_v(1.0, 6.5)
    assert names(b.advance(b.next_deadline())) == [(1.0, "dropout")]
    assert not b.closed
    b.observe_supply_v(2.0, 7.2)           # inside the hysteresis band: stays out
    assert b.next_deadline() is None
    b.observe_supply_v(3.0, 7.4)
    ev = b.advance(b.next_deadline())
    assert names(ev) == [(3.1, "reclose")] and ev[0].data["cause"] == "undervoltage"
    assert b.closed


def test_breaker_same_trip_logic_with_its_own_restart():
    d = BreakerDevice(Breaker("yard", Feed("east"), trip=Trip(3.0, 0.0005),
                              sense=Sense(period_s=1e-4, phase=0.0),
                              restart=Restart("retry", tries=1, every_s=0.25)))
    d.observe(0.0, 4.0)                    # samples 0..0.4 ms -> n = 5 -> trip at 0.4 ms
    ev = d.advance(d.next_deadline())
    assert names(ev) == [(0.0004, "trip")] and ev[0].data["restart_in_s"] == 0.25
    d.observe(0.0004, 0.0)
    assert names(d.advance(d.next_deadline())) == [(0.2504, "restart")]
