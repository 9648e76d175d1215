"""Coverage of the sweep's 95 % interval over repeated seeds (a slow study: -m slow).

tests/scenarios/whatif/race-uniform.yaml loses its race with probability
(b - d) / (b - a) = (5 ms - 4 ms) / (5 ms - 1 ms) = 0.25 (derived there by hand).
Over R independent sweeps (seeds 1..R) of n samples each, the Wilson interval of
the lost-race probability should cover 0.25 in about 95 % of them. The exact
coverage for n = 60 and p = 0.25 is the binomial sum over the k whose interval
holds 0.25, computed below with scipy.stats.binom; the observed coverage over R
sweeps must lie within 3 binomial standard deviations of it, and the exact one near
0.95 (Newcombe 1998 reports the Wilson interval's coverage close to nominal).
"""
from __future__ import annotations

import math

import pytest
from scipy.stats import binom

from sim.scenario import load
from sim.whatif import sweep
from sim.whatif.stats import wilson

FILE = "tests/scenarios/whatif/race-uniform.yaml"
P = 0.25


@pytest.mark.slow
def test_interval_coverage_over_repeated_seeds():
    from dataclasses import replace

    n, repeats = 60, 150
    base = load(FILE)
    exact = sum(binom.pmf(k, n, P) for k in range(n + 1)
                if wilson(k, n)[0] <= P <= wilson(k, n)[1])
    assert 0.93 <= exact <= 0.97
    covered = 0
    for seed in range(1, repeats + 1):
        res = sweep(replace(base, seed=seed), samples=n)
        lo, hi = res.summary["gaps"][0]["lost"]["ci95"]
        covered += lo <= P <= hi
    sd = math.sqrt(exact * (1 - exact) / repeats)
    assert abs(covered / repeats - exact) <= 3 * sd, (covered, repeats, exact)
