"""Supply current limit: constant-current, hiccup, latch (scenario-format.md).

Expected logs derived by hand from the on_limit rules: hiccup is off for
off_time then on again, repeated while the overload stays; latch stays off
until reset; constant-current holds the limit while the load asks more.
"""
import math


from sim.devices import SupplyDevice, trip_after_s
from sim.model import Supply


def log(events):
    return [(round(e.t_s, 12), e.event) for e in events]


def test_hiccup_repeats_while_the_overload_stays():
    s = SupplyDevice(Supply("psu", 16.0, i_limit_a=12.0, on_limit="hiccup", t_off_s=1.0))
    out = []
    s.observe(0.0, 20.0)
    for _ in range(3):
        t = s.next_deadline()
        ev = s.advance(t)
        out += ev
        s.observe(t, 20.0 if s.closed else 0.0)
    assert log(out) == [(0.0, "off"), (1.0, "on"), (1.0, "off")]
    t = s.next_deadline()
    assert t == 2.0
    s.advance(t)
    s.observe(2.0, 3.0)                    # the overload is gone: stays on
    assert s.closed and s.next_deadline() is None
    assert s.trips == 2


def test_latch_stays_off_until_reset():
    s = SupplyDevice(Supply("psu", 16.0, i_limit_a=12.0, on_limit="latch"))
    s.observe(0.5, 13.0)
    assert log(s.advance(0.5)) == [(0.5, "off")]
    s.observe(0.5, 0.0)
    assert s.next_deadline() is None and not s.closed
    assert log(s.reset(4.0)) == [(4.0, "reset"), (4.0, "on")] and s.closed
    assert trip_after_s(s, 13.0) == 0.0 and math.isinf(trip_after_s(s, 11.0))


def test_constant_current_reports_limit_and_holds_it():
    s = SupplyDevice(Supply("psu", 16.0, i_limit_a=12.0, on_limit="constant-current"))
    s.observe(0.0, 12.0)                   # at the limit, not over it
    assert s.next_deadline() is None
    s.observe(1.0, 30.0)
    ev = s.advance(s.next_deadline())
    assert log(ev) == [(1.0, "limit")] and ev[0].data["active"] is True
    assert s.limiting and s.closed
    s.observe(1.0, 12.0)                   # the engine reports the limited current
    assert s.next_deadline() is None and s.limiting
    s.observe(2.0, 8.0)                    # the load now asks less than the limit
    ev = s.advance(2.0)
    assert ev[0].data["active"] is False and not s.limiting
    assert math.isinf(trip_after_s(s, 100.0))


def test_constant_current_released_by_the_terminal_voltage():
    # EMF 16 V, r 0.05 ohm, limit 12 A: the knee is 16 - 12 * 0.05 = 15.4 V (hand).
    # As an ideal current source the circuit reports exactly 12 A while limiting;
    # a terminal voltage at or above the knee means the load no longer needs it.
    s = SupplyDevice(Supply("psu", 16.0, r_ohm=0.05, i_limit_a=12.0))
    s.observe(0.0, 40.0)
    s.advance(0.0)
    s.observe(0.0, 12.0)
    s.observe_supply_v(0.0, 0.6)            # short: the voltage has collapsed
    assert s.next_deadline() is None and s.limiting
    s.observe_supply_v(1.0, 15.39)          # under the knee: still needs the limit
    assert s.next_deadline() is None
    s.observe_supply_v(2.0, 15.6)           # the short is gone
    ev = s.advance(s.next_deadline())
    assert log(ev) == [(2.0, "limit")] and not s.limiting


def test_hiccup_after_holding_the_limit_for_t_limit():
    # t_limit 5 ms: limit at 0, off at 5 ms if the overload stays, on at 1.005 s
    m = Supply("psu", 16.0, i_limit_a=12.0, on_limit="hiccup", t_off_s=1.0, t_limit_s=0.005)
    s = SupplyDevice(m)
    s.observe(0.0, 40.0)
    out = s.advance(0.0)
    s.observe(0.0, 12.0)                    # the engine solves at the limit
    assert s.limiting and math.isclose(trip_after_s(s, 40.0, 0.002), 0.003)
    out += s.advance(s.next_deadline())
    s.observe(0.005, 0.0)
    out += s.advance(s.next_deadline())
    assert log(out) == [(0.0, "limit"), (0.005, "off"), (1.005, "on")]
    # an overload shorter than t_limit: limit on and off, no hiccup
    s2 = SupplyDevice(m)
    s2.observe(0.0, 40.0)
    s2.advance(0.0)
    s2.observe(0.002, 3.0)
    ev = s2.advance(0.002)
    assert log(ev) == [(0.002, "limit")] and s2.closed and s2.next_deadline() is None
