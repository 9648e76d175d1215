"""The statistics of a sweep: Wilson intervals, rank correlations, quantiles.

- :func:`wilson`: the score interval of a binomial proportion (E. B. Wilson,
  "Probable inference, the law of succession, and statistical inference",
  JASA 22 (1927) 209-212; method 3 of R. G. Newcombe, "Two-sided confidence
  intervals for the single proportion: comparison of seven methods",
  Statistics in Medicine 17 (1998) 857-872). With ``k`` of ``n`` and
  ``z = Phi^-1(0.975)``::

      centre = (k + z^2/2) / (n + z^2)
      half   = z sqrt(n) / (n + z^2) * sqrt(p (1 - p) + z^2 / (4 n)),  p = k / n

  It never collapses to a point: with ``k = 0`` the upper bound is
  ``z^2 / (n + z^2)``, which is what a sweep reports instead of "0 %".
- :func:`spearman`: Spearman's rank correlation (C. Spearman, "The proof and
  measurement of association between two things", Am. J. Psychol. 15 (1904)
  72-101), the Pearson correlation of the ranks (mid-ranks for ties).
- :func:`prcc`: partial rank correlation coefficients: for each input, the
  correlation of the residuals of the ranked input and the ranked output after
  a linear regression of each on the other ranked inputs (the sensitivity
  measure of Latin hypercube studies: R. L. Iman, W. J. Conover, "Small sample
  sensitivity analysis techniques for computer models", Commun. Statist. A 9
  (1980) 1749-1842; S. Marino et al., J. Theor. Biol. 254 (2008) 178-196).
"""
from __future__ import annotations

import math
from typing import Optional, Sequence

import numpy as np

__all__ = ["Z95", "wilson", "spearman", "prcc", "quantiles"]

#: Phi^-1(0.975), the two-sided 95 % normal quantile.
Z95 = 1.959963984540054


def wilson(k: int, n: int, z: float = Z95) -> tuple[float, float]:
    """The Wilson score interval ``(low, high)`` of ``k`` successes in ``n`` trials.

    Returns ``(0.0, 1.0)`` for ``n == 0`` (nothing is known).
    """
    if n <= 0:
        return 0.0, 1.0
    if not 0 <= k <= n:
        raise ValueError(f"k = {k} is not in 0..{n}")
    p = k / n
    z2 = z * z
    centre = (k + z2 / 2.0) / (n + z2)
    half = z * math.sqrt(n) / (n + z2) * math.sqrt(p * (1.0 - p) + z2 / (4.0 * n))
    low = 0.0 if k == 0 else max(0.0, centre - half)
    high = 1.0 if k == n else min(1.0, centre + half)
    return low, high


def _pearson(a: np.ndarray, b: np.ndarray) -> Optional[float]:
    a = a - a.mean()
    b = b - b.mean()
    den = math.sqrt(float(a @ a) * float(b @ b))
    if den == 0.0 or not math.isfinite(den):
        return None
    return float(np.clip((a @ b) / den, -1.0, 1.0))


def rankdata(x) -> np.ndarray:
    """Ranks from 1, ties given their mean rank (``scipy.stats.rankdata``, imported on use)."""
    from scipy.stats import rankdata as ranks

    return ranks(x)


def spearman(x: Sequence[float], y: Sequence[float]) -> Optional[float]:
    """Spearman's rank correlation of ``x`` and ``y``; ``None`` when either is constant
    or there are fewer than 3 pairs."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if len(x) < 3:
        return None
    return _pearson(rankdata(x), rankdata(y))


def prcc(xs: np.ndarray, y: Sequence[float]) -> list[Optional[float]]:
    """Partial rank correlation of each column of ``xs`` (samples x inputs) with ``y``.

    ``None`` for an input that is constant, for every input when the output is
    constant, or when there are too few samples (at most inputs + 2) for the
    regression to leave residuals.
    """
    xs = np.asarray(xs, dtype=float)
    y = np.asarray(y, dtype=float)
    n, m = xs.shape
    if n <= m + 2:
        return [None] * m
    rx = np.column_stack([rankdata(xs[:, j]) for j in range(m)]) if m else xs
    ry = rankdata(y)
    if np.ptp(ry) == 0.0:          # a constant output correlates with nothing
        return [None] * m
    out: list[Optional[float]] = []
    for j in range(m):
        if np.ptp(rx[:, j]) == 0.0:
            out.append(None)
            continue
        others = [c for c in range(m) if c != j and np.ptp(rx[:, c]) > 0.0]
        design = np.column_stack([np.ones(n)] + [rx[:, c] for c in others])
        res_x = rx[:, j] - design @ np.linalg.lstsq(design, rx[:, j], rcond=None)[0]
        res_y = ry - design @ np.linalg.lstsq(design, ry, rcond=None)[0]
        out.append(_pearson(res_x, res_y))
    return out


def quantiles(values: Sequence[float], qs=(0.01, 0.05, 0.5, 0.95, 0.99)) -> dict:
    """``{"p01": ..., "p05": ..., ...}``: the linear-interpolation quantiles of ``values``
    (numpy's default, type 7 of Hyndman and Fan)."""
    v = np.asarray(values, dtype=float)
    if not len(v):
        return {f"p{round(q * 100):02d}": None for q in qs}
    got = np.quantile(v, qs)
    return {f"p{round(q * 100):02d}": float(x) for q, x in zip(qs, got)}
