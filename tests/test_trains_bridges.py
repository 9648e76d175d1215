"""Bridge intervals in closed form, each instant derived by hand beside it.

Geometry of a bridge (see sim.world.trains): a pickup group with first and
last axle offsets d1, dn bridges a joint at front distance x over
[x + d1, x + dn], for span/speed; a metal wheelset with contact patch c over a
gap g bridges over |axle - x| < (c - g)/2, for (c - g)/speed. The gap width
0.8 mm and contact length 1.0 mm defaults of sim.model.Track are from memory.
"""
from __future__ import annotations

import math

import pytest

from sim.model import Vehicle
from sim.world.trains import build_plan
from trains_builders import loco, scenario, train, wye_plan

MOGUL = loco("mogul", 0.25, (0.03, 0.06, 0.09, 0.12, 0.18, 0.22), draw_a=0.6)
GONDOLA = Vehicle("gondola", 0.16, (0.02, 0.04, 0.12, 0.14), metal_wheels=True)
REL = 1e-12


def straight(consist, gaps="both", rail="left", speed=0.3, depart=2.0, start_m=1.0, **track):
    """A 5 m + 5 m straight, joint A.b~B.a at front distance 5 - start_m."""
    stock = {"mogul": MOGUL, "gondola": GONDOLA}
    t = train("t", consist, ("A", start_m, "b"), ["A", "B"], speed_mps=speed, depart_s=depart)
    scn = scenario({"A": 5.0, "B": 5.0}, [("A.b", "B.a", gaps, rail)], stock=stock,
                   trains={"t": t}, **track)
    return build_plan(scn, scn.trains["t"])


def test_pickup_span_over_a_gap_lasts_span_over_speed():
    p = straight(["mogul"])
    (b,) = p.bridges_in_time(2.0, 0.0, 0.3)
    # joint at s = 5 - 1 = 4 m; first pickup axle 0.03 m behind the front:
    # on at s = 4.03 m, t = 2 + 4.03/0.3 s; last axle 0.22 m: off at s = 4.22 m.
    assert b.t_on_s == pytest.approx(2.0 + 4.03 / 0.3, rel=REL)
    assert b.t_off_s == pytest.approx(2.0 + 4.22 / 0.3, rel=REL)
    # span 0.22 - 0.03 = 0.19 m at 0.3 m/s: 0.19/0.3 = 0.6333... s exactly
    assert b.t_off_s - b.t_on_s == pytest.approx(0.19 / 0.3, rel=REL)
    assert (b.rail, b.kind, b.group_index, b.joint_index) == ("both", "pickup", 0, 0)
    # r: one wheel contact each side, 2 x 0.05 ohm, no join resistance
    assert b.r_ohm == pytest.approx(0.1, rel=REL)


def test_metal_wheel_bridge_lasts_contact_minus_gap_over_speed():
    p = straight(["gondola"])
    bs = p.bridges_in_time(2.0, 0.0, 0.3)
    assert len(bs) == 4 and all(b.kind == "metal" for b in bs)
    # (c - g)/v = (1.0 mm - 0.8 mm) / 0.3 m/s = 0.2e-3/0.3 = 6.667e-4 s
    for b in bs:
        assert b.t_off_s - b.t_on_s == pytest.approx(0.2e-3 / 0.3, rel=1e-9)
        assert b.rail == "both" and b.r_ohm == pytest.approx(2 * 0.05)
    # first wheelset 0.02 m behind the front: centred on s = 4.02 m, on at
    # 4.02 - 0.1 mm
    assert bs[0].t_on_s == pytest.approx(2.0 + (4.02 - 0.1e-3) / 0.3, rel=REL)


def test_metal_wheel_shorter_contact_than_gap_never_bridges():
    p = straight(["gondola"], contact_length_m=0.8e-3, gap_width_m=1.0e-3)
    assert p.bridges_in_time(2.0, 0.0, 0.3) == []


def test_one_rail_gap_reports_the_gapped_rail_and_bonded_joints_none():
    p = straight(["mogul", "gondola"], gaps="one", rail="right")
    rails = {b.rail for b in p.spans}
    assert rails == {"right"} and len(p.spans) == 1 + 4
    assert straight(["mogul", "gondola"], gaps="none").spans == ()


def test_lighted_car_resistance_includes_its_join():
    coach = Vehicle("coach", 0.26, (0.025, 0.05, 0.21, 0.235), pickup=(0, 3), r_join_ohm=120.0)
    scn = scenario({"A": 5.0, "B": 5.0}, [("A.b", "B.a", "both")], stock={"coach": coach},
                   trains={"t": train("t", ["coach"], ("A", 1.0, "b"), ["A", "B"])})
    (sp,) = build_plan(scn, scn.trains["t"]).spans
    # 2 x 0.05 ohm wheel contacts + 120 ohm lighting
    assert sp.r_ohm == pytest.approx(120.1) and sp.kind == "lighted"
    assert (sp.s_on_m, sp.s_off_m) == (pytest.approx(4.025), pytest.approx(4.235))


