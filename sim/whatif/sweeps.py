"""A sweep: sample the ``vary`` block, run every sample, summarise.

:func:`sweep` is the library entry point (``railfault sweep`` is a thin layer
over it). The steps:

1. the design (:class:`sim.whatif.samplers.Design`) from ``Scenario.vary``,
   the number of draws and the seed;
2. a check of the sampled values against the base before anything runs: every
   value a sampler can give at the ends of its range is applied to the model
   (:func:`sim.whatif.paths.apply`), so a path that names nothing settable
   (a thermal replica the file leaves out) is an input error located at its
   ``vary`` key, not a failure in the middle of the sweep;
3. the store (:class:`sim.whatif.store.Store`), when one is given: made, or
   re-opened with ``resume`` (the indices already there are skipped);
4. the samples in batches on an executor (:mod:`sim.whatif.executors`), each
   finished batch written to the store in one transaction;
5. the summary (:func:`sim.whatif.summary.summarize`) from every record, read
   back from the store when there is one.
"""
from __future__ import annotations

import json
import os
import time
from dataclasses import dataclass, field
from typing import Callable, Optional

from sim.errors import Problem, ScenarioError
from sim.whatif.paths import PathError, apply
from sim.whatif.samplers import Design
from sim.whatif.summary import render_summary, summarize

__all__ = ["sweep", "SweepResult", "DEFAULT_BATCH"]

#: Samples per batch (a task of a worker, a transaction of the store), at most.
DEFAULT_BATCH = 64


@dataclass
class SweepResult:
    """What :func:`sweep` returns.

    ``summary`` is the ``railfault-sweep/1`` object (:mod:`sim.whatif.summary`);
    ``records`` every sample's record by index; ``ran`` how many samples this
    call ran (fewer than ``len(records)`` after a resume); ``wall_s`` its time.
    """

    summary: dict
    records: list = field(default_factory=list)
    ran: int = 0
    wall_s: float = 0.0

    @property
    def passed(self) -> bool:
        """No sample lost or failed a race, and every sample's run passed."""
        s = self.summary
        return s["verdict_fail"]["count"] == 0 and s["invalid"] == 0 and \
            all(g["failing"]["count"] == 0 for g in s["gaps"])

    def as_dict(self) -> dict:
        return self.summary

    def text(self) -> str:
        return render_summary(self.summary)


def _input_error(scn, path: tuple, message: str) -> ScenarioError:
    loc = scn.locations.get(path) or scn.locations.get(path[:1])
    return ScenarioError([Problem(scn.path, ".".join(path), message,
                                  loc[0] if loc else None, loc[1] if loc else None)])


def _check_design(scn, design: Design) -> None:
    """Every end value of every axis applies to the base (step 2 of the module doc)."""
    problems = []
    for a in design.axes:
        if a.sampler in ("grid", "choice"):
            ends = a.values
        elif a.sampler == "normal":
            ends = (a.value(0.5),)
        else:
            ends = (a.value(0.0), a.value(1.0 - 1e-12))
        for v in ends:
            try:
                apply(scn, a.path, v)
            except PathError as exc:
                problems.extend(_input_error(scn, ("vary", a.key), f"vary: {exc}").problems)
                break
    if problems:
        raise ScenarioError(problems)


def _batches(design: Design, todo: list[int], size: int):
    for k in range(0, len(todo), size):
        yield [(i, design.values(i)) for i in todo[k:k + size]]


def _roundtrip(rec: dict) -> dict:
    """The record as the store gives it back (JSON), so both paths summarise alike."""
    return json.loads(json.dumps(rec, allow_nan=False))


