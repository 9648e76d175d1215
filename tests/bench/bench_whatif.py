"""Benchmarks of sweeps (run: pytest tests/bench/bench_whatif.py -m bench -s).

Each benchmark PRINTS ratios against a reference measured in the same process; none
is a timed pass/fail test:

- per-sample cost against a plain run of the same scenario (``sim.world.run`` on the
  loaded scenario with the sample's values, which builds its layout and circuit): a
  sample re-uses the layout and a rewound circuit with its factorization
  (sim.whatif.runner);
- samples per second with ``jobs=1`` and ``jobs=2``, and their ratio (2 cores: at
  most 2; the pool's start and the parent's work bound it below that), with the CPU
  time per sample of all processes (this one and the pool's, from ``getrusage``): the
  work the pool adds, which the wall-clock ratio hides when other work shares the cores;
- the time of 10,000 samples of a small reversing-section layout with ``jobs=2``.

Layouts: tests/scenarios/whatif/race-uniform.yaml (one gap, one train: the small
layout) and scenarios/balloon-relay.yaml (a balloon loop, 60 s).
"""
from __future__ import annotations

import json
import os
import resource
import time

import pytest

from sim.scenario import load
from sim.whatif import sweep
from sim.whatif.runner import Runner
from sim.whatif.samplers import Design
from sim.world import run

pytestmark = pytest.mark.bench

SMALL = "tests/scenarios/whatif/race-uniform.yaml"
LOOP = "scenarios/balloon-relay.yaml"


def _cpu_s() -> float:
    """CPU seconds of this process and of its finished children (the pool's workers)."""
    me = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime + kids.ru_utime + kids.ru_stime


def _per_run_s(fn, n: int) -> float:
    fn()                                        # warm caches and imports
    t0 = time.perf_counter()
    for _ in range(n):
        fn()
    return (time.perf_counter() - t0) / n


@pytest.mark.parametrize("file,n", [(SMALL, 300), (LOOP, 60)])
def test_per_sample_cost_against_a_plain_run(file, n):
    """Each sample timed beside a plain run of the very same scenario (the sample's values
    applied, then ``sim.world.run``: layout and circuit built anew), interleaved so that
    the machine's load falls on both alike."""
    scn = load(file)
    d = Design(scn.vary, max(n, scn.samples), scn.seed)
    runner = Runner(scn, d.paths())
    runner.record(0, d.values(0))
    run(runner.scenario(d.values(0)))
    plain = sample = 0.0
    for i in range(n):
        values = d.values(i % d.n)
        t0 = time.perf_counter()
        run(runner.scenario(values))
        t1 = time.perf_counter()
        runner.record(i, values)
        t2 = time.perf_counter()
        plain += t1 - t0
        sample += t2 - t1
    print(f"\n{file}: plain run {plain / n * 1e3:.2f} ms, the same as a sample "
          f"{sample / n * 1e3:.2f} ms, ratio {sample / plain:.2f} (re-use: {runner.reuse})")


@pytest.mark.parametrize("file,samples", [(SMALL, 1000), (LOOP, 60)])
def test_samples_per_second_jobs_1_and_2(file, samples):
    scn = load(file)
    rates = {}
    cpu = {}
    summaries = {}
    for jobs in (1, 2):
        c0 = _cpu_s()
        res = sweep(scn, samples=samples, jobs=jobs)
        cpu[jobs] = (_cpu_s() - c0) / samples
        rates[jobs] = samples / res.wall_s
        summaries[jobs] = json.dumps(res.summary)
    assert summaries[1] == summaries[2]
    print(f"\n{file}: {samples} samples: jobs 1 {rates[1]:.0f}/s, jobs 2 {rates[2]:.0f}/s, "
          f"ratio {rates[2] / rates[1]:.2f}; CPU per sample (all processes) jobs 1 "
          f"{cpu[1] * 1e3:.2f} ms, jobs 2 {cpu[2] * 1e3:.2f} ms (ratio {cpu[2] / cpu[1]:.2f}); "
          f"load average now {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")


def test_ten_thousand_samples_of_a_small_layout():
    scn = load(SMALL)
    t0 = time.perf_counter()
    res = sweep(scn, samples=10_000, jobs=2)
    wall = time.perf_counter() - t0
    plain = _per_run_s(lambda: run(scn), 50)
    print(f"\n10,000 samples of {SMALL} with jobs 2: {wall:.1f} s "
          f"({10_000 / wall:.0f} samples/s; {wall / (10_000 * plain):.2f} x the time of "
          f"10,000 plain runs in one process)")
    assert res.summary["samples"] == 10_000
