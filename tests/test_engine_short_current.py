"""What a short is, and what a train's power is: the episode rules against hand values.

Each layout's header (tests/scenarios/run/) derives its figures by hand (V / R over the
circuit's resistances, delays and spans for the instants); the values are repeated
beside each check.
"""
from __future__ import annotations

from pathlib import Path
from unittest import mock

import pytest

from sim.scenario import load, loads
from sim.world import run
from sim.world.episodes import EpisodeTracker, RailFlow, ShortPath, short_currents
from sim.world.processes import TrainRun

HERE = Path(__file__).parent / "scenarios" / "run"


def _run(name, **kw):
    return run(load(HERE / f"{name}.yaml"), keep_events=True, **kw)


def _codes(res):
    return [f.code for f in res.findings]


def _bridge(group="t1", where="x.b~y.a", rails=("left", "right")):
    return ShortPath(("br", where), group, "gap", where, "t1", ("dev",), rails)


# ------------------------------------------------ the rule, on hand-made flows
def test_short_current_counts_a_series_loop_once_and_parallel_paths_twice():
    # two isolated supplies, W and E: left rail W "+" -> E "0", right rail E "+" -> W "0":
    # one loop through both bridges, 10 A through each (Kirchhoff's current law: a
    # series loop carries one current). The short current is 10 A, not 20 A.
    p = _bridge()
    per_path, per_group = short_currents({p: [RailFlow(10.0, ("+", "W"), ("0", "E")),
                                              RailFlow(10.0, ("0", "W"), ("+", "E"))]})
    assert per_path[p] == pytest.approx(10.0) and per_group["t1"] == pytest.approx(10.0)
    # one supply, both rails from "+" to "0" side by side: two parallel paths of 3 A,
    # both out of the one "+": the supply delivers 3 + 3 = 6 A
    per_path, per_group = short_currents({p: [RailFlow(3.0, ("+", "S"), ("0", "S")),
                                              RailFlow(3.0, ("0", "S"), ("+", "S"))]})
    assert per_group["t1"] == pytest.approx(6.0)


def test_in_phase_crossing_and_back_feed_carry_no_short_current():
    p = _bridge()
    # in phase: "+" to "+" and "0" to "0" (0.692 A balancing current, hiccup-once.yaml
    # header, over the 0.5 A floor): no short
    _, g = short_currents({p: [RailFlow(0.692, ("+", "S"), ("+", "S")),
                               RailFlow(0.692, ("0", "S"), ("0", "S"))]})
    assert g["t1"] == 0.0
    # a train feeding a dark district's load through its wheels: each rail from a live
    # side into a dark rail, the two dark rails joined only by the load (no fault):
    # load current, not a short
    _, g = short_currents({p: [RailFlow(0.5, ("+", "S"), ("dark", "cb", 1)),
                               RailFlow(0.5, ("0", "S"), ("dark", "cb", 0))]})
    assert g["t1"] == 0.0
    # the same dark rails joined by a fault carrying 4 A: both sides reach one dark
    # conductor, the bridge's current is short current (4 A at "+")
    f = ShortPath(("flt", 0), ("fault", 0), "fault", "y@1 m", None, ("cb",))
    _, g = short_currents({p: [RailFlow(4.0, ("+", "S"), ("dark", "cb", 1)),
                               RailFlow(4.0, ("0", "S"), ("dark", "cb", 0))],
                           f: [RailFlow(4.0, ("dark", "cb", 0), ("dark", "cb", 1))]})
    assert g["t1"] == pytest.approx(4.0) and g[("fault", 0)] == pytest.approx(4.0)


# ---------------------------------------- Critical 1: a fault under every trip level
def test_fault_under_every_trip_level_is_an_episode_from_its_onset():
    res = _run("fault-under-trip")
    (ep,) = res.episodes
    # header: R = 0.05 + 0.024857 + 0.04 + 0.020531 + 0.202 + 4 = 4.337387 ohm
    i_a = 15.0 / 4.337387                                    # 3.4583 A < 5 A trip
    assert (ep.kind, ep.start_s, ep.end_s, ep.outcome) == ("fault", 1.0, None, "unresolved")
    assert ep.peak_a == pytest.approx(i_a, rel=1e-4)
    assert ep.i2t_a2s == pytest.approx(i_a ** 2 * (5.0 - 1.0), rel=1e-4)   # 47.84 A2s
    assert ep.tripped == {} and res.devices["north"].trips == 0
    assert "RF-RUN-005" in _codes(res) and res.verdict == "fail"
    # stopped at 1.5 s, 0.5 s after the onset: still flowing, 3.4583^2 x 0.5 = 5.980 A2s
    part = _run("fault-under-trip", until_s=1.5)
    (ep,) = part.episodes
    assert ep.end_s is None and ep.i2t_a2s == pytest.approx(i_a ** 2 * 0.5, rel=1e-4)
    assert part.verdict == "fail"


