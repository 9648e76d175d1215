"""The static coordination advice is enough: apply it, run the engine, the race is won.

For each setting that ``check`` suggests (:func:`sim.checks.coordination.race_advice`,
:func:`nested_advice`), the scenario is changed to it and played by the event engine
(:func:`sim.world.run`) on a range of sample-grid phases of every sampled device; the
race must be won on every one of them, and the static check must no longer report it.
A control run with the original setting shows the race lost on some phase, so each test
can fail.

The timelines are derived by hand beside each case from the sampling rule of
``domain.md`` ("Sensing": a delay t needs n = ceil(t/Ts) consecutive samples; the
first sample comes [0, Ts) after the onset) and the swap sequence of
``scenario-format.md`` (sense, swap, dead time, then the reverser's own trip).
"""
from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from sim.checks.coordination import (check_coordination, dip_always_seen, nested_advice,
                                     race_advice)
from sim.layout import build_layout
from sim.model import Fault, Trip
from sim.world import run
from tests.builders import ScenarioBuilder

PHASES = tuple(float(x) for x in np.linspace(0.0, 0.95, 8))

#: Model fields of the key paths the advice names.
_FIELDS = {("swap_time",): "t_swap_s", ("sense", "after"): "t_sense_s",
           ("dead_time",): "t_dead_s", ("trip", "after"): "trip.t_after_s"}


def apply(scn, key, value):
    """``scn`` with the setting at key path ``key`` set to ``value`` (SI)."""
    table, name, rest = key[0], key[1], tuple(key[2:])
    dev = getattr(scn, table)[name]
    attr = _FIELDS[rest]
    if attr == "trip.t_after_s":
        dev = dataclasses.replace(dev, trip=dataclasses.replace(dev.trip, t_after_s=value))
    else:
        dev = dataclasses.replace(dev, **{attr: value})
    return dataclasses.replace(scn, **{table: {**getattr(scn, table), name: dev}})


def with_phases(scn, phases: dict):
    """``scn`` with the sample-grid phase of each named device set."""
    for name, ph in phases.items():
        table = "boosters" if name in scn.boosters else "reversers"
        dev = getattr(scn, table)[name]
        dev = dataclasses.replace(dev, sense=dataclasses.replace(dev.sense, phase=ph))
        scn = dataclasses.replace(scn, **{table: {**getattr(scn, table), name: dev}})
    return scn


# ------------------------------------------------------------------ the gap race
def gap_race():
    """A train runs from main into rev-sec, wired swapped: its pickup bridges the gap
    main.b~rev-sec.a out of phase (invented layout, as tests/scenarios/run/race-minus).

    Booster east: 4 ms on a 0.25 ms grid: n = 16, earliest trip (16 - 1) 0.25 = 3.75 ms.
    Reverser rev: sense 0.12 ms on a 0.05 ms grid: n = 3, latest detection 0.15 ms;
    swap 4 ms: t_clear = 4.15 ms. Margin 3.75 - 4.15 = -0.4 ms: RF-COORD-001.
    """
    b = ScenarioBuilder()
    b.booster("east", t_trip_s=0.004, period_s=2.5e-4)
    b.reverser("rev", feed="east", t_sense_s=1.2e-4, t_swap_s=0.004, period_s=5e-5,
               t_dead_s=0.001, trip=Trip(4.0, 0.003))
    b.section("main", 2.0, "east")
    b.section("rev-sec", 2.0, "rev", leads=-1)
    b.joint("main.b", "rev-sec.a", "both")
    b.vehicle("dummy", 0.5, [0.125, 0.375])
    b.train("t1", ["dummy"], ["main", "rev-sec"])
    return dataclasses.replace(b.build(), duration_s=5.0)


def race_won(scn) -> bool:
    res = run(scn)
    gaps = [e for e in res.episodes if e.kind == "gap"]
    return (len(gaps) == 1 and gaps[0].outcome == "swapped" and gaps[0].acted == "rev"
            and res.devices["east"].trips == 0)


