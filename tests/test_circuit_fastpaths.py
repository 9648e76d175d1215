"""Property test: the engine's fast paths give the currents of a full sparse solve.

The engine does not solve every state from scratch: a state it has met before
takes the solution kept under its state key (a skipped solve), and a new state
is reached by ``Circuit.update()``, the incremental solve (the base network's
factors kept per part, the changes as a low-rank correction). Here random
layouts of every device kind (``golden_runs.random_layout``, drawn from a seeded
``numpy.random.Generator``) run through the engine, and at every solve the
solution the engine takes is compared with a full sparse solve
(``Circuit.solve()``: the whole nodal matrix assembled and factored by
``scipy.sparse.linalg``) of the circuit in the same state.

Check values: the full solve is itself held to outside references elsewhere
(ngspice operating points in ``test_circuit_spice.py``, V/R hand derivations in
``test_circuit_solver.py``). Tolerance: 1e-9 relative to the larger of the
state's and the previous state's largest current (at least 1 A), plus the
rounding floor of the stiffest branch (``test_circuit_property.rounding_floor_a``);
the same rule as the incremental-against-full property test.
"""
from __future__ import annotations

from unittest import mock

import numpy as np
import pytest

from golden_runs import random_layout
from sim.world.engine import World
from test_circuit_property import assert_same, largest_a, rounding_floor_a

#: Layouts drawn for this test: seeds from a seeded Generator (no global random state).
SEEDS = [int(s) for s in np.random.default_rng(20261203).integers(0, 2**31, 14)]


@pytest.mark.parametrize("seed", SEEDS)
def test_cached_and_incremental_solves_equal_a_full_sparse_solve(seed):
    scn = random_layout(seed)
    seen = {"solves": 0, "hits": 0, "incremental": 0, "before_a": 0.0}
    fast = World._solve

    def checked(world):
        hits = world.n_cache_hits
        sol = fast(world)
        full = world.circuit.solve(check=False)
        assert full.method == "full"
        assert_same(sol, full, rounding_floor_a(world.circuit), seen["before_a"])
        seen["solves"] += 1
        seen["hits"] += world.n_cache_hits - hits
        seen["incremental"] += sol.method == "incremental"
        seen["before_a"] = largest_a(full)
        return sol

    with mock.patch.object(World, "_solve", checked):
        World(scn).run()
    # the test compared something: every layout solves at least once
    assert seen["solves"] > 0


def test_the_fast_paths_are_taken():
    # over the drawn layouts, both fast paths ran (else the test above compares
    # full solves with themselves and could not fail for them)
    totals = {"hits": 0, "incremental": 0}
    fast = World._solve

    def counting(world):
        hits = world.n_cache_hits
        sol = fast(world)
        totals["hits"] += world.n_cache_hits - hits
        totals["incremental"] += (world.n_cache_hits == hits and sol.method == "incremental")
        return sol

    with mock.patch.object(World, "_solve", counting):
        for seed in SEEDS:
            World(random_layout(seed)).run()
    assert totals["hits"] > 0 and totals["incremental"] > 0, totals
