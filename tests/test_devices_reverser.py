"""Reversing controller: the race against upstream trips, dead time, hold-off, fights.

Check values are derived by hand (comments): the margin is
t_trip(upstream) - t_cleared (domain.md, "The race"), t_cleared = onset +
sense delay + swap time.
"""
import pytest

from sim.devices import BoosterDevice, ReverserDevice, trip_after_s
from sim.model import Booster, Feed, Restart, Reverser, Sense, Trip


def reverser(name="rev", **kw):
    base = dict(sense_above_a=1.5, t_sense_s=0.0005, t_swap_s=0.001, t_dead_s=0.0,
                t_hold_off_s=0.05, trip=Trip(4.0, 0.003), restart=Restart("manual"))
    base.update(kw)
    return ReverserDevice(Reverser(name, Feed("east"), **base), phase=0.0)


def booster():
    return BoosterDevice(Booster("east", "psu", trip=Trip(5.0, 0.003)), phase=0.0)


def run_until(dev, event):
    """Advance a device to its next deadlines until ``event``; return its time."""
    for _ in range(100):
        nd = dev.next_deadline()
        assert nd is not None
        for e in dev.advance(nd):
            if e.event == event:
                return e.t_s
    raise AssertionError(event)


@pytest.mark.parametrize("t_swap_s, margin_s", [
    # sense 0.5 ms + swap 1 ms -> cleared 1.5 ms after onset; the booster trips
    # 3 ms after onset: margin +1.5 ms (derived by hand)
    (0.001, +0.0015),
    # with a 4 ms swap it clears at 4.5 ms: the booster trips first, margin -1.5 ms
    (0.004, -0.0015),
])
def test_race_margin_against_the_booster(t_swap_s, margin_s):
    onset = 2.0
    r, b = reverser(t_swap_s=t_swap_s), booster()
    r.observe(onset, 12.0)
    b.observe(onset, 12.0)
    t_trip = onset + trip_after_s(b, 12.0, onset)
    assert t_trip == pytest.approx(onset + 0.003, abs=1e-12)
    assert onset + trip_after_s(r, 12.0, onset) == pytest.approx(onset + 0.0005 + t_swap_s)
    t_cleared = run_until(r, "swapped")
    assert t_trip - t_cleared == pytest.approx(margin_s, abs=1e-12)
    if margin_s > 0:
        # at the clearing instant the booster still has the margin left to run
        assert trip_after_s(b, 12.0, t_cleared) == pytest.approx(margin_s, abs=1e-12)
    else:
        assert b.next_deadline() == pytest.approx(t_trip) and t_trip < t_cleared


def test_event_log_with_dead_time_and_a_real_fault():
    # sense 0.5 ms, swap 1 ms, dead 2 ms: swap_start 0.5, swapped 1.5 (output open),
    # reclose 3.5; the short stays (a real fault): in hold-off the trip setting
    # 4 A / 3 ms times it -> trip at 6.5 ms.
    r = reverser(t_dead_s=0.002)
    r.observe(0.0, 10.0)
    log = [(e.t_s, e.event) for e in r.advance(r.next_deadline())]
    log += [(e.t_s, e.event) for e in r.advance(r.next_deadline())]
    assert not r.closed and r.swapped
    r.observe(0.0015, 0.0)                  # open during the dead time
    log += [(e.t_s, e.event) for e in r.advance(r.next_deadline())]
    assert r.closed
    r.observe(0.0035, 10.0)                 # the fault is still there
    log += [(e.t_s, e.event) for e in r.advance(r.next_deadline())]
    assert [n for _, n in log] == ["swap_start", "swapped", "reclose", "trip"]
    assert [t for t, _ in log] == pytest.approx([0.0005, 0.0015, 0.0035, 0.0065])
    assert r.swaps == 1 and r.trips == 1 and not r.closed


