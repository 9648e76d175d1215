"""The bounded trace recorder: exact, bounded, and without effect on the run.

Check values: the engine's own figures (its dark time per device and the
episodes' peak currents, which the recorder must reproduce from the same
solutions), and the bounds set on the recorder.
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest

from sim.scenario import load
from sim.world import run
from sim.world.traces import TraceRecorder, short_key

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "scenarios" / "cinder-ridge.yaml"
BACKOFF = ROOT / "tests" / "scenarios" / "run" / "backoff.yaml"


@pytest.fixture(scope="module")
def demo():
    scn = load(DEMO)
    rec = TraceRecorder()
    return scn, rec, run(scn, traces=rec)


def test_the_recorder_does_not_change_the_result(demo):
    scn, _, res = demo
    plain = run(scn)
    assert json.dumps(res.as_dict(), sort_keys=True) == json.dumps(plain.as_dict(),
                                                                    sort_keys=True)


def test_dark_spans_add_up_to_the_engines_dark_time(demo):
    _, rec, res = demo
    for name, summary in res.devices.items():
        spans = rec.dark.get(name, [])
        assert sum(b - a for a, b in spans) == pytest.approx(summary.dark_s, abs=1e-9)
    # west tripped three times on the fault (demo): three dark spans, 3.5 s in all
    assert len(rec.dark["west"]) == 3


def test_every_episode_has_a_window_with_its_exact_peak(demo):
    _, rec, res = demo
    for ep in res.episodes:
        w = rec.window_for(ep.start_s, ep.end_s, ep.where)
        assert w is not None and ep.where in w.places
        pts = w.series[short_key(ep.kind, ep.where, ep.train)]
        inside = [i for t, i in pts if ep.start_s - 1e-12 <= t < ep.end_s]
        # the episode's peak is the largest total short current of its solves
        assert max(inside) == pytest.approx(ep.peak_a, rel=1e-12)
        # at the end the current through the bridges is no short any more: under 1.5 A,
        # the lowest sense threshold of the demo (the reversers'); a bridge of rails in
        # phase still carries a little balancing current
        assert w.value_at(short_key(ep.kind, ep.where, ep.train), ep.end_s) < 1.5
        # a supply's limit acting in the very solve that opened the episode is kept
        kinds = {(e.device, e.event) for e in w.events}
        assert ("psu-main", "limit") in kinds


def test_windows_are_bounded_and_the_worst_kept():
    scn = load(BACKOFF)
    full = TraceRecorder()
    res = run(scn, traces=full)
    assert len(full.windows) >= 4
    small = TraceRecorder(max_windows=2, max_points=6)
    run(scn, traces=small)
    assert len(small.windows) == 2
    assert small.dropped == len(full.windows) - 2
    assert all(w.n_points <= 6 + len(w.series) for w in small.windows)
    assert any(w.truncated for w in small.windows)
    # kept: the most severe, then the earliest
    sev = sorted((w.severity for w in full.windows), reverse=True)[:2]
    assert sorted((w.severity for w in small.windows), reverse=True) == sev
    assert res.episodes


def test_dark_spans_are_bounded():
    scn = load(BACKOFF)
    rec = TraceRecorder(max_spans=2)
    res = run(scn, traces=rec)
    for name, s in res.devices.items():
        if s.dark_s > 0:
            n = len(rec.dark[name]) + rec.dark_dropped.get(name, 0)
            assert len(rec.dark[name]) <= 2 and n >= 2