def sweep(scn, samples: Optional[int] = None, jobs: int = 1, store: Optional[str] = None,
          resume: bool = False, cluster: Optional[str] = None, design: str = "monte-carlo",
          text: Optional[str] = None, batch: Optional[int] = None,
          progress: Optional[Callable[[int, int], None]] = None) -> SweepResult:
    """Run the sweep of a scenario's ``vary`` block.

    Parameters
    ----------
    scn : sim.model.Scenario
        The base scenario, loaded once (``sim.scenario.load``).
    samples : int, optional
        Random draws per grid point; default the file's ``samples``.
    jobs : int
        Local worker processes (1: this process).
    store : str, optional
        SQLite file keeping every finished sample (:mod:`sim.whatif.store`).
    resume : bool
        Go on with a store that already holds samples of this very sweep.
    cluster : str, optional
        ``tcp://HOST:PORT`` of a Dask scheduler (``railfault[cluster]``).
    design : str
        ``"monte-carlo"`` or ``"latin-hypercube"`` for the random draws.
    text : str, optional
        The scenario's text (read from ``scn.path`` when not given): workers and
        the store use it; its SHA-256 must be the scenario's.
    batch : int, optional
        Samples per batch (default: up to :data:`DEFAULT_BATCH`, fewer for small
        sweeps so every worker gets work).
    progress : callable, optional
        ``progress(done, total)`` after each finished batch (this call's samples).

    Returns
    -------
    SweepResult

    Raises
    ------
    sim.errors.ScenarioError
        Nothing to vary, no sample count for random samplers, a varied path
        that cannot be set, or a store that is not this sweep's.
    """
    import hashlib

    from sim.whatif.executors import make_executor
    from sim.whatif.runner import Runner
    from sim.whatif.store import Store, StoreError

    t0 = time.perf_counter()
    if not scn.vary:
        raise _input_error(scn, ("vary",), "nothing to sweep: this file has no vary block (see "
                                      "scenarios/README.md, Sweeps)")
    n_draws = scn.samples if samples is None else int(samples)
    d = Design(scn.vary, n_draws, scn.seed, design)
    if d.rand and n_draws <= 0:
        raise _input_error(scn, ("samples",), f"the vary block draws at random "
                                      f"({', '.join(a.key for a in d.rand)}): give the number "
                                      f"of samples (samples: N in the file, or --samples N)")
    _check_design(scn, d)
    if text is None and (store or jobs > 1 or cluster):
        if not os.path.isfile(scn.path):
            raise ValueError(f"sweep() needs the scenario's text (text=...) to run it on "
                             f"workers or keep it in a store: {scn.path!r} is not a file")
        with open(scn.path, "rb") as fh:
            raw = fh.read()
        text = raw.decode("utf-8-sig")
        if hashlib.sha256(raw).hexdigest() != scn.sha256:
            raise StoreError(scn.path, "the file changed while the sweep was starting")
    elif text is not None and scn.sha256 not in (
            hashlib.sha256(text.encode("utf-8")).hexdigest(),
            hashlib.sha256(("\ufeff" + text).encode("utf-8")).hexdigest()):
        raise ValueError("sweep(): text is not the text the scenario was loaded from "
                         "(its SHA-256 differs)")
    settings = d.settings()
    st = Store.open(store, text, scn.sha256, scn.path, settings, resume) if store else None
    records: list[dict] = []
    try:
        done = st.done() if st else set()
        todo = [i for i in range(d.n) if i not in done]
        workers = max(1, int(jobs))
        size = batch or max(1, min(DEFAULT_BATCH, len(todo) // (4 * workers) or 1))
        runner = Runner(scn, d.paths())
        ex = make_executor(runner, jobs=workers, cluster=cluster, text=text)
        ran = 0
        if progress:
            progress(0, len(todo))
        try:
            for recs in ex.map(_batches(d, todo, size)):
                if st:
                    st.write(recs)
                else:
                    records.extend(_roundtrip(r) for r in recs)
                ran += len(recs)
                if progress:
                    progress(ran, len(todo))
        finally:
            ex.close()
        if st:
            records = st.records()
    finally:
        if st:
            st.close()
    summary = summarize(scn, settings, records)
    return SweepResult(summary=summary, records=records, ran=ran,
                       wall_s=time.perf_counter() - t0)
