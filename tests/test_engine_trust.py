"""A run you can trust (issue 8, the engine's part): whole-engine runs of the
scenarios in tests/scenarios/run/ that failed before these rules.

Every figure is derived by hand in the scenario file's header (V / R over the
circuit's resistances, delays and spans for times) and repeated beside the
assertion; the inverse-time delay uses the IEC 60255-151 constants; one
current is compared with ngspice on the engine's own circuit.
"""
from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path
from unittest import mock

import pytest

from sim.circuit.incremental import SingularUpdate
from sim.circuit.network import Circuit
from sim.model import frozen_map
from sim.scenario import load
from sim.timebase import snap_s
from sim.world import run
from sim.world.engine import EVENT_BUDGET, World

HERE = Path(__file__).parent / "scenarios" / "run"


def _run(name, **kw):
    return run(load(HERE / f"{name}.yaml"), keep_events=True, **kw)


def _codes(res):
    return [f.code for f in res.findings]


# ------------------------------------------------------- 1. what a device carries
def test_short_over_both_rails_is_counted_by_what_the_booster_carries():
    res = _run("two-rail")
    (ep,) = res.episodes
    # bridge from 2.6 s (0.52 m / 0.2 m/s) for 0.16 m / 0.2 m/s = 0.8 s
    assert (ep.kind, ep.start_s, ep.end_s, ep.outcome) == ("gap", 2.6, pytest.approx(3.4), "clean")
    i_a = 16.0 / (0.05 + 0.1 + 0.152 / 2)           # 70.80 A, header of two-rail.yaml
    assert ep.peak_a == pytest.approx(i_a, rel=1e-9)
    assert ep.paths_a == pytest.approx({"main.b~rev-sec.a (left rail)": i_a / 2,
                                        "main.b~rev-sec.a (right rail)": i_a / 2}, rel=1e-9)
    assert ep.devices == ["rev", "east", "psu"] and ep.tripped == {}
    assert ep.i2t_a2s == pytest.approx(i_a ** 2 * 0.8, rel=1e-9)      # 4010 A2s
    # east over its 60 A level for 0.8 s (> its 3 ms delay) without tripping
    (f,) = [f for f in res.findings if f.code == "RF-RUN-021"]
    assert f.where == "east" and "4010 A2s" in f.message and f.severity == "error"
    assert res.verdict == "fail" and res.devices["east"].trips == 0


def test_inverse_time_trip_reports_the_let_through():
    res = _run("slow-trip")
    (ep,) = res.episodes
    # 16 V / 1.6 ohm = 10 A = 2 x setting; IEC very inverse TMS 0.1: 1.35 s
    assert ep.peak_a == pytest.approx(10.0, rel=1e-9)
    assert (ep.outcome, ep.acted) == ("tripped", "east")
    assert ep.acted_s == pytest.approx(1.0 + 0.1 * 13.5 / (2.0 - 1.0), abs=1e-9)
    assert ep.i2t_a2s == pytest.approx(10.0 ** 2 * 1.35, rel=1e-9)     # 135 A2s
    (r,) = ep.overruns
    assert (r.device, r.tripped) == ("east", True)
    assert r.duration_s == pytest.approx(1.35, abs=1e-9)
    (f,) = [f for f in res.findings if f.code == "RF-RUN-020"]
    assert f.severity == "warning" and "135 A2s" in f.message


# ---------------------------------------------------------- 2. outcomes and margins
def test_brownout_at_the_supply_limit_is_a_dropout_naming_the_supply():
    res = _run("brownout")
    eps = res.episodes
    assert [(e.start_s, e.end_s, e.outcome, e.acted) for e in eps] == [
        (1.0, 1.02, "dropout", "psu"), (1.12, 1.14, "dropout", "psu"),
        (1.24, 1.25, "clean", None)]
    assert all(e.peak_a == pytest.approx(5.0, rel=1e-9) for e in eps)    # the 5 A limit
    assert eps[0].tripped == {"east": 1.02}
    assert eps[0].i2t_a2s == pytest.approx(5.0 ** 2 * 0.02, rel=1e-9)   # 0.5 A2s
    assert eps[2].i2t_a2s == pytest.approx(5.0 ** 2 * 0.01, rel=1e-9)   # 0.25 A2s
    assert res.devices["east"].trips == 0


