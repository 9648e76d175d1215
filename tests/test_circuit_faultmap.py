"""The coin test map, trip windows and rail voltage, against closed forms."""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from circuit_builders import (booster, breaker, joint, ladder, loco, reverser, scenario,
                              section, supply, train)
from sim.checks.draw import check_draw
from sim.circuit import build_circuit, check_findings
from sim.layout import build_layout
from sim.circuit.build import build_topology
from sim.circuit.conductors import awg_r_per_m_ohm
from sim.circuit.faultmap import fault_map
from sim.circuit.network import Circuit
from sim.circuit.voltage import rail_voltage, rail_voltage_findings
from sim.circuit.windows import trip_windows, window_findings
from sim.model import Thermal, Wire

V, R_SUP, R_OUT, R_RAIL = 16.0, 0.05, 0.04, 0.02
W20 = Wire(0.4, awg=20)
R_C20 = 0.4 * awg_r_per_m_ohm(20)


def codes(findings):
    return [f.code for f in findings]


def end_fed(length=10.0, trip_a=5.0, limit=math.inf, full_scale=math.inf, wire=W20, **kw):
    return scenario([supply("p", V, R_SUP, limit=limit)],
                    [booster("b", "p", r_out=R_OUT, trip_a=trip_a, full_scale=full_scale, **kw)],
                    [section("s", length, "b", [(0.0, wire)])], **{})


def test_points_cover_feeders_ends_and_step():
    scn = scenario([supply("p", V, R_SUP)], [booster("b", "p")],
                   [section("s", 3.3, "b", [(1.234, W20)])])
    fm = fault_map(scn, step_m=0.5)
    xs = sorted(r["at_m"] for r in fm.rows)
    assert xs[0] == 0.0 and xs[-1] == 3.3 and 1.234 in xs
    assert max(np.diff(xs)) <= 0.5 + 1e-12


def test_coin_current_closed_form_one_feeder_at_one_end():
    # Thevenin: V_oc = V (no load), R_th(x) = r_sup + r_out + 2 R_wire + 2 r x;
    # I = V / (R_th + R_coin) with the 0.01 ohm coin (common practice).
    fm = fault_map(end_fed(), step_m=0.5)
    assert len(fm.rows) == 21
    for row in fm.rows:
        x = row["at_m"]
        expected = V / (R_SUP + R_OUT + 2 * R_C20 + 2 * R_RAIL * x + 0.01)
        assert row["current_a"] == pytest.approx(expected, rel=1e-6)
        assert row["device"] == "b" and row["trip_a"] == 5.0
        assert row["ok"] is (expected > 5.0)
    assert not [f for f in fm.findings if f.severity == "error"]


def test_fault_map_equals_a_real_short_in_the_solver():
    # Thevenin's theorem: the map's current equals the current of an actual short
    # solved in the full network, on a layout with a breaker and a reverser.
    scn = scenario([supply("p", V, R_SUP)], [booster("A", "p", r_out=R_OUT)],
                   [section("x", 6.0, "A", [(1.0, W20), (5.0, W20)]),
                    section("y", 4.0, "cb", [(2.0, W20)]), section("z", 3.0, None),
                    section("r", 2.5, "rv", [(1.2, W20)])],
                   [joint(0, "x.b", "y.a", "both"), joint(1, "y.b", "z.a", "none"),
                    joint(2, "z.b", "r.a", "both")],
                   breakers=[breaker("cb", "A", wire=Wire(3.0, awg=14))],
                   reversers=[reverser("rv", "cb", wire=Wire(1.0, awg=16))])
    fm = fault_map(scn, step_m=0.75, r_coin_ohm=0.02)
    c = build_circuit(scn)
    checked = 0
    for p in fm.points[::3]:
        c.set_short("coin", p.section, p.at_m, 0.02)
        sol = c.solve()
        assert p.i_coin_a == pytest.approx(sol.short_i_a["coin"], rel=1e-9)
        for d, i in zip(p.chain, p.device_i_a):
            assert i == pytest.approx(sol.device_i_a[d], rel=1e-9)
        checked += 1
    assert checked >= 8
    assert fm.points[-1].chain == ("rv", "cb", "A")


