"""What-if analyses: named cases side by side, and sweeps over the ``vary`` block.

Library API (the ``railfault compare`` and ``railfault sweep`` commands are thin
layers over it):

- :func:`compare` ``(scn) -> CompareResult``: the base and every case of
  ``cases:`` run and lined up (:mod:`sim.whatif.comparison`);
- :func:`sweep` ``(scn, samples=None, jobs=1, store=None, resume=False,
  cluster=None, design="monte-carlo") -> SweepResult``: the samples of the
  ``vary`` block, run in parallel, kept in a resumable store, summarised per
  reversing section and gap (:mod:`sim.whatif.sweeps`).

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
__all__ = ["compare", "CompareResult", "sweep", "SweepResult"]

_HOME = {"compare": "sim.whatif.comparison", "CompareResult": "sim.whatif.comparison",
         "sweep": "sim.whatif.sweeps", "SweepResult": "sim.whatif.sweeps"}


def __getattr__(name: str):
    # imported on first use: the loader imports sim.whatif.cases for every file with
    # cases, and should not pay for the statistics (scipy.stats) it does not use
    if name in _HOME:
        import importlib

        return getattr(importlib.import_module(_HOME[name]), name)
    raise AttributeError(f"module 'sim.whatif' has no attribute {name!r}")
