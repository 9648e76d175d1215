"""Whole-engine runs of tiny scenarios (tests/scenarios/run/*.yaml).

Every check value is derived by hand in the scenario file's header or in the
comment beside the assertion; the thermal times use the closed form of
IEC 60255-149, the restart waits the doubling-to-a-cap shape of RFC 6298
section 5 (common practice for booster back-off).
"""
import json
import math
from pathlib import Path

import pytest

from sim.scenario import load
from sim.world import run
from sim.world.render import render_text

HERE = Path(__file__).parent / "scenarios" / "run"
KINDS = {"short", "cleared", "swap_start", "swapped", "trip", "restart", "reclose",
         "thermal_trip", "thermal_resume", "off", "on", "dropout", "fault", "fault_end"}


def _run(name, **kw):
    return run(load(HERE / f"{name}.yaml"), keep_events=True, **kw)


def _log(res, kinds=KINDS):
    return [(round(t, 9), e) for t, e in res.event_log(kinds)]


def test_reverser_first_margin_plus_1_5_ms():
    res = _run("race-plus")
    # bridge at 0.75 s; swap_start 0.5 ms later; swapped (short interrupted) 1 ms later
    assert _log(res) == [(0.75, "short"), (0.7505, "swap_start"), (0.7515, "swapped"),
                         (0.7515, "cleared")]
    (ep,) = res.episodes
    assert (ep.kind, ep.outcome, ep.acted, ep.train) == ("gap", "swapped", "rev", "t1")
    assert ep.margin_s == pytest.approx(+1.5e-3, abs=1e-9)      # 3 ms - 1.5 ms
    assert set(ep.margins) == {"east"}
    assert res.verdict == "pass"
    assert res.devices["east"].trips == 0 and res.devices["rev"].swaps == 1


def test_booster_first_margin_minus_1_5_ms():
    res = _run("race-minus")
    # the booster trips at 3 ms, before the 0.5 + 4 ms swap: margin 3 - 4.5 = -1.5 ms
    assert _log(res) == [(0.75, "short"), (0.7505, "swap_start"), (0.753, "trip"),
                         (0.753, "cleared"), (0.7545, "swapped")]
    (ep,) = res.episodes
    assert (ep.outcome, ep.acted) == ("tripped", "east")
    assert ep.acted_s == pytest.approx(0.753, abs=1e-12)
    assert ep.margin_s == pytest.approx(-1.5e-3, abs=1e-9)
    assert res.verdict == "fail"
    # one cause (the reverser too slow, RF-RUN-036); the trip at the gap follows from it
    assert {f.code for f in res.findings} >= {"RF-RUN-036", "RF-RUN-001"}
    assert res.devices["east"].dark_s == pytest.approx(2.0 - 0.753, abs=1e-9)


def test_tie_goes_to_the_device_nearest_the_track():
    # sense 0.5 ms + swap 2.5 ms = 3 ms = the booster's delay: both fall on
    # 0.753 s. The documented tie-break lets the reverser act first; the
    # booster then sees the cleared current and does not trip: margin 0.
    text = (HERE / "race-plus.yaml").read_text().replace("swap_time: 1 ms", "swap_time: 2.5 ms")
    from sim.scenario import loads
    res = run(loads(text), keep_events=True)
    (ep,) = res.episodes
    assert ep.outcome == "swapped" and res.devices["east"].trips == 0
    assert ep.margin_s == pytest.approx(0.0, abs=1e-9)


def test_train_too_long_for_its_reversing_section():
    res = _run("long-train")
    (ep,) = res.episodes
    assert ep.outcome == "unresolved" and ep.swaps == 3
    assert (ep.acted, round(ep.acted_s, 9)) == ("east", 2.608)
    assert ep.margin_s is None                     # swaps that did not clear: no margin
    swaps = [round(t, 9) for t, e in res.event_log({"swapped"}, device="rev")]
    assert swaps[:3] == [2.6015, 2.604, 2.6065]    # sense 0.5 ms, swap 1 ms, hold-off 1 ms
    assert res.verdict == "fail"
    assert "RF-RUN-002" in {f.code for f in res.findings}


