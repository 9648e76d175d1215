"""Layout graph, districts and routes, on hand-built layouts and random walks.

Signs follow the definition in domain.md: an a end with a b end is straight
(+1), two a ends or two b ends crossed (-1).
"""
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sim.errors import ScenarioError
from sim.layout import build_layout
from sim.model import Reversal, Start
from sim.scenario import loads
from tests.builders import ScenarioBuilder


def wye_layout():
    """main.b splits to base.a and west.a; west.b and east.a meet at tail.a; base.b, east.b
    meet at out.a (the demo's wye in miniature)."""
    b = ScenarioBuilder()
    b.booster("west")
    b.reverser("tail-ctl", feed="west")
    for name in ("main", "base", "west", "east", "out"):
        b.section(name, 2.0, "west")
    b.section("tail", 1.5, "tail-ctl")
    b.joint("main.b", "base.a")
    b.joint("main.b", "west.a")
    b.joint("base.b", "out.a")
    b.joint("east.b", "out.a")
    b.joint("tail.a", "west.b", "both")
    b.joint("tail.a", "east.a", "both")
    return b


def test_graph_nodes_edges_signs_and_keys():
    lay = build_layout(wye_layout().build())
    g = lay.graph
    assert set(g.nodes) == {"main", "base", "west", "east", "out", "tail"}
    assert g.number_of_edges() == 6
    # key = joint index; tail.a~east.a joins two a ends: crossed
    assert g.edges["tail", "east", 5]["sign"] == -1
    assert g.edges["tail", "west", 4]["sign"] == +1
    assert g.edges["tail", "west", 4]["gaps"] == "both"
    assert g.edges["main", "base", 0]["joint"].name == "main.b~base.a"


def test_ends_turnouts_and_queries():
    lay = build_layout(wye_layout().build())
    assert [j.index for j in lay.joints_at("main", "b")] == [0, 1]
    assert lay.joints_at("main", "a") == ()
    assert set(lay.turnouts) == {("main", "b"), ("out", "a"), ("tail", "a")}
    assert {n.section for n in lay.neighbours_across_gaps("tail")} == {"west", "east"}
    assert lay.neighbours_across_gaps("main") == ()


def test_districts_follow_bonds_and_unfed_is_reported_not_raised():
    b = ScenarioBuilder()
    b.booster("east")
    b.booster("west")
    b.section("s1", 1.0, "east")
    b.section("s2", 1.0, None)        # bonded to s1: district east
    b.section("s3", 1.0, None)        # bonded to s2: district east (two hops)
    b.section("s4", 1.0, "west")
    b.section("island", 1.0, None)    # gapped from everything: fed by nothing
    b.joint("s1.b", "s2.a")
    b.joint("s2.b", "s3.a")
    b.joint("s3.b", "s4.a", "both")
    b.joint("s4.b", "island.a", "both")
    lay = build_layout(b.build())
    assert lay.district("s2") == "east" and lay.district("s3") == "east"
    assert lay.districts == {"east": ("s1", "s2", "s3"), "west": ("s4",)}
    assert lay.district("island") is None
    assert lay.unfed == ("island",)
    assert lay.device_chain("s3") == ("east", "psu")


def test_route_into_a_wye_tail_reverses_and_leaves_by_the_same_end():
    b = wye_layout()
    b.vehicle("loco", 0.15, [0.02, 0.13])
    b.train("turn", ["loco"], ["main", "west", "tail", "reverse", "east", "out"])
    lay = build_layout(b.build())
    legs = lay.route_path("turn")
    assert [(l.section, l.enter_end, l.exit_end, l.direction) for l in legs] == [
        ("main", None, "b", "ab"),
        ("west", "a", "b", "ab"),
        ("tail", "a", None, "ab"),     # runs in by a, stops inside
        ("tail", None, "a", "ba"),     # reversed: leaves by a again
        ("east", "a", "b", "ab"),      # enters east by its a end (crossed joint)
        ("out", "a", None, "ab"),
    ]
    assert [l.joint_in.index if l.joint_in else None for l in legs] == [None, 1, 4, None, 5, 3]
    assert legs[3].reversal == Reversal(1.0)


def test_route_that_does_not_join_raises_located_problem():
    b = wye_layout()
    b.vehicle("loco", 0.15, [0.02, 0.13])
    # from west heading b the train reaches tail; out is not joined to tail
    b.train("bad", ["loco"], ["main", "west", "tail", "out"])
    scn = b.build()
    with pytest.raises(ScenarioError) as err:
        build_layout(scn)
    (p,) = err.value.problems
    assert p.path == "trains.bad.route"
    assert p.line == scn.locations[("trains", "bad", "route", 3)][0]
    assert "tail and out are not joined" in p.message


def test_route_without_the_reversal_is_refused_with_a_hint():
    b = wye_layout()
    b.vehicle("loco", 0.15, [0.02, 0.13])
    # tail -> east needs a reversal: the train heads to tail.b (a dead end)
    b.train("noturn", ["loco"], ["main", "west", "tail", "east"])
    scn = b.build()
    with pytest.raises(ScenarioError) as err:
        build_layout(scn)
    msg = err.value.problems[0].message
    assert "heading to" in msg and "tail.a" in msg and "reversal" in msg
    lay = build_layout(scn, check_routes=False)       # the graph itself is fine
    assert lay.district("tail") == "tail-ctl"


