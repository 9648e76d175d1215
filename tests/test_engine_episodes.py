"""Episodes, outcomes, margins and let-through from synthetic fact streams (no engine).

Check values are derived by hand in the comments beside them: margins from the
race of domain.md (margin = t_trip(upstream) - t_cleared), currents as sums of
the rail currents fed in, I^2 t as sums of I^2 x duration over the
piecewise-constant currents fed in.
"""
import json

import pytest

from sim.model import Finding
from sim.trace import (DeviceSummary, Event, EventSummary, Result, decide,
                       verdict_findings)
from sim.world.episodes import EpisodeTracker, ShortPath, overrun_findings

T_TRIP_BOOSTER_S = 3e-3   # definite-time booster delay used below

#: Devices of the synthetic layout, from the track upwards.
ORDER = ("rev", "booster-w", "booster-e", "psu")
SENSE = {"rev": 1.5, "booster-w": 5.0, "booster-e": 5.0}


def _tracker(t_swap_s=1e-3, **kw):
    def would_trip(dev, i_a, t0):
        return t0 + T_TRIP_BOOSTER_S if dev.startswith("booster") and i_a > 5.0 else None

    args = dict(sense_threshold_a=SENSE, supplies=("psu",),
                trip_threshold_a={"booster-w": 5.0, "booster-e": 5.0, "rev": 500.0},
                allow_s={"booster-w": T_TRIP_BOOSTER_S, "booster-e": T_TRIP_BOOSTER_S,
                         "rev": 5e-3},
                supply_of={"booster-w": "psu", "booster-e": "psu"}, order=ORDER)
    args.update(kw)
    return EpisodeTracker(would_trip, lambda d: t_swap_s if d.startswith("rev") else None,
                          **args)


GAP = ShortPath(key=("t1", 0, 3), group=("train", "t1"), kind="gap", where="j3",
                train="t1", devices=("rev", "booster-e", "psu"), rails=("left", "right"))
GAP2 = ShortPath(key=("t1", 0, 4), group=("train", "t1"), kind="gap", where="j4",
                 train="t1", devices=("rev", "booster-w", "psu"), rails=("left", "right"))


def test_swap_before_trip_margin_plus_1_5_ms():
    # Hand-derived: short at 0; reverser senses at 0.5 ms and interrupts 1 ms
    # later (t_cleared = 1.5 ms); the booster would trip 3 ms after onset:
    # margin = 3 - 1.5 = +1.5 ms.
    tr = _tracker()
    ev = tr.solution(0.0, {GAP: 12.0}, {"booster-e": 12.0, "rev": 12.0})
    assert [e.as_tuple() for e in ev] == [(0.0, "short")]
    tr.device_event(Event(0.5e-3, "rev", "detect"))
    tr.interrupt(1.5e-3, "rev")
    tr.device_event(Event(1.5e-3, "rev", "swapped"))
    ev = tr.solution(1.5e-3, {GAP: 0.0}, {"booster-e": 0.3, "rev": 0.3})
    assert [e.as_tuple() for e in ev] == [(1.5e-3, "cleared")]
    (ep,) = tr.finish(1.0)
    assert ep.outcome == "swapped" and ep.acted == "rev" and ep.acted_s == 1.5e-3
    assert ep.margins == pytest.approx({"booster-e": 1.5e-3}, abs=1e-12)
    assert ep.margin_s == pytest.approx(1.5e-3, abs=1e-12)
    assert ep.peak_a == 12.0 and ep.end_s == 1.5e-3
    assert ep.devices == ["rev", "booster-e", "psu"] and ep.tripped == {}
    # 12 A for 1.5 ms: I2t = 144 x 0.0015 = 0.216 A2s
    assert ep.i2t_a2s == pytest.approx(0.216, rel=1e-12)


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
    assert ep.tripped == {"booster-e": 3e-3}
    f = verdict_findings([ep], 0.0)
    assert {x.code for x in f} == {"RF-RUN-001", "RF-RUN-003"}
    assert decide(f) == "fail"


def test_no_positive_margin_against_a_device_that_tripped():
    # The swap at 1.5 ms does not stop the current (it moved, not cleared); the
    # booster trips at 3 ms, after t_cleared: 3 - 1.5 = +1.5 ms would be a margin
    # "won" against a device that tripped in the episode - there is none.
    tr = _tracker()
    tr.solution(0.0, {GAP: 12.0}, {"booster-e": 12.0, "rev": 12.0})
    tr.device_event(Event(0.5e-3, "rev", "detect"))
    tr.interrupt(1.5e-3, "rev")
    tr.device_event(Event(1.5e-3, "rev", "swapped"))
    tr.solution(1.5e-3, {GAP: 11.0}, {"booster-e": 11.0, "rev": 11.0})
    tr.device_event(Event(3e-3, "booster-e", "trip"))
    tr.solution(3e-3, {GAP: 0.0}, {"booster-e": 0.0, "rev": 0.0})
    (ep,) = tr.finish(1.0)
    assert ep.outcome == "tripped" and ep.acted == "booster-e"
    assert "booster-e" not in ep.margins and ep.margin_s is None


