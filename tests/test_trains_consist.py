"""Consists: axle offsets, conducting groups, spans, loads (derived by hand)."""
from __future__ import annotations

import pytest

from sim.errors import ScenarioError
from sim.model import Vehicle
from sim.world.consist import build_consist, consist_of
from trains_builders import scenario, train

# Invented vehicles (demo values, not measurements).
SWITCHER = Vehicle("switcher", 0.150, (0.020, 0.045, 0.105, 0.130), pickup=(0, 1, 2, 3),
                   draw_a=0.4, t_keep_alive_s=0.5)
GONDOLA = Vehicle("gondola", 0.160, (0.020, 0.040, 0.120, 0.140), metal_wheels=True)
COACH = Vehicle("coach", 0.260, (0.025, 0.050, 0.210, 0.235), pickup=(0, 3), r_join_ohm=120.0)
MOGUL = Vehicle("mogul", 0.250, (0.030, 0.060, 0.090, 0.120, 0.180, 0.220),
                pickup=(0, 1, 2, 3, 4, 5), draw_a=0.6, t_keep_alive_s=1.0)
PLAIN = Vehicle("plain", 0.100, (0.020, 0.080))


def test_axle_offsets_are_vehicle_fronts_plus_axle_positions():
    c = build_consist([SWITCHER, GONDOLA])
    # By hand: switcher front at 0, gondola front at 0.150 m;
    # gondola axles 0.150 + (0.020, 0.040, 0.120, 0.140).
    assert c.fronts_m == (0.0, 0.150)
    assert c.length_m == pytest.approx(0.310, abs=1e-15)
    expect = [0.020, 0.045, 0.105, 0.130, 0.170, 0.190, 0.270, 0.290]
    assert list(c.axle_offsets_m) == pytest.approx(expect, abs=1e-15)


def test_groups_kinds_and_resistance():
    c = build_consist([MOGUL, COACH, GONDOLA, PLAIN])
    kinds = [(g.kind, g.vehicle) for g in c.groups]
    # mogul: one pickup group; coach: one lighted group; gondola: four metal
    # wheelsets; the plain car (insulated wheels) joins nothing.
    assert kinds == [("pickup", 0), ("lighted", 1)] + [("metal", 2)] * 4
    coach = c.groups[1]
    # coach front at 0.250 m; pickup axles 0 and 3 at 0.025 and 0.235 m.
    assert coach.axle_offsets_m == pytest.approx((0.275, 0.485), abs=1e-15)
    assert coach.r_join_ohm == 120.0
    assert coach.span_m == pytest.approx(0.210, abs=1e-15)
    assert c.groups[0].r_join_ohm == 0.0


def test_outermost_conducting_axle_span():
    # switcher + 2 gondolas: first conducting axle at 0.020 m (switcher axle 0),
    # last at 0.150 + 0.160 + 0.140 = 0.450 m (second gondola's last wheelset):
    # span 0.430 m, by hand.
    c = build_consist([SWITCHER, GONDOLA, GONDOLA])
    assert c.conducting_span_m == pytest.approx(0.430, abs=1e-12)
    # A plain car at the rear adds length but no conducting axle.
    c2 = build_consist([SWITCHER, PLAIN])
    assert c2.length_m == pytest.approx(0.250, abs=1e-15)
    assert c2.conducting_span_m == pytest.approx(0.130 - 0.020, abs=1e-12)
    # A lone pickup axle forms no bridging group but still conducts: a plain
    # car, then a car with pickup on its axle 1 only (front at 0.100 m, axle
    # at 0.080 m), then a gondola (front 0.200 m, last wheelset 0.140 m):
    # span 0.340 - 0.180 = 0.160 m.
    lone = Vehicle("lone", 0.100, (0.020, 0.080), pickup=(1,), r_join_ohm=50.0)
    c3 = build_consist([PLAIN, lone, GONDOLA])
    assert [g.kind for g in c3.groups] == ["metal"] * 4
    assert c3.conducting_span_m == pytest.approx(0.160, abs=1e-12)


def test_loads_draw_and_keep_alive():
    c = build_consist([MOGUL, COACH, SWITCHER])
    # draw: 0.6 A + 0.4 A; keep-alive: the larger, 1.0 s.
    assert c.draw_a == pytest.approx(1.0, abs=1e-15)
    assert c.t_keep_alive_s == 1.0
    # mogul's draw point: midway between its pickup axles 0.030 and 0.220 m;
    # switcher's: its front at 0.510 m, midway between 0.020 and 0.130 m.
    assert [ld.offset_m for ld in c.loads] == pytest.approx([0.125, 0.585], abs=1e-12)
    assert [ld.vehicle for ld in c.loads] == [0, 2]


def test_pickup_axles_of_a_metal_wheeled_loco_are_not_counted_twice():
    loco = Vehicle("loco", 0.2, (0.03, 0.1, 0.17), pickup=(0, 2), draw_a=0.5, metal_wheels=True)
    c = build_consist([loco])
    assert [(g.kind, g.axle_offsets_m) for g in c.groups] == [
        ("pickup", (0.03, 0.17)), ("metal", (0.1,))]


def test_unknown_vehicle_is_a_located_problem():
    scn = scenario({"A": 5.0}, [], stock={"gondola": GONDOLA},
                   trains={"t": train("t", ["gondola", "caboose"], ("A", 2.0, "b"), ["A"])},
                   locations={("trains", "t", "consist"): (31, 5)})
    with pytest.raises(ScenarioError) as exc:
        consist_of(scn, scn.trains["t"])
    (p,) = exc.value.problems
    assert p.path == "trains.t.consist" and p.line == 31
    assert "caboose" in p.message
