"""Sampled sensing, ADC clamp and definite-time detection.

Check values are derived by hand in the comments from the detection rule of
domain.md: a trip needs n = ceil(delay / Ts) consecutive samples over
threshold, so it lands on the first sample at or after the onset plus (n - 1)
periods (jitter of up to one period).
"""
import math

import pytest
from hypothesis import given, settings, strategies as st

from sim.devices import BoosterDevice
from sim.devices.sensing import (ceil_tol, detect_time_s, sample_at_or_after,
                                 samples_in, samples_needed)
from sim.model import Booster, Sense, Trip


def test_ceil_tolerates_binary_fractions():
    # 100 us converted as 100 * 1e-6 is 9.999999999999999e-05 s, and 2 ms over it
    # is 20.000000000000004 in binary floating point: a plain ceil gives 21.
    # The rule asks for exactly 20 samples (hand arithmetic).
    ts = 100 * 1e-6
    assert math.ceil(0.002 / ts) == 21
    assert samples_needed(0.002, ts) == 20
    assert samples_needed(0.002, 0.0001) == 20
    assert samples_needed(0.0005, 0.0001) == 5
    assert samples_needed(0.00025, 0.0001) == 3       # ceil(2.5)
    assert samples_needed(0.0, 0.0001) == 1           # at least one sample sees it
    assert ceil_tol(2.000001) == 3


def test_detect_time_continuous_is_onset_plus_delay():
    assert detect_time_s(1.25, 0.002, None) == 1.25 + 0.002


def test_detect_time_sampled_hand_values():
    # Ts = 100 us, phase 0.25: samples at 25 us, 125 us, 225 us, ...
    # onset 130 us -> first sample at or after it 225 us; n = 20 -> 225 us + 19 * 100 us.
    t = detect_time_s(130e-6, 0.002, 100e-6, 0.25)
    assert t == pytest.approx(2.125e-3, abs=1e-15)
    # onset exactly on a sample (125 us) counts that sample: 125 us + 1.9 ms.
    assert detect_time_s(125e-6, 0.002, 100e-6, 0.25) == pytest.approx(2.025e-3, abs=1e-15)
    # a sample "at or after": 3 * 0.1 ms is 0.30000000000000004 ms in floats, still the same sample
    assert sample_at_or_after(3 * 1e-4, 1e-4, 0.0) == pytest.approx(3e-4, abs=1e-18)


def test_samples_in_half_open_interval():
    # samples at 0, 1, 2, ... ms: [0 ms, 3 ms) holds 0, 1, 2 ms
    assert samples_in(0.0, 0.003, 0.001, 0.0) == 3
    assert samples_in(0.0005, 0.0006, 0.001, 0.0) == 0


@settings(max_examples=300, deadline=None)
@given(phase=st.floats(0.0, 0.999999), onset=st.floats(0.0, 10.0),
       period_us=st.sampled_from([50, 100, 125, 250, 1000]),
       delay_us=st.sampled_from([0, 100, 250, 500, 2000, 3000]))
def test_sampled_jitter_is_within_one_period(phase, onset, period_us, delay_us):
    ts, delay = period_us * 1e-6, delay_us * 1e-6
    n = samples_needed(delay, ts)
    lag = detect_time_s(onset, delay, ts, phase) - onset
    tol = 1e-9
    assert (n - 1) * ts - tol <= lag <= n * ts + tol


def test_sampled_booster_trips_on_the_grid():
    b = BoosterDevice(Booster("east", "psu", trip=Trip(5.0, 0.002),
                              sense=Sense(period_s=100e-6, phase=0.25)), phase=0.25)
    b.observe(130e-6, 9.0)
    assert b.next_deadline() == pytest.approx(2.125e-3, abs=1e-15)   # hand value above
    ev = b.advance(b.next_deadline())
    assert [e.event for e in ev] == ["trip"]


