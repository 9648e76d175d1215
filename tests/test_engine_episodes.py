"""Episodes, outcomes and margins from synthetic fact streams (no engine).

Check values are derived by hand in the comments beside them, from the race
of domain.md: margin = t_trip(upstream) - t_cleared.
"""
import json

import pytest

from sim.model import Finding
from sim.trace import (DeviceSummary, Event, EventSummary, Result, decide,
                       verdict_findings)
from sim.world.episodes import EpisodeTracker, ShortPath

T_TRIP_BOOSTER_S = 3e-3   # definite-time booster delay used below


def _tracker(t_swap_s=1e-3):
    def would_trip(dev, i_a, t0):
        return t0 + T_TRIP_BOOSTER_S if dev.startswith("booster") and i_a > 5.0 else None

    return EpisodeTracker(would_trip, lambda d: t_swap_s if d.startswith("rev") else None,
                          chain=lambda d: {"rev": ("booster-w", "psu"),
                                           "booster-w": ("psu",),
                                           "booster-e": ("psu",)}.get(d, ()))


GAP = ShortPath(key=("t1", 0, 3), group=("train", "t1"), kind="gap", where="j3",
                train="t1", threshold_a=1.5)
GAP2 = ShortPath(key=("t1", 0, 4), group=("train", "t1"), kind="gap", where="j4",
                 train="t1", threshold_a=1.5)


def test_swap_before_trip_margin_plus_1_5_ms():
    # Hand-derived: short at 0; reverser senses at 0.5 ms and interrupts 1 ms
    # later (t_cleared = 1.5 ms); the booster would trip 3 ms after onset:
    # margin = 3 - 1.5 = +1.5 ms.
    tr = _tracker()
    ev = tr.solution(0.0, {GAP: 12.0}, {"booster-w": 12.0, "booster-e": 12.0, "rev": 12.0})
    assert [e.as_tuple() for e in ev] == [(0.0, "short")]
    tr.device_event(Event(0.5e-3, "rev", "detect"))
    tr.interrupt(1.5e-3, "rev")
    tr.device_event(Event(1.5e-3, "rev", "swapped"))
    ev = tr.solution(1.5e-3, {GAP: 0.0}, {"booster-w": 0.3, "booster-e": 0.3, "rev": 0.3})
    assert [e.as_tuple() for e in ev] == [(1.5e-3, "cleared")]
    (ep,) = tr.finish(1.0)
    assert ep.outcome == "swapped" and ep.acted == "rev" and ep.acted_s == 1.5e-3
    assert ep.margins == pytest.approx({"booster-w": 1.5e-3, "booster-e": 1.5e-3}, abs=1e-12)
    assert ep.margin_s == pytest.approx(1.5e-3, abs=1e-12)
    assert ep.peak_a == 12.0 and ep.end_s == 1.5e-3


def test_trip_before_swap_margin_minus_1_5_ms():
    # Hand-derived: sense 0.5 ms + swap 4 ms -> the swap would clear at 4.5 ms;
    # the booster trips at 3 ms: margin = 3 - 4.5 = -1.5 ms, outcome tripped.
    tr = _tracker(t_swap_s=4e-3)
    tr.solution(0.0, {GAP: 12.0}, {"booster-e": 12.0, "rev": 12.0})
    tr.device_event(Event(0.5e-3, "rev", "detect"))
    tr.device_event(Event(3e-3, "booster-e", "trip"))
    tr.solution(3e-3, {GAP: 0.0}, {"booster-e": 0.0, "rev": 0.0})
    (ep,) = tr.finish(1.0)
    assert ep.outcome == "tripped" and ep.acted == "booster-e" and ep.acted_s == 3e-3
    assert ep.margin_s == pytest.approx(-1.5e-3, abs=1e-12)
    f = verdict_findings([ep], 0.0)
    assert {x.code for x in f} == {"RF-RUN-001", "RF-RUN-003"}
    assert decide(f) == "fail"


def test_short_bridge_that_ends_is_clean_and_passes():
    tr = _tracker()
    tr.solution(0.0, {GAP: 9.0}, {"booster-e": 9.0, "rev": 9.0})
    tr.solution(2e-4, {}, {"booster-e": 0.2, "rev": 0.2})
    (ep,) = tr.finish(1.0)
    assert ep.outcome == "clean" and ep.acted is None and ep.margin_s is None
    assert decide(verdict_findings([ep], 1e-3)) == "pass"


def test_below_threshold_is_no_episode():
    tr = _tracker()
    assert not tr.solution(0.0, {GAP: 1.2}, {"booster-e": 1.2})
    assert tr.finish(1.0) == []


