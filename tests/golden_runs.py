"""Golden run results: store the result JSON of many runs, compare them byte for byte later.

A tool for changes to the engine and the circuit that must not change a result
(a faster solve, a module split): before the change, ``save`` the results; after
each step, ``compare``. It is not a test of the suite (the stored results are
our own output, not an outside reference); the suite's cross-checks hold the
results to outside references.

For every case it keeps

* the engine's result with every event (``sim.world.engine.run(scn,
  keep_events=True).as_dict()``),
* the diagnosed result (``sim.world.run(scn).as_dict()``, events summarised),
* for the scenario files, the trace recorder's windows (``sim.world.traces``:
  the exact currents the report draws),

written with ``json.dumps`` (floats by ``repr``, exact), one file per case.

Cases: every scenario file under ``scenarios/`` and ``tests/scenarios/`` that
loads; the benchmark's line layouts (``tests/bench/bench_engine.line_layout``)
with seeded sizes, trains, breakers, reversers and shorts; random layouts of
every device kind (:func:`random_layout`, from ``numpy.random.default_rng(k)``);
and the benchmark's one-hour session of 200 sections and 30 trains.

Usage::

    python -m tests.golden_runs save DIR [--only PREFIX] [--jobs N]
    python -m tests.golden_runs compare DIR [--only PREFIX] [--jobs N]

``compare`` prints, for each case that differs, either that only floats differ
(how many, and the largest difference relative to the larger value or to 1,
with its key path) or the first
key path where anything else differs; it exits 1 when any case differs.
"""
from __future__ import annotations

import argparse
import json
import math
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests" / "bench"))
sys.path.insert(0, str(ROOT / "tests"))

#: The most engine events a golden run may take (keeps a runaway case short; the
#: budget's own stop is then part of the result).
BUDGET = 60_000


