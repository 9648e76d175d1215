"""The parts of simpy the engine relies on beyond its public API (a pinned range).

``sim.world.processes.Env`` schedules at an absolute instant by pushing onto
``Environment._queue`` (entries ``(time, priority, event id, event)`` taken
from ``_eid``, at ``simpy.core.NORMAL``), and ``sim.world.engine`` reads
``_queue`` and ``_now`` to play within its event budget and to run a settle at
once when nothing else is queued at the present instant. Those names are not
simpy's public API, so ``pyproject.toml`` pins simpy to one minor release and
these tests fail when the installed simpy leaves that range or its internals
change shape.

Check values: IEEE 754 double arithmetic (``0.2 + (0.9 - 0.2)`` is
``0.8999999999999999``, not ``0.9``: the reason ``timeout_at`` pushes the instant
itself); simpy's documented order of simultaneous events (scheduling order, FIFO).
"""
from __future__ import annotations

import re
import tomllib
from importlib.metadata import version
from pathlib import Path

import simpy

from sim.world.processes import Env

ROOT = Path(__file__).resolve().parents[1]


def _pinned_range() -> tuple[tuple[int, ...], tuple[int, ...]]:
    deps = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["dependencies"]
    spec = next(d for d in deps if d.startswith("simpy"))
    lo = re.search(r">=\s*([\d.]+)", spec)
    hi = re.search(r"<\s*([\d.]+)", spec)
    assert lo and hi, f"simpy must be pinned to a range (>=a,<b), found {spec!r}"
    return (tuple(int(x) for x in lo.group(1).split(".")),
            tuple(int(x) for x in hi.group(1).split(".")))


def test_installed_simpy_is_in_the_pinned_range():
    lo, hi = _pinned_range()
    have = tuple(int(x) for x in re.findall(r"\d+", version("simpy"))[:3])
    assert lo <= have < hi, (version("simpy"), lo, hi)


def test_queue_entries_have_the_shape_the_engine_reads():
    env = simpy.Environment()
    assert env._now == 0.0
    ev = env.timeout(0.25)
    assert isinstance(env._queue, list) and len(env._queue) == 1
    t, prio, eid, got = env._queue[0]
    assert (t, prio, got) == (0.25, simpy.core.NORMAL, ev)
    assert next(env._eid) == eid + 1          # the id counter the engine draws from
    env.step()
    assert env._now == 0.25 and env._queue == []


def test_call_at_lands_on_the_instant_itself():
    env = Env()
    env.timeout(0.2)
    env.run()
    fired = []
    env.call_at(0.9, lambda ev: fired.append(("call", env.now)))
    # the same span as a relative timeout lands one ulp off (IEEE 754 double)
    env.timeout(0.9 - 0.2).callbacks.append(lambda ev: fired.append(("timeout", env.now)))
    env.run()
    assert fired == [("timeout", 0.8999999999999999), ("call", 0.9)]


def test_simultaneous_events_run_in_scheduling_order():
    env = Env()
    order = []
    env.timeout(0.5).callbacks.append(lambda ev: order.append("timeout"))
    env.call_at(0.5, lambda ev: order.append("call"))
    env.timeout_at(0.5).callbacks.append(lambda ev: order.append("timeout_at"))
    env.call_at(0.5, lambda ev: order.append("second call"))
    env.run()
    assert order == ["timeout", "call", "timeout_at", "second call"]
    assert env.now == 0.5


def test_a_call_in_the_past_runs_now():
    env = Env()
    env.timeout(1.0)
    env.run()
    seen = []
    env.call_at(0.4, lambda ev: seen.append(env.now))
    env.step()
    assert seen == [1.0] and env._queue == []
