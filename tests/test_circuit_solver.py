"""The nodal solver against hand-derived closed forms (each derivation beside it)."""
from __future__ import annotations

import math

import pytest

from circuit_builders import (booster, breaker, joint, reverser, scenario, section, supply)
from sim.circuit import KirchhoffError, build_circuit
from sim.circuit.build import R_MIN_OHM
from sim.circuit.conductors import awg_r_per_m_ohm, wire_r_ohm
from sim.model import Rail, Wire

R_RAIL = 0.02      # ohm/m, one rail (demo value)
V = 16.0
R_SUP = 0.05
R_OUT = 0.04
W20 = Wire(0.4, awg=20)
R_C20 = 0.4 * awg_r_per_m_ohm(20)   # one conductor of the feeder pair


def both(c):
    return c.solve(), c.update()


def one_feeder_scn(at=0.0, length=10.0, supply_wire=None):
    return scenario([supply("p", V, R_SUP)],
                    [booster("b", "p", r_out=R_OUT, wire=supply_wire)],
                    [section("s", length, "b", [(at, W20)])])


@pytest.mark.parametrize("x", [0.0, 2.5, 7.3, 10.0])
def test_one_feeder_at_one_end_short_at_x(x):
    # Loop: supply EMF V behind r_sup, the booster's output resistance (r_out/2 in
    # each lead), the supply->booster pair (2 conductors), the feeder pair
    # (2 conductors), the left rail 0..x, the coin, the right rail x..0:
    #   I = V / (r_sup + r_out + 2 R_sw + 2 R_wire + 2 r x + R_coin)
    sw = Wire(2.0, awg=14)
    c = build_circuit(one_feeder_scn(0.0, supply_wire=sw))
    c.set_short("coin", "s", x, 0.01)
    expected = V / (R_SUP + R_OUT + wire_r_ohm(sw) + 2 * R_C20 + 2 * R_RAIL * x + 0.01)
    for sol in both(c):
        assert sol.short_i_a["coin"] == pytest.approx(expected, rel=1e-10)
        assert sol.device_i_a["b"] == pytest.approx(expected, rel=1e-10)
        assert sol.supply_i_a["p"] == pytest.approx(expected, rel=1e-10)
        # terminal voltage V - I r_sup
        assert sol.supply_v_v["p"] == pytest.approx(V - expected * R_SUP, rel=1e-10)


def test_feeder_mid_section_only_distance_to_feeder_counts():
    # The rail beyond the short carries no current: only |x - x_feeder| counts.
    c = build_circuit(one_feeder_scn(at=6.0))
    c.set_short("k", "s", 1.5, 0.0)   # zero ohm: the short gets R_MIN_OHM
    expected = V / (R_SUP + R_OUT + 2 * R_C20 + 2 * R_RAIL * 4.5 + R_MIN_OHM)
    for sol in both(c):
        assert sol.short_i_a["k"] == pytest.approx(expected, rel=1e-10)


def test_two_feeders_in_parallel():
    # Feeders at 0 and L join at the booster terminals: two paths in parallel,
    # p1 = 2 R_wire + 2 r x, p2 = 2 R_wire + 2 r (L - x);
    # I = V / (r_sup + r_out + p1 p2 / (p1 + p2) + R_coin)
    L, x = 12.0, 3.0
    scn = scenario([supply("p", V, R_SUP)], [booster("b", "p", r_out=R_OUT)],
                   [section("s", L, "b", [(0.0, W20), (L, W20)])])
    c = build_circuit(scn)
    c.set_short("k", "s", x, 0.01)
    p1 = 2 * R_C20 + 2 * R_RAIL * x
    p2 = 2 * R_C20 + 2 * R_RAIL * (L - x)
    expected = V / (R_SUP + R_OUT + p1 * p2 / (p1 + p2) + 0.01)
    for sol in both(c):
        assert sol.short_i_a["k"] == pytest.approx(expected, rel=1e-10)


def two_booster_scn(phase_b=-1, supplies=1, gaps="both"):
    sups = [supply("p", V, R_SUP)] + ([supply("q", V, R_SUP)] if supplies == 2 else [])
    return scenario(sups,
                    [booster("A", "p", r_out=R_OUT), booster("B", "q" if supplies == 2 else "p",
                                                             r_out=R_OUT, phase=phase_b)],
                    [section("x", 4.0, "A", [(1.0, W20)]), section("y", 5.0, "B", [(2.0, W20)])],
                    [joint(0, "x.b", "y.a", gaps)])