# ------------------------------------------------------------------ generators
def random_layout(k: int):
    """An invented line layout of every device kind, drawn from ``default_rng(k)``.

    One or two supplies (unlimited, or limited with constant-current, hiccup or
    latch, with or without a hold time), one to four boosters (sampled or
    continuous sensing, definite or inverse time, thermal replica, restart
    policies, self-reversing, undervoltage delay), optional breakers and
    reversers, sections wired either way, bonded or gapped joints, trains of
    pickup dummies, locomotives with and without keep-alive and lighted coaches,
    shorts (timed or not) and an open feeder, and an operator reset.
    """
    from sim.model import (Action, Booster, Breaker, End, Fault, Feed, Feeder, Joint, Rail,
                           Restart, Reverser, Scenario, Section, Sense, Start, Supply, Thermal,
                           Track, Train, Trip, Vehicle, frozen_map)

    rng = np.random.default_rng(k)

    def pick(seq):
        return seq[int(rng.integers(len(seq)))]

    def trip(lo, hi):
        curve = pick([None, None, None, "iec-very-inverse", "iec-standard-inverse"])
        return Trip(float(rng.uniform(lo, hi)), pick([0.0, 5e-4, 2e-3, 1e-2]), curve,
                    pick([0.05, 0.2, 1.0]) if curve else 1.0)

    def sense():
        period = pick([None, None, 1e-4, 5e-4])
        return Sense(period, pick([math.inf, math.inf, 4.0, 30.0]),
                     float(rng.uniform(0.0, 0.99)) if period and rng.random() < 0.5 else None)

    def restart():
        return pick([Restart("manual"), Restart("retry", tries=None, every_s=0.3),
                     Restart("retry", tries=3, every_s=0.2),
                     Restart("backoff", first_s=0.2, factor=2.0, cap_s=1.0)])

    supplies = {}
    for s in range(int(rng.integers(1, 3))):
        limit = pick([math.inf, math.inf, 4.0, 12.0])
        supplies[f"p{s}"] = Supply(f"p{s}", pick([12.0, 16.0]), pick([0.0, 0.05, 0.2]), limit,
                                   pick(["constant-current", "hiccup", "latch"]), 0.4,
                                   t_limit_s=pick([0.0, 0.0, 0.05]))
    boosters = {}
    for b in range(int(rng.integers(1, 5))):
        auto = rng.random() < 0.25
        boosters[f"b{b}"] = Booster(
            f"b{b}", pick(list(supplies)), pick([0.0, 0.04, 0.2]),
            phase=pick([1, 1, -1]), sense=sense(), trip=trip(3.0, 30.0), restart=restart(),
            thermal=pick([None, None, Thermal(2.0, 0.5)]), reverse_on_short=auto,
            sense_reverse_a=pick([None, 2.0]), t_sense_reverse_s=pick([0.0, 5e-4]),
            t_swap_s=pick([0.0, 1e-3]), t_hold_off_s=pick([0.0, 1e-3, 5e-2]),
            t_undervoltage_s=pick([0.0, 0.02]))
    devices = list(boosters)
    breakers, reversers = {}, {}
    for c in range(int(rng.integers(0, 3))):
        breakers[f"cb{c}"] = Breaker(f"cb{c}", Feed(pick(devices)), pick([0.0, 0.02]),
                                     sense=sense(), trip=trip(2.0, 8.0), restart=restart(),
                                     thermal=pick([None, None, Thermal(1.5, 0.3)]))
        devices.append(f"cb{c}")
    for r in range(int(rng.integers(0, 3))):
        reversers[f"r{r}"] = Reverser(
            f"r{r}", Feed(pick(devices)), float(rng.uniform(1.0, 10.0)),
            pick([0.0, 1e-4, 5e-4]), pick([0.0, 5e-4, 4e-3]), pick([0.0, 1e-3]),
            pick([0.0, 1e-3, 5e-2]), sense=sense(), trip=trip(4.0, 40.0), restart=restart())
        devices.append(f"r{r}")
    n = int(rng.integers(3, 12))
    sections, joints = {}, []
    for i in range(n):
        length = 2.8 if i == 0 else float(rng.uniform(0.5, 4.0))
        feeders = tuple(Feeder(float(rng.uniform(0.0, length)))
                        for _ in range(int(rng.integers(0, 3))))
        sections[f"s{i}"] = Section(f"s{i}", length, pick(devices + [None]) if i else
                                    pick(devices), feeders, leads=pick([1, 1, -1]))
        if i:
            gaps = pick(["none", "both", "both", "one"])
            joints.append(Joint(i - 1, (End(f"s{i - 1}", "b"), End(f"s{i}", "a")), gaps,
                                pick(["left", "right"])))
    stock = {
        "dummy": Vehicle("dummy", 0.3, (0.05, 0.25), pickup=(0, 1)),
        "loco": Vehicle("loco", 0.2, (0.03, 0.17), pickup=(0, 1), draw_a=0.5,
                        t_keep_alive_s=pick([0.0, 0.2]), c_keep_alive_f=pick([0.0, 0.01])),
        "coach": Vehicle("coach", 0.9, (0.05, 0.85), pickup=(0, 1),
                         r_join_ohm=pick([4.0, 120.0])),
        "metal": Vehicle("metal", 0.3, (0.05, 0.25), metal_wheels=True),
    }
    trains = {}
    for j in range(int(rng.integers(0, 4))):
        consist = tuple(pick(list(stock)) for _ in range(int(rng.integers(1, 4))))
        trains[f"t{j}"] = Train(f"t{j}", consist, Start("s0", 2.75, "b"), tuple(sections),
                                float(rng.uniform(0.2, 1.5)), float(rng.uniform(0.0, 1.0)))
    faults = []
    for _ in range(int(rng.integers(0, 3))):
        sec = pick(list(sections))
        faults.append(Fault(float(rng.uniform(0.2, 3.0)), "short", sec,
                            float(rng.uniform(0.0, sections[sec].length_m)),
                            pick([0.01, 0.5, 3.0]), pick([None, 0.3, 1.0])))
    fed = [s for s, sec in sections.items() if sec.feed is not None]
    if rng.random() < 0.15 and fed:
        faults.append(Fault(float(rng.uniform(0.5, 3.0)), "open", pick(fed), feeder=0))
    actions = ()
    if rng.random() < 0.3:
        actions = (Action(float(rng.uniform(1.0, 3.5)), "reset", pick(devices)),)
    track = Track(Rail(r_per_m_ohm=0.02), 0.05, frozen_map(sections), tuple(joints))
    return Scenario("railfault/1", f"random layout {k}", int(rng.integers(0, 99)), 4.0,
                    frozen_map(supplies), frozen_map(boosters), frozen_map(breakers),
                    frozen_map(reversers), track, frozen_map(stock), frozen_map(trains),
                    tuple(faults), actions, path=f"<random {k}>")