def test_no_second_swap_within_hold_off():
    r = reverser()
    r.observe(0.0, 10.0)
    r.advance(0.0005)
    r.advance(0.0015)                       # swapped at 1.5 ms: hold-off to 51.5 ms
    r.observe(0.0015, 0.0)
    r.observe(0.010, 2.0)                   # over sense (1.5 A), under trip (4 A)
    assert r.next_deadline() == pytest.approx(0.0515)          # only the hold-off end
    assert r.advance(0.0515) == []
    # armed again at 51.5 ms: sensing runs from there -> swap_start at 52.0 ms
    assert r.next_deadline() == pytest.approx(0.052)
    assert [e.event for e in r.advance(0.052)] == ["swap_start"]


def test_sampled_reverser_sense():
    # Ts 100 us phase 0; onset 130 us -> first sample 200 us; 0.5 ms -> n = 5 ->
    # detect at 600 us, swapped at 1.6 ms (hand arithmetic)
    r = reverser(sense=Sense(period_s=1e-4, phase=0.0))
    r.observe(130e-6, 10.0)
    assert r.next_deadline() == pytest.approx(600e-6, abs=1e-15)
    assert run_until(r, "swapped") == pytest.approx(1.6e-3, abs=1e-15)


def fight(a, b, until_s=0.2):
    """Two reversers across one gap: a short flows while their leads agree.

    A tiny engine: process the earliest deadline(s), then re-solve (10 A through
    both while both outputs are closed and ``a.swapped == b.swapped``).
    """
    log = []

    def solve(t):
        i = 10.0 if (a.closed and b.closed and a.swapped == b.swapped) else 0.0
        a.observe(t, i)
        b.observe(t, i)

    solve(0.0)
    while True:
        ds = [d for d in (a.next_deadline(), b.next_deadline()) if d is not None]
        if not ds or min(ds) > until_s:
            return log
        t = min(ds)
        for dev in (a, b):
            if dev.next_deadline() is not None and dev.next_deadline() <= t:
                log += [(round(e.t_s, 9), e.device, e.event) for e in dev.advance(t)]
        solve(t)


def test_two_reversers_fight_deterministically():
    # sense 0.1 ms both; A swaps in 1 ms, B in 3 ms; hold-off 1 ms. By hand:
    # 0.1 both swap_start; 1.1 A swapped (leads differ: cleared); 2.1 A armed;
    # 3.1 B swapped (leads agree again: short); B times it by its trip setting,
    # A senses it: 3.2 A swap_start; 4.2 A swapped (cleared); end: A 2 swaps, B 1.
    a = reverser("A", t_sense_s=0.0001, t_swap_s=0.001, t_hold_off_s=0.001)
    b = reverser("B", t_sense_s=0.0001, t_swap_s=0.003, t_hold_off_s=0.001)
    log = fight(a, b)
    evs = [(t, d, e) for t, d, e in log if e in ("swap_start", "swapped", "trip")]
    assert evs == [(0.0001, "A", "swap_start"), (0.0001, "B", "swap_start"),
                   (0.0011, "A", "swapped"), (0.0031, "B", "swapped"),
                   (0.0032, "A", "swap_start"), (0.0042, "A", "swapped")]
    assert (a.swaps, b.swaps, a.trips, b.trips) == (2, 1, 0, 0)
    assert fight(reverser("A", t_sense_s=0.0001, t_swap_s=0.001, t_hold_off_s=0.001),
                 reverser("B", t_sense_s=0.0001, t_swap_s=0.003, t_hold_off_s=0.001)) == log


def test_equal_reversers_swap_together_and_both_trip():
    # both swap at 1.1 ms, the leads still agree: both in hold-off time the short
    # by 4 A / 3 ms -> both trip at 4.1 ms (hand arithmetic)
    a = reverser("A", t_sense_s=0.0001)
    b = reverser("B", t_sense_s=0.0001)
    log = fight(a, b)
    assert [x for x in log if x[2] == "trip"] == [(0.0041, "A", "trip"), (0.0041, "B", "trip")]
    assert (a.swaps, b.swaps) == (1, 1)
