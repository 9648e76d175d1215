"""Motion with stops and restarts: positions and recomputed bridge instants.

The straight of test_trains_bridges: joint at front distance 4 m, the mogul's
pickup bridges it over s in [4.03, 4.22] m; depart 2 s at 0.3 m/s, so the
front is at s after t = 2 + s/0.3 while nothing changes. Instants by hand.
"""
from __future__ import annotations

import math

import pytest

from sim.world.trains import Motion, build_plan
from trains_builders import loco, scenario, train, wye_plan

REL = 1e-12


def plan(keep_alive_s=1.0):
    mogul = loco("mogul", 0.25, (0.03, 0.06, 0.09, 0.12, 0.18, 0.22), draw_a=0.6,
                 keep_alive_s=keep_alive_s)
    scn = scenario({"A": 5.0, "B": 5.0}, [("A.b", "B.a", "both")], stock={"mogul": mogul},
                   trains={"t": train("t", ["mogul"], ("A", 1.0, "b"), ["A", "B"],
                                      speed_mps=0.3, depart_s=2.0)})
    return build_plan(scn, scn.trains["t"])


def t_at(s):
    return 2.0 + s / 0.3


def test_positions_before_and_after_departure():
    m = Motion(plan())
    assert m.position_s(0.0) == 0.0 and m.position_s(2.0) == 0.0
    assert m.position_s(3.0) == pytest.approx(0.3, rel=REL)
    # route: 4 m of A + 5 m of B = 9 m, reached at 2 + 9/0.3 = 32 s; then it stands
    assert m.end_s == pytest.approx(32.0, rel=REL)
    assert m.position_s(100.0) == pytest.approx(9.0, rel=REL)
    assert m.speed_mps(10.0) == 0.3 and m.speed_mps(40.0) == 0.0


def test_nominal_events():
    m = Motion(plan())
    ev = m.next_bridge_events(0.0)
    assert [(e.event, e.t_s) for e in ev] == [("on", pytest.approx(t_at(4.03), rel=REL)),
                                              ("off", pytest.approx(t_at(4.22), rel=REL))]
    # strictly later only
    assert [e.event for e in m.next_bridge_events(t_at(4.03))] == ["off"]
    # a read-only sequence: len, negative index, slices, out of range
    assert len(ev) == 2 and ev[-1] == ev[1] and ev[0:1] == [ev[0]]
    with pytest.raises(IndexError):
        ev[2]
    # until_s cuts the horizon
    assert [e.event for e in m.next_bridge_events(0.0, until_s=t_at(4.1))] == ["on"]


def test_power_lost_keep_alive_then_stop_over_the_gap_then_power_back():
    m = Motion(plan(keep_alive_s=1.0))
    t_loss = t_at(3.9)
    t_stop = m.power_lost(t_loss)
    # runs on for the 1 s keep-alive: stops at s = 3.9 + 0.3 = 4.2 m, between
    # the first (4.03) and last (4.22) axle crossing: stuck bridging.
    assert t_stop == pytest.approx(t_loss + 1.0, rel=REL)
    assert m.position_s(t_stop + 10.0) == pytest.approx(4.2, rel=1e-12)
    ev = m.next_bridge_events(t_loss)
    assert [(e.event, e.t_s) for e in ev] == [("on", pytest.approx(t_at(4.03), rel=REL))]
    (on,) = m.active_bridges(t_stop + 5.0)
    assert on.t_off_s == math.inf
    # power back 5 s after the stop: 0.02 m to go, 0.02/0.3 s
    t_back = t_stop + 5.0
    m.power_back(t_back)
    (off,) = m.next_bridge_events(t_back)
    assert off.event == "off"
    assert off.t_s == pytest.approx(t_back + 0.02 / 0.3, rel=1e-9)
    assert m.end_s == pytest.approx(t_back + (9.0 - 4.2) / 0.3, rel=1e-9)


def test_power_back_before_the_keep_alive_runs_out_changes_nothing():
    m = Motion(plan(keep_alive_s=1.0))
    m.power_lost(t_at(3.9))
    m.power_back(t_at(3.9) + 0.5)
    assert m.stop_at_s is None
    # s = 4.05 m by then: the bridge is on; it goes off on time
    (off,) = m.next_bridge_events(t_at(3.9) + 0.5)
    assert off.event == "off" and off.t_s == pytest.approx(t_at(4.22), rel=1e-12)


def test_no_keep_alive_stops_at_once_and_a_second_loss_is_the_same_stop():
    m = Motion(plan(keep_alive_s=0.0))
    t = t_at(4.1)
    assert m.power_lost(t) == t
    assert m.power_lost(t + 1.0) == t
    assert m.position_s(t + 3.0) == pytest.approx(4.1, rel=1e-12)
    assert [b.joint_index for b in m.active_bridges(t + 3.0)] == [0]


def test_set_speed_rescales_the_remaining_crossing():
    m = Motion(plan())
    t = t_at(4.1)
    m.set_speed(t, 0.15)
    (off,) = m.next_bridge_events(t)
    # 0.12 m left at 0.15 m/s: 0.8 s
    assert off.t_s == pytest.approx(t + 0.12 / 0.15, rel=1e-12)


def test_power_lost_before_departure_delays_it():
    m = Motion(plan(keep_alive_s=0.0))
    m.power_lost(1.0)
    m.power_back(10.0)
    # departs at 10 s instead of 2 s: on at 10 + 4.03/0.3
    on, off = m.next_bridge_events(0.0)
    assert on.t_s == pytest.approx(10.0 + 4.03 / 0.3, rel=1e-12)


def test_reversal_wait_runs_while_unpowered_and_departure_waits_for_power():
    # The wye (test_trains_bridges): arrive at the reversal at 12 s, stand to
    # 15 s; joint 3 is bridged by the coach from 2.1 s after leaving.
    m = Motion(wye_plan())
    m.power_lost(13.0)           # the loco has no keep-alive
    m.power_back(14.0)           # back within the wait: leaves at 15 s
    coach = [e for e in m.next_bridge_events(14.0) if e.bridge.kind == "lighted"]
    assert coach[0].t_s == pytest.approx(15.0 + 2.1, rel=1e-12)
    m2 = Motion(wye_plan())
    m2.power_lost(13.0)
    m2.power_back(20.0)          # after the wait: leaves at 20 s
    coach = [e for e in m2.next_bridge_events(20.0) if e.bridge.kind == "lighted"]
    assert coach[0].t_s == pytest.approx(20.0 + 2.1, rel=1e-12)
    assert m2.position_s(19.0) == pytest.approx(5.5)


def test_a_train_standing_over_a_gap_at_the_start_bridges_before_departure():
    mogul = loco("mogul", 0.25, (0.03, 0.22), draw_a=0.6)
    scn = scenario({"A": 5.0, "B": 5.0}, [("A.b", "B.a", "both")], stock={"mogul": mogul},
                   trains={"t": train("t", ["mogul"], ("B", 0.1, "b"), ["B"], depart_s=3.0)})
    m = Motion(build_plan(scn, scn.trains["t"]))
    (b,) = m.active_bridges(0.0)
    # the last axle (0.22 m) is 0.12 m behind the joint: off at 3 + 0.12/0.3 s
    assert b.t_on_s == 0.0 and b.t_off_s == pytest.approx(3.0 + 0.12 / 0.3, rel=1e-12)