def test_points_between_junctions_equal_points_on_rail_nodes():
    # the map interpolates between the ends and feeders (module docstring: Kron
    # reduction of a span); on a circuit with a rail node at every point the same
    # points are plain solves at nodes: the two must agree to rounding
    scn = ladder(12, length=4.0, boosters=3, supplies=2)
    sparse = fault_map(scn, step_m=0.5)
    grid = fault_map(scn, step_m=0.5, circuit=Circuit(build_topology(scn, grid_m=0.5)))
    assert len(sparse.points) == len(grid.points) > 12 * 8
    for a, b in zip(sparse.points, grid.points):
        assert (a.section, a.at_m, a.chain) == (b.section, b.at_m, b.chain)
        assert a.r_th_ohm == pytest.approx(b.r_th_ohm, rel=1e-9)
        assert a.v_oc_v == pytest.approx(b.v_oc_v, rel=1e-9)
        assert a.device_i_a == pytest.approx(b.device_i_a, rel=1e-9)


def test_supply_limit_makes_a_threshold_unreachable():
    # a supply limited at 5 A cannot make a 7 A trip threshold trip
    fm = fault_map(end_fed(trip_a=7.0, limit=5.0))
    assert "RF-FAULT-003" in codes(fm.findings)
    assert "RF-FAULT-001" in codes(fm.findings)
    assert all(r["current_a"] == 5.0 and not r["ok"] for r in fm.rows)


def test_sensing_full_scale_clamp_never_trips():
    fm = fault_map(end_fed(trip_a=5.0, full_scale=4.0))
    # one rule, one code: the full-scale rule is the static RF-COORD-007 (RF-FAULT-004
    # retired), which the fault map reports too
    assert "RF-COORD-007" in codes(fm.findings) and "RF-FAULT-004" not in codes(fm.findings)
    assert not any(r["ok"] for r in fm.rows)
    assert fm.rows[0]["current_a"] > 100.0      # the current is there; the reading is not


def test_far_end_of_a_long_thin_district_does_not_trip():
    # R_th at x: 0.09 + 2 R_w + 0.04 x; with 24 AWG, 3 m feeder pair (about 0.5 ohm)
    # the coin draws under 5 A beyond x where 16 / (R_th + 0.01) = 5
    wire = Wire(3.0, awg=24)
    r_w = 2 * 3.0 * awg_r_per_m_ohm(24)
    x_limit = (V / 5.0 - 0.01 - R_SUP - R_OUT - r_w) / (2 * R_RAIL)
    fm = fault_map(end_fed(length=80.0, wire=wire), step_m=1.0)
    bad = [r["at_m"] for r in fm.rows if not r["ok"]]
    assert min(bad) == pytest.approx(math.ceil(x_limit), abs=1e-9)
    f = [f for f in fm.findings if f.code == "RF-FAULT-001"][0]
    assert f.severity == "error" and "80.00 m" in f.message


def test_breaker_that_does_not_trip_before_its_booster():
    scn = scenario([supply("p", V, R_SUP)], [booster("A", "p", trip_a=5.0)],
                   [section("x", 2.0, "A", [(1.0, W20)]), section("y", 2.0, "cb", [(1.0, W20)])],
                   [joint(0, "x.b", "y.a", "both")],
                   breakers=[breaker("cb", "A", trip_a=500.0)])
    fm = fault_map(scn)
    assert "RF-FAULT-002" in codes(fm.findings)
    rows_y = [r for r in fm.rows if r["section"] == "y"]
    assert {r["device"] for r in rows_y} == {"cb", "A"}


def test_trip_window_bottom_and_top():
    # two trains of two locomotives (0.8 A each) visit the district: 3.2 A steady.
    # keep-alive 0.05 F behind 10 ohm: peak 16/10 = 1.6 A each, tau = 0.5 s (RC).
    m = loco("m", draw=0.8, c_f=0.05, r_charge=10.0)
    scn = scenario([supply("p", V, R_SUP)], [booster("b", "p", r_out=R_OUT, trip_a=4.0,
                                                      after_s=0.004)],
                   [section("s", 10.0, "b", [(0.0, W20)])], rolling_stock=[m],
                   trains=[train("t1", ["m", "m"], "s", ["s"]), train("t2", ["m", "m"], "s", ["s"])])
    fm = fault_map(scn)
    (w,) = trip_windows(scn, fm)
    assert w.i_steady_a == pytest.approx(3.2)
    assert w.i_inrush_peak_a == pytest.approx(6.4)
    assert w.tau_inrush_s == pytest.approx(0.5)
    assert w.bottom_a == pytest.approx(9.6)
    far = V / (R_SUP + R_OUT + 2 * R_C20 + 2 * R_RAIL * 10.0 + 0.01)
    assert w.top_a == pytest.approx(far, rel=1e-6)
    f = window_findings(scn, fm)
    # 3.2 + 6.4 exp(-t/0.5) > 4 A for 0.5 ln(6.4/0.8) = 1.04 s, longer than 4 ms
    w3 = [x for x in f if x.code == "RF-WIN-003"]
    assert w3 and "1039.72 ms" in w3[0].message
    assert "RF-WIN-002" not in codes(f)