def test_route_through_a_balloon_takes_the_first_joint_that_lets_it_go_on():
    b = ScenarioBuilder()
    b.booster("east")
    b.reverser("loop-ctl", feed="east")
    b.section("main", 3.0, "east")
    b.section("loop", 5.0, "loop-ctl")
    b.joint("main.b", "loop.a", "both")
    b.joint("main.b", "loop.b", "both")
    b.vehicle("loco", 0.15, [0.02, 0.13])
    b.train("round", ["loco"], ["main", "loop", "main"])
    legs = build_layout(b.build()).route_path("round")
    assert [(l.section, l.enter_end, l.exit_end, l.direction) for l in legs] == [
        ("main", None, "b", "ab"), ("loop", "a", "b", "ab"), ("main", "b", None, "ba")]
    assert [l.joint_in.index if l.joint_in else None for l in legs] == [None, 0, 1]


def test_route_must_begin_at_the_start_section():
    b = wye_layout()
    b.vehicle("loco", 0.15, [0.02, 0.13])
    b.train("lost", ["loco"], ["west", "tail"], start=Start("main", 1.0, "b"))
    with pytest.raises(ScenarioError) as err:
        build_layout(b.build())
    assert "must begin with the start section 'main'" in err.value.problems[0].message


def test_bad_joint_end_is_a_scenario_error():
    b = ScenarioBuilder()
    b.booster("east")
    b.section("s1", 1.0, "east")
    b.joint("s1.b", "nowhere.a")
    with pytest.raises(ScenarioError) as err:
        build_layout(b.build())
    assert err.value.problems[0].path == "track.joints.0.ends"


def test_route_problem_from_a_file_names_the_line_of_the_step():
    text = """\
format: railfault/1
title: route test
seed: 1
duration: 10 s
supplies:
  psu: {voltage: 15 V}
boosters:
  east: {supply: psu, trip: {above: 5 A, after: 4 ms}}
track:
  rail: {resistance: 0.02 ohm/m}
  wheel_contact: 0.05 ohm
  sections:
    s1: {length: 2 m, feed: east}
    s2: {length: 2 m, feed: east}
    s3: {length: 2 m, feed: east}
  joints:
    - {ends: [s1.b, s2.a], gaps: none}
    - {ends: [s2.b, s3.a], gaps: none}
rolling_stock:
  loco: {length: 150 mm, axles: [20 mm, 130 mm], pickup: all, draw: 0.3 A}
trains:
  t1:
    consist: [loco]
    start: {section: s1, at: 1 m, heading: b}
    speed: 0.2 m/s
    route:
      - s1
      - s3
"""
    scn = loads(text, "route-test.yaml")
    with pytest.raises(ScenarioError) as err:
        build_layout(scn)
    (p,) = err.value.problems
    assert (p.file, p.path, p.line) == ("route-test.yaml", "trains.t1.route", 28)
    assert "s1 and s3 are not joined at s1.b" in p.message


# ------------------------------------------------------------ property test


@st.composite
def walks(draw):
    """A random layout and a route made by walking it: leave by the end you head to,
    enter the next section by the joined end, head to its other end; or reverse."""
    n = draw(st.integers(1, 5))
    b = ScenarioBuilder()
    b.booster("bst")
    for i in range(n):
        b.section(f"s{i}", 1.0, "bst")
    for _ in range(draw(st.integers(0, 8))):
        b.joint(f"s{draw(st.integers(0, n - 1))}.{draw(st.sampled_from('ab'))}",
                f"s{draw(st.integers(0, n - 1))}.{draw(st.sampled_from('ab'))}", "both")
    joints = [j for j in b.joints if str(j.ends[0]) != str(j.ends[1])]
    b.joints[:] = [j.__class__(i, j.ends, j.gaps, j.rail) for i, j in enumerate(joints)]
    sec = f"s{draw(st.integers(0, n - 1))}"
    head = draw(st.sampled_from("ab"))
    start = Start(sec, 0.5, head)
    route = [sec]
    for _ in range(draw(st.integers(0, 8))):
        options = []
        for j in b.joints:
            for mine, far in ((j.ends[0], j.ends[1]), (j.ends[1], j.ends[0])):
                if mine.section == sec and mine.end == head:
                    options.append(far)
        if not options or draw(st.integers(0, 4)) == 0:
            route.append("reverse")
            head = "b" if head == "a" else "a"
            continue
        far = draw(st.sampled_from(options))
        sec, head = far.section, ("b" if far.end == "a" else "a")
        route.append(sec)
    b.vehicle("loco", 0.1, [0.02, 0.08])
    b.train("t", ["loco"], route, start=start)
    return b.build(), route


@settings(max_examples=200, deadline=None)
@given(walks())
def test_route_path_follows_any_walk(case):
    scn, route = case
    legs = build_layout(scn).route_path("t")
    assert len(legs) == len(route)
    assert [l.section for l in legs[1:] if l.reversal is None] == \
        [s for s in route[1:] if s != "reverse"]
    assert legs[0].direction[1] == scn.trains["t"].start.heading
    for prev, leg in zip(legs, legs[1:]):
        if leg.reversal is not None:
            assert leg.section == prev.section and leg.enter_end is None
            assert leg.direction != prev.direction and prev.exit_end is None
            continue
        assert leg.direction[0] == leg.enter_end          # heads to the other end
        j = leg.joint_in
        ends = {(e.section, e.end) for e in j.ends}
        assert (prev.section, prev.exit_end) in ends and (leg.section, leg.enter_end) in ends
        assert prev.exit_end == prev.direction[1]      # left by the end it headed to
