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
4. The engine against ngspice's transient analysis of the same circuit: the
   electrical part of a reversing-loop scenario (``scenarios/balloon-solid.yaml``)
   with its first bridge as a switched resistance (a voltage-controlled switch
   closed while the engine's bridge stands), at a 10 us step over 1 s around the
   bridge, scaled to the scenario's duration (a fixed step costs the same each
   step); skipped where ngspice is not installed.
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


def _bridge_of(scn):
    """The first bridge the engine places in a run of ``scn``: ``(t_on_s, t_off_s,
    joint_index, rail, r_ohm)`` (``t_off_s`` the end of the run if it stays)."""
    from unittest import mock

    from sim.world.engine import World

    seen: dict = {}
    place, lift = World.set_bridge, World.clear_bridge

    def on(world, key, joint_index, rail, r_ohm, path):
        if not seen:
            seen.update(key=key, t_on_s=world.env.now, joint=joint_index, rail=rail,
                        r_ohm=r_ohm)
        return place(world, key, joint_index, rail, r_ohm, path)

    def off(world, key):
        if seen.get("key") == key and "t_off_s" not in seen:
            seen["t_off_s"] = world.env.now
        return lift(world, key)

    with mock.patch.object(World, "set_bridge", on), \
            mock.patch.object(World, "clear_bridge", off):
        World(scn).run()
    return (seen["t_on_s"], seen.get("t_off_s", scn.duration_s), seen["joint"], seen["rail"],
            seen["r_ohm"])


def test_bench_engine_versus_ngspice_transient():
    # the electrical part of a reversing-loop scenario (scenarios/balloon-solid.yaml)
    # with its bridge as a switched resistance, in ngspice's transient analysis at a
    # 10 us step; the engine runs the whole scenario (devices, trains and all)
    import re
    import shutil
    import subprocess
    import tempfile

    from sim.circuit.spice import to_netlist
    from sim.scenario import load
    from sim.world import engine

    exe = shutil.which("ngspice")
    if exe is None:
        pytest.skip("ngspice not installed")
    scn = load(Path(__file__).resolve().parents[2] / "scenarios" / "balloon-solid.yaml")
    walls = []
    for _ in range(3):
        t0 = time.perf_counter()
        engine.run(scn)
        walls.append(time.perf_counter() - t0)
    t_engine = min(walls)
    t_on, t_off, joint, rail, r_ohm = _bridge_of(scn)
    c = build_circuit(scn)
    c.set_bridge("bench", joint, rail, r_ohm)
    text, probes = to_netlist(c)
    lines = text.splitlines()
    # the bridge's ammeter line is followed by its resistor: make that a switch
    # closed (r_ohm) from t_on to t_off, open (1 GOhm) otherwise
    span_s = 1.0                       # ngspice over 1 s around the bridge (below)
    t0_s = max(0.0, t_on - 0.5)
    for k in (("bridge", "bench", 0), ("bridge", "bench", 1)):
        if k not in probes:
            continue
        i = next(n for n, ln in enumerate(lines) if ln.startswith(probes[k] + " "))
        _, a, b, r = lines[i + 1].split()
        lines[i + 1] = f"S{k[2]}br {a} {b} ctl 0 swbr"
    lines.insert(1, f".model swbr sw(vt=0.5 vh=0.1 ron={r} roff=1e9)")
    lines.insert(1, f"Vctl ctl 0 PWL(0 0 {t_on - t0_s:.9g} 0 {t_on - t0_s + 1e-6:.9g} 1 "
                    f"{t_off - t0_s:.9g} 1 {t_off - t0_s + 1e-6:.9g} 0)")
    start = lines.index(".control")
    end = lines.index(".endc")
    lines[start:end + 1] = [".control", f"tran 10u {span_s} 0 10u", "print length(time)", ".endc"]
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "tran.cir"
        path.write_text("\n".join(lines) + "\n")
        t0 = time.perf_counter()
        out = subprocess.run([exe, "-b", str(path)], capture_output=True, text=True,
                             timeout=1200, cwd=tmp)
        t_spice = time.perf_counter() - t0
    # (ngspice -b exits 1 after a .control block: "no simulations run" of the netlist's
    # own analyses; the transient ran when it printed the number of time points)
    points = re.search(r"length\(time\) = ([-+0-9.eE]+)", out.stdout)
    assert points, out.stdout[-2000:] + out.stderr[-2000:]
    per_s = t_spice / span_s
    t_spice_full = per_s * scn.duration_s
    print(f"\n[bench] reversing loop (balloon-solid, {scn.duration_s:g} s simulated, "
          f"{c.n_nodes} nodes, bridge {r_ohm:g} ohm from {t_on:.4f} s to {t_off:.4f} s): "
          f"engine {t_engine * 1e3:.1f} ms for the whole run; ngspice transient at 10 us "
          f"{t_spice:.2f} s for {span_s:g} s simulated ({float(points.group(1)):.0f} time "
          f"points), {t_spice_full:.0f} s for "
          f"{scn.duration_s:g} s at the same cost per simulated second (a fixed step "
          f"costs the same each step); ratio ngspice/engine = {t_spice_full / t_engine:,.0f}x "
          f"(target >= 1000x)")
