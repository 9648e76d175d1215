"""Benchmark of the report (run: pytest tests/bench/bench_report.py -m bench -s).

PRINTS the time of a whole report (check, fault map, run with the trace
recorder, every table and figure, the folder written) of a 200-section, one-hour
club layout, and its ratio to a plain run of the same scenario in the same
process; no pass/fail on times. The layout is the invented line of
tests/bench/bench_engine.py with breakers and reversing sections added.
"""
from __future__ import annotations

import time

import pytest

from sim.report import build, write
from sim.world import run
from tests.bench.bench_engine import line_layout

pytestmark = pytest.mark.bench


def test_bench_report_of_a_club_hour(tmp_path):
    scn = line_layout(200, 30, 3600.0, fault_every_s=30.0, n_breakers=5, n_reversers=5)
    t0 = time.perf_counter()
    res = run(scn)
    t_run = time.perf_counter() - t0
    t0 = time.perf_counter()
    rep = build(scn)
    t_build = time.perf_counter() - t0
    t0 = time.perf_counter()
    names = write(rep, str(tmp_path / "club"))
    t_write = time.perf_counter() - t0
    total = t_build + t_write
    print(f"\n[bench] report of 200 sections, one hour, 30 trains: {len(res.episodes)} "
          f"episodes, {len(rep.figures)} figures, {len(names)} files; plain run {t_run:.1f} s; "
          f"report {total:.1f} s (check {rep.timings['check_s']:.1f} s, fault map "
          f"{rep.timings['faultmap_s']:.1f} s, run with traces {rep.timings['run_s']:.1f} s, "
          f"figures and tables {rep.timings['figures_s']:.1f} s, writing {t_write:.1f} s): "
          f"{total / t_run:.1f} x a plain run (target: well under a minute)")
    assert len(rep.sequences) <= 6 and len(rep.charts) <= 12