def test_dip_between_samples_is_not_seen_but_a_sampled_dip_resets():
    # Ts 1 ms phase 0: samples at 0, 1, 2 ms ... delay 3 ms -> n = 3 samples.
    b = BoosterDevice(Booster("east", "psu", trip=Trip(5.0, 0.003),
                              sense=Sense(period_s=1e-3, phase=0.0)), phase=0.0)
    b.observe(0.0, 9.0)                    # samples 0, 1, 2 ms -> trip at 2 ms
    assert b.next_deadline() == pytest.approx(0.002)
    b.observe(0.0012, 0.0)                 # dip from 1.2 to 1.8 ms holds no sample
    assert b.next_deadline() is None
    b.observe(0.0018, 9.0)
    assert b.next_deadline() == pytest.approx(0.002)   # the count went on
    b.observe(0.0019, 0.0)                 # this dip holds the 2 ms sample
    b.observe(0.0021, 9.0)                 # new onset: samples 3, 4, 5 ms
    assert b.next_deadline() == pytest.approx(0.005)


def test_continuous_dip_resets():
    b = BoosterDevice(Booster("east", "psu", trip=Trip(5.0, 0.002)))
    b.observe(0.0, 9.0)
    b.observe(0.001, 1.0)
    b.observe(0.0011, 9.0)
    assert b.next_deadline() == pytest.approx(0.0031)


def test_adc_clamp_hides_a_threshold_above_full_scale():
    # reading = min(|I|, full scale): a 20 A threshold on a 15 A ADC never trips.
    b = BoosterDevice(Booster("east", "psu", trip=Trip(20.0, 0.002),
                              sense=Sense(period_s=100e-6, full_scale_a=15.0, phase=0.0)))
    b.observe(0.0, 500.0)
    assert b.next_deadline() is None
    assert math.isinf(b.trip_after_s(500.0))
    # the same device with a 14 A threshold trips (reading 15 A > 14 A)
    b2 = BoosterDevice(Booster("east", "psu", trip=Trip(14.0, 0.002),
                               sense=Sense(period_s=100e-6, full_scale_a=15.0, phase=0.0)))
    b2.observe(0.0, 500.0)
    assert b2.next_deadline() == pytest.approx(0.0019, abs=1e-15)   # samples 0..19 -> 19 * 0.1 ms


@settings(max_examples=200, deadline=None)
@given(phase=st.floats(0.0, 0.999999), onset=st.floats(0.0, 100.0),
       delay_us=st.sampled_from([100, 500, 2000, 4000]))
def test_booster_trip_lag_within_one_period(phase, onset, delay_us):
    # the machine, not only the formula: lag in [(n-1) Ts, n Ts] (domain.md, Sensing),
    # within the 1 ns a sample is taken to be at the onset (T_TOL_S) and the half step
    # of the run's 1 ns grid the instant is rounded on (sim.timebase)
    ts, delay = 100e-6, delay_us * 1e-6
    b = BoosterDevice(Booster("east", "psu", trip=Trip(5.0, delay),
                              sense=Sense(period_s=ts, phase=phase)), phase=phase, t0_s=0.0)
    b.observe(onset, 12.0)
    t = b.next_deadline()
    n = samples_needed(delay, ts)
    tol = 1e-9 + 0.5e-9
    assert (n - 1) * ts - tol <= t - onset <= n * ts + tol
    assert [e.event for e in b.advance(t)] == ["trip"]


@settings(max_examples=100, deadline=None)
@given(phase=st.floats(0.0, 0.999999), cuts=st.lists(st.floats(0.0, 1.0), max_size=6),
       sampled=st.booleans(), curve=st.sampled_from([None, "iec-very-inverse"]))
def test_reobserving_the_same_current_does_not_move_the_deadline(phase, cuts, sampled, curve):
    # an observe of an unchanged current is not a change: the deadline stays
    # (exactly for definite time, to 1e-12 s for the integrating inverse time)
    trip = Trip(5.0, 0.002) if curve is None else Trip(5.0, 0.0, curve, 0.001)
    sense = Sense(period_s=1e-4 if sampled else None, phase=phase)
    b = BoosterDevice(Booster("east", "psu", trip=trip, sense=sense), phase=phase)
    b.observe(0.0, 12.0)
    t0 = b.next_deadline()
    for c in sorted(cuts):
        b.observe(c * t0, 12.0)
    if curve is None:
        assert b.next_deadline() == t0
    else:
        assert b.next_deadline() == pytest.approx(t0, abs=1e-12)
