"""Sweep designs: seeding by (seed, i), Latin hypercube strata, grids, inverse transforms.

References: numpy's SeedSequence (the i-th child of ``SeedSequence(seed).spawn``),
scipy.stats distributions' ``ppf`` for the inverse transforms, and McKay, Beckman and
Conover (Technometrics 21 (1979) 239-245) for what a Latin hypercube is: each of the
n equal strata of every input holds exactly one of the n draws.
"""
from __future__ import annotations

from types import MappingProxyType

import numpy as np
import pytest
from scipy.stats import norm, triang, truncnorm

from sim.whatif.samplers import Axis, Design, sample_rng


def _vary(**specs):
    out = {}
    for key, (path, sampler, values, unit) in specs.items():
        out[key] = MappingProxyType({"path": path, "sampler": sampler, "values": values,
                                     "unit": unit})
    return out


SWAP = ("reversers", "r", "swap_time")
SPEED = ("trains", "t", "speed")
PHASE = ("boosters", "b", "sense", "phase")
TRIES = ("boosters", "b", "restart", "tries")


def test_sample_rng_is_the_spawned_child():
    children = np.random.SeedSequence(42).spawn(5)
    for i, child in enumerate(children):
        want = np.random.default_rng(child).random(3)
        assert np.array_equal(sample_rng(42, i).random(3), want)


def test_values_depend_on_seed_and_index_only():
    vary = _vary(a=(SWAP, "uniform", (0.001, 0.005), "s"),
                 b=(SPEED, "normal", (0.3, 0.05), "m/s"))
    d = Design(vary, 50, seed=3)
    forward = [d.values(i) for i in range(50)]
    backward = [d.values(i) for i in reversed(range(50))][::-1]
    assert forward == backward
    again = Design(vary, 50, seed=3)
    assert [again.values(i) for i in (7, 3, 49)] == [forward[7], forward[3], forward[49]]
    assert Design(vary, 50, seed=4).values(7) != forward[7]


def test_latin_hypercube_puts_one_draw_in_each_stratum():
    vary = _vary(a=(SWAP, "uniform", (0.0, 1.0), "s"), b=(SPEED, "uniform", (1.0, 2.0), "m/s"))
    n = 64
    d = Design(vary, n, seed=8, design="latin-hypercube")
    a = np.array([d.values(i)["a"] for i in range(n)])
    b = np.array([d.values(i)["b"] for i in range(n)])
    assert sorted(np.floor(a * n).astype(int)) == list(range(n))
    assert sorted(np.floor((b - 1.0) * n).astype(int)) == list(range(n))
    # the pairing is random, not the identity
    assert not np.array_equal(np.argsort(a), np.argsort(b))


def test_grid_is_the_full_factorial_times_the_draws():
    vary = _vary(g1=(SWAP, "grid", (0.001, 0.002, 0.003), "s"),
                 g2=(SPEED, "grid", (0.2, 0.4), "m/s"),
                 r=(PHASE, "uniform", (0.0, 1.0), ""))
    d = Design(vary, 5, seed=1)
    assert d.n == 3 * 2 * 5
    points = {(d.values(i)["g1"], d.values(i)["g2"]) for i in range(d.n)}
    assert points == {(a, b) for a in (0.001, 0.002, 0.003) for b in (0.2, 0.4)}
    assert [d.values(i)["g1"] for i in range(0, 30, 10)] == [0.001, 0.002, 0.003]
    only_grid = Design(_vary(g=(SWAP, "grid", (1.0, 2.0), "s")), 1000, seed=1)
    assert only_grid.n == 2


@pytest.mark.parametrize("u", [0.0, 0.01, 0.3, 0.5, 0.77, 0.999])
def test_inverse_transforms_match_scipy(u):
    tri = Axis("t", SWAP, "triangular", (0.001, 0.002, 0.006), "s", low=0.0)
    want = triang(c=(0.002 - 0.001) / 0.005, loc=0.001, scale=0.005).ppf(u)
    assert tri.value(u) == pytest.approx(want, rel=1e-12, abs=1e-15)
    nor = Axis("n", SPEED, "normal", (0.3, 0.05), "m/s", low=0.0, low_open=True)
    a = (0.0 - 0.3) / 0.05
    want = truncnorm(a, np.inf, loc=0.3, scale=0.05).ppf(u)
    assert nor.value(u) == pytest.approx(want, rel=1e-9)
    uni = Axis("u", SWAP, "uniform", (0.002, 0.008), "s", low=0.0)
    assert uni.value(u) == pytest.approx(0.002 + u * 0.006, rel=1e-15)


def test_normal_is_truncated_to_the_keys_range():
    # a speed (> 0) with a mean near zero: no draw at or below zero
    ax = Axis("n", SPEED, "normal", (0.01, 0.05), "m/s", low=0.0, low_open=True)
    assert all(ax.value(u) > 0.0 for u in np.linspace(0.0, 0.999999, 200))
    # a phase in [0, 1)
    ph = Axis("p", PHASE, "normal", (0.9, 0.5), "", low=0.0, high=1.0, high_open=True)
    assert all(0.0 <= ph.value(u) < 1.0 for u in np.linspace(0.0, 0.999999, 200))
    # the median of a truncation symmetric about the mean is the mean (norm.ppf(0.5) = 0)
    sym = Axis("s", SPEED, "normal", (0.5, 0.1), "m/s", low=0.0, high=1.0)
    assert sym.value(0.5) == pytest.approx(0.5 + 0.1 * norm.ppf(0.5), abs=1e-12)


def test_integer_keys_get_integers():
    ax = Axis("k", TRIES, "uniform", (1, 4), "", low=1, integer=True)
    got = [ax.value(u) for u in (0.0, 0.24, 0.26, 0.5, 0.74, 0.76, 0.999)]
    assert got == [1, 1, 2, 3, 3, 4, 4]
    assert all(isinstance(x, int) for x in got)
    ch = Axis("c", SWAP, "choice", (0.001, 0.002, 0.005), "s")
    assert [ch.value(u) for u in (0.0, 0.34, 0.67, 0.99)] == [0.001, 0.002, 0.005, 0.005]


def test_axis_range_comes_from_the_format():
    ax = Axis.of("boosters.b.sense.phase", {"path": PHASE, "sampler": "uniform",
                                            "values": (0.0, 1.0), "unit": ""})
    assert (ax.low, ax.high, ax.high_open) == (0.0, 1.0, True)
    sp = Axis.of("trains.t.speed", {"path": SPEED, "sampler": "normal",
                                    "values": (0.3, 0.1), "unit": "m/s"})
    # the format's plausible range of a train's speed, 1 mm/s to 10 m/s (sim.schema.RANGE_SPEED)
    assert (sp.low, sp.low_open, sp.high, sp.high_open) == (0.001, False, 10.0, False)
