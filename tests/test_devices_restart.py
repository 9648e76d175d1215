"""Restart policies: manual, retry, back-off.

Sources: the back-off shape is RFC 6298 section 5 (the timer doubles on each
expiry, bounded by a maximum: RTO_n = min(RTO_0 2^n, RTO_max)); first 0.5 s,
factor 2, cap 10 s gives 0.5, 1, 2, 4, 8, 10, 10, ... (hand arithmetic). A
limited mode of three tries half a second apart, then off, is common practice.
"""
import itertools

import pytest

from sim.devices import BoosterDevice, BreakerDevice
from sim.devices.restart import RestartState, nth_wait_s, waits
from sim.model import Booster, Breaker, Feed, Restart, Trip


def test_backoff_waits_double_up_to_the_cap():
    r = Restart("backoff", first_s=0.5, factor=2.0, cap_s=10.0)
    assert list(itertools.islice(waits(r), 8)) == [0.5, 1, 2, 4, 8, 10, 10, 10]
    assert [nth_wait_s(r, n) for n in range(8)] == [0.5, 1, 2, 4, 8, 10, 10, 10]
    assert list(waits(Restart("backoff", tries=3, first_s=1, factor=3, cap_s=5))) == [1, 3, 5]
    assert list(waits(Restart("retry", tries=3, every_s=0.5))) == [0.5, 0.5, 0.5]
    assert list(waits(Restart("manual"))) == []


def drive_short_that_stays(dev, i_a, until_s):
    """Observe a short from 0 s on, and again after every restart; log events."""
    log = []
    dev.observe(0.0, i_a)
    while True:
        nd = dev.next_deadline()
        if nd is None or nd > until_s:
            return log
        ev = dev.advance(nd)
        log.extend(ev)
        if dev.closed:
            dev.observe(nd, i_a)            # the engine re-solves: the short is still there
        else:
            dev.observe(nd, 0.0)


def test_backoff_on_a_short_that_stays():
    b = BoosterDevice(Booster("east", "psu", trip=Trip(7.0, 0.002),
                              restart=Restart("backoff", first_s=0.5, factor=2, cap_s=10)))
    log = drive_short_that_stays(b, 20.0, until_s=60.0)
    trips = [e.t_s for e in log if e.event == "trip"]
    restarts = [e.t_s for e in log if e.event == "restart"]
    gaps = [r - t for t, r in zip(trips, restarts)]
    assert gaps[:7] == pytest.approx([0.5, 1, 2, 4, 8, 10, 10])
    # each restart trips again 2 ms later (the short stays)
    again = [t - r for r, t in zip(restarts, trips[1:])]
    assert len(again) >= 7 and again == pytest.approx([0.002] * len(again))
    assert not any(e.event == "give_up" for e in log)


def test_retry_three_tries_then_gives_up():
    d = BreakerDevice(Breaker("yard", Feed("east"), trip=Trip(3.0, 0.0005),
                              restart=Restart("retry", tries=3, every_s=0.5)))
    log = drive_short_that_stays(d, 10.0, until_s=100.0)
    names = [e.event for e in log]
    assert names == ["trip", "restart", "trip", "restart", "trip", "restart", "trip", "give_up"]
    t = [e.t_s for e in log]
    # trip 0.5 ms, tries at +0.5 s each, trips 0.5 ms after each try
    assert t[0] == pytest.approx(0.0005)
    assert t[1] == pytest.approx(0.5005) and t[2] == pytest.approx(0.501)
    assert t[-1] == pytest.approx(3 * 0.5005 + 0.0005)
    assert [e.data["attempt"] for e in log if e.event == "restart"] == [1, 2, 3]
    assert not d.closed and d.given_up and d.next_deadline() is None
    ev = d.reset(10.0)
    assert [e.event for e in ev] == ["reset"] and d.closed and not d.given_up


def test_manual_stays_off_until_reset():
    d = BreakerDevice(Breaker("yard", Feed("east"), trip=Trip(3.0, 0.0005)))
    d.observe(0.0, 10.0)
    ev = d.advance(d.next_deadline())
    assert [e.event for e in ev] == ["trip"]           # manual: no give_up, just off
    d.observe(ev[0].t_s, 0.0)
    assert d.next_deadline() is None and not d.closed
    d.reset(5.0)
    assert d.closed


def test_try_counter_starts_over_after_a_stable_run():
    # documented rule: the count restarts once the output stayed up longer than
    # max(10 x trip delay, longest wait) = max(5 ms, 0.5 s) = 0.5 s.
    st = RestartState(Restart("retry", tries=2, every_s=0.5), t_trip_delay_s=0.0005)
    assert st.t_stable_s == 0.5
    assert st.on_trip(0.0) == 0.5
    st.on_restart(0.5)
    assert st.on_trip(0.6) == 0.5                      # 0.1 s up: a failed try
    st.on_restart(1.1)
    assert st.on_trip(1.2) is None and st.given_up     # the second failed try: give up
    st2 = RestartState(Restart("retry", tries=2, every_s=0.5), 0.0005)
    st2.on_trip(0.0)
    st2.on_restart(0.5)
    st2.on_trip(0.6)
    st2.on_restart(1.1)
    assert st2.on_trip(5.0) == 0.5 and st2.tries_used == 0   # up 3.9 s: counts from zero