def test_bridge_between_out_of_phase_boosters_on_one_supply():
    # A (normal) puts its left rail on the supply's + side, B (inverted) its left
    # rail on the 0 side. A wheel joining the two left rails at the gap closes
    # + -> A lead -> A feeder -> 3 m of x's rail -> wheel -> 2 m of y's rail ->
    # B feeder -> B lead -> 0, and back through the supply:
    #   I = V / (r_sup + r_out/2 + r_out/2 + 2 R_wire + r (3 + 2) + r_bridge)
    c = build_circuit(two_booster_scn())
    c.set_bridge("w", 0, "left", 0.1)
    expected = V / (R_SUP + R_OUT + 2 * R_C20 + R_RAIL * 5.0 + 0.1)
    for sol in both(c):
        assert sol.bridge_i_a["w"] == pytest.approx(expected, rel=1e-10)
        assert sol.device_i_a["A"] == pytest.approx(expected, rel=1e-10)
        assert sol.device_i_a["B"] == pytest.approx(expected, rel=1e-10)
    # in phase: both left rails on the + side, nothing flows
    c2 = build_circuit(two_booster_scn(phase_b=+1))
    c2.set_bridge("w", 0, "both", 0.1)
    for sol in both(c2):
        assert abs(sol.bridge_i_a["w"]) < 1e-9


def test_separate_supplies_one_rail_isolated_both_rails_double_voltage():
    # Separate supplies are isolated: one bridged rail closes no loop (0 A).
    c = build_circuit(two_booster_scn(supplies=2))
    c.set_bridge("w", 0, "left", 0.1)
    for sol in both(c):
        assert abs(sol.bridge_i_a["w"]) < 1e-9
    # Both rails bridged, out of phase: the two EMFs add around the loop
    # (2 V, "twice the track voltage"); the loop holds both supplies, both
    # boosters' whole output resistance, both feeder pairs, both rails 3 m + 2 m
    # and the two wheel paths:
    #   I = 2 V / (2 r_sup + 2 r_out + 4 R_wire + 2 r 5 + 2 r_bridge)
    c.set_bridge("w", 0, "both", 0.1)
    expected = 2 * V / (2 * R_SUP + 2 * R_OUT + 4 * R_C20 + 2 * R_RAIL * 5.0 + 0.2)
    for sol in both(c):
        assert sol.bridge_i_a["w"] == pytest.approx(expected, rel=1e-10)
        assert sol.supply_i_a["p"] == pytest.approx(expected, rel=1e-10)


def test_open_device_floats_its_district_and_a_bridge_back_feeds_it():
    c = build_circuit(two_booster_scn(phase_b=+1))
    c.set_load("train", "y", 2.5, 40.0)
    c.set_device("B", closed=False)
    for sol in both(c):
        assert sol.device_i_a["B"] == 0.0
        assert sol.load_v_v["train"] == 0.0
        assert [f.code for f in sol.findings] == ["RF-CKT-001"]
    # a locomotive bridging both rails back-feeds y from A's district: no longer floating
    c.set_bridge("loco", 0, "both", 0.05)
    for sol in both(c):
        assert sol.load_v_v["train"] > 15.0
        assert sol.device_i_a["B"] == 0.0
        assert sol.device_i_a["A"] == pytest.approx(sol.load_i_a["train"], rel=1e-9)
        assert not sol.findings


def test_reverser_swap_clears_a_polarity_mismatch():
    # x.b joined to r.b is a crossed joint (left meets right): with both fed in
    # phase, a pickup group bridging both rails is a short through both feeds.
    scn = scenario([supply("p", V, R_SUP)], [booster("A", "p", r_out=R_OUT)],
                   [section("x", 4.0, "A", [(1.0, W20)]), section("r", 3.0, "rev", [(1.5, W20)])],
                   [joint(0, "x.b", "r.b", "both")], reversers=[reverser("rev", "A")])
    c = build_circuit(scn)
    c.set_bridge("loco", 0, "both", 0.1)
    s1, s2 = both(c)
    assert s1.bridge_i_a["loco"] > 10.0
    assert s2.bridge_i_a["loco"] == pytest.approx(s1.bridge_i_a["loco"], rel=1e-10)
    c.set_device("rev", swapped=True)
    for sol in both(c):
        assert abs(sol.bridge_i_a["loco"]) < 1e-9