def test_short_moving_between_ends_keeps_one_unresolved_episode():
    # A train longer than its reversing section: each swap moves the short to
    # the other end; the episode stays open through the swaps, then a trip.
    tr = _tracker()
    tr.solution(0.0, {GAP: 10.0}, {"booster-w": 10.0, "rev": 10.0})
    for k, t in enumerate((1e-3, 2.6e-3, 4.2e-3)):
        tr.device_event(Event(t - 0.5e-3, "rev", "detect"))
        tr.interrupt(t, "rev")
        tr.device_event(Event(t, "rev", "swapped"))
        paths = {GAP: 0.0, GAP2: 10.0} if k % 2 == 0 else {GAP: 10.0, GAP2: 0.0}
        assert tr.solution(t, paths, {}) == []
    tr.device_event(Event(5e-3, "rev", "trip"))
    tr.solution(5e-3, {GAP: 0.0, GAP2: 0.0}, {"booster-w": 0.0, "rev": 0.0})
    (ep,) = tr.finish(1.0)
    assert ep.outcome == "unresolved" and ep.swaps == 3
    assert ep.acted == "rev" and ep.acted_s == 5e-3
    assert "RF-RUN-002" in {f.code for f in verdict_findings([ep], 0.0)}


def test_still_flowing_at_end_is_unresolved():
    tr = _tracker()
    fault = ShortPath(key="f0", group=("fault", 0), kind="fault", where="main@2 m")
    tr.solution(1.0, {fault: 2.0}, {"booster-e": 2.0})
    (ep,) = tr.finish(5.0)
    assert ep.outcome == "unresolved" and ep.end_s is None and ep.kind == "fault"
    assert decide(verdict_findings([ep], 0.0)) == "fail"


def test_overload_trip_without_short_path():
    tr = EpisodeTracker(lambda *a: None, lambda d: None, device_threshold_a={"b": 5.0})
    tr.solution(1.0, {}, {"b": 6.0})
    tr.device_event(Event(1.004, "b", "trip"))
    (ep,) = tr.finish(2.0)
    assert (ep.kind, ep.outcome, ep.acted, ep.start_s, ep.end_s) == \
        ("overload", "tripped", "b", 1.0, 1.004)


def test_supply_off_counts_as_trip_of_its_chain():
    tr = _tracker()
    tr.solution(0.0, {GAP: 12.0}, {"booster-e": 12.0})
    tr.device_event(Event(1e-3, "psu", "off"))
    tr.solution(1e-3, {GAP: 0.0}, {"booster-e": 0.0})
    (ep,) = tr.finish(1.0)
    assert ep.outcome == "tripped" and ep.acted == "psu"


def test_margin_below_required_fails():
    tr = _tracker()
    tr.solution(0.0, {GAP: 12.0}, {"booster-e": 12.0, "rev": 12.0})
    tr.device_event(Event(0.5e-3, "rev", "detect"))
    tr.interrupt(1.5e-3, "rev")
    tr.solution(1.5e-3, {}, {"booster-e": 0.0, "rev": 0.0})
    (ep,) = tr.finish(1.0)
    assert decide(verdict_findings([ep], 1e-3)) == "pass"     # +1.5 ms >= 1 ms
    f = verdict_findings([ep], 2e-3)                           # +1.5 ms < 2 ms
    assert [x.code for x in f] == ["RF-RUN-004"]


def test_event_summary_is_bounded():
    s = EventSummary(keep_events=False)
    for k in range(10000):
        s.record(Event(k * 1e-3, "east", "trip" if k % 2 else "restart"))
    assert s.events == [] and len(s.entries) == 2 and s.n_events == 10000
    assert s.count("east", "trip") == 5000
    assert s.times("east", "restart") == (0.0, pytest.approx(9.998))


def test_result_json_contract():
    tr = _tracker()
    tr.solution(0.0, {GAP: 12.0}, {"booster-e": 12.0, "rev": 12.0})
    tr.device_event(Event(0.5e-3, "rev", "detect"))
    tr.interrupt(1.5e-3, "rev")
    tr.solution(1.5e-3, {}, {"booster-e": 0.0, "rev": 0.0})
    eps = tr.finish(1.0)
    res = Result(title="t", path="p.yaml", sha256="00", seed=3, duration_s=1.0,
                 verdict="pass", findings=[Finding("info", "RF-X-001", "w", "m")],
                 episodes=eps, devices={"rev": DeviceSummary("reverser", peak_a=float("inf"))},
                 events=[Event(0.0, "j3", "short", {"i_a": 12.0})])
    d = json.loads(json.dumps(res.as_dict(), allow_nan=False))
    assert d["format"] == "railfault-result/1"
    assert set(d) == {"format", "scenario", "seed", "duration_s", "verdict", "findings",
                      "episodes", "devices", "events", "headline"}
    assert set(d["episodes"][0]) == {"start_s", "end_s", "kind", "where", "train", "peak_a",
                                     "outcome", "acted", "acted_s", "margins", "margin_s"}
    assert set(d["devices"]["rev"]) == {"kind", "trips", "swaps", "restarts", "dark_s",
                                        "peak_a", "max_thermal"}
    assert d["devices"]["rev"]["peak_a"] is None     # no infinities in JSON
    assert d["events"][0] == {"t_s": 0.0, "device": "j3", "event": "short", "i_a": 12.0}