def test_supply_switching_off_names_the_supply():
    res = _run("hiccup")
    # 16 V / (0.05 + 0.04 + 0.002 + 2) ohm = 7.648 A over the 6 A limit: off at once
    first = res.episodes[0]
    assert (first.kind, first.outcome, first.acted, first.acted_s) == \
        ("fault", "tripped", "psu", 1.0)
    assert first.peak_a == pytest.approx(16.0 / 2.092, rel=1e-9)
    # south is on the same supply: its dropout belongs to this episode
    assert first.tripped == {"psu": 1.0, "north": 1.0, "south": 1.0}
    assert [e.kind for e in res.episodes] == ["fault", "fault"]          # at 1 s and 1.6 s


def test_no_positive_margin_against_a_booster_that_tripped():
    res = _run("one-swap")
    (ep,) = res.episodes
    # swap at 2.6015 s moves the short; east trips 8 ms after the onset, 2.608 s
    assert (ep.outcome, ep.acted, ep.acted_s) == ("tripped", "east", pytest.approx(2.608))
    assert ep.swaps == 1 and ep.t_cleared_s == pytest.approx(2.6015, abs=1e-9)
    assert ep.margins == {} and ep.margin_s is None          # not +6.5 ms
    assert ep.tripped == {"east": pytest.approx(2.608)}


# ---------------------------------------------------------- 3. every run ends
@pytest.mark.parametrize("name,onset_s,n", [("stop-on-bridge", 1.04, 20),
                                            ("lighted-long", 3.04, 50)])
def test_locomotive_without_keep_alive_stands_on_its_bridge(name, onset_s, n):
    res = _run(name)
    # the short at the onset (header); east drops out at once, closes again every
    # 0.1 s (its return delay) into the same short, to the end of the run
    assert [e.start_s for e in res.episodes] == pytest.approx(
        [onset_s + 0.1 * k for k in range(n)], abs=1e-9)
    assert {(e.outcome, e.acted) for e in res.episodes} == {("dropout", "psu")}
    assert res.event_log({"stop", "go"}, device="t1") == [(pytest.approx(onset_s), "stop")]
    assert res.devices["rev"].swaps == 0


def test_zero_time_reverser_is_held_and_reported():
    res = _run("zero-times")
    (ep,) = res.episodes
    assert ep.outcome == "unresolved" and ep.note.startswith("zero-time oscillation at 2.6 s")
    assert (ep.acted, ep.acted_s) == ("east", pytest.approx(2.608))    # 8 ms after 2.6 s
    (f,) = [f for f in res.findings if f.code == "RF-RUN-022"]
    assert f.where == "rev" and "2.6 s" in f.message and "rev" in f.message
    assert res.devices["rev"].swaps == 8 and res.verdict == "fail"


def test_self_reversing_booster_in_a_fight_is_held():
    res = _run("auto-fight")
    (ep,) = res.episodes
    assert ep.outcome == "unresolved" and "auto" in ep.note
    assert res.event_log({"trip"}, device="east") == [(pytest.approx(2.608), "trip")]
    assert [f.where for f in res.findings if f.code == "RF-RUN-022"] == ["auto"]


def test_zero_ohm_supply_with_a_leak_beside_the_fault():
    res = _run("zero-ohm-supply")
    # 16 V / (0.001 + 0.04 + 0.002 + 0.001 || 1e6) ohm = 363.6 A in all; the 1 mohm
    # fault carries its share 1e6 / (1e6 + 0.001) of it (the leak, 0.36 uA, is a fault
    # of its own, below any threshold); trips 3 ms later
    i_total_a = 16.0 / (0.001 + 0.04 + 0.002 + 1.0 / (1.0 / 0.001 + 1.0 / 1e6))
    i_a = i_total_a * 1e6 / (1e6 + 0.001)
    assert [e.peak_a for e in res.episodes] == pytest.approx([i_a] * 3, rel=1e-9)
    assert [e.acted_s for e in res.episodes] == pytest.approx([0.503, 1.006, 1.509], abs=1e-9)