# -------------------------------- Critical 3: one series path, the supply's limit
def test_two_rail_short_through_two_supplies_is_one_series_loop():
    res = _run("two-supplies")
    (ep,) = res.episodes
    i_a = 30.0 / 0.584                     # header: (16 + 14) V / 0.584 ohm = 51.37 A
    assert (ep.kind, ep.start_s, ep.outcome, ep.acted) == ("gap", 2.6, "tripped", "east")
    assert ep.peak_a == pytest.approx(i_a, rel=1e-6)          # not 2 x 51.37 = 102.7 A
    assert ep.paths_a == pytest.approx({"w.b~e.a (left rail)": i_a,
                                        "w.b~e.a (right rail)": i_a}, rel=1e-6)
    assert ep.end_s == pytest.approx(2.603, abs=1e-9)         # 2.6 s + east's 3 ms
    assert ep.i2t_a2s == pytest.approx(i_a ** 2 * 0.003, rel=1e-6)     # 7.917 A2s


def test_short_behind_a_limited_supply_peaks_at_its_limit():
    # two-rail.yaml with its supply limited at 6 A (constant current): the bridge's two
    # rails are parallel paths out of the one supply, 3 A each; the short current is
    # what the supply delivers, 6 A (it was 12 A, the sum of the two rails counted at
    # both ends). east then drops out (supply collapsed under its 7 V), back 0.1 s later.
    text = (HERE / "two-rail.yaml").read_text().replace(
        "psu: {voltage: 16 V, resistance: 0.05 ohm}",
        "psu: {voltage: 16 V, resistance: 0.05 ohm, current_limit: 6 A, "
        "on_limit: constant-current}")
    res = run(loads(text))
    assert res.episodes and {e.outcome for e in res.episodes} == {"dropout"}
    for ep in res.episodes:
        assert ep.peak_a == pytest.approx(6.0, rel=1e-9)
        assert ep.paths_a == pytest.approx({"main.b~rev-sec.a (left rail)": 3.0,
                                            "main.b~rev-sec.a (right rail)": 3.0}, rel=1e-9)


# ------------------------------------------ Low: end_s when the current stopped
def test_episode_ends_at_the_swap_not_at_the_reclose():
    # two-rail.yaml with rev sensing at 30 A (it sees one rail, 35.40 A, header) and a
    # 0.2 ms dead time: short from 2.6 s, detected 0.5 ms later, swapped after its
    # 1 ms swap time at 2.6 + 0.0005 + 0.001 = 2.6015 s; it closes again 0.2 ms later
    # (2.6017 s) onto rails now in phase. The current stopped at 2.6015 s.
    text = (HERE / "two-rail.yaml").read_text().replace(
        "sense: {above: 40 A, after: 0.5 ms}", "sense: {above: 30 A, after: 0.5 ms}").replace(
        "dead_time: 0 ms", "dead_time: 0.2 ms")
    res = run(loads(text), keep_events=True)
    (ep,) = res.episodes
    assert (ep.outcome, ep.acted) == ("swapped", "rev")
    assert ep.end_s == pytest.approx(2.6015, abs=1e-9)
    assert res.event_log({"reclose"}, device="rev") == [(pytest.approx(2.6017, abs=1e-9),
                                                         "reclose")]
    assert ep.i2t_a2s == pytest.approx((16.0 / 0.226) ** 2 * 0.0015, rel=1e-6)  # 7.518 A2s


# ------------------------------- High 9: a hiccup once, an in-phase car no short
def test_supply_hiccup_is_one_episode_and_an_in_phase_car_no_short():
    res = _run("hiccup-once")
    # header: the fault draws 15 V / 0.142 ohm = 105.6 A > 6 A: psu holds 6 A, off
    # 2 ms later (1.002 s); north and south drop out 5 ms after 1 s (1.005 s)
    (ep,) = res.episodes
    assert (ep.kind, ep.where, ep.train) == ("fault", "n@1 m", None)
    assert (ep.start_s, ep.end_s) == (1.0, pytest.approx(1.002, abs=1e-9))
    assert ep.peak_a == pytest.approx(6.0, rel=1e-9)
    assert (ep.outcome, ep.acted) == ("tripped", "psu")
    assert ep.tripped == pytest.approx({"psu": 1.002, "north": 1.005, "south": 1.005},
                                       abs=1e-9)
    assert ep.i2t_a2s == pytest.approx(6.0 ** 2 * 0.002, rel=1e-6)      # 0.072 A2s
    # no gap short of train "parked" (its 0.692 A is balancing current, in phase) and
    # no second overload/dropout episode of psu: one row per hiccup
    assert not [e for e in res.episodes if e.kind != "fault"]
    assert res.event_log({"off"}, device="psu") == [(pytest.approx(1.002), "off")]


