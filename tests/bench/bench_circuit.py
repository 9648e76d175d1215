"""Benchmarks of the circuit (run: pytest tests/bench/bench_circuit.py -m bench -s).

They PRINT ratios against references measured in the same process; none is a
timed pass/fail test. Layouts are generated, invented ones
(:func:`circuit_builders.ladder`: a line of 5 m sections with two feeders
each, two boosters on one supply, gapped on both rails between districts).

1. One incremental change (a bridge on at a district gap, update, bridge off,
   update) on layouts of about 50, 500 and 5,000 nodes, each as a ratio to a
   full sparse re-solve of the same layout, and the 5,000-node change against
   the 50-node one. The port columns of the bridge are computed on the first
   change (one triangular solve each) and cached, as the engine's repeated
   crossings of the same gap would use them.
2. The fault map of a 500-section layout: seconds, and its ratio to one full
   solve of the same network.
3. The update cost on a 500-section layout with 0, 10, 100 and 300 active
   loads (one load moved per update), as ratios to the 0-load update and to a
   full solve of the same state.
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from circuit_builders import ladder  # noqa: E402
from sim.circuit import build_circuit  # noqa: E402
from sim.circuit.faultmap import fault_map  # noqa: E402

pytestmark = pytest.mark.bench


def _layout(target_nodes: int):
    n_sec = 2
    while True:
        scn = ladder(n_sec, length=5.0, boosters=2)
        c = build_circuit(scn, grid_m=1.0)
        if c.n_nodes >= target_nodes or n_sec > 10000:
            return scn, c
        n_sec = max(n_sec + 1, int(n_sec * target_nodes / c.n_nodes))


def _per_call_s(fn, min_time_s=0.3):
    fn()
    reps, t0 = 0, time.perf_counter()
    while True:
        fn()
        reps += 1
        dt = time.perf_counter() - t0
        if dt >= min_time_s and reps >= 5:
            return dt / reps


def test_bench_incremental_change_vs_full_resolve():
    results = {}
    for target in (50, 500, 5000):
        scn, c = _layout(target)
        gap = next(j.index for j in scn.track.joints if j.gaps == "both")

        def change():
            c.set_bridge("loco", gap, "both", 0.1)
            on = c.update()
            c.clear_bridge("loco")
            c.update()
            return on

        def full():
            c.set_bridge("loco", gap, "both", 0.1)
            c.solve()
            c.clear_bridge("loco")

        assert change().bridge_i_a["loco"] > 0.0
        t_inc = _per_call_s(change)
        t_full = _per_call_s(full)
        results[target] = (c.n_nodes, t_inc, t_full)
        print(f"\n{c.n_nodes:6d} nodes: incremental change {t_inc * 1e6:9.1f} us, "
              f"full re-solve {t_full * 1e6:9.1f} us, ratio incremental/full "
              f"{t_inc / t_full:.4f}")
    n50, n5k = results[50], results[5000]
    print(f"incremental change, {n5k[0]} nodes against {n50[0]} nodes: "
          f"ratio {n5k[1] / n50[1]:.2f} (target: at most 3)")


def test_bench_fault_map_500_sections():
    scn = ladder(500, length=5.0, boosters=10)
    t0 = time.perf_counter()
    fm = fault_map(scn, step_m=0.5)
    t_map = time.perf_counter() - t0
    c = build_circuit(scn, grid_m=0.5)
    t_solve = _per_call_s(c.solve, 0.5)
    print(f"\nfault map, 500 sections, {len(fm.points)} points, {c.n_nodes} nodes: "
          f"{t_map:.2f} s; one full solve {t_solve * 1e3:.2f} ms; ratio map/solve "
          f"{t_map / t_solve:.0f}")
    assert len(fm.rows) >= len(fm.points)


def test_bench_update_cost_with_many_active_loads():
    # 500 sections, 50 boosters on 10 supplies; n loads (30 ohm each, a train's
    # draw) at random places; one change = one load moved to a new random place,
    # then update(). Ratios to the 0-load change and to one full solve.
    import numpy as np

    scn = ladder(500, length=5.0, boosters=50, supplies=10)
    c = build_circuit(scn, grid_m=1.0)
    names = list(scn.track.sections)
    rng = np.random.default_rng(11)
    rows = {}
    for n_loads in (0, 10, 100, 300):
        for key in list(c.loads):
            c.clear_load(key)
        for i in range(n_loads):
            c.set_load(("ld", i), names[int(rng.integers(len(names)))],
                       float(rng.uniform(0.0, 5.0)), 30.0)
        c.update()

        def change():
            if n_loads:
                c.set_load(("ld", int(rng.integers(n_loads))), names[int(rng.integers(len(names)))],
                           float(rng.uniform(0.0, 5.0)), 30.0)
            return c.update()

        assert len(change().load_i_a) == n_loads
        t_upd = _per_call_s(change)
        t_full = _per_call_s(c.solve)
        rows[n_loads] = (t_upd, t_full)
    t0 = rows[0][0]
    print(f"\nupdate cost, 500 sections ({c.n_nodes} nodes), one load moved per update:")
    for n_loads, (t_upd, t_full) in rows.items():
        print(f"  {n_loads:3d} active loads: update {t_upd * 1e3:8.3f} ms, full solve "
              f"{t_full * 1e3:8.3f} ms; ratio to 0 loads {t_upd / t0:7.1f}, "
              f"ratio update/full {t_upd / t_full:.3f}")
    print(f"  re-factorings (folds) {c.rebases}, parts factored {c.parts_factored}")