def test_inrush_of_two_keep_alives_is_the_sum_of_their_exponentials():
    # two locomotives (0.8 A each: 1.6 A steady) charge keep-alives behind 10 ohm: peaks
    # 16/10 = 1.6 A each, tau1 = 10 x 0.05 = 0.5 s, tau2 = 10 x 0.1 = 1.0 s = 2 tau1.
    # Above a 4 A trip while 1.6 + 1.6 x^2 + 1.6 x > 4 with x = exp(-t / 1 s):
    # x^2 + x - 1.5 = 0 -> x = (-1 + sqrt 7) / 2 = 0.822876, t = -ln x = 194.95 ms
    # (by hand); the longest tau applied to both peaks would say 1.0 ln(3.2/2.4) = 287.68 ms
    from sim.circuit.inrush import time_above_sum_s

    x = (-1 + math.sqrt(7.0)) / 2
    assert time_above_sum_s(1.6, [(1.6, 0.5), (1.6, 1.0)], 4.0) == pytest.approx(
        -math.log(x), abs=1e-8)
    m1 = loco("m1", draw=0.8, c_f=0.05, r_charge=10.0)
    m2 = loco("m2", draw=0.8, c_f=0.1, r_charge=10.0)
    scn = scenario([supply("p", V, R_SUP)], [booster("b", "p", r_out=R_OUT, trip_a=4.0,
                                                      after_s=0.004)],
                   [section("s", 10.0, "b", [(0.0, W20)])], rolling_stock=[m1, m2],
                   trains=[train("t1", ["m1", "m2"], "s", ["s"])])
    fm = fault_map(scn)
    (w,) = trip_windows(scn, fm)
    assert sorted(w.inrush_terms) == [(1.6, 0.5), (1.6, 1.0)]
    (w3,) = [f for f in window_findings(scn, fm) if f.code == "RF-WIN-003"]
    assert "for 194.95 ms" in w3.message and "287.68" not in w3.message


def test_trip_window_steady_draw_and_rating_warning():
    m = loco("m", draw=3.0)
    scn = scenario([supply("p", V, R_SUP)],
                   [booster("b", "p", r_out=R_OUT, trip_a=5.0, thermal=Thermal(25.0, 20.0))],
                   [section("s", 10.0, "b", [(0.0, W20)])], rolling_stock=[m],
                   trains=[train("t1", ["m", "m"], "s", ["s"])])
    f = window_findings(scn, fault_map(scn))
    # 6 A of draw against a 5 A trip: the one rule RF-COORD-008 (RF-WIN-002 retired)
    assert "RF-WIN-002" not in codes(f)
    assert codes(check_draw(scn, build_layout(scn))) == ["RF-COORD-008"]
    assert "RF-WIN-004" in codes(f)       # rated 25 A > 70 % of about 24.5 A


def test_rail_voltage_under_load_against_s91_minimum():
    # all trains at the far end of one end-fed section: V = 16 - I R_th(L),
    # R_th(L) = r_sup + r_out + 2 R_w + 2 r L; NMRA S-9.1 table 3 minimum 8.5 V.
    m = loco("m", draw=1.5)
    scn = scenario([supply("p", V, R_SUP)], [booster("b", "p", r_out=R_OUT, trip_a=8.0)],
                   [section("s", 40.0, "b", [(0.0, W20)])], rolling_stock=[m],
                   trains=[train("t1", ["m", "m"], "s", ["s"]), train("t2", ["m"], "s", ["s"])])
    fm = fault_map(scn, step_m=1.0)
    (r,) = rail_voltage(scn, fm)
    r_th = R_SUP + R_OUT + 2 * R_C20 + 2 * R_RAIL * 40.0
    assert r.at == ("s", 40.0)
    assert r.v_min_v == pytest.approx(V - 4.5 * r_th, rel=1e-6)
    f = rail_voltage_findings(scn, fm)
    assert codes(f)[0] == "RF-VOLT-003"            # no scale: HO assumed
    assert "RF-VOLT-001" in codes(f)               # 16 - 4.5 * 1.74 = 8.2 V < 8.5 V


def test_demo_layout_check_findings():
    from sim.scenario import load
    path = Path(__file__).resolve().parents[1] / "scenarios" / "cinder-ridge.yaml"
    scn = load(path)
    findings, rows = check_findings(scn)
    assert {r["section"] for r in rows} == set(scn.track.sections)
    assert not [f for f in findings if f.severity == "error"], findings
    balloon = [r for r in rows if r["section"] == "balloon"]
    assert {r["device"] for r in balloon} == {"balloon-ctl", "loop-cb", "east"}