def line_variant(k: int):
    """The benchmark's line layout (``bench_engine.line_layout``) with sizes drawn
    from ``default_rng(1000 + k)``."""
    from bench_engine import line_layout

    rng = np.random.default_rng(1000 + k)
    n_sections = int(rng.integers(10, 121))
    return line_layout(n_sections, int(rng.integers(0, 13)), float(rng.choice([5.0, 10.0, 20.0])),
                       float(rng.choice([0.0, 0.5, 2.0, 5.0])), draw=bool(rng.random() < 0.7),
                       n_breakers=int(rng.integers(0, 4)), n_reversers=int(rng.integers(0, 3)),
                       section_m=float(rng.choice([1.0, 2.0, 3.0])), seed=int(rng.integers(0, 50)))


def one_hour():
    from bench_engine import line_layout

    return line_layout(200, 30, 3600.0, fault_every_s=30.0)


def files():
    for base in (ROOT / "scenarios", ROOT / "tests" / "scenarios"):
        for p in sorted(base.rglob("*.yaml")):
            yield p


def cases(n_random: int = 200, n_line: int = 120):
    """``[(name, factory, with traces)]`` of every case (module doc)."""
    from sim.errors import RailfaultError
    from sim.scenario import load

    out = []
    for p in files():
        try:
            load(p)
        except RailfaultError:
            continue
        out.append((f"file-{p.relative_to(ROOT).as_posix().replace('/', '--')}",
                    (lambda p=p: load(p)), True))
    out += [(f"line-{k:03d}", (lambda k=k: line_variant(k)), False) for k in range(n_line)]
    out += [(f"random-{k:03d}", (lambda k=k: random_layout(k)), False) for k in range(n_random)]
    out.append(("hour-200x30", one_hour, False))
    return out


# ---------------------------------------------------------------------- results
def _traces_dict(rec) -> dict:
    return {"windows": [{"t0_s": w.t0_s, "t1_s": w.t1_s, "trigger": w.trigger,
                         "places": list(w.places), "series": w.series,
                         "events": [e.as_dict() for e in w.events], "n_points": w.n_points,
                         "truncated": w.truncated, "open_at_end": w.open_at_end}
                        for w in rec.windows],
            "dropped": rec.dropped,
            "dark": {k: list(v) for k, v in sorted(rec.dark.items())}}


def result_text(factory, with_traces: bool) -> str:
    """The JSON text of one case (module doc)."""
    from sim.world import engine, run

    scn = factory()
    out = {"engine": engine.run(scn, keep_events=True, event_budget=BUDGET).as_dict(),
           "diagnosed": run(scn, event_budget=BUDGET).as_dict()}
    if with_traces:
        from sim.world.traces import TraceRecorder

        rec = TraceRecorder()
        engine.run(scn, traces=rec, event_budget=BUDGET)
        out["traces"] = _traces_dict(rec)
    # the scenario path is absolute: store it relative to the checkout, so that
    # results from two worktrees (before and after a change) compare
    return json.dumps(out, indent=0).replace(json.dumps(str(ROOT))[1:-1], "<ROOT>")


