"""Benchmark: the fault map on long track and fine steps (run: pytest tests/bench/bench_faultmap.py -m bench -s).

It PRINTS figures and ratios measured in the same process; nothing here is a timed
pass/fail test. Layouts are invented: one end-fed section (a 20 AWG feeder pair at its
``a`` end) of 100 m to 20 km at a 0.5 m step, and a 10 m section at a 1 mm step.

Printed per layout: points, seconds, microseconds per point, the peak of the memory
traced by ``tracemalloc`` during a second, traced run of the map, and two ratios:

* time per point against the 100 m layout's (the method is linear in the points:
  about 1 means the cost of a point does not grow with the track's length);
* the map against ONE full sparse solve of the same track built with a rail node at
  every point (what any method that puts the points in the network pays at least
  once; the map before this method needed a dense inverse of those nodes).

The bound: a 5 km section at a 1 mm step asks for 5,000,001 points; the map keeps to
:data:`sim.circuit.faultmap.MAX_POINTS` and says so (RF-FAULT-005).
"""
from __future__ import annotations

import sys
import time
import tracemalloc
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from circuit_builders import booster, scenario, section, supply  # noqa: E402
from sim.circuit import build_circuit  # noqa: E402
from sim.circuit.faultmap import MAX_POINTS, fault_map  # noqa: E402
from sim.model import Wire  # noqa: E402

pytestmark = pytest.mark.bench


def end_fed(length_m: float):
    return scenario([supply("p", 16.0, 0.05)], [booster("b", "p", trip_a=5.0)],
                    [section("s", length_m, "b", [(0.0, Wire(0.4, awg=20))])])


def _timed(fn):
    """``(result, seconds, traced peak MB)``: timed untraced, then traced once more."""
    t0 = time.perf_counter()
    out = fn()
    dt = time.perf_counter() - t0
    tracemalloc.start()
    fn()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return out, dt, peak / 2**20


def test_bench_fault_map_long_track():
    fault_map(end_fed(2.0))                      # imports and first-call set-up
    base = None
    print()
    for length_m, step_m in ((100.0, 0.5), (1000.0, 0.5), (5000.0, 0.5), (20000.0, 0.5),
                             (10.0, 1e-3)):
        scn = end_fed(length_m)
        fm, dt, peak_mb = _timed(lambda: fault_map(scn, step_m=step_m))
        per_pt = dt / len(fm.points)
        base = base or per_pt
        line = (f"{length_m:8g} m at {step_m:g} m: {len(fm.points):6d} points, {dt:7.3f} s, "
                f"{per_pt * 1e6:6.1f} us/point (x{per_pt / base:.2f} the 100 m one), traced "
                f"peak {peak_mb:6.1f} MB")
        if len(fm.points) <= 20001:
            c = build_circuit(scn, grid_m=step_m)
            t0 = time.perf_counter()
            c.solve()
            t_solve = time.perf_counter() - t0
            line += (f"; one full solve of the {c.n_nodes}-node gridded track "
                     f"{t_solve * 1e3:.2f} ms, ratio map/solve {dt / t_solve:.1f}")
        print(line)
    scn = end_fed(5000.0)
    fm, dt, peak_mb = _timed(lambda: fault_map(scn, step_m=1e-3))
    print(f"    5000 m at 0.001 m (5,000,001 points asked): {len(fm.points)} points "
          f"(bound {MAX_POINTS}), step widened to {fm.step_m:.4g} m, {dt:.3f} s, traced peak "
          f"{peak_mb:.1f} MB")
    assert len(fm.points) <= MAX_POINTS