def test_breaker_carries_its_sub_district_and_booster_carries_all():
    scn = scenario([supply("p", V, R_SUP)], [booster("A", "p", r_out=R_OUT)],
                   [section("x", 4.0, "A", [(1.0, W20)]), section("y", 3.0, "cb", [(1.5, W20)])],
                   [joint(0, "x.b", "y.a", "both")],
                   breakers=[breaker("cb", "A", r_on=0.02, wire=Wire(4.0, awg=14))])
    c = build_circuit(scn)
    c.set_short("k", "y", 3.0, 0.01)
    # loop: r_sup + r_out + breaker feed pair + r_on + feeder pair + 2 r 1.5 + coin
    expected = V / (R_SUP + R_OUT + wire_r_ohm(Wire(4.0, awg=14)) + 0.02 + 2 * R_C20
                    + 2 * R_RAIL * 1.5 + 0.01)
    for sol in both(c):
        assert sol.device_i_a["cb"] == pytest.approx(expected, rel=1e-10)
        assert sol.device_i_a["A"] == pytest.approx(expected, rel=1e-10)
    c.set_load("t", "x", 0.3, 20.0)
    for sol in both(c):
        assert sol.device_i_a["A"] > sol.device_i_a["cb"]


def test_constant_current_supply_collapses_voltage():
    # A supply as a current source of 5 A into a short: V_terminal = 5 A * R_ext.
    c = build_circuit(one_feeder_scn(0.0))
    c.set_short("k", "s", 5.0, 0.01)
    r_ext = R_OUT + 2 * R_C20 + 2 * R_RAIL * 5.0 + 0.01
    unlimited = V / (R_SUP + r_ext)
    assert c.update().supply_i_a["p"] == pytest.approx(unlimited)
    c.set_supply("p", i_limit_a=5.0)
    for sol in both(c):
        assert sol.supply_i_a["p"] == pytest.approx(5.0)
        assert sol.short_i_a["k"] == pytest.approx(5.0, rel=1e-10)
        assert sol.supply_v_v["p"] == pytest.approx(5.0 * r_ext, rel=1e-10)
    c.set_supply("p", i_limit_a=math.inf)
    assert c.update().short_i_a["k"] == pytest.approx(unlimited, rel=1e-10)


def test_the_scenario_limit_in_constant_current_mode():
    # the circuit's part of a supply limit: over_limit names the supply above its
    # scenario limit; in constant-current mode at the limit it delivers exactly the
    # limit and its terminal voltage is what the load makes of it; back in voltage
    # mode the terminal voltage is V - R_SUP * I (hand derivation, Thevenin source).
    # When to switch mode is the world's supply loop (test_engine_run.py,
    # test_constant_current_limit_holds_the_current).
    scn = scenario([supply("p", V, R_SUP, limit=3.0)], [booster("b", "p", r_out=R_OUT)],
                   [section("s", 10.0, "b", [(0.0, W20)])])
    c = build_circuit(scn)
    c.set_load("train", "s", 4.0, 40.0)          # 0.4 A: below the limit
    sol = c.update()
    assert sol.supply_i_a["p"] < 3.0 and not sol.over_limit
    c.set_short("k", "s", 8.0, 0.01)
    assert c.update().over_limit == ("p",)
    c.set_supply("p", i_limit_a=3.0)
    assert c.supply_state("p") == (True, V, 3.0)
    for sol in both(c):
        assert sol.supply_i_a["p"] == pytest.approx(3.0)
        assert sol.supply_v_v["p"] < 2.0
    c.clear_short("k")
    c.set_supply("p", i_limit_a=math.inf)
    for sol in both(c):
        assert sol.supply_i_a["p"] < 3.0 and not sol.over_limit
        assert sol.supply_v_v["p"] == pytest.approx(V - R_SUP * sol.supply_i_a["p"], rel=1e-9)


def test_load_inside_a_segment_is_exact():
    # The same load placed on a node of a finer network gives the same currents.
    coarse = build_circuit(one_feeder_scn(0.0))
    fine = build_circuit(one_feeder_scn(0.0), points_m={"s": [3.7, 6.1]})
    for c in (coarse, fine):
        c.set_load("a", "s", 3.7, 10.0)
        c.set_short("b", "s", 6.1, 0.5)
        c.set_load("c", "s", 6.1, 7.0)
    for sc, sf in zip(both(coarse), both(fine)):
        assert sc.load_v_v["a"] == pytest.approx(sf.load_v_v["a"], rel=1e-10)
        assert sc.load_v_v["c"] == pytest.approx(sf.load_v_v["c"], rel=1e-10)
        assert sc.short_i_a["b"] == pytest.approx(sf.short_i_a["b"], rel=1e-10)
        assert sc.device_i_a["b"] == pytest.approx(sf.device_i_a["b"], rel=1e-10)