def test_gap_race_advice_by_hand():
    scn = gap_race()
    own, upstream = race_advice(scn, build_layout(scn), "rev")
    # hand: swap below 3.75 - 0.15 = 3.6 ms -> 3.59 ms on the 0.01 ms grid; sense: its
    # latest detection below 3.75 - 4 < 0: no sense delay wins; east's earliest trip
    # above 4.15 ms: (n - 1) 0.25 > 4.15 -> n - 1 = 17, n = 18: 4.5 ms
    assert [(a.key, round(a.value_s, 9)) for a in own] == [
        (("reversers", "rev", "swap_time"), 3.59e-3)]
    assert {d: (a.key, round(a.value_s, 9)) for d, a in upstream.items()} == {
        "east": (("boosters", "east", "trip", "after"), 4.5e-3)}


def test_gap_race_is_lost_on_some_phase_as_it_stands():
    scn = gap_race()
    outcomes = {race_won(with_phases(scn, {"east": pe, "rev": pr}))
                for pe in PHASES for pr in (0.0, 0.5)}
    assert False in outcomes        # the control: the race is lost on some phase


@pytest.mark.parametrize("which", ["swap_time", "east"])
def test_gap_race_advice_wins_on_every_phase(which):
    scn = gap_race()
    own, upstream = race_advice(scn, build_layout(scn), "rev")
    advice = own[0] if which == "swap_time" else upstream["east"]
    fixed = apply(scn, advice.key, advice.value_s)
    assert not [f for f in check_coordination(fixed, build_layout(fixed))
                if f.code in ("RF-COORD-001", "RF-COORD-002")]
    for pe in PHASES:
        for pr in (0.0, 0.3, 0.7):
            assert race_won(with_phases(fixed, {"east": pe, "rev": pr})), (advice, pe, pr)


def test_sense_delay_advice_wins_on_every_phase():
    # rev senses slowly: 1.2 ms on the 0.05 ms grid (24 samples, latest 1.2 ms), swap
    # 2.7 ms: t_clear 3.9 ms against east's 3.75 ms. By hand the sense delay must end
    # before 3.75 - 2.7 = 1.05 ms: n 0.05 < 1.05 -> n = 20: 1.0 ms (20 samples).
    scn = apply(apply(gap_race(), ("reversers", "rev", "sense", "after"), 1.2e-3),
                ("reversers", "rev", "swap_time"), 2.7e-3)
    own, _ = race_advice(scn, build_layout(scn), "rev")
    sense = next(a for a in own if a.key[-2:] == ("sense", "after"))
    assert sense.value_s == pytest.approx(1.0e-3, abs=1e-12)
    assert "20 samples of 0.05 ms" in sense.text
    fixed = apply(scn, sense.key, sense.value_s)
    for pe in PHASES:
        for pr in (0.0, 0.5):
            assert race_won(with_phases(fixed, {"east": pe, "rev": pr})), (pe, pr)


# ------------------------------------------- a short the swap does not clear
def fault_in_loop(rev_trip_s=3.5e-3, dead_s=2e-4):
    """A coin across rev-sec at 0.1 s: rev swaps, the short stays, rev must trip before
    booster east (invented layout).

    East: 5 ms on a 1 ms grid: n = 5, earliest trip (5 - 1) 1 = 4 ms after the onset.
    Rev (continuous): detects at 0.1 ms, swapped at 0.6 ms, open 0.2 ms, recloses at
    0.8 ms and trips 3.5 ms later, at 4.3 ms. The 0.2 ms dead time is shorter than east's
    1 ms sample period: on 80 % of the phases no sample falls in it and east counts on
    from the onset, tripping at 4 to 5 ms: before rev on phases below 0.3.
    """
    b = ScenarioBuilder()
    b.booster("east", t_trip_s=0.005, period_s=1e-3)
    b.reverser("rev", feed="east", t_sense_s=1e-4, t_swap_s=5e-4, t_dead_s=dead_s,
               trip=Trip(4.0, rev_trip_s))
    b.section("main", 2.0, "east")
    b.section("loop", 2.0, "rev")
    b.joint("main.b", "loop.a", "both")
    b.joint("main.a", "loop.b", "both")
    scn = b.build()
    return dataclasses.replace(scn, duration_s=0.2,
                               faults=(Fault(0.1, "short", "loop", at_m=1.0, r_ohm=0.01),))


