"""Route geometry: joins, reversals, positions; every value derived by hand.

The test layout (invented) is a small wye::

    main (10 m) .b --- legW (2 m) --- tail (1.5 m) .a    (tail: a stub)
           .b ------ legE (2 m) ------------------' 

joints: 0 main.b~legW.a (none), 1 main.b~legE.b (none),
        2 legW.b~tail.a (both), 3 tail.a~legE.a (both).
Train: a loco 0.2 m (pickup axles at 0.03 and 0.17 m) and a lighted coach
0.3 m (pickup axles at 0.05 and 0.25 m): L = 0.5 m.
"""
from __future__ import annotations

import pytest

from sim.errors import ScenarioError
from sim.model import Vehicle
from sim.world.trains import build_plan, build_trains
from trains_builders import loco, scenario, train

COACH = Vehicle("coach", 0.3, (0.05, 0.25), pickup=(0, 1), r_join_ohm=100.0)
WYE_JOINTS = [("main.b", "legW.a", "none"), ("main.b", "legE.b", "none"),
              ("legW.b", "tail.a", "both"), ("tail.a", "legE.a", "both")]


def wye(route, tail_m=1.5, start=("main", 8.0, "b"), locations=None):
    stock = {"loco": loco(), "coach": COACH}
    t = train("t", ["loco", "coach"], start, route, speed_mps=0.5, depart_s=1.0)
    return scenario({"main": 10.0, "legW": 2.0, "legE": 2.0, "tail": tail_m}, WYE_JOINTS,
                    stock=stock, trains={"t": t}, locations=locations)


WYE_ROUTE = ["main", "legW", "tail", 3.0, "legE", "main"]


def test_wye_tail_reversal_leaves_by_the_entry_end():
    p = build_plan(wye(WYE_ROUTE), wye(WYE_ROUTE).trains["t"])
    steps = [(st.section, st.enter_end, st.heading) for st in p.path.steps]
    # main heading b; into legW by its a end; into tail by a, heading b; the
    # reversal flips the heading to a; out of tail by a (the entry end) into
    # legE at a, heading b; then main by its b end, heading a.
    assert steps == [("main", None, "b"), ("legW", "a", "b"), ("tail", "a", "b"),
                     ("tail", None, "a"), ("legE", "a", "b"), ("main", "b", "a")]
    # Reversal where the front reaches tail.b: (10 - 8) + 2 + 1.5 = 5.5 m.
    (rev,) = p.reversal_points
    assert rev.s_m == pytest.approx(5.5) and rev.t_wait_s == 3.0 and rev.section == "tail"
    # After it the new front (old rear) stands at tail 1.5 - 0.5 = 1.0 m and has
    # 1.0 m to tail.a, then legE 2 m and main 10 m: 5.5 + 13 = 18.5 m.
    assert p.route_length_m == pytest.approx(18.5)


def test_positions_through_the_reversal():
    scn = wye(WYE_ROUTE)
    p = build_plan(scn, scn.trains["t"])
    # arrival at the reversal point: old front at tail.b
    assert p.position(5.5) == ("tail", pytest.approx(1.5), "b")
    # the same instant seen after the flip: new front 0.5 m back, heading a
    assert p.position(5.5, after_reversal=True) == ("tail", pytest.approx(1.0), "a")
    assert p.position(6.0) == ("tail", pytest.approx(0.5), "a")
    # 0.5 m past tail.a (reached at s = 6.5) into legE from its a end
    assert p.position(7.0) == ("legE", pytest.approx(0.5), "b")
    # main entered at its b end (s = 8.5): at s = 9.0 the front is at 9.5 m
    assert p.position(9.0) == ("main", pytest.approx(9.5), "a")
    assert p.position(p.route_length_m) == ("main", pytest.approx(0.0), "a")


def test_sections_and_loads_follow_the_axles_not_the_front():
    scn = wye(WYE_ROUTE)
    p = build_plan(scn, scn.trains["t"])
    # s = 6.7: new front 0.2 m into legE, the train's other 0.3 m in tail.
    assert p.sections_occupied(6.7) == ("legE", "tail")
    # s = 4.1: front 0.1 m into tail, the rest (0.4 m) in legW.
    assert p.sections_occupied(4.1) == ("tail", "legW")
    # The loco's draw point is 0.1 m behind the original front (midway between
    # 0.03 and 0.17 m). At the reversal it is at tail 1.4 m; after backing
    # 0.5 m (s = 6.0) it is at tail 0.9 m: the axles stay, only the direction flips.
    (lp,) = p.load_points(5.5)
    assert (lp.section, lp.at_m, lp.draw_a, lp.vehicle) == ("tail", pytest.approx(1.4), 0.5, 0)
    (lp,) = p.load_points(6.0)
    assert (lp.section, lp.at_m) == ("tail", pytest.approx(0.9))