def test_in_phase_car_carries_balancing_current_only():
    # hiccup-once.yaml header: at 1 s the car carries south's share of the 6 A into the
    # fault over each rail, 6 A x 0.042 / (0.042 + 0.322) = 0.692 A (over the 0.5 A
    # floor), and the rule counts none of it as short current (n and s in phase)
    seen = []
    real = EpisodeTracker.solution

    def spy(self, t_s, short_i_a, changed, close=True, rail_i_a=None, group_i_a=None):
        seen.append((t_s, {p.where: r for p, r in (rail_i_a or {}).items()},
                     dict(group_i_a or {})))
        return real(self, t_s, short_i_a, changed, close=close, rail_i_a=rail_i_a,
                    group_i_a=group_i_a)

    with mock.patch.object(EpisodeTracker, "solution", spy):
        run(load(HERE / "hiccup-once.yaml"), until_s=1.001)
    (rails, groups), = [(r, g) for t, r, g in seen if t == pytest.approx(1.0)][-1:]
    assert rails["n.b~s.a"] == pytest.approx((6 * 0.042 / 0.364,) * 2, rel=1e-6)
    assert groups[("train", "parked")] == 0.0
    assert groups[("fault", 0)] == pytest.approx(6.0, rel=1e-9)


# ----------------------------------------- Critical 2: a train's power across a gap
def test_locomotive_across_a_gap_keeps_power_from_the_live_side():
    res = _run("stall-across-gap")
    (ep,) = res.episodes
    # header: first pickup axle over the gap at (2.02 - 1.5) / 0.2 = 2.6 s; psu holds
    # 4 A (2 A over each rail, parallel paths); y-cb (2 A > 1.5 A) trips 1 ms later
    assert (ep.kind, ep.start_s, ep.outcome, ep.acted) == ("gap", 2.6, "tripped", "y-cb")
    # the short current ends with y-cb's trip, though the loco bridges to 3.401 s:
    # what it carries after is its own load fed back into y, not a short
    assert ep.end_s == pytest.approx(2.601, abs=1e-9)
    # 4 A from the supply less the loco's draw at the collapsed voltage (< 0.05 A)
    assert 3.95 < ep.peak_a <= 4.0 + 1e-9
    # stopped on the gap at 2.6 s, on again when y-cb opened (load at 15.787 V of
    # 16 V through its pickups on x, header), not stalled for the rest of the run
    assert res.event_log({"stop", "go"}, device="t1") == [
        (pytest.approx(2.6), "stop"), (pytest.approx(2.601, abs=1e-9), "go")]
    (st,) = res.stands
    assert (st.train, st.start_s, st.joints) == ("t1", pytest.approx(2.6), ("y.b~x.a",))
    assert st.end_s == pytest.approx(2.601, abs=1e-9)
    assert "RF-RUN-027" not in _codes(res)          # 1 ms: shorter than 1 s (our choice)


def test_locomotive_load_across_a_gap_is_fed_through_its_pickups():
    # the voltage its power check reads once y-cb has opened (2.601 s), header of
    # stall-across-gap.yaml: load 16 V / 0.5 A = 32 ohm in series with 0.432 ohm,
    # 16 V x 32 / 32.432 = 15.787 V (its draw point is in y, whose breaker is open)
    seen = []
    real = TrainRun.check_power

    def spy(self, t_s, sol):
        seen.append((t_s, dict(sol.load_v_v)))
        return real(self, t_s, sol)

    with mock.patch.object(TrainRun, "check_power", spy):
        run(load(HERE / "stall-across-gap.yaml"), until_s=2.7)
    after = [v for t, v in seen if t >= 2.601 - 1e-9]
    assert after and abs(after[-1][("ld", "t1", 0)]) == pytest.approx(16.0 * 32 / 32.432,
                                                                       rel=1e-4)


def test_train_standing_on_a_gap_to_the_end_is_reported():
    res = _run("stop-on-bridge")
    # header: stops on the bridge at 0.52 m / 0.5 m/s = 1.04 s, never goes on (its
    # booster closes again into the same short every 0.1 s): 3 - 1.04 = 1.960 s
    (st,) = res.stands
    assert (st.start_s, st.end_s, st.joints) == (pytest.approx(1.04), None,
                                                 ("main.b~rev-sec.a",))
    (f,) = [f for f in res.findings if f.code == "RF-RUN-027"]
    assert (f.severity, f.where) == ("warning", "t1")
    assert "for 1.960 s" in f.message and "still standing" in f.message
    d = res.as_dict()
    assert d["stands"] == [{"train": "t1", "start_s": pytest.approx(1.04), "end_s": None,
                            "joints": ["main.b~rev-sec.a"]}]