def test_bridge_lasts_span_over_speed():
    # a reverser too slow to act (sense after 1 s) and a booster that never
    # trips: the episode is the bridge itself, 0.25 m / 0.5 m/s = 0.5 s.
    text = (HERE / "race-plus.yaml").read_text().replace(
        "after: 0.5 ms}", "after: 1 s}").replace("above: 5 A, after: 3 ms", "above: 500 A, after: 3 ms")
    from sim.scenario import loads
    res = run(loads(text), keep_events=True)
    (ep,) = res.episodes
    assert ep.outcome == "clean" and ep.acted is None
    assert ep.end_s - ep.start_s == pytest.approx(0.25 / 0.5, abs=1e-12)
    assert ep.start_s == pytest.approx(0.75, abs=1e-12)


def test_backoff_waits_seen_as_restart_times():
    res = _run("backoff")
    trips = [t for t, _ in res.event_log({"trip"}, device="east")]
    restarts = [t for t, _ in res.event_log({"restart"}, device="east")]
    waits = [round(r - t, 9) for t, r in zip(trips, restarts)]
    assert waits == [0.5, 1.0, 2.0, 4.0, 8.0, 10.0, 10.0]       # RFC 6298 s. 5 shape
    # each try trips again 2 ms after the restart (the short stays)
    assert [round(t2 - r, 9) for r, t2 in zip(restarts, trips[1:])] == [0.002] * 7
    assert trips[0] == pytest.approx(1.002, abs=1e-12)
    d = res.devices["east"]
    assert (d.trips, d.restarts) == (8, 7)
    assert all(ep.kind == "fault" and ep.outcome == "tripped" for ep in res.episodes)
    assert len(res.episodes) == 8


def test_thermal_trip_and_resume_follow_iec_60255_149():
    res = _run("thermal")
    i_a = res.devices["east"].peak_a           # the overload current the replica saw
    x = (i_a / 2.0) ** 2                       # square law, rated 2 A
    tau = 1.0
    t_trip = 0.5 + tau * math.log(x / (x - 1.2))                  # cold curve
    t_res = t_trip + tau * math.log(1.2 / 0.6)                     # cooling at I = 0
    t_trip2 = t_res + tau * math.log((x - 0.6) / (x - 1.2))        # hot start at 0.6
    got = [t for t, e in res.event_log({"thermal_trip", "thermal_resume"})]
    assert got[:3] == pytest.approx([t_trip, t_res, t_trip2], abs=1e-9)
    assert res.devices["east"].max_thermal == pytest.approx(1.2, abs=1e-6)
    # the 4 ohm fault is a short by definition (under the 10 A trip): an episode from
    # its onset while east conducts, each ended by a thermal trip, the last by the
    # fault's end at 0.5 + 2 = 2.5 s, east having resumed at t_trip2 + tau ln 2
    t_res2 = t_trip2 + tau * math.log(1.2 / 0.6)
    assert [(ep.kind, ep.outcome) for ep in res.episodes] == [
        ("fault", "tripped"), ("fault", "tripped"), ("fault", "clean")]
    # (crossings on the 1 ns grid, three in a row: within 2 ns)
    assert [ep.start_s for ep in res.episodes] == pytest.approx([0.5, t_res, t_res2], abs=2e-9)
    assert [ep.end_s for ep in res.episodes] == pytest.approx([t_trip, t_trip2, 2.5], abs=2e-9)


def test_shared_supply_collapse_takes_both_boosters_down():
    res = _run("hiccup")
    log = _log(res, {"off", "on", "dropout", "reclose", "fault_end"})
    assert log == [(1.0, "off"), (1.0, "dropout"), (1.0, "dropout"), (1.5, "on"),
                   (1.6, "reclose"), (1.6, "reclose"), (1.6, "off"), (1.6, "dropout"),
                   (1.6, "dropout"), (2.0, "fault_end"), (2.1, "on"), (2.2, "reclose"),
                   (2.2, "reclose")]
    assert res.devices["psu"].trips == 2
    assert res.devices["south"].dark_s == pytest.approx(0.6 + 0.6, abs=1e-9)


def test_bounded_summary_without_events():
    res = run(load(HERE / "backoff.yaml"))
    assert res.events is None
    assert res.summary.count("east", "restart") == 7
    assert len(res.summary.entries) <= 12
    with pytest.raises(ValueError):
        res.event_log()


