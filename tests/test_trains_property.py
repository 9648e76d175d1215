"""Property tests: random consists and speeds against the closed forms.

For a pickup (or lighted) group the bridge of a gapped joint at front
distance x lasts from x + d_first to x + d_last: (d_last - d_first)/v; a
metal wheelset's from x + d - (c - g)/2 to x + d + (c - g)/2: (c - g)/v.
Times are t0 + s/v. Derived by hand in sim/world/trains.py's notes; checked
here independently of the implementation's own interval code.
"""
from __future__ import annotations

import math

import pytest
from hypothesis import assume, given, settings, strategies as st

from sim.model import Vehicle
from sim.world.consist import build_consist
from sim.world.trains import Motion, build_plan
from trains_builders import scenario, train

REL = 1e-12


@st.composite
def vehicles(draw, i):
    length = draw(st.floats(0.08, 0.3))
    n = draw(st.integers(1, 6))
    axles = sorted(draw(st.lists(st.floats(0.005, length - 0.005), min_size=n, max_size=n,
                                 unique=True)))
    # real axles stand centimetres apart; keep them at least 1 mm apart
    assume(all(b - a >= 1e-3 for a, b in zip(axles, axles[1:])))
    pickup = tuple(sorted(draw(st.sets(st.integers(0, n - 1)))))
    return Vehicle(f"v{i}", length, tuple(axles), pickup=pickup,
                   draw_a=draw(st.sampled_from([0.0, 0.5])),
                   r_join_ohm=draw(st.sampled_from([0.0, 0.0, 120.0])),
                   metal_wheels=draw(st.booleans()))


@st.composite
def cases(draw):
    vs = [draw(vehicles(i)) for i in range(draw(st.integers(1, 4)))]
    speed = draw(st.floats(0.05, 1.0))
    t0 = draw(st.floats(0.0, 10.0))
    gaps = (draw(st.sampled_from(["both", "one", "none"])),
            draw(st.sampled_from(["both", "one"])))
    return vs, speed, t0, gaps


def layout(vs, speed, t0, gaps):
    length = sum(v.length_m for v in vs)
    start_m = length + 0.5        # the whole train in A, clear of A.a
    stock = {v.name: v for v in vs}
    t = train("t", [v.name for v in vs], ("A", start_m, "b"), ["A", "B", "C"],
              speed_mps=speed, depart_s=t0)
    scn = scenario({"A": 5.0, "B": 3.0, "C": 5.0},
                   [("A.b", "B.a", gaps[0], "right"), ("B.b", "C.a", gaps[1], "left")],
                   stock=stock, trains={"t": t})
    # joints at front distance 5 - start_m and 8 - start_m
    return build_plan(scn, scn.trains["t"]), (5.0 - start_m, 8.0 - start_m)


@settings(max_examples=150, deadline=None)
@given(cases())
def test_every_pickup_interval_lasts_span_over_speed(case):
    vs, speed, t0, gaps = case
    plan, xs = layout(vs, speed, t0, gaps)
    consist = build_consist(vs)
    got = plan.bridges_in_time(t0, 0.0, speed)
    half = 0.5 * (1.0e-3 - 0.8e-3)     # (c - g)/2 with the Track defaults
    expect = []
    for j, x in enumerate(xs):
        if gaps[j] == "none":
            continue
        for gi, g in enumerate(consist.groups):
            if g.kind == "metal":
                expect.append((j, gi, t0 + (x + g.first_m - half) / speed, 2 * half / speed))
            elif g.span_m > 0:
                expect.append((j, gi, t0 + (x + g.first_m) / speed, g.span_m / speed))
    assert len(got) == len(expect)
    by_key = {(b.joint_index, b.group_index): b for b in got}
    for j, gi, t_on, dur in expect:
        b = by_key[(j, gi)]
        assert b.t_on_s == pytest.approx(t_on, rel=REL)
        assert b.t_off_s - b.t_on_s == pytest.approx(dur, rel=REL if dur > 1e-3 else 1e-9)
        assert b.rail == ("both" if gaps[j] == "both" else ("right", "left")[j])


@settings(max_examples=100, deadline=None)
@given(cases(), st.floats(0.0, 1.0), st.floats(0.0, 20.0), st.floats(0.0, 2.0))
def test_an_outage_delays_the_end_by_what_the_keep_alive_does_not_cover(case, frac, out_s, ka):
    vs, speed, t0, gaps = case
    vs = [Vehicle(vs[0].name, vs[0].length_m, vs[0].axles_m, vs[0].pickup, 0.5, ka,
                  vs[0].r_join_ohm, vs[0].metal_wheels)] + vs[1:]
    plan, _ = layout(vs, speed, t0, gaps)
    nominal_end = t0 + plan.route_length_m / speed
    t_loss = t0 + frac * (nominal_end - t0)
    m = Motion(plan)
    t_stop = m.power_lost(t_loss)
    m.power_back(t_loss + out_s)
    # the train stands from t_loss + ka (if that comes before the end) until
    # power returns: the end moves by max(0, out_s - ka).
    delay = max(0.0, out_s - ka) if t_stop < nominal_end else 0.0
    assert m.end_s == pytest.approx(nominal_end + delay, rel=1e-12, abs=1e-9)
    ss = [m.position_s(t0 + k * (nominal_end + delay - t0) / 50) for k in range(51)]
    assert all(b >= a for a, b in zip(ss, ss[1:]))
    assert math.isclose(ss[-1], plan.route_length_m, rel_tol=1e-12)


@settings(max_examples=100, deadline=None)
@given(cases(), st.floats(0.0, 5.0))
def test_wye_reversal_flips_offsets_and_adds_the_wait(case, wait_s):
    # The wye of test_trains_geometry (tail 1.5 m): joint 2 at s = 4 m on the
    # way in, reversal at s = 5.5 m; the train (L <= 1.2 m) backs out, its
    # offsets from the new front L - d, over joint 3 at s = 5.5 + (1.5 - L).
    # A group's first crossing out is by its rear-most axle d_last:
    # s_on = 5.5 + 1.5 - L + L - d_last = 7 - d_last, reached at
    # t0 + 5.5/v + wait + (1.5 - d_last)/v; it lasts span/v.
    vs, speed, t0, _ = case
    stock = {v.name: v for v in vs}
    joints = [("main.b", "legW.a", "none"), ("main.b", "legE.b", "none"),
              ("legW.b", "tail.a", "both"), ("tail.a", "legE.a", "both")]
    t = train("t", [v.name for v in vs], ("main", 8.0, "b"),
              ["main", "legW", "tail", wait_s, "legE", "main"], speed_mps=speed, depart_s=t0)
    scn = scenario({"main": 10.0, "legW": 2.0, "legE": 2.0, "tail": 1.5}, joints,
                   stock=stock, trains={"t": t})
    plan = build_plan(scn, scn.trains["t"])
    consist = build_consist(vs)
    got = {(b.joint_index, b.group_index): b for b in plan.bridges_in_time(t0, 0.0, speed)}
    for gi, g in enumerate(consist.groups):
        if g.kind == "metal" or g.span_m <= 0:
            continue
        b_in, b_out = got[(2, gi)], got[(3, gi)]
        assert b_in.t_on_s == pytest.approx(t0 + (4.0 + g.first_m) / speed, rel=REL)
        t_out = t0 + 5.5 / speed + wait_s + (1.5 - g.last_m) / speed
        assert b_out.t_on_s == pytest.approx(t_out, rel=REL)
        for b in (b_in, b_out):
            assert b.t_off_s - b.t_on_s == pytest.approx(g.span_m / speed, rel=REL)