def test_reversing_loop_on_off_instants_by_hand():
    # A 10 m, loop R 6 m, both R ends at A.b (gapped both). The mogul starts at
    # A 5 m heading b, departs at 1 s, runs at 0.5 m/s. It crosses joint 0 at
    # s = 5 m and joint 1 at s = 11 m.
    scn = scenario({"A": 10.0, "R": 6.0}, [("A.b", "R.a", "both"), ("A.b", "R.b", "both")],
                   stock={"mogul": MOGUL},
                   trains={"t": train("t", ["mogul"], ("A", 5.0, "b"), ["A", "R", "A"],
                                      speed_mps=0.5, depart_s=1.0)})
    p = build_plan(scn, scn.trains["t"])
    got = [(b.joint_index, b.t_on_s, b.t_off_s) for b in p.bridges_in_time(1.0, 0.0, 0.5)]
    # joint 0: on 1 + 5.03/0.5 = 11.06 s, off 1 + 5.22/0.5 = 11.44 s
    # joint 1: on 1 + 11.03/0.5 = 23.06 s, off 1 + 11.22/0.5 = 23.44 s
    assert [g[0] for g in got] == [0, 1]
    assert [g[1:] for g in got] == [(pytest.approx(11.06, rel=REL), pytest.approx(11.44, rel=REL)),
                                    (pytest.approx(23.06, rel=REL), pytest.approx(23.44, rel=REL))]


def test_wye_reversal_bridges_with_the_wait_included():
    p = wye_plan()
    got = [(b.joint_index, b.kind, b.t_on_s, b.t_off_s) for b in p.bridges_in_time(1.0, 0.0, 0.5)]
    # Into the tail, joint 2 at s = 4 m: loco (0.03, 0.17 m) on [4.03, 4.17],
    # coach (0.25, 0.45 m) on [4.25, 4.45]; t = 1 + s/0.5.
    # Reversal: arrive s = 5.5 m at t = 12 s, stand 3 s, leave at 15 s.
    # Out of the tail, joint 3 at s = 6.5 m; offsets from the new front are
    # L - d with L = 0.5 m: coach (0.05, 0.25) -> [6.55, 6.75] m,
    # loco (0.33, 0.47) -> [6.83, 6.97] m; t = 15 + (s - 5.5)/0.5.
    expect = [(2, "pickup", 9.06, 9.34), (2, "lighted", 9.5, 9.9),
              (3, "lighted", 17.1, 17.5), (3, "pickup", 17.66, 17.94)]
    assert [(j, k) for j, k, _, _ in got] == [(j, k) for j, k, _, _ in expect]
    for (_, _, on, off), (_, _, on_x, off_x) in zip(got, expect):
        assert on == pytest.approx(on_x, rel=REL) and off == pytest.approx(off_x, rel=REL)


def test_a_bridge_held_across_a_reversal_lasts_through_the_wait():
    # A 5 m, stub B 1 m, joint A.b~B.a gapped both; a 1.2 m loco with pickup
    # axles at 0.1 and 1.1 m. Start A 3 m heading b; route A, B, reverse 2 s, A.
    long_loco = loco("long", 1.2, (0.1, 1.1))
    scn = scenario({"A": 5.0, "B": 1.0}, [("A.b", "B.a", "both")], stock={"long": long_loco},
                   trains={"t": train("t", ["long"], ("A", 3.0, "b"), ["A", "B", 2.0, "A"],
                                      speed_mps=0.5, depart_s=0.0)})
    p = build_plan(scn, scn.trains["t"])
    (sp,) = p.spans
    # joint at s = 2 m; on when the first axle crosses: s = 2.1 m. The reversal
    # comes at s = 3 m, before the second axle (s = 3.1 m) would cross; backing
    # out, the axle now in B at 0.9 m from the joint crosses it after 0.9 m.
    assert (sp.s_on_m, sp.s_off_m) == (pytest.approx(2.1), pytest.approx(3.9))
    (b,) = p.bridges_in_time(0.0, 0.0, 0.5)
    # on 2.1/0.5 = 4.2 s; arrive 6 s, stand to 8 s; off 8 + 0.9/0.5 = 9.8 s
    assert (b.t_on_s, b.t_off_s) == (pytest.approx(4.2), pytest.approx(9.8))