def test_until_stops_early():
    res = run(load(HERE / "backoff.yaml"), until_s=5.0)
    assert res.t_end_s == 5.0
    assert res.devices["east"].restarts == 3        # at 1.502, 2.504, 4.506 s


def test_json_and_text_output():
    res = _run("race-minus")
    d = json.loads(json.dumps(res.as_dict(), allow_nan=False))
    assert d["format"] == "railfault-result/1" and d["verdict"] == "fail"
    assert d["episodes"][0]["margin_s"] == pytest.approx(-1.5e-3, abs=1e-9)
    assert d["devices"]["east"]["trips"] == 1
    assert d["events"][0]["event"] == "short"
    text = render_text(res)
    assert "Verdict: FAIL" in text and "-1.500 ms" in text and "TRIPPED" in text
    assert "A" in text and " s" in text


def test_determinism_same_seed_same_result():
    a = _run("long-train").as_dict()
    b = _run("long-train").as_dict()
    assert a == b


def test_two_reversers_fight():
    res = _run("fight")
    (ep,) = res.episodes                      # one episode through all the swaps
    assert ep.outcome == "unresolved" and (ep.acted, round(ep.acted_s, 9)) == ("east", 0.76)
    for dev in ("ra", "rb"):
        swaps = [round(t, 9) for t, _ in res.event_log({"swapped"}, device=dev)]
        assert swaps == [0.7515, 0.754, 0.7565, 0.759]     # header of fight.yaml
    assert res.verdict == "fail"


def test_restart_fails_on_inrush_and_trains_stop_and_go():
    res = _run("inrush")
    trips = [round(t, 9) for t, _ in res.event_log({"trip"}, device="yard")]
    # 1.0005 s on the short; then 0.5 ms after each retry (0.5 s after each trip)
    assert trips == [1.0005, 1.501, 2.0015, 2.502]
    assert res.event_log({"give_up"}, device="yard") == [(pytest.approx(2.502), "give_up")]
    pulses = [e for e in res.events if e.event == "inrush"]
    assert len(pulses) == 9                                  # 3 locomotives x 3 retries
    assert pulses[0].data["i_peak_a"] == pytest.approx(16.0 / 10.0)      # V / R
    assert pulses[0].data["tau_s"] == pytest.approx(10.0 * 5e-3)         # R C
    assert sum(f.count for f in res.findings if f.code == "RF-RUN-007") == 3   # one line
    # the short at 1 s takes the rails' voltage: s1 runs on its 0.5 s keep-alive,
    # stops at 1.5 s and goes on when the breaker restarts at 1.5005 s
    stops = res.event_log({"stop", "go"}, device="s1")
    assert [(round(t, 9), e) for t, e in stops][:2] == [(1.5, "stop"), (1.5005, "go")]


def test_constant_current_limit_holds_the_current():
    res = _run("limit")
    assert _log(res, {"limit", "dropout", "off"}) == [(1.0, "limit"), (2.0, "limit")]
    flags = [e.data["active"] for e in res.events if e.event == "limit"]
    assert flags == [True, False]
    # while limiting, the overloaded booster carries exactly the 6 A limit
    assert res.devices["north"].peak_a == pytest.approx(6.0, rel=1e-6)
    assert res.devices["north"].dark_s == 0.0 and res.devices["south"].dark_s == 0.0


def test_operator_reset_and_open_feeder():
    res = _run("reset")
    assert _log(res, {"trip", "restart", "reset", "open", "stop", "go"}) == [
        (1.002, "trip"), (1.502, "stop"), (3.0, "reset"), (3.0, "go"), (4.0, "open"),
        (4.5, "stop")]                       # manual restart: nothing until the reset
    # the reset closes east on a discharged train: its keep-alive charges,
    # C = 0.4 A x 0.5 s / (16 V - 7 V) (sim.circuit.inrush estimate), tau = 10 ohm x C
    (pulse,) = [e for e in res.events if e.event == "inrush"]
    assert pulse.data["tau_s"] == pytest.approx(10.0 * 0.4 * 0.5 / 9.0)
    assert res.devices["east"].dark_s == pytest.approx(3.0 - 1.002, abs=1e-9)