def test_route_join_error_is_located_at_the_route_line():
    scn = wye(["main", "tail"], locations={("trains", "t", "route"): (42, 7)})
    with pytest.raises(ScenarioError) as exc:
        build_trains(scn)
    (p,) = exc.value.problems
    assert p.path == "trains.t.route" and p.line == 42 and p.column == 7
    assert "main and tail are not joined at main.b" in p.message   # (the layout's follower)
    assert str(p).startswith("test.yaml:42:7: trains.t.route: ")


def test_after_a_reversal_the_next_section_must_join_the_end_now_headed_to():
    # Reversing in tail heads the train to tail.a; main does not join tail.a.
    scn = wye(["main", "legW", "tail", 1.0, "main"])
    with pytest.raises(ScenarioError) as exc:
        build_trains(scn)
    assert "tail.a" in exc.value.problems[0].message


def test_a_train_longer_than_the_tail_cannot_turn_into_the_other_leg():
    # tail 0.3 m < train 0.5 m: at the reversal the rear stands 0.2 m into legW,
    # so backing out into legE is impossible.
    scn = wye(WYE_ROUTE, tail_m=0.3)
    with pytest.raises(ScenarioError) as exc:
        build_trains(scn)
    assert exc.value.problems[0].path == "trains.t.route"
    # ...but it may back out the way it came in (legW again).
    scn = wye(["main", "legW", "tail", 1.0, "legW", "main"], tail_m=0.3)
    p = build_trains(scn)["t"]
    # 2 + 2 + 0.3 to the reversal; then 0.3 - 0.5 = -0.2 m to tail.a (the new
    # front is already in legW), 2 m of legW, 10 m of main: 4.3 + 11.8 = 16.1 m.
    assert p.route_length_m == pytest.approx(16.1)
    assert p.position(4.3, after_reversal=True) == ("legW", pytest.approx(1.8), "a")


def test_a_train_that_does_not_fit_behind_a_dead_end_is_refused():
    scn = wye(["main", "legW"], start=("main", 0.1, "b"))
    with pytest.raises(ScenarioError) as exc:
        build_trains(scn)
    (p,) = exc.value.problems
    assert p.path == "trains.t.start" and "main.a" in p.message


def test_start_behind_a_joint_extends_the_line_backwards():
    # Front 0.05 m into legW: the other 0.45 m stands in main (joined at main.b).
    scn = wye(["legW", "tail"], start=("legW", 0.05, "b"))
    p = build_plan(scn, scn.trains["t"])
    assert p.sections_occupied(0.0) == ("legW", "main")
    # the loco's draw point, 0.1 m behind the front: 0.05 m back from main.b
    (lp,) = p.load_points(0.0)
    assert (lp.section, lp.at_m) == ("main", pytest.approx(9.95, abs=1e-12))


def test_balloon_turnout_takes_the_joint_that_lets_the_route_go_on():
    # A 10 m, loop R 6 m, both R ends at A.b (gapped both): the route A, R, A
    # enters R by joint 0 (R.a, lowest index) and leaves by joint 1 (R.b).
    scn = scenario({"A": 10.0, "R": 6.0}, [("A.b", "R.a", "both"), ("A.b", "R.b", "both")],
                   stock={"loco": loco()},
                   trains={"t": train("t", ["loco"], ("A", 5.0, "b"), ["A", "R", "A"])})
    p = build_plan(scn, scn.trains["t"])
    assert [(st.section, st.joint.index if st.joint else None, st.heading)
            for st in p.path.steps] == [("A", None, "b"), ("R", 0, "b"), ("A", 1, "a")]
    # 5 m to A.b, 6 m round the loop, 10 m back along A to A.a
    assert p.route_length_m == pytest.approx(21.0)
    assert p.position(12.0) == ("A", pytest.approx(9.0), "a")