def _first_diff(a, b, path="$"):
    if type(a) is not type(b):
        return path, a, b
    if isinstance(a, dict):
        for k in list(a) + [k for k in b if k not in a]:
            if k not in a or k not in b:
                return f"{path}.{k}", a.get(k, "<missing>"), b.get(k, "<missing>")
            d = _first_diff(a[k], b[k], f"{path}.{k}")
            if d:
                return d
        return None
    if isinstance(a, list):
        for i, (x, y) in enumerate(zip(a, b)):
            d = _first_diff(x, y, f"{path}[{i}]")
            if d:
                return d
        if len(a) != len(b):
            return f"{path}.length", len(a), len(b)
        return None
    return None if a == b else (path, a, b)


#: name -> (factory, with traces) of the cases of this run (set before the workers fork)
_CASES: dict = {}


def float_diffs(a, b, path="$", out=None):
    """Every float of ``a`` and ``b`` that differs, as ``(path, a, b)``, when the two
    agree in everything else (keys, lengths, strings, integers); ``None`` when
    they differ in anything else."""
    out = [] if out is None else out
    if isinstance(a, float) and isinstance(b, float):
        if a != b:
            out.append((path, a, b))
        return out
    if type(a) is not type(b):
        return None
    if isinstance(a, dict):
        if list(a) != list(b):
            return None
        for k in a:
            if float_diffs(a[k], b[k], f"{path}.{k}", out) is None:
                return None
        return out
    if isinstance(a, list):
        if len(a) != len(b):
            return None
        for i, (x, y) in enumerate(zip(a, b)):
            if float_diffs(x, y, f"{path}[{i}]", out) is None:
                return None
        return out
    return out if a == b else None


def _rel(a: float, b: float) -> float:
    """The difference relative to the larger value, or to 1 below it (a current or
    voltage under 1 A or 1 V compared in absolute terms: rounding noise on a
    numerical zero is not a large relative change)."""
    return abs(a - b) / max(abs(a), abs(b), 1.0)


def _work(args):
    mode, folder, name = args
    factory, traces = _CASES[name]
    t0 = time.perf_counter()
    text = result_text(factory, traces)
    wall = time.perf_counter() - t0
    path = Path(folder) / f"{name}.json"
    if mode == "save":
        path.write_text(text)
        return name, wall, None
    old = path.read_text() if path.exists() else None
    if old == text:
        return name, wall, None
    if old is None:
        return name, wall, "no stored result"
    a, b = json.loads(old), json.loads(text)
    floats = float_diffs(a, b)
    if floats is not None:
        worst = max(floats, key=lambda d: _rel(d[1], d[2]))
        return name, wall, (f"floats only: {len(floats)} differ, largest relative "
                            f"{_rel(worst[1], worst[2]):.2e} at {worst[0]} "
                            f"({worst[1]!r} -> {worst[2]!r})")
    return name, wall, "STRUCTURE " + repr(_first_diff(a, b))[:600]


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("mode", choices=("save", "compare"))
    ap.add_argument("folder")
    ap.add_argument("--only", default="", help="cases whose name starts with this")
    ap.add_argument("--jobs", type=int, default=1)
    a = ap.parse_args(argv)
    Path(a.folder).mkdir(parents=True, exist_ok=True)
    _CASES.update({n: (f, t) for n, f, t in cases() if n.startswith(a.only)})
    todo = [(a.mode, a.folder, n) for n in _CASES]
    t0 = time.perf_counter()
    if a.jobs > 1:
        from multiprocessing import get_context

        with get_context("fork").Pool(a.jobs) as pool:
            done = pool.map(_work, todo, chunksize=1)
    else:
        done = [_work(x) for x in todo]
    bad = [(n, d) for n, _, d in done if d]
    slow = sorted(done, key=lambda r: -r[1])[:5]
    print(f"{len(done)} cases in {time.perf_counter() - t0:.1f} s; slowest: "
          + ", ".join(f"{n} {w:.1f} s" for n, w, _ in slow))
    for n, d in bad:
        print(f"DIFFERS {n}: {d}")
    if a.mode == "compare":
        n_float = sum(1 for _, d in bad if d.startswith("floats only"))
        print(f"{len(done) - len(bad)} identical, {n_float} differ in floats only, "
              f"{len(bad) - n_float} differ in more")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
