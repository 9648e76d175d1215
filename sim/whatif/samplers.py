"""Sweep designs: which values sample ``i`` gives to the varied keys.

The ``vary`` block names the keys and a sampler for each
(``Scenario.vary``, values already in SI):

- ``grid`` (a list of values): every value in turn. The grid axes form a full
  factorial grid (the first axis varies slowest).
- ``uniform [low, high]``, ``normal [mean, sd]``, ``triangular [low, mode, high]``,
  ``choice [v1, v2, ...]``: random draws, ``n_draws`` of them at each grid point
  (``samples`` of the file or ``--samples``).

Random draws are made by inverse transform of a uniform number ``u`` in
``[0, 1)``: ``low + u (high - low)``; the normal truncated to the key's own
range (a speed > 0, a phase in [0, 1)) by ``mu + sigma Phi^-1(Phi(a) + u (Phi(b) -
Phi(a)))``; the triangular by its inverse distribution function; a choice as
``values[floor(u k)]``. A key that takes integers gets an integer (uniform: each
integer of ``[low, high]`` equally likely; normal: rounded).

Designs
-------
``monte-carlo``: each ``u`` is an independent uniform draw.
``latin-hypercube``: the ``n_draws`` draws of each axis fall one in each of the
``n_draws`` equal strata of ``[0, 1)``, the strata paired at random across axes
(M. D. McKay, R. J. Beckman, W. J. Conover, "A comparison of three methods for
selecting values of input variables in the analysis of output from a computer
code", Technometrics 21 (1979) 239-245): ``u = (pi_a(k) + v) / n_draws`` with
``pi_a`` a random permutation per axis and ``v`` uniform.

Seeding
-------
Sample ``i`` draws from ``numpy.random.default_rng(SeedSequence(seed,
spawn_key=(i,)))``: the ``i``-th child that ``SeedSequence(seed).spawn`` makes
(numpy's documented way to give independent streams to parallel work), made
directly in O(1). The Latin hypercube's permutations come from the root
``SeedSequence(seed)`` itself. So a sample's values depend on ``(seed, i)`` and
the design only: not on the number of workers, the order samples finish, or the
machine they ran on.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Optional

import numpy as np
from scipy.special import ndtr, ndtri

from sim import schema as S
from sim.whatif.paths import kind_at

__all__ = ["Axis", "Design", "DESIGNS", "sample_rng"]

#: Names of the designs of random draws.
DESIGNS = ("monte-carlo", "latin-hypercube")


def sample_rng(seed: int, i: int) -> np.random.Generator:
    """The generator of sample ``i``: the ``i``-th spawned child of ``SeedSequence(seed)``."""
    return np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=(int(i),)))


@dataclass(frozen=True)
class Axis:
    """One varied key: its text, path, sampler, SI values, unit and allowed range.

    ``low``/``high`` bound the key's values (``None``: no bound), ``low_open``
    and ``high_open`` say whether the bound itself is excluded; ``integer``: the
    key takes integers.
    """

    key: str
    path: tuple
    sampler: str
    values: tuple
    unit: str
    low: Optional[float] = None
    high: Optional[float] = None
    low_open: bool = False
    high_open: bool = False
    integer: bool = False
    #: the smallest non-zero magnitude the key accepts when it accepts 0 too (a value
    #: between 0 and it is moved up to it); ``None``: no such gap
    floor: Optional[float] = None

    @classmethod
    def of(cls, key: str, spec) -> "Axis":
        kind = kind_at(tuple(spec["path"]))
        low = high = floor = None
        low_open = high_open = integer = False
        if isinstance(kind, S.Quantity):
            rng = getattr(kind, "range", None)
            if rng is not None and hasattr(rng, "lo"):       # a plausible range of the trade
                low, high = (0.0 if rng.zero else rng.lo), rng.hi
                floor = rng.lo if rng.zero else None
            elif getattr(kind, "low", None) in ("positive", "nonneg"):
                low, low_open = 0.0, kind.low == "positive"
        elif isinstance(kind, S.Number):
            low, high = kind.minimum, kind.maximum
            low_open, high_open, integer = kind.exclusive_min, kind.exclusive_max, kind.integer
        return cls(key, tuple(spec["path"]), spec["sampler"], tuple(spec["values"]),
                   spec["unit"], low, high, low_open, high_open, integer, floor)

    @property
    def random(self) -> bool:
        return self.sampler != "grid"

    def value(self, u: float) -> Any:
        """The value of this axis for a uniform number ``u`` in [0, 1)."""
        v = self.values
        if self.sampler == "choice":
            return v[min(int(u * len(v)), len(v) - 1)]
        if self.sampler == "uniform":
            if self.integer:
                lo, hi = int(math.ceil(v[0])), int(math.floor(v[1]))
                return min(lo + int(u * (hi - lo + 1)), hi)
            return self._inside(v[0] + u * (v[1] - v[0]))
        if self.sampler == "triangular":
            a, c, b = v
            fc = (c - a) / (b - a)
            x = a + math.sqrt(u * (b - a) * (c - a)) if u < fc else \
                b - math.sqrt((1.0 - u) * (b - a) * (b - c))
            return self._inside(x)
        if self.sampler == "normal":
            mu, sd = v
            pa = float(ndtr((self.low - mu) / sd)) if self.low is not None else 0.0
            pb = float(ndtr((self.high - mu) / sd)) if self.high is not None else 1.0
            x = mu + sd * float(ndtri(pa + u * (pb - pa))) if pb > pa else \
                (self.low if self.low is not None else mu)
            if self.integer:
                x = round(x)
                if self.low is not None and (x < self.low or (self.low_open and x <= self.low)):
                    x = int(math.floor(self.low)) + 1
                if self.high is not None and (x > self.high or (self.high_open and x >= self.high)):
                    x = int(math.ceil(self.high)) - 1
                return int(x)
            return self._inside(x)
        raise ValueError(f"{self.key}: the grid sampler takes no random number")

    def _inside(self, x: float) -> float:
        """``x`` moved onto the allowed side of an excluded (or passed) bound."""
        if self.low is not None and (x < self.low or (self.low_open and x <= self.low)):
            x = math.nextafter(self.low, math.inf) if self.low_open else self.low
        if self.high is not None and (x > self.high or (self.high_open and x >= self.high)):
            x = math.nextafter(self.high, -math.inf) if self.high_open else self.high
        if self.floor is not None and 0.0 < x < self.floor:
            x = self.floor
        return float(x)


class Design:
    """The samples of a sweep: ``n`` of them, sample ``i`` given by :meth:`values`.

    Parameters
    ----------
    vary
        ``Scenario.vary``: ``{key text: {path, sampler, values, unit}}``.
    n_draws
        Random draws per grid point (ignored when every axis is a grid).
    seed
        The sweep's seed (the scenario's ``seed``).
    design
        ``"monte-carlo"`` or ``"latin-hypercube"`` (see the module docstring).
    """

    def __init__(self, vary, n_draws: int, seed: int, design: str = "monte-carlo"):
        if design not in DESIGNS:
            raise ValueError(f"unknown design {design!r} ({', '.join(DESIGNS)})")
        self.axes = tuple(Axis.of(k, spec) for k, spec in vary.items())
        self.grid = tuple(a for a in self.axes if not a.random)
        self.rand = tuple(a for a in self.axes if a.random)
        self.seed = int(seed)
        self.design = design
        self.n_draws = int(n_draws) if self.rand else 1
        self.n_grid = math.prod(len(a.values) for a in self.grid)
        self.n = self.n_grid * self.n_draws
        self._perm = None
        if self.rand and design == "latin-hypercube":
            root = np.random.default_rng(np.random.SeedSequence(self.seed))
            self._perm = np.stack([root.permutation(self.n_draws) for _ in self.rand])

    def settings(self) -> dict:
        """What defines the samples (for the store): seed, design, counts, the axes."""
        return {"seed": self.seed, "design": self.design, "n": self.n,
                "n_draws": self.n_draws if self.rand else 0, "n_grid": self.n_grid,
                "vary": {a.key: {"sampler": a.sampler, "values": list(a.values),
                                 "unit": a.unit} for a in self.axes}}

    def values(self, i: int) -> dict:
        """``{key text: value}`` of sample ``i`` (SI; integers for integer keys)."""
        if not 0 <= i < self.n:
            raise IndexError(f"sample {i} is not in 0..{self.n - 1}")
        g, k = divmod(int(i), self.n_draws)
        out: dict = {}
        for a in reversed(self.grid):
            g, j = divmod(g, len(a.values))
            out[a.key] = a.values[j]
        if self.rand:
            u = sample_rng(self.seed, i).random(len(self.rand))
            if self._perm is not None:
                u = (self._perm[:, k] + u) / self.n_draws
            for a, x in zip(self.rand, u.tolist()):
                out[a.key] = a.value(x)
        return {a.key: out[a.key] for a in self.axes}

    def paths(self) -> dict:
        """``{key text: path tuple}``."""
        return {a.key: a.path for a in self.axes}
