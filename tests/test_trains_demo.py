"""Trains from YAML: the bundled demo layout and a located route error."""
from __future__ import annotations

from pathlib import Path

import pytest

from sim.errors import ScenarioError
from sim.scenario import load, loads
from sim.world.trains import Motion, build_trains

# A frozen copy of the first demo layout (its routes are summed by hand below).
DEMO = Path(__file__).resolve().parents[1] / "tests" / "scenarios" / "load" / "loader-reference.yaml"


def test_demo_trains_build_and_their_routes_add_up():
    scn = load(DEMO)
    plans = build_trains(scn)
    assert set(plans) == set(scn.trains)
    sec = {n: s.length_m for n, s in scn.track.sections.items()}

    bl = plans["balloon-local"]
    start = scn.trains["balloon-local"].start
    # heading b from its start, then every section end to end, round the
    # balloon, back to main-west's a end
    by_hand = (sec["main-west"] - start.at_m) + sec["wye-base"] + sec["main-east"] \
        + 2 * sec["loop-throat"] + sec["balloon"] + sec["main-east"] + sec["wye-base"] \
        + sec["main-west"]
    assert bl.route_length_m == pytest.approx(by_hand)
    assert bl.reversal_points == ()
    # the balloon is entered by its a end and left by its b end
    steps = [(s.section, s.enter_end) for s in bl.path.steps]
    assert ("balloon", "a") in steps and steps[steps.index(("balloon", "a")) + 1] == \
        ("loop-throat", "b")

    wt = plans["wye-turn"]
    start = scn.trains["wye-turn"].start
    (rev,) = wt.reversal_points
    # runs to the tail's far end, then backs out by its a end into leg-east
    assert rev.section == "wye-tail"
    assert rev.s_m == pytest.approx(sec["main-west"] - start.at_m + sec["leg-west"]
                                    + sec["wye-tail"])
    assert wt.route_length_m == pytest.approx(rev.s_m + (sec["wye-tail"] - wt.length_m)
                                              + sec["leg-east"] + sec["main-east"])
    assert wt.position(rev.s_m + 0.01, after_reversal=True).heading == "a"


def test_demo_trains_run_their_routes():
    scn = load(DEMO)
    for name, plan in build_trains(scn).items():
        m = Motion(plan)
        waits = sum(r.t_wait_s for r in plan.reversal_points)
        # t_end = depart + route / speed + standing times
        assert m.end_s == pytest.approx(plan.depart_s + plan.route_length_m / plan.speed_mps
                                        + waits, rel=1e-12)
        ev = m.next_bridge_events(0.0)
        assert len(ev) == 2 * len(plan.spans)
        assert [e.t_s for e in ev] == sorted(e.t_s for e in ev)


TINY = """format: railfault/1
title: tiny
seed: 1
duration: 10 s
supplies:
  psu: {voltage: 16 V}
boosters:
  b1: {supply: psu, trip: {above: 5 A, after: 2 ms}}
track:
  rail: {resistance: 0.02 ohm/m}
  wheel_contact: 0.05 ohm
  sections:
    main: {length: 10 m, feed: b1}
    side: {length: 3 m, feed: b1}
    stub: {length: 2 m, feed: b1}
  joints:
    - {ends: [main.b, side.a], gaps: both}
    - {ends: [side.b, stub.a], gaps: none}
rolling_stock:
  loco: {length: 200 mm, axles: [30 mm, 170 mm], pickup: all, draw: 0.5 A}
trains:
  t1:
    consist: [loco]
    start: {section: main, at: 5 m, heading: b}
    route: [main, stub]
    speed: 0.5 m/s
"""


def test_route_join_error_from_yaml_names_the_route_line():
    scn = loads(TINY, path="tiny.yaml")
    with pytest.raises(ScenarioError) as exc:
        build_trains(scn)
    (p,) = exc.value.problems
    line = 1 + TINY.splitlines().index("    route: [main, stub]")
    assert (p.file, p.path, p.line) == ("tiny.yaml", "trains.t1.route", line)
    assert "main and stub are not joined at main.b" in p.message   # (the layout's follower)
    # the same file with a route that joins builds
    ok = loads(TINY.replace("route: [main, stub]", "route: [main, side, stub]"))
    assert build_trains(ok)["t1"].route_length_m == pytest.approx(5.0 + 3.0 + 2.0)