def test_bridge_on_at_departure_and_at_the_route_end():
    # The mogul starts with its front 0.1 m into B: axle 0 (0.03 m) is past the
    # joint, axle 5 (0.22 m) is not: bridging from the start, until s = 0.12 m.
    stock = {"mogul": MOGUL}
    scn = scenario({"A": 5.0, "B": 0.2}, [("A.b", "B.a", "both")], stock=stock,
                   trains={"t": train("t", ["mogul"], ("B", 0.1, "b"), ["B"], depart_s=3.0)})
    p = build_plan(scn, scn.trains["t"])
    (sp,) = p.spans
    # route: 0.1 m to B.b; the last axle crosses at s = 0.12 m > 0.1 m, so the
    # train stops bridging: off never (inf).
    assert sp.s_on_m == 0.0 and sp.s_off_m == math.inf
    (b,) = p.bridges_in_time(3.0, 0.0, 0.3)
    assert (b.t_on_s, b.t_off_s) == (3.0, math.inf)
    assert p.bridges(0.0, 0.0) == [sp]


def test_bridges_by_front_range():
    p = straight(["mogul", "gondola"])
    # joint at s = 4 m: mogul [4.03, 4.22]; gondola wheelsets centred on
    # 4.25 + (0.02, 0.04, 0.12, 0.14) m.
    assert [sp.kind for sp in p.bridges(0.0, 4.1)] == ["pickup"]
    assert len(p.bridges(4.23, 4.30)) == 2     # wheelsets at 4.27 and 4.29 m
    assert p.bridges(4.40, 10.0) == []
    assert [sp.kind for sp in p.bridges(4.1, 4.1)] == ["pickup"]
    # the three-argument time form: bridges(t0_s, s0_m, speed_mps)
    assert p.bridges(2.0, 0.0, 0.3) == p.bridges_in_time(2.0, 0.0, 0.3)
    assert p.bridges(2.0, 0.0, 0.3)[0].t_on_s == pytest.approx(2.0 + 4.03 / 0.3, rel=REL)


def test_axles_that_never_reach_a_joint_before_the_route_end_do_not_bridge_it():
    # A 5 m + B 0.1 m: the route ends 0.1 m past the joint (s = 4.1 m). The
    # mogul's first axle (0.03 m) crosses at s = 4.03 m and it stops bridging
    # (its last axle at 0.22 m never crosses); the gondola behind it (wheelsets
    # 0.27 m and more behind the front) never reaches the joint at all.
    stock = {"mogul": MOGUL, "gondola": GONDOLA}
    scn = scenario({"A": 5.0, "B": 0.1}, [("A.b", "B.a", "both")], stock=stock,
                   trains={"t": train("t", ["mogul", "gondola"], ("A", 1.0, "b"), ["A", "B"])})
    p = build_plan(scn, scn.trains["t"])
    assert [(sp.kind, sp.s_on_m, sp.s_off_m) for sp in p.spans] == [
        ("pickup", pytest.approx(4.03), math.inf)]
    assert p.bridges(4.2, 100.0) == list(p.spans)


def test_consecutive_reversals_shuttle_in_a_stub():
    # A 5 m, stub B 1 m (joint A.b~B.a gapped both); a 0.2 m loco (axles 0.03,
    # 0.17 m) starts at A 3 m heading b, 0.5 m/s; route A, B, rev 1 s, rev 2 s,
    # rev 3 s, A. Reversals where the front reaches an end of B: s = 3 m (B.b),
    # 3.8 m (B.a side: 1 - 0.2 m of room), 4.6 m (B.b again).
    scn = scenario({"A": 5.0, "B": 1.0}, [("A.b", "B.a", "both")], stock={"loco": loco()},
                   trains={"t": train("t", ["loco"], ("A", 3.0, "b"),
                                      ["A", "B", 1.0, 2.0, 3.0, "A"], speed_mps=0.5)})
    p = build_plan(scn, scn.trains["t"])
    assert [r.s_m for r in p.reversal_points] == [pytest.approx(x) for x in (3.0, 3.8, 4.6)]
    got = [(b.t_on_s, b.t_off_s) for b in p.bridges_in_time(0.0, 0.0, 0.5)]
    # in: joint at s = 2 m, on 2.03/0.5 = 4.06 s, off 2.17/0.5 = 4.34 s.
    # Standing 1 + 2 + 3 s and running 3 + 0.8 + 0.8 m puts the train at
    # s = 4.6 m at t = 9.2 + 6 = 15.2 s, heading a with the original front
    # 0.8 m from the joint: on 15.2 + (0.8 + 0.03)/0.5 = 16.86 s, off 17.14 s.
    assert got == [(pytest.approx(4.06), pytest.approx(4.34)),
                   (pytest.approx(16.86), pytest.approx(17.14))]