def test_feeder_open_moves_the_current_to_the_other_feeder():
    L = 10.0
    scn = scenario([supply("p", V, R_SUP)], [booster("b", "p", r_out=R_OUT)],
                   [section("s", L, "b", [(0.0, W20), (L, W20)])])
    c = build_circuit(scn)
    c.set_short("k", "s", 2.0, 0.01)
    c.set_feeder_open("s", 0)
    # only the far feeder: distance 8 m
    expected = V / (R_SUP + R_OUT + 2 * R_C20 + 2 * R_RAIL * 8.0 + 0.01)
    for sol in both(c):
        assert sol.short_i_a["k"] == pytest.approx(expected, rel=1e-10)
    c.set_feeder_open("s", 1)
    for sol in both(c):
        assert sol.short_i_a["k"] == 0.0
        assert "RF-CKT-001" in [f.code for f in sol.findings]


def test_one_rail_gap_bonds_the_other_rail():
    # gaps: one on the left rail (seen from x.b into x: mirrored, x's right rail
    # is the gapped one... the joint names the rail as seen from ends[0]).
    scn = scenario([supply("p", V, R_SUP)],
                   [booster("A", "p", r_out=R_OUT), booster("B", "p", r_out=R_OUT, phase=-1)],
                   [section("x", 4.0, "A", [(1.0, W20)]), section("y", 5.0, "B", [(2.0, W20)])],
                   [joint(0, "x.a", "y.b", "one", rail="left")])
    c = build_circuit(scn)
    # the bonded rail joins A's and B's opposite-polarity rails: a standing short
    sol = c.solve()
    assert sol.device_i_a["A"] > 10.0
    assert sol.device_i_a["A"] == pytest.approx(c.update().device_i_a["A"], rel=1e-10)


def test_kirchhoff_violation_raises():
    c = build_circuit(one_feeder_scn())
    with pytest.raises(KirchhoffError):
        c._check_kcl(1e-6, 1.0)
    c._check_kcl(1e-10, 1.0)


def test_unknown_feed_is_a_finding_not_a_crash():
    scn = scenario([supply("p", V, R_SUP)], [booster("b", "nowhere")],
                   [section("s", 3.0, "b", [(1.0, W20)])], rail=Rail(None, None, R_RAIL))
    c = build_circuit(scn)
    assert "RF-CKT-002" in [f.code for f in c.findings]
    c.set_short("k", "s", 1.0, 0.01)
    for sol in both(c):
        assert sol.short_i_a["k"] == 0.0


def test_trip_refactors_once_per_switching_state():
    # opening a device floats its district: the circuit re-factors with that
    # switching state as its base (a low-rank update would cancel every digit of
    # the district's former current); toggling back and forth reuses the bases.
    c = build_circuit(two_booster_scn(phase_b=+1))
    c.set_short("k", "y", 4.0, 0.01)
    on = c.update()
    assert on.device_i_a["B"] > 10.0 and c.rebases == 0
    for _ in range(3):
        c.set_device("B", closed=False)
        off = c.update()
        assert off.device_i_a["B"] == 0.0 and off.short_i_a["k"] == 0.0
        c.set_device("B", closed=True)
        assert c.update().short_i_a["k"] == pytest.approx(on.short_i_a["k"], rel=1e-9)
    assert c.rebases == 1


def test_segment_whose_rails_are_bonded_at_both_ends():
    # s1.a is joined to s0.a (crossed) and to s0.b (straight): s0's left rail at
    # one end is its right rail at the other, a dead short through the joiners.
    # A short inside s0 then touches the same node twice; both solvers agree.
    scn = scenario([supply("p", V, R_SUP)], [booster("b", "p", r_out=R_OUT)],
                   [section("s0", 1.0, "b", [(0.5, W20)]), section("s1", 1.0, "b", [(0.5, W20)])],
                   [joint(0, "s0.a", "s1.a"), joint(1, "s0.b", "s1.a")])
    c = build_circuit(scn)
    c.set_short("k", "s0", 0.0165, 0.01)
    c.set_load("l", "s1", 1.0, 12.0)
    full, inc = both(c)
    assert inc.device_i_a["b"] == pytest.approx(full.device_i_a["b"], rel=1e-9)
    assert inc.short_i_a["k"] == pytest.approx(full.short_i_a["k"], rel=1e-9)
