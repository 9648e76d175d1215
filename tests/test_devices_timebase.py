"""The machines on the run's one time base (sim.timebase): instants on the 1 ns
grid, an ``advance`` that stops after an output change, and ``defer``.

Check values are derived by hand: with zero sense, swap, dead and hold-off
times every transition of a swap falls on the onset instant; the grid
rounds an instant to the nearest nanosecond.
"""
import pytest

from sim.devices import ReverserDevice, SupplyDevice
from sim.model import Feed, Restart, Reverser, Supply, Trip
from sim.timebase import snap_s


def _zero_time_reverser():
    return ReverserDevice(Reverser("rev", Feed("east"), 1.5, 0.0, 0.0, t_dead_s=0.0,
                                   t_hold_off_s=0.0, trip=Trip(400.0, 0.003),
                                   restart=Restart("manual")), phase=0.0)


def test_advance_stops_after_the_output_changes():
    # 10 A over the 1.5 A sense level at 0.75 s with zero sense, swap, dead and
    # hold-off times: swap_start and swapped at 0.75 s, then the machine waits to
    # be told the new current (it looped on the old one before: more than 100000
    # transitions at one time)
    rev = _zero_time_reverser()
    rev.observe(0.75, 10.0)
    ev = rev.advance(0.75)
    assert [(e.t_s, e.event) for e in ev] == [(0.75, "swap_start"), (0.75, "swapped")]
    assert rev.swapped and rev.next_deadline() == 0.75     # due again at once
    rev.observe(0.75, 0.0)                                 # the swap cleared it
    assert rev.advance(0.75) == [] and rev.next_deadline() is None


def test_defer_moves_the_pending_transition_to_a_later_instant():
    # the engine holds a device 1 us: its due swap then happens at 0.750001 s
    rev = _zero_time_reverser()
    rev.observe(0.75, 10.0)
    rev.advance(0.75)
    rev.defer(0.750001)
    assert rev.next_deadline() == 0.750001
    rev.observe(0.750001, 10.0)
    ev = rev.advance(0.750001)
    assert [(e.t_s, e.event) for e in ev] == [(0.750001, "swap_start"), (0.750001, "swapped")]


def test_deadlines_and_events_are_on_the_grid():
    # sense 0.49 ns: 0.75 s + 0.49 ns lies nearer 0.75 s than 0.75 s + 1 ns on
    # the 1 ns grid; swap 1 ns: swapped at 0.750000001 s
    rev = ReverserDevice(Reverser("rev", Feed("east"), 1.5, 0.49e-9, 1e-9,
                                  trip=Trip(400.0, 0.003)), phase=0.0)
    rev.observe(0.75, 10.0)
    assert rev.next_deadline() == 0.75
    ev = rev.advance(0.75)
    assert [(e.t_s, e.event) for e in ev] == [(0.75, "swap_start")]
    assert rev.next_deadline() == snap_s(0.75 + 1e-9) == 0.750000001
    (e,) = rev.advance(0.750000001)
    assert (e.t_s, e.event) == (0.750000001, "swapped")
    rev.observe(0.750000001, 0.0)                          # no "before the last time"


def test_supply_takes_one_transition_per_advance():
    # hiccup with an off time of 1e-320 s: on again at the same grid instant; each
    # advance takes one transition (the engine solves between them)
    s = SupplyDevice(Supply("psu", 16.0, i_limit_a=6.0, on_limit="hiccup", t_off_s=1e-320))
    s.observe(1.0, 8.0)
    assert [e.event for e in s.advance(1.0)] == ["off"]
    assert s.next_deadline() == 1.0
    assert [e.event for e in s.advance(1.0)] == ["on"]


@pytest.mark.parametrize("t_s", [0.1 + 0.2, 2.6015000000000001, 1e-10, 3600.000000000456])
def test_snap_is_the_nearest_nanosecond(t_s):
    assert abs(snap_s(t_s) - t_s) <= 0.5e-9 + 1e-15
    assert snap_s(snap_s(t_s)) == snap_s(t_s)
