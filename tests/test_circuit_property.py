"""Property tests: Kirchhoff's law on every solve, incremental equal to a full re-solve.

Every solve checks Kirchhoff's current law itself and raises KirchhoffError when
a node's residual exceeds 1e-9 of the largest current; here random layouts and
random sequences of state changes are driven through both solvers and their
results compared (rtol 1e-9).
"""
from __future__ import annotations

import math
from unittest import mock

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from circuit_builders import (booster, breaker, joint, ladder, reverser, scenario, section,
                              supply)
from sim.circuit import build_circuit
from sim.model import Wire


@st.composite
def layouts(draw):
    n_sup = draw(st.integers(1, 2))
    sups = [supply(f"p{i}", draw(st.floats(10, 20)), draw(st.floats(0.01, 0.2)))
            for i in range(n_sup)]
    n_b = draw(st.integers(1, 3))
    bs = [booster(f"b{i}", f"p{draw(st.integers(0, n_sup - 1))}",
                  r_out=draw(st.sampled_from([0.0, 0.02, 0.05])),
                  phase=draw(st.sampled_from([1, -1])),
                  wire=Wire(draw(st.floats(0, 3)), awg=16)) for i in range(n_b)]
    devs = [b.name for b in bs]
    brs, rvs = [], []
    if draw(st.booleans()):
        brs.append(breaker("cb", draw(st.sampled_from(devs)), wire=Wire(1.0, awg=14)))
        devs.append("cb")
    if draw(st.booleans()):
        rvs.append(reverser("rv", draw(st.sampled_from(devs))))
        devs.append("rv")
    n_s = draw(st.integers(2, 6))
    secs, js = [], []
    for k in range(n_s):
        length = draw(st.floats(0.5, 8.0))
        feed = draw(st.sampled_from(devs + [None]))
        nf = draw(st.integers(0, 2))
        fs = [(draw(st.floats(0, length)), Wire(draw(st.floats(0, 2)), awg=20)) for _ in range(nf)]
        secs.append(section(f"s{k}", length, feed, fs, leads=draw(st.sampled_from([1, 1, -1]))))
    for i in range(draw(st.integers(1, n_s + 1))):
        a, b = draw(st.integers(0, n_s - 1)), draw(st.integers(0, n_s - 1))
        if a == b:
            continue
        js.append(joint(len(js), f"s{a}.{draw(st.sampled_from('ab'))}",
                        f"s{b}.{draw(st.sampled_from('ab'))}",
                        draw(st.sampled_from(["none", "one", "both", "both"])),
                        draw(st.sampled_from(["left", "right"]))))
    return scenario(sups, bs, secs, js, breakers=brs, reversers=rvs)


def close(a, b, scale, floor=0.0):
    # rtol 1e-9 of the larger value or of the state's largest current (at least 1 A:
    # below 1 nA is numerical zero), plus the rounding floor of the circuit
    return abs(a - b) <= 1e-9 * max(abs(a), abs(b), scale, 1.0) + floor


def rounding_floor_a(c):
    """A current computed across the stiffest switchable branch (conductance g) from
    node voltages of size V carries a rounding error of order eps * g * V times the
    conditioning of the update; 1e-12 * g * V (about 4500 machine epsilons) bounds it.
    It matters only for zero-ohm inputs, which get R_MIN_OHM (1000 S)."""
    g = [d.g_lead_s for d in c.topo.devices.values()] + [f.g_s for f in c.topo.feeders.values()]
    g += [1.0 / s.r_ohm for s in c.topo.supplies.values()]
    return 1e-12 * max(g + [1.0]) * 20.0


def largest_a(sol) -> float:
    """The largest current of a solution (devices, supplies, shorts, loads, bridges)."""
    return max([abs(v) for v in sol.device_i_a.values()]
               + [abs(v) for v in sol.supply_i_a.values()]
               + list(sol.short_i_a.values()) + list(sol.load_i_a.values())
               + list(sol.bridge_i_a.values()) + [1e-9])


def assert_same(s_inc, s_full, floor=0.0, before_a=0.0):
    """Equal within rtol 1e-9 of the larger of this state's largest current and
    ``before_a``, the previous state's: an update that takes 100 A to zero (a
    device opening on a short) subtracts currents of that size, and keeps their
    rounding (2e-8 A of 100 A found by this test, 2e-10 of it)."""
    scale = max(largest_a(s_full), before_a)
    for field in ("device_i_a", "supply_i_a", "bridge_i_a", "load_i_a", "short_i_a"):
        a, b = getattr(s_inc, field), getattr(s_full, field)
        assert a.keys() == b.keys()
        for k in a:
            assert close(a[k], b[k], scale, floor), (field, k, a[k], b[k])
    for k in s_full.supply_v_v:
        assert close(s_inc.supply_v_v[k], s_full.supply_v_v[k], 30.0)
    for k in s_full.load_v_v:
        assert close(s_inc.load_v_v[k], s_full.load_v_v[k], 30.0)
    assert sorted(f.code for f in s_inc.findings) == sorted(f.code for f in s_full.findings)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(layouts(), st.integers(0, 2**32 - 1))
