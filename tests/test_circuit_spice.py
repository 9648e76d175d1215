"""The nodal solver against ngspice (a general-purpose circuit simulator).

Each circuit's present state is exported as a SPICE netlist of resistors and
sources (:mod:`sim.circuit.spice`), run with ``ngspice -b`` (``.op``), and every
metered branch current is compared with both the full and the incremental
solve: equal within 1e-6 relative. The test skips only when ngspice is missing
and the environment variable CI is unset; in CI a missing ngspice fails.
"""
from __future__ import annotations

import numpy as np

from circuit_builders import booster, breaker, joint, reverser, scenario, section, supply
from sim.circuit import build_circuit
from sim.circuit.spice import spice_currents, to_netlist
from sim.model import Wire

W20 = Wire(0.4, awg=20)


def compare(c, exe, rel=1e-6):
    ref = spice_currents(c, exe)
    assert ref, "ngspice printed no currents"
    scale = max(abs(v) for v in ref.values())
    tol = rel * scale
    checked = 0
    for sol in (c.solve(), c.update()):
        for key, val in ref.items():
            kind = key[0]
            if kind == "lead":
                mine = -sol.device_lead_i_a[key[1]][key[2]]
            elif kind == "supply":
                mine = sol.supply_i_a[key[1]]
            elif kind == "bridge":
                peers = [v for k, v in ref.items() if k[0] == "bridge" and k[1] == key[1]]
                mine, val = sol.bridge_i_a[key[1]], max(abs(v) for v in peers)
            elif kind == "load":
                mine, val = sol.load_i_a[key[1]], abs(val)
            else:
                mine, val = sol.short_i_a[key[1]], abs(val)
            assert abs(mine - val) <= max(tol * 1e-3, rel * abs(val)) + 1e-12, (key, mine, val)
            checked += 1
    return checked


def test_district_three_feeders_far_end_short(ngspice):
    scn = scenario([supply("p", 16.0, 0.05)], [booster("b", "p", r_out=0.04)],
                   [section("s", 15.0, "b", [(1.0, W20), (7.0, Wire(1.2, awg=22)),
                                              (13.0, Wire(0.3, awg=18))])])
    c = build_circuit(scn)
    c.set_short("coin", "s", 15.0, 0.01)
    c.set_load("train", "s", 9.3, 25.0)
    assert compare(c, ngspice) >= 8


def test_two_boosters_one_supply_bridge_out_of_phase(ngspice):
    scn = scenario([supply("p", 15.0, 0.08)],
                   [booster("A", "p", r_out=0.05, wire=Wire(2.0, awg=14)),
                    booster("B", "p", r_out=0.03, phase=-1, wire=Wire(3.0, awg=16))],
                   [section("x", 6.0, "A", [(2.0, W20)]), section("y", 4.0, "B", [(1.0, W20)])],
                   [joint(0, "x.b", "y.a", "both")])
    c = build_circuit(scn)
    c.set_bridge("loco", 0, "both", 0.1)
    c.set_load("l1", "x", 3.1, 30.0)
    c.set_load("l2", "y", 2.2, 18.0)
    assert compare(c, ngspice) >= 8


def test_breaker_sub_district(ngspice):
    scn = scenario([supply("p", 16.0, 0.05)], [booster("A", "p")],
                   [section("x", 5.0, "A", [(1.0, W20), (4.0, W20)]),
                    section("y", 4.0, "cb", [(2.0, W20)]), section("z", 2.0, None)],
                   [joint(0, "x.b", "y.a", "both"), joint(1, "y.b", "z.a", "none")],
                   breakers=[breaker("cb", "A", wire=Wire(4.0, awg=14))])
    c = build_circuit(scn)
    c.set_short("k", "z", 1.7, 0.02)
    c.set_load("t", "x", 2.5, 20.0)
    assert compare(c, ngspice) >= 8


def test_reverser_fed_loop(ngspice):
    # a balloon: throat.b joined to both ends of the loop (one straight, one crossed)
    scn = scenario([supply("p", 16.0, 0.05)], [booster("A", "p")],
                   [section("throat", 3.0, "A", [(1.0, W20)]),
                    section("loop", 8.0, "rev", [(2.0, W20), (6.0, W20)])],
                   [joint(0, "throat.b", "loop.a", "both"), joint(1, "throat.b", "loop.b", "both")],
                   reversers=[reverser("rev", "A", wire=Wire(2.0, awg=16))])
    c = build_circuit(scn)
    c.set_bridge("entering", 1, "both", 0.1)     # mismatched end
    c.set_load("train", "loop", 7.4, 22.0)
    assert compare(c, ngspice) >= 8
    c.set_device("rev", swapped=True)
    c.set_bridge("leaving", 0, "left", 0.1)
    assert compare(c, ngspice) >= 8


def test_random_ladder_200_nodes(ngspice):
    rng = np.random.default_rng(20240611)
    n_sec = 25
    secs, js = [], []
    for k in range(n_sec):
        dev = "A" if k < 12 else "B"
        length = float(rng.uniform(1.0, 6.0))
        fs = [(float(rng.uniform(0, length)), Wire(float(rng.uniform(0.1, 2.0)),
                                                    awg=int(rng.integers(14, 25))))
              for _ in range(int(rng.integers(1, 3)))]
        secs.append(section(f"s{k}", length, dev, fs))
        if k:
            js.append(joint(k - 1, f"s{k-1}.b", f"s{k}.a", "both" if k == 12 else "none"))
    scn = scenario([supply("p", 16.0, 0.05), supply("q", 14.0, 0.07)],
                   [booster("A", "p"), booster("B", "q", phase=-1)], secs, js)
    c = build_circuit(scn, grid_m=0.5)
    assert c.n_nodes >= 200
    for i in range(6):
        k = int(rng.integers(0, n_sec))
        s = scn.track.sections[f"s{k}"]
        c.set_load(f"l{i}", f"s{k}", float(rng.uniform(0, s.length_m)), float(rng.uniform(5, 60)))
    c.set_short("k", "s20", 1.1, 0.05)
    c.set_bridge("b", 11, "both", 0.1)
    text, _ = to_netlist(c)
    assert text.count("\nR") > 200
    assert compare(c, ngspice) >= 10
