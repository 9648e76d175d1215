"""Benchmark: build_layout + run_checks (static checks, no circuit) on 2,000 sections.

Prints the time as a ratio to ONE networkx breadth-first search (``nx.bfs_edges``
over the same graph, consumed) timed in the same process. Run with
``python -m pytest tests/bench/bench_check.py -m bench -s``.
"""
import statistics
import time

import networkx as nx
import pytest

from sim.checks import run_checks
from sim.layout import build_layout
from tests.builders import ScenarioBuilder

SECTIONS = 2000


def big_layout(n_target=SECTIONS):
    """A long main line with passing sidings every 10 sections, a balloon loop with a
    reverser every 200 sections, a booster district every 50 main sections."""
    b = ScenarioBuilder("bench layout")
    b.vehicle("loco", 0.2, [0.02, 0.05, 0.15, 0.18], draw_a=0.5)
    b.vehicle("coach", 0.25, [0.025, 0.23], pickup=[0, 1], r_join_ohm=120.0)
    main = []
    i = 0
    count = 0
    booster = None
    while count < n_target:
        if i % 50 == 0:
            booster = f"bst{i // 50}"
            b.booster(booster, period_s=1e-4)
        name = f"m{i}"
        b.section(name, 3.0, booster)
        count += 1
        if main:
            same = main[-1][1] == booster
            b.joint(f"{main[-1][0]}.b", f"{name}.a", "none" if same else "both")
        main.append((name, booster))
        if i % 10 == 3 and count < n_target - 2:       # a passing siding m(i-2).b .. m(i).a
            s1, s2 = f"sd{i}a", f"sd{i}b"
            b.section(s1, 2.0, booster)
            b.section(s2, 2.0, booster)
            b.joint(f"m{i - 2}.b", f"{s1}.a")
            b.joint(f"{s1}.b", f"{s2}.a")
            b.joint(f"{s2}.b", f"m{i}.a")
            count += 2
        if i % 200 == 100 and count < n_target - 2:    # a balloon loop off m(i).b
            ctl, th, lp = f"rev{i}", f"th{i}", f"lp{i}"
            b.reverser(ctl, feed=booster)
            b.section(th, 2.0, booster)
            b.section(lp, 8.0, ctl)
            b.joint(f"m{i}.b", f"{th}.a")
            b.joint(f"{th}.b", f"{lp}.a", "both")
            b.joint(f"{th}.b", f"{lp}.b", "both")
            count += 2
        i += 1
    for t in range(5):
        start = 5 + 300 * t
        route = [f"m{k}" for k in range(start, start + 100)]
        b.train(f"t{t}", ["loco", "coach", "coach"], route)
    return b.build()


def best_of(fn, repeat):
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


@pytest.mark.bench
def test_bench_static_checks():
    scn = big_layout()
    n_sec = len(scn.track.sections)
    lay = build_layout(scn)
    graph = lay.graph
    src = next(iter(graph))

    def bfs():
        for _ in nx.bfs_edges(graph, src):
            pass

    def checks():
        rep = run_checks(scn, build_layout(scn))
        assert rep.errors == []          # the generated layout is designed to be clean
        return rep

    rep = checks()
    # interleaved rounds (best of 10 searches, best of 2 check runs each), so that a
    # change of machine load hits both sides alike; the median of the per-round
    # ratios is reported, with their range
    ratios, t_chk_all, t_bfs_all = [], [], []
    for _ in range(9):
        t_bfs = best_of(bfs, 10)
        t_chk = best_of(checks, 2)
        ratios.append(t_chk / t_bfs)
        t_chk_all.append(t_chk)
        t_bfs_all.append(t_bfs)
    ratio = statistics.median(ratios)
    print(f"\nstatic checks on {n_sec} sections, {graph.number_of_edges()} joints, "
          f"{len(rep.reversing)} reversing loops, {len(lay.districts)} districts: "
          f"median {statistics.median(t_chk_all) * 1e3:.1f} ms = {ratio:.1f} x one "
          f"nx.bfs_edges (median {statistics.median(t_bfs_all) * 1e3:.3f} ms); "
          f"ratio range {min(ratios):.1f}-{max(ratios):.1f}")
    assert len(rep.reversing) >= 5