def test_two_rail_bridge_counts_what_the_device_carries():
    # Hand-derived: 20 A over each rail of a joint gapped on both rails; the
    # booster feeding both sides carries their sum, 40 A, over its 35 A level
    # (a reverser sensing at 25 A sees one rail, 20 A). A per-rail comparison
    # with the lowest threshold (25 A) saw no short; the booster's does.
    tr = _tracker(sense_threshold_a={"rev": 25.0, "booster-e": 35.0})
    ev = tr.solution(1.0, {GAP: 40.0}, {"booster-e": 40.0, "rev": 20.0},
                     rail_i_a={GAP: (20.0, 20.0)})
    assert [e.as_tuple() for e in ev] == [(1.0, "short")]
    tr.solution(1.78, {GAP: 0.0}, {"booster-e": 0.0, "rev": 0.0})
    (ep,) = tr.finish(2.0)
    assert ep.peak_a == 40.0
    assert ep.paths_a == {"j3 (left rail)": 20.0, "j3 (right rail)": 20.0}
    assert (ep.start_s, ep.end_s, ep.outcome) == (1.0, 1.78, "clean")
    # 40 A for 0.78 s: I2t = 1600 x 0.78 = 1248 A2s
    assert ep.i2t_a2s == pytest.approx(1248.0, rel=1e-12)


def test_balancing_current_beside_an_overloaded_booster_is_no_short():
    # An in-phase bridge carries 0.6 A per rail (1.2 A) beside a booster at 7 A,
    # over its 5 A level; without the bridge it would carry 7 - 1.2 = 5.8 A, still
    # over: the bridge is not what puts it over its level, so it is no short.
    tr = _tracker()
    assert not tr.solution(0.0, {GAP: 1.2}, {"booster-e": 7.0, "rev": 0.6},
                           rail_i_a={GAP: (0.6, 0.6)})
    assert [ep.kind for ep in tr.finish(0.001)] == []


def test_below_threshold_is_no_episode():
    tr = _tracker()
    assert not tr.solution(0.0, {GAP: 1.2}, {"booster-e": 1.2, "rev": 1.2})
    assert tr.finish(1.0) == []


def test_i2t_is_exact_over_piecewise_constant_currents():
    # 10 A for 2 ms, then 20 A for 1 ms: 100 x 0.002 + 400 x 0.001 = 0.6 A2s;
    # the peak is 20 A; the current stops at 3 ms.
    tr = _tracker()
    tr.solution(0.0, {GAP: 10.0}, {"booster-e": 10.0, "rev": 10.0})
    tr.solution(2e-3, {GAP: 20.0}, {"booster-e": 20.0, "rev": 20.0})
    tr.solution(3e-3, {GAP: 0.0}, {"booster-e": 0.0, "rev": 0.0})
    (ep,) = tr.finish(1.0)
    assert ep.i2t_a2s == pytest.approx(0.6, rel=1e-12)
    assert (ep.peak_a, ep.end_s) == (20.0, 3e-3)


def test_short_moving_between_ends_keeps_one_unresolved_episode():
    # A train longer than its reversing section: each swap moves the short to
    # the other end; the episode stays open through the swaps, then a trip.
    tr = _tracker()
    tr.solution(0.0, {GAP: 10.0}, {"booster-e": 10.0, "rev": 10.0})
    for k, t in enumerate((1e-3, 2.6e-3, 4.2e-3)):
        tr.device_event(Event(t - 0.5e-3, "rev", "detect"))
        tr.interrupt(t, "rev")
        tr.device_event(Event(t, "rev", "swapped"))
        paths = {GAP: 0.0, GAP2: 10.0} if k % 2 == 0 else {GAP: 10.0, GAP2: 0.0}
        assert tr.solution(t, paths, {"booster-w": paths[GAP2]}) == []
    tr.device_event(Event(5e-3, "rev", "trip"))
    tr.solution(5e-3, {GAP: 0.0, GAP2: 0.0}, {"booster-w": 0.0, "booster-e": 0.0, "rev": 0.0})
    (ep,) = tr.finish(1.0)
    assert ep.outcome == "unresolved" and ep.swaps == 3
    assert ep.acted == "rev" and ep.acted_s == 5e-3
    assert ep.devices == ["rev", "booster-w", "booster-e", "psu"]
    assert ep.paths_a == {"j3": 10.0, "j4": 10.0}     # (no per-rail figures fed in)
    assert "RF-RUN-002" in {f.code for f in verdict_findings([ep], 0.0)}


