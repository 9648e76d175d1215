"""What-if analyses: named cases side by side, and sweeps over the ``vary`` block.

Library API (the ``railfault compare`` and ``railfault sweep`` commands are thin
layers over it):

- :func:`compare` ``(scn) -> CompareResult``: the base and every case of
  ``cases:`` run and lined up (:mod:`sim.whatif.compare`);
- :func:`sweep` ``(scn, samples=None, jobs=1, store=None, resume=False,
  cluster=None, design="monte-carlo") -> SweepResult``: the samples of the
  ``vary`` block, run in parallel, kept in a resumable store, summarised per
  reversing section and gap (:mod:`sim.whatif.sweep`).

Modules: :mod:`~sim.whatif.paths` (key paths, applying a value to the frozen
model, what a sample may re-use), :mod:`~sim.whatif.cases` (the ``cases`` key),
:mod:`~sim.whatif.samplers` (designs and seeding), :mod:`~sim.whatif.outcome`
(lost and failing races from a run), :mod:`~sim.whatif.runner` (one process's
samples), :mod:`~sim.whatif.executors` (inline, process pool, Dask),
:mod:`~sim.whatif.store` (SQLite), :mod:`~sim.whatif.stats` (Wilson, Spearman,
partial rank correlation), :mod:`~sim.whatif.summary`.

Finding codes: none; bad input (a case, a varied path, a store) is a located
:class:`sim.errors.ScenarioError` (exit 2).
"""
from sim.whatif.compare import CompareResult, compare
from sim.whatif.sweep import SweepResult, sweep

__all__ = ["compare", "CompareResult", "sweep", "SweepResult"]
