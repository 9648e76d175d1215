"""Where samples run: in this process, in a local process pool, or on a Dask cluster.

Every executor takes batches ``[(i, {key: value}), ...]`` and yields the
finished batches' records in the order they finish (which may differ from the
order given: the sweep sorts by index). Each worker process loads the scenario
from its text once (:func:`worker_runner`, a cache keyed by the text's SHA-256)
and keeps one :class:`~sim.whatif.runner.Runner`, so it parses, validates and
builds the shared parts once, however many batches it runs.

- :class:`InlineExecutor`: ``--jobs 1``, in this process, on the scenario
  already loaded.
- :class:`PoolExecutor`: ``--jobs J``, a :class:`concurrent.futures.ProcessPoolExecutor`
  whose workers die with the sweep: killed (SIGTERM, SIGKILL) it cannot shut its
  pool down, so each worker watches it itself (:func:`die_with_parent`: the
  kernel's parent-death signal on Linux, ``prctl(2)`` ``PR_SET_PDEATHSIG``, and a
  thread that checks every :data:`PARENT_POLL_S` that its parent is still the
  sweep); ``--resume`` then goes on from the store.
- :class:`DaskExecutor`: ``--cluster tcp://HOST:PORT``, a Dask distributed
  scheduler (the optional extra ``railfault[cluster]``); the text is scattered
  to the workers once.

At most a few batches per worker are in flight at once, so a sweep of a
million samples holds a few thousand samples' inputs in memory, not all.
"""
from __future__ import annotations

import hashlib
import os
import signal
import sys
import threading
import time
from typing import Iterable, Iterator, Optional

from sim.errors import Problem, ScenarioError

__all__ = ["InlineExecutor", "PoolExecutor", "DaskExecutor", "worker_runner", "run_batch",
           "make_executor", "die_with_parent"]

#: Batches in flight per worker.
IN_FLIGHT_PER_WORKER = 3

_RUNNERS: dict = {}

#: How often a pool worker checks that the sweep that started it still runs (s).
PARENT_POLL_S = 0.5

#: ``prctl(2)`` option: the signal a process gets when its parent dies (Linux).
_PR_SET_PDEATHSIG = 1


def die_with_parent(parent_pid: int) -> None:
    """Make this worker process end when ``parent_pid`` (the sweep) ends.

    A pool initializer (module docstring). On Linux the kernel sends SIGKILL at
    once when the parent dies (``prctl(PR_SET_PDEATHSIG)``); everywhere a daemon
    thread ends the process within :data:`PARENT_POLL_S` once its parent is no
    longer ``parent_pid`` (re-parented to PID 1 or a subreaper).
    """
    if sys.platform.startswith("linux"):
        try:
            import ctypes

            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(_PR_SET_PDEATHSIG, int(signal.SIGKILL), 0, 0, 0)
        except (OSError, AttributeError):
            pass                                   # the thread below still watches
    if os.getppid() != parent_pid:                 # died before prctl took effect
        os._exit(1)

    def watch() -> None:
        while True:
            time.sleep(PARENT_POLL_S)
            if os.getppid() != parent_pid:
                os._exit(1)

    threading.Thread(target=watch, name="railfault-parent-watch", daemon=True).start()


def worker_runner(text: str, path: str, paths: dict):
    """The runner of this process for the scenario ``text`` (loaded once per process)."""
    from sim.scenario import loads
    from sim.whatif.runner import Runner

    key = (hashlib.sha256(text.encode("utf-8")).hexdigest(), path,
           tuple(sorted((k, tuple(v)) for k, v in paths.items())))
    runner = _RUNNERS.get(key)
    if runner is None:
        _RUNNERS.clear()
        runner = _RUNNERS[key] = Runner(loads(text, path), paths)
    return runner


def run_batch(text: str, path: str, paths: dict, batch: list) -> list[dict]:
    """Records of a batch ``[(i, values), ...]`` (a worker's task)."""
    runner = worker_runner(text, path, paths)
    return [runner.record(i, values) for i, values in batch]


class InlineExecutor:
    """Samples in this process, on the runner given."""

    def __init__(self, runner):
        self.runner = runner

    def map(self, batches: Iterable[list]) -> Iterator[list[dict]]:
        for batch in batches:
            yield [self.runner.record(i, values) for i, values in batch]

    def close(self) -> None:
        pass


def _bounded(submit, wait_one, batches: Iterable[list], limit: int):
    """Submit batches keeping at most ``limit`` in flight; yield results as they finish."""
    pending: set = set()
    it = iter(batches)
    exhausted = False
    while True:
        while not exhausted and len(pending) < limit:
            batch = next(it, None)
            if batch is None:
                exhausted = True
                break
            pending.add(submit(batch))
        if not pending:
            return
        done, pending = wait_one(pending)
        for fut in done:
            yield fut.result()


class PoolExecutor:
    """Samples in ``jobs`` local worker processes."""

    def __init__(self, jobs: int, text: str, path: str, paths: dict):
        from concurrent.futures import ProcessPoolExecutor

        self.jobs = int(jobs)
        self.args = (text, path, dict(paths))
        self.pool = ProcessPoolExecutor(max_workers=self.jobs, initializer=die_with_parent,
                                        initargs=(os.getpid(),))

    def map(self, batches: Iterable[list]) -> Iterator[list[dict]]:
        from concurrent.futures import FIRST_COMPLETED, wait

        def wait_one(pending):
            done, rest = wait(pending, return_when=FIRST_COMPLETED)
            return done, set(rest)

        return _bounded(lambda b: self.pool.submit(run_batch, *self.args, b), wait_one,
                        batches, IN_FLIGHT_PER_WORKER * self.jobs)

    def close(self) -> None:
        self.pool.shutdown(wait=True, cancel_futures=True)


class DaskExecutor:
    """Samples on a Dask distributed cluster at ``address`` (``tcp://HOST:PORT``)."""

    def __init__(self, address: str, text: str, path: str, paths: dict,
                 timeout_s: float = 30.0):
        try:
            from distributed import Client
        except ImportError:
            raise ScenarioError([Problem("--cluster", "", "running on a cluster needs Dask "
                                         "distributed: pip install 'railfault[cluster]'")]) \
                from None
        try:
            self.client = Client(address, timeout=timeout_s)
        except (OSError, TimeoutError) as exc:
            raise ScenarioError([Problem("--cluster", "", f"cannot reach the Dask scheduler "
                                         f"at {address}: {exc}")]) from None
        self.path = path
        self.paths = dict(paths)
        self.text = self.client.scatter(text, broadcast=True)
        workers = self.client.scheduler_info().get("workers", {})
        self.n_workers = max(1, sum(int(w.get("nthreads", 1)) for w in workers.values()))

    def map(self, batches: Iterable[list]) -> Iterator[list[dict]]:
        from distributed import wait

        def wait_one(pending):
            res = wait(list(pending), return_when="FIRST_COMPLETED")
            return set(res.done), set(res.not_done)

        return _bounded(lambda b: self.client.submit(run_batch, self.text, self.path,
                                                     self.paths, b, pure=False),
                        wait_one, batches, IN_FLIGHT_PER_WORKER * self.n_workers)

    def close(self) -> None:
        self.client.close()


def make_executor(runner, jobs: int = 1, cluster: Optional[str] = None,
                  text: Optional[str] = None):
    """The executor for ``jobs`` local processes or a ``cluster`` address."""
    base = runner.base
    if cluster:
        return DaskExecutor(cluster, text, base.path, runner.paths)
    if jobs <= 1:
        return InlineExecutor(runner)
    return PoolExecutor(jobs, text, base.path, runner.paths)