def test_still_flowing_at_end_is_unresolved():
    tr = _tracker()
    fault = ShortPath(key="f0", group=("fault", 0), kind="fault", where="main@2 m",
                      devices=("booster-e", "psu"))
    tr.solution(1.0, {fault: 6.0}, {"booster-e": 6.0})
    (ep,) = tr.finish(5.0)
    assert ep.outcome == "unresolved" and ep.end_s is None and ep.kind == "fault"
    assert ep.paths_a == {"main@2 m": 6.0}
    # 6 A from 1 s to the end at 5 s: I2t = 36 x 4 = 144 A2s
    assert ep.i2t_a2s == pytest.approx(144.0, rel=1e-12)
    assert decide(verdict_findings([ep], 0.0)) == "fail"


def test_overload_trip_without_short_path():
    tr = EpisodeTracker(lambda *a: None, lambda d: None, trip_threshold_a={"b": 5.0},
                        allow_s={"b": 0.004})
    tr.solution(1.0, {}, {"b": 6.0})
    tr.device_event(Event(1.004, "b", "trip"))
    tr.solution(1.004, {}, {"b": 0.0})
    (ep,) = tr.finish(2.0)
    assert (ep.kind, ep.outcome, ep.acted, ep.start_s, ep.end_s) == \
        ("overload", "tripped", "b", 1.0, 1.004)
    # 6 A for 4 ms: 36 x 0.004 = 0.144 A2s; a trip within its delay is no overrun
    assert ep.i2t_a2s == pytest.approx(0.144, rel=1e-9)
    assert ep.overruns == [] and overrun_findings([ep]) == []


def test_supply_off_names_the_supply():
    # hiccup: the supply switches off first, then both boosters drop out on its
    # collapsed voltage, at the same instant: the supply acted (tripped)
    tr = _tracker()
    tr.solution(0.0, {GAP: 12.0}, {"booster-e": 12.0, "psu": 12.0})
    tr.device_event(Event(1e-3, "psu", "off"))
    tr.device_event(Event(1e-3, "booster-e", "dropout"))
    tr.solution(1e-3, {GAP: 0.0}, {"booster-e": 0.0, "psu": 0.0})
    (ep,) = tr.finish(1.0)
    assert ep.outcome == "tripped" and ep.acted == "psu" and ep.acted_s == 1e-3
    assert ep.tripped == {"psu": 1e-3, "booster-e": 1e-3}


def test_dropout_at_the_supply_limit_names_the_supply():
    # the supply holds its 6 A limit (constant current): its voltage collapses
    # and the booster drops out on undervoltage. Outcome dropout, acted = psu.
    tr = _tracker(sense_threshold_a={"rev": 10.0, "booster-e": 8.0, "psu": 6.0})
    ev = tr.solution(2.0, {GAP: 6.0}, {"booster-e": 6.0, "psu": 6.0, "rev": 3.0},
                     rail_i_a={GAP: (3.0, 3.0)})
    assert [e.as_tuple() for e in ev] == [(2.0, "short")]    # the supply is at its limit
    tr.device_event(Event(2.0, "booster-e", "dropout"))
    tr.solution(2.0, {GAP: 0.0}, {"booster-e": 0.0, "psu": 0.0, "rev": 0.0})
    (ep,) = tr.finish(3.0)
    assert (ep.outcome, ep.acted, ep.acted_s) == ("dropout", "psu", 2.0)
    assert ep.tripped == {"booster-e": 2.0}
    assert {f.code for f in verdict_findings([ep], 0.0)} == {"RF-RUN-001"}


def test_dropout_without_a_short_is_an_overload_of_the_supply():
    tr = _tracker()
    tr.solution(0.0, {}, {"booster-e": 4.0, "booster-w": 4.0, "psu": 8.0})
    tr.device_event(Event(0.5, "booster-e", "dropout"))
    tr.device_event(Event(0.5, "booster-w", "dropout"))
    (ep,) = tr.finish(1.0)
    assert (ep.kind, ep.where, ep.outcome, ep.acted) == ("overload", "psu", "dropout", "psu")
    assert ep.tripped == {"booster-e": 0.5, "booster-w": 0.5}


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