def rev_trips_first(scn) -> bool:
    res = run(scn)
    return res.devices["rev"].trips == 1 and res.devices["east"].trips == 0


def test_dead_time_shorter_than_a_sample_is_a_warning_with_its_figures():
    scn = fault_in_loop()
    assert not dip_always_seen(2e-4, 1e-3) and dip_always_seen(1.01e-3, 1e-3)
    (f,) = [f for f in check_coordination(scn, build_layout(scn))
            if f.code in ("RF-COORD-004", "RF-COORD-005")]
    assert f.code == "RF-COORD-005"
    assert "as late as 4.3 ms" in f.message and "as early as 4 ms" in f.message
    # hand: rev's trip below 4 - 0.8 = 3.2 ms -> 3.19 ms; a dead time above east's 1 ms
    # sample period -> 1.01 ms (then east counts afresh from the reclose: 3.5 < 4 ms);
    # east's earliest trip above 4.3 ms: (n - 1) 1 > 4.3 -> n = 6: 6 ms
    advice = nested_advice(scn, "rev", "east")
    assert [(a.key, round(a.value_s, 9)) for a in advice] == [
        (("reversers", "rev", "trip", "after"), 3.19e-3),
        (("reversers", "rev", "dead_time"), 1.01e-3),
        (("boosters", "east", "trip", "after"), 6e-3)]


def test_nested_race_is_lost_on_some_phase_as_it_stands():
    outcomes = {rev_trips_first(with_phases(fault_in_loop(), {"east": ph})) for ph in PHASES}
    assert outcomes == {True, False}


@pytest.mark.parametrize("index", [0, 1, 2])
def test_nested_advice_wins_on_every_phase(index):
    scn = fault_in_loop()
    advice = nested_advice(scn, "rev", "east")[index]
    fixed = apply(scn, advice.key, advice.value_s)
    assert not [f for f in check_coordination(fixed, build_layout(fixed))
                if f.code in ("RF-COORD-004", "RF-COORD-005")]
    for ph in PHASES:
        assert rev_trips_first(with_phases(fixed, {"east": ph})), (advice, ph)


def test_no_dead_time_the_upstream_count_never_stops():
    # dead time 0: east carries the short from the onset without a break. Rev trips at
    # 0.1 + 0.5 + 3.5 = 4.1 ms, before east's nominal 5 ms (so no error), but on the
    # 1 ms grid east trips 4 to 5 ms after the onset: first on the phases below 0.1
    # (a warning), as the run shows on phase 0
    scn = fault_in_loop(dead_s=0.0)
    (f,) = [f for f in check_coordination(scn, build_layout(scn))
            if f.code in ("RF-COORD-004", "RF-COORD-005")]
    assert f.code == "RF-COORD-005" and "as late as 4.1 ms" in f.message
    assert not rev_trips_first(with_phases(scn, {"east": 0.0}))


# ------------------------------------------------------- the YAML scenario
def test_yaml_dead_time_check_and_run_agree():
    # tests/scenarios/checks/advice-dead-time.yaml (hand derivation in its header):
    # check warns that east may trip first; the run (east's phase 0) shows it trip 4 ms
    # after the onset, before rev; with the suggested dead time rev trips first
    from pathlib import Path

    from sim.scenario import load

    scn = load(Path(__file__).resolve().parent / "scenarios" / "checks" /
               "advice-dead-time.yaml")
    lay = build_layout(scn)
    (f,) = [f for f in check_coordination(scn, lay) if f.code == "RF-COORD-005"]
    assert "as late as 4.3 ms" in f.message and "as early as 4 ms" in f.message
    res = run(scn)
    assert res.devices["east"].trips == 1 and res.devices["rev"].trips == 0
    trip = next(e for e in res.episodes if e.acted == "east")
    assert trip.acted_s == pytest.approx(0.1 + 0.004, abs=1e-9)
    dead = next(a for a in nested_advice(scn, "rev", "east") if a.key[-1] == "dead_time")
    assert dead.value_s == pytest.approx(1.01e-3)
    assert rev_trips_first(apply(scn, dead.key, dead.value_s))
