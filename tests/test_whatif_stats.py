"""Statistics of a sweep against outside references.

- Wilson score interval: statsmodels ``proportion_confint(method="wilson")``, and a
  hand computation written out below. (R. G. Newcombe, Statistics in Medicine 17
  (1998) 857-872, table I, could not be read here: no value of it is used.)
- Spearman's rank correlation: ``scipy.stats.spearmanr``.
- Partial rank correlation: for two inputs, the textbook partial-correlation formula
  r_xy.z = (r_xy - r_xz r_yz) / sqrt((1 - r_xz^2)(1 - r_yz^2)) on the rank correlations
  (derived by hand from the residual definition), and for more inputs the inverse
  correlation matrix of the ranks, -P_ij / sqrt(P_ii P_jj) (a second, independent
  computation of the same quantity).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.stats import rankdata, spearmanr
from statsmodels.stats.proportion import proportion_confint

from sim.whatif.stats import Z95, prcc, quantiles, spearman, wilson


@pytest.mark.parametrize("k,n", [(0, 1), (0, 20), (1, 29), (15, 148), (81, 263), (50, 100),
                                 (99, 100), (100, 100), (3, 10_000), (7, 7)])
def test_wilson_matches_statsmodels(k, n):
    lo, hi = proportion_confint(k, n, alpha=0.05, method="wilson")
    got = wilson(k, n)
    assert got[0] == pytest.approx(lo, abs=1e-12)
    assert got[1] == pytest.approx(hi, abs=1e-12)


def test_wilson_by_hand():
    # k = 0, n = 20: the upper bound is z^2 / (n + z^2) with z = 1.959963984540054
    # (Phi^-1(0.975)): z^2 = 3.841458820694124, 3.841458820694124 / 23.841458820694124
    # = 0.16112515...; the lower bound is 0 (derived by hand from the formula in
    # sim/whatif/stats.py with p = 0).
    lo, hi = wilson(0, 20)
    assert lo == 0.0
    assert hi == pytest.approx(3.841458820694124 / 23.841458820694124, rel=1e-15)
    assert hi == pytest.approx(0.16112515, abs=1e-8)
    # k = 5, n = 10 (p = 1/2): centre (5 + z^2/2) / (10 + z^2) = 1/2; half-width
    # z sqrt(10) / (10 + z^2) * sqrt(1/4 + z^2/40) = 6.197950 / 13.841459 * sqrt(0.346036)
    # = 0.447782 * 0.588249 = 0.263407
    lo, hi = wilson(5, 10)
    assert (lo + hi) / 2 == pytest.approx(0.5, abs=1e-15)
    assert (hi - lo) / 2 == pytest.approx(0.263407, abs=1e-6)


def test_wilson_never_collapses():
    for n in (1, 10, 1000):
        assert wilson(0, n)[1] > 0.0
        assert wilson(n, n)[0] < 1.0
    assert wilson(0, 0) == (0.0, 1.0)
    assert Z95 == pytest.approx(1.959963984540054, abs=1e-15)


def test_spearman_matches_scipy():
    rng = np.random.default_rng(5)
    x = rng.normal(size=300)
    y = x ** 3 + rng.normal(scale=0.5, size=300)
    y[::7] = y[0]                      # ties: mid-ranks
    assert spearman(x, y) == pytest.approx(spearmanr(x, y).statistic, abs=1e-12)
    assert spearman(x, -x) == pytest.approx(-1.0)
    assert spearman([1, 1, 1, 1], [1, 2, 3, 4]) is None


def test_prcc_two_inputs_matches_the_partial_correlation_formula():
    rng = np.random.default_rng(9)
    a = rng.uniform(size=500)
    b = 0.6 * a + rng.uniform(size=500)        # correlated inputs
    y = np.exp(2 * a) - 3 * b + rng.normal(scale=0.2, size=500)
    r = lambda u, v: spearmanr(u, v).statistic  # noqa: E731
    rab, ray, rby = r(a, b), r(a, y), r(b, y)
    want_a = (ray - rab * rby) / math.sqrt((1 - rab ** 2) * (1 - rby ** 2))
    want_b = (rby - rab * ray) / math.sqrt((1 - rab ** 2) * (1 - ray ** 2))
    got = prcc(np.column_stack([a, b]), y)
    assert got[0] == pytest.approx(want_a, abs=1e-10)
    assert got[1] == pytest.approx(want_b, abs=1e-10)
    assert got[0] > 0 > got[1]


def test_prcc_many_inputs_matches_the_inverse_correlation_matrix():
    rng = np.random.default_rng(13)
    xs = rng.uniform(size=(400, 4))
    y = xs[:, 0] - 2 * xs[:, 1] ** 2 + 0.1 * xs[:, 2] + rng.normal(scale=0.1, size=400)
    ranks = np.column_stack([rankdata(c) for c in xs.T] + [rankdata(y)])
    p = np.linalg.inv(np.corrcoef(ranks, rowvar=False))
    want = [-p[j, -1] / math.sqrt(p[j, j] * p[-1, -1]) for j in range(4)]
    assert prcc(xs, y) == pytest.approx(want, abs=1e-10)


def test_prcc_constant_input_and_too_few_samples():
    xs = np.column_stack([np.arange(10.0), np.ones(10)])
    out = prcc(xs, np.arange(10.0))
    assert out[1] is None and out[0] == pytest.approx(1.0)
    assert prcc(np.ones((3, 2)), [1, 2, 3]) == [None, None]
    # a constant output (a margin every sample shares): no correlation at all, as
    # spearman says; without the guard the regression's rounding gave a number
    rng = np.random.default_rng(3)
    xs = rng.random((40, 2))
    assert prcc(xs, np.full(40, 0.004481)) == [None, None]
    assert spearman(xs[:, 0], np.full(40, 0.004481)) is None


def test_quantiles_are_numpys_linear_ones():
    v = [5.0, 1.0, 3.0, 2.0, 4.0]
    q = quantiles(v, (0.05, 0.5))
    # sorted 1..5, linear interpolation: position 0.05 * 4 = 0.2 -> 1.2; median 3
    assert q == {"p05": pytest.approx(1.2), "p50": 3.0}