def test_let_through_without_a_trip_is_an_overload_and_an_error():
    # Booster at 8 A over its 5 A level for 10 ms with a 3 ms delay, and no
    # trip (its sensor clamps below the level): an overload episode from 1 s to
    # 1.01 s and RF-RUN-021 with I2t = 64 x 0.01 = 0.64 A2s.
    tr = _tracker()
    tr.solution(1.0, {}, {"booster-e": 8.0})
    tr.solution(1.01, {}, {"booster-e": 0.2})
    (ep,) = tr.finish(2.0)
    assert (ep.kind, ep.where, ep.outcome, ep.start_s, ep.end_s) == \
        ("overload", "booster-e", "clean", 1.0, 1.01)
    assert ep.i2t_a2s == pytest.approx(0.64, rel=1e-9)
    (f,) = overrun_findings([ep])
    assert (f.severity, f.code, f.where) == ("error", "RF-RUN-021", "booster-e")
    assert "0.64 A2s" in f.message


def test_let_through_before_a_late_trip_is_a_warning():
    # inverse time: 6 A over the 5 A level from 0 s, trip at 2 s (delay 3 ms):
    # an overload episode, tripped, with RF-RUN-020; I2t = 36 x 2 = 72 A2s.
    tr = _tracker()
    tr.solution(0.0, {}, {"booster-e": 6.0})
    tr.device_event(Event(2.0, "booster-e", "trip"))
    tr.solution(2.0, {}, {"booster-e": 0.0})
    (ep,) = tr.finish(3.0)
    assert (ep.kind, ep.outcome, ep.acted, ep.start_s) == ("overload", "tripped", "booster-e",
                                                            0.0)
    assert ep.i2t_a2s == pytest.approx(72.0, rel=1e-12)
    (f,) = overrun_findings([ep])
    assert (f.severity, f.code) == ("warning", "RF-RUN-020")
    assert "72 A2s" in f.message


def test_let_through_in_a_short_belongs_to_the_short():
    # The booster carries the short's 9 A over its 5 A level for 0.5 s (its
    # delay 3 ms): the short episode holds the overrun; no overload episode.
    tr = _tracker()
    tr.solution(0.0, {GAP: 9.0}, {"booster-e": 9.0, "rev": 9.0})
    tr.solution(0.5, {GAP: 0.0}, {"booster-e": 0.0, "rev": 0.0})
    (ep,) = tr.finish(1.0)
    assert ep.kind == "gap" and ep.outcome == "clean"
    (r,) = ep.overruns
    assert (r.device, r.duration_s, r.tripped) == ("booster-e", 0.5, False)
    assert r.i2t_a2s == pytest.approx(81 * 0.5, rel=1e-12)
    assert [f.code for f in overrun_findings([ep])] == ["RF-RUN-021"]


def test_guard_marks_the_open_episode_unresolved():
    tr = _tracker()
    tr.solution(0.0, {GAP: 12.0}, {"booster-e": 12.0, "rev": 12.0})
    tr.force_unresolved(0.0, ["rev"], "zero-time oscillation at 0 s: rev")
    tr.device_event(Event(3e-3, "booster-e", "trip"))
    tr.solution(3e-3, {GAP: 0.0}, {"booster-e": 0.0, "rev": 0.0})
    (ep,) = tr.finish(1.0)
    assert ep.outcome == "unresolved" and ep.note.startswith("zero-time")
    assert ep.as_dict()["note"] == ep.note


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
                 events=[Event(0.0, "j3", "short", {"i_a": 12.0})], t_end_s=1.0,
                 stats={"event_budget": 1000})
    d = json.loads(json.dumps(res.as_dict(), allow_nan=False))
    assert d["format"] == "railfault-result/1"
    assert set(d) == {"format", "scenario", "seed", "duration_s", "verdict", "findings",
                      "episodes", "devices", "events", "headline", "t_end_s", "event_budget",
                      "stands"}
    assert set(d["episodes"][0]) == {"start_s", "end_s", "kind", "where", "train", "peak_a",
                                     "outcome", "acted", "acted_s", "margins", "margin_s",
                                     "paths_a", "devices", "tripped", "i2t_a2s"}
    assert set(d["devices"]["rev"]) == {"kind", "trips", "swaps", "restarts", "dark_s",
                                        "peak_a", "max_thermal"}
    assert d["devices"]["rev"]["peak_a"] is None     # no infinities in JSON
    assert d["events"][0] == {"t_s": 0.0, "device": "j3", "event": "short", "i_a": 12.0}
    assert d["event_budget"] == 1000 and d["headline"] == []