def test_supply_of_a_denormal_resistance_is_taken_at_the_floor():
    # 5e-324 ohm (a denormal: 1/r overflows) stands for R_MIN_OHM = 1 mohm:
    # two-rail.yaml's loop with 0.001 ohm for the supply: 16 / 0.177 = 90.40 A
    scn = load(HERE / "two-rail.yaml")
    scn = replace(scn, supplies=frozen_map({"psu": replace(scn.supplies["psu"], r_ohm=5e-324)}))
    res = run(scn)
    (ep,) = res.episodes
    assert ep.peak_a == pytest.approx(16.0 / (0.001 + 0.1 + 0.076), rel=1e-9)


def test_long_line_of_short_sections_solves(ngspice):
    from sim.circuit.spice import spice_currents

    scn = load(HERE / "line-55.yaml")
    res = run(scn)
    eps = [e for e in res.episodes if e.kind == "fault"]
    assert [e.acted_s for e in eps][:3] == pytest.approx([5.003, 6.006, 7.009], abs=1e-9)
    # the fault current the engine saw, against ngspice on the same circuit at 5.001 s
    w = World(scn, until_s=5.001)
    w.run()
    ref = spice_currents(w.circuit, ngspice)
    (i_ref,) = [abs(v) for k, v in ref.items() if k[0] == "short"]
    assert eps[0].peak_a == pytest.approx(i_ref, rel=1e-6)
    assert res.stats["full_solves"] == 0


def test_singular_update_falls_back_to_a_full_solve():
    # the incremental update raising SingularUpdate (as on line-55.yaml before)
    # is answered by a full solve: the same figures as race-plus's hand derivation
    calls = {"n": 0}
    real = Circuit.update

    def flaky(self):
        calls["n"] += 1
        if calls["n"] % 3 == 0:
            raise SingularUpdate("test: an ill-conditioned update")
        return real(self)

    with mock.patch.object(Circuit, "update", flaky):
        res = _run("race-plus")
    (ep,) = res.episodes
    assert ep.margin_s == pytest.approx(1.5e-3, abs=1e-9)     # 3 ms - 1.5 ms
    assert res.stats["full_solves"] >= 1 and res.verdict == "pass"


def test_a_full_solve_that_misses_kirchhoff_is_used_with_a_finding():
    real = Circuit.solve

    def loose(self, check=True):
        sol = real(self, check=check)
        return replace(sol, kcl_ok=False, kcl_residual_a=1e-6)

    with mock.patch.object(Circuit, "update", lambda self: (_ for _ in ()).throw(
            SingularUpdate("test"))), mock.patch.object(Circuit, "solve", loose):
        res = _run("race-plus")
    assert _codes(res).count("RF-RUN-025") == 1
    assert res.stats["degraded_solves"] >= 1 and res.episodes[0].outcome == "swapped"


def test_a_circuit_that_cannot_be_solved_stops_the_run_with_a_result():
    def broken(self, check=True):
        if self.shorts or self.bridges:
            raise SingularUpdate("test: singular")
        return Circuit.__dict__["_real_solve"](self, check)

    Circuit._real_solve = Circuit.solve
    try:
        with mock.patch.object(Circuit, "update", lambda self: (_ for _ in ()).throw(
                SingularUpdate("test"))), mock.patch.object(Circuit, "solve", broken):
            res = _run("race-plus")
    finally:
        del Circuit._real_solve
    (f,) = [f for f in res.findings if f.code == "RF-RUN-026"]
    assert res.t_end_s == 0.75 and "0.75 s" in f.message      # the bridge at 0.75 s
    assert res.verdict == "fail"