def test_incremental_equals_full_and_kirchhoff_holds(scn, seed):
    rng = np.random.default_rng(seed)
    c = build_circuit(scn)
    secs = list(scn.track.sections.values())
    joints = [j.index for j in scn.track.joints if j.index in c.topo.joints]
    devs = list(c.topo.devices)
    sups = list(c.topo.supplies)
    feeders = list(c.topo.feeders)
    floor = rounding_floor_a(c)
    full = c.solve()
    assert_same(c.update(), full, floor)
    for step in range(12):
        before_a = largest_a(full)
        op = int(rng.integers(0, 9))
        if op == 0 and joints:
            c.set_bridge(f"br{rng.integers(0, 3)}", joints[rng.integers(len(joints))],
                         ["left", "right", "both"][rng.integers(3)], float(rng.uniform(0, 0.3)))
        elif op == 1:
            s = secs[rng.integers(len(secs))]
            c.set_load(f"ld{rng.integers(0, 4)}", s.name, float(rng.uniform(0, s.length_m)),
                       float(rng.uniform(5, 100)))
        elif op == 2:
            s = secs[rng.integers(len(secs))]
            c.set_short(f"sh{rng.integers(0, 2)}", s.name, float(rng.uniform(0, s.length_m)),
                        float(rng.choice([0.0, 0.01, 0.5])))
        elif op == 3 and devs:
            c.set_device(devs[rng.integers(len(devs))], closed=bool(rng.random() < 0.6),
                         swapped=bool(rng.random() < 0.5))
        elif op == 4 and feeders:
            sec, idx = feeders[rng.integers(len(feeders))]
            c.set_feeder_open(sec, idx, bool(rng.random() < 0.5))
        elif op == 5:
            name = sups[rng.integers(len(sups))]
            c.set_supply(name, on=bool(rng.random() < 0.8), v_emf_v=float(rng.uniform(8, 20)),
                         i_limit_a=float(rng.choice([math.inf, math.inf, 3.0])))
        elif op == 6:
            for table, clear in ((c.bridges, c.clear_bridge), (c.loads, c.clear_load),
                                 (c.shorts, c.clear_short)):
                if table:
                    clear(next(iter(table)))
        elif op == 7:
            s = secs[rng.integers(len(secs))]
            c.set_load("ld0", s.name, float(rng.choice([0.0, s.length_m])), 12.0)
        inc = c.update()
        full = c.solve()
        assert inc.method == "incremental" and full.method == "full"
        assert_same(inc, full, floor, before_a)


@pytest.mark.parametrize("k_fold", [0, 6])
def test_incremental_equals_full_when_changes_fold_into_the_base(k_fold):
    # the same random sequences, with every active change folded into a new base
    # (the touched parts re-factored) as soon as more than k_fold port nodes change
    with mock.patch("sim.circuit.network.K_FOLD", k_fold):
        test_incremental_equals_full_and_kirchhoff_holds()


def test_folding_refactors_only_the_parts_touched():
    # four supplies, eight boosters: four parts in the base network. Many loads
    # moving in one part fold into new bases; the other parts keep their factors,
    # and every incremental solve equals a full re-solve (rtol 1e-9).
    scn = ladder(16, length=5.0, boosters=8, supplies=4)
    c = build_circuit(scn, grid_m=1.0)
    floor = rounding_floor_a(c)
    rng = np.random.default_rng(7)
    with mock.patch("sim.circuit.network.K_FOLD", 8):
        for step in range(30):
            sec = f"s{int(rng.integers(0, 4))}"          # boosters b0, b1 (supply psu0, psu1)
            c.set_load(f"ld{step % 12}", sec, float(rng.uniform(0, 5.0)), float(rng.uniform(5, 50)))
            if step == 10:
                c.set_short("k", "s1", 2.5, 0.05)
            if step == 20:
                c.clear_short("k")
            inc = c.update()
            assert inc.method == "incremental"
            assert_same(inc, c.solve(), floor)
    n_parts = len(c._base.wb.lu.idx)
    assert n_parts == 4
    assert c.rebases >= 3
    # each fold touches at most the two parts holding sections s0..s3
    assert c.parts_factored <= 2 * c.rebases