# ------------------------------------------------------------- event budget
def test_event_budget_stops_a_long_run_with_an_honest_result():
    scn = replace(load(HERE / "backoff.yaml"), duration_s=1e9)
    res = run(scn, keep_events=True, event_budget=400)
    assert res.stats["event_budget"] == 400 and res.stats["engine_events"] == 400
    assert res.t_end_s < 1e9 and res.verdict == "fail"
    (f,) = [f for f in res.findings if f.code == "RF-RUN-023"]
    assert f"{res.t_end_s:.9g} s of 1e+09 s" in f.message and "400" in f.message
    assert res.as_dict()["event_budget"] == 400 and res.as_dict()["t_end_s"] == res.t_end_s
    # what was simulated is exact: trips 2 ms after each restart, restarts after
    # waits of 0.5, 1, 2, 4, 8 s, then 10 s (RFC 6298 s. 5 shape, capped)
    trips = [t for t, _ in res.event_log({"trip"}, device="east")]
    restarts = [t for t, _ in res.event_log({"restart"}, device="east")]
    waits = [min(0.5 * 2 ** k, 10.0) for k in range(len(restarts))]
    assert [r - t for t, r in zip(trips, restarts)] == pytest.approx(waits, abs=1e-9)
    assert len(restarts) > 10


def test_default_event_budget_is_stated():
    res = _run("race-plus")
    assert res.stats["event_budget"] == EVENT_BUDGET
    assert 0 < res.stats["engine_events"] < 100


@pytest.mark.slow
def test_a_run_of_1e9_seconds_ends_within_the_default_budget():
    scn = replace(load(HERE / "backoff.yaml"), duration_s=1e9)
    res = run(scn)
    assert res.stats["engine_events"] == EVENT_BUDGET
    assert "RF-RUN-023" in _codes(res) and res.t_end_s < 1e9


# ----------------------------------------------------------------- time base
def test_nanosecond_intervals_stay_on_one_time_base():
    # race-plus with a reverser sensing after 0.49 ns and swapping in 1 ns: on the
    # 1 ns grid the detection is at the onset, 0.75 s, and the swap at 0.75 s +
    # 1 ns (it made time run backwards before). east would trip 3 ms after the
    # onset: margin = 3 ms - 1 ns.
    scn = load(HERE / "race-plus.yaml")
    rev = replace(scn.reversers["rev"], t_sense_s=0.49e-9, t_swap_s=1e-9)
    res = run(replace(scn, reversers=frozen_map({"rev": rev})), keep_events=True)
    assert res.event_log({"swap_start", "swapped"}, device="rev") == [
        (0.75, "swap_start"), (0.750000001, "swapped")]
    (ep,) = res.episodes
    assert ep.margin_s == pytest.approx(3e-3 - 1e-9, abs=1e-12)


@pytest.mark.parametrize("name", ["thermal", "inrush", "backoff", "slow-trip", "stall"])
def test_every_instant_is_on_the_1_ns_grid(name):
    res = _run(name)
    assert all(e.t_s == snap_s(e.t_s) for e in res.events)


def test_a_world_that_does_not_settle_stops_with_a_result():
    # a deliberately broken train power rule: every solve claims the power
    # changed, the train stops and goes without end at one instant
    from sim.world.processes import TrainRun

    def flip(self, t_s, sol):
        self.world.check_train_later(self.name)
        self.world._mark_dirty()

    with mock.patch.object(TrainRun, "check_power", flip):
        res = _run("reset")
    (f,) = [f for f in res.findings if f.code == "RF-RUN-024"]
    assert res.t_end_s == 0.0 and res.verdict == "fail" and "0 s" in f.message
    assert math.isfinite(res.t_end_s)


# ------------------------------------------------------- every scenario ends
ALL = sorted(p for p in (HERE.parent).rglob("*.yaml") if "bad" not in p.parts) + sorted(
    (HERE.parents[2] / "scenarios").glob("*.yaml"))


@pytest.mark.parametrize("path", ALL, ids=lambda p: f"{p.parent.name}/{p.name}")
def test_every_scenario_runs_to_a_result(path):
    from sim.errors import ScenarioError

    try:
        scn = load(path)
    except ScenarioError:
        pytest.skip("not a usable scenario (the loader's tests cover it)")
    try:
        res = run(scn)
    except ScenarioError:
        pytest.skip("a route the loader does not check (its tests cover it)")
    assert res.verdict in ("pass", "fail")
    codes = {f.code for f in res.findings}
    assert res.t_end_s == scn.duration_s or codes & {"RF-RUN-023", "RF-RUN-024", "RF-RUN-026"}
