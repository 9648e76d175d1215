"""Coordination margins and device settings, derived by hand.

Principle: the device nearest the fault must operate first (US Army TM 5-811-14,
Coordinated Power Systems Protection, 1991, section 4-1). Margin = t_trip(upstream)
- t_clear (scenario-format.md, "Results"). Sampled sensing: a delay t needs
n = ceil(t/Ts) samples (domain.md, "Sensing"); earliest trip (n-1) Ts, latest
detection n Ts (our convention, see sim/checks/coordination.py).
"""
import pytest

from sim.checks.coordination import (check_coordination, earliest_trip_s, latest_trip_s,
                                     reversing_margins)
from sim.checks.draw import check_draw
from sim.layout import build_layout
from tests.builders import ScenarioBuilder


def race_and_order(scn, lay):
    """The findings of the coordination check but the RF-COORD-012 notes (trip-order pairs
    that pass, tested on their own below)."""
    return [f for f in check_coordination(scn, lay) if f.code != "RF-COORD-012"]


def wye(booster_t_s=0.004, booster_period_s=None, rev_period_s=None, t_sense_s=1e-4,
        t_swap_s=5e-4, neighbour=False, margin_req_s=0.0):
    b = ScenarioBuilder()
    b.t_margin_required_s = margin_req_s
    b.booster("west", t_trip_s=booster_t_s, period_s=booster_period_s)
    b.reverser("tail-ctl", feed="west", t_sense_s=t_sense_s, t_swap_s=t_swap_s,
               period_s=rev_period_s)
    for n in ("main", "base", "west", "east"):
        b.section(n, 2.0, "west")
    b.section("tail", 2.0, "tail-ctl")
    b.joint("main.b", "base.a")
    b.joint("main.b", "west.a")
    b.joint("tail.a", "west.b", "both")
    b.joint("tail.a", "east.a", "both")
    if neighbour:
        # east leg fed by a second booster (through a breaker): both on the short path
        b.booster("east-bst", t_trip_s=0.004)
        b.breaker("east-cb", feed="east-bst", t_trip_s=0.002, i_trip_a=3.0)
        b.sections["east"] = b.sections["east"].__class__("east", 2.0, "east-cb")
        b.joint("base.b", "east.b", "both")
    else:
        b.joint("base.b", "east.b")
    return b.build()


def test_sampling_arithmetic():
    # 4 ms on a 0.1 ms grid: n = 40 samples; earliest (40-1) x 0.1 = 3.9 ms, latest 4.0 ms
    assert earliest_trip_s(0.004, 1e-4) == pytest.approx(0.0039, abs=1e-12)
    assert latest_trip_s(0.004, 1e-4) == pytest.approx(0.0040, abs=1e-12)
    # 0.12 ms on a 0.05 ms grid: n = ceil(2.4) = 3; earliest 0.10 ms, latest 0.15 ms
    assert earliest_trip_s(1.2e-4, 5e-5) == pytest.approx(1.0e-4, abs=1e-12)
    assert latest_trip_s(1.2e-4, 5e-5) == pytest.approx(1.5e-4, abs=1e-12)
    # continuous sensing: the delay itself
    assert earliest_trip_s(0.002, None) == 0.002


def test_margin_reverser_against_its_booster_continuous():
    # hand: t_clear = 0.1 ms + 0.5 ms = 0.6 ms; booster trips at 4 ms: +3.4 ms
    scn = wye()
    lay = build_layout(scn)
    assert reversing_margins(scn, lay)["tail-ctl"]["west"] == pytest.approx(3.4e-3, abs=1e-12)
    (f,) = race_and_order(scn, lay)
    assert (f.severity, f.code) == ("info", "RF-COORD-003")
    assert "clears in 0.6 ms" in f.message and "+3.400 ms against booster west" in f.message


def test_margin_with_sampled_booster():
    # hand: booster 4 ms sampled every 0.1 ms: earliest trip 3.9 ms; 3.9 - 0.6 = +3.3 ms
    scn = wye(booster_period_s=1e-4)
    (f,) = race_and_order(scn, build_layout(scn))
    assert "+3.300 ms" in f.message and "earliest trip 3.9 ms" in f.message


def test_margin_with_sampled_reverser():
    # hand: reverser sense 0.12 ms on a 0.05 ms grid: latest detection 3 x 0.05 = 0.15 ms;
    # t_clear = 0.15 + 0.5 = 0.65 ms; booster 4 ms: +3.35 ms
    scn = wye(rev_period_s=5e-5, t_sense_s=1.2e-4)
    lay = build_layout(scn)
    assert reversing_margins(scn, lay)["tail-ctl"]["west"] == pytest.approx(3.35e-3, abs=1e-12)


def test_negative_margin_is_an_error():
    # hand: booster 0.5 ms against t_clear 0.6 ms: -0.1 ms
    scn = wye(booster_t_s=0.0005)
    (f,) = [f for f in check_coordination(scn, build_layout(scn))
            if f.code.startswith("RF-COORD-00") and f.code <= "RF-COORD-003"]
    assert (f.severity, f.code) == ("error", "RF-COORD-001")
    assert "margin -0.100 ms" in f.message
    assert f.where.startswith("reversers.tail-ctl (line ")
    # hand: the swap must end before 0.5 ms: swap < 0.5 - 0.1 = 0.4 ms, on the 0.01 ms
    # grid 0.39 ms; or the booster's delay above t_clear = 0.6 ms: 0.61 ms. The sense
    # delay alone cannot win (the swap alone already takes the booster's 0.5 ms).
    assert f.fix == ("any one of these wins the race whatever the sample phases: set "
                     "tail-ctl's swap time to 0.39 ms or less (now 0.5 ms); or set west's "
                     "trip delay to 0.61 ms or more (now 0.5 ms)")


def test_margin_below_the_required_one_is_an_error():
    # +3.4 ms against a required 5 ms: the file's own requirement is not met (a run fails
    # such a race too, RF-RUN-004)
    scn = wye(margin_req_s=0.005)
    (f,) = race_and_order(scn, build_layout(scn))
    assert (f.severity, f.code) == ("error", "RF-COORD-002")
    # hand: the margin needs west's earliest trip after 0.6 + 5 = 5.6 ms (5.61 ms on the
    # 0.01 ms grid); no swap time or sense delay of the reverser gives 5 ms against 4 ms
    assert f.fix == ("any one of these wins the race by more than the required 5 ms "
                     "whatever the sample phases: set west's trip delay to 5.61 ms or more "
                     "(now 4 ms)")


def test_devices_across_the_gap_are_on_the_short_path():
    # east leg fed by breaker east-cb (2 ms) on booster east-bst (4 ms):
    # margins 2 - 0.6 = +1.4 ms and 4 - 0.6 = +3.4 ms; least is east-cb
    scn = wye(neighbour=True)
    lay = build_layout(scn)
    m = reversing_margins(scn, lay)["tail-ctl"]
    assert m == pytest.approx({"west": 3.4e-3, "east-cb": 1.4e-3, "east-bst": 3.4e-3},
                              abs=1e-12)
    infos = [f for f in check_coordination(scn, lay) if f.code == "RF-COORD-003"]
    assert "+1.400 ms against breaker east-cb" in infos[0].message


def breaker_case(cb_t_s, cb_i_a, cb_period_s=None, bst_period_s=None):
    b = ScenarioBuilder()
    b.booster("east", i_trip_a=5.0, t_trip_s=0.004, period_s=bst_period_s)
    b.breaker("yard-cb", feed="east", i_trip_a=cb_i_a, t_trip_s=cb_t_s, period_s=cb_period_s)
    b.section("main", 2.0, "east")
    b.section("yard", 2.0, "yard-cb")
    b.joint("main.b", "yard.a", "both")
    return b.build()


def test_breaker_in_order_passes_with_a_note_of_its_margin():
    # hand: yard-cb (continuous) trips 1 ms after the onset; east (continuous) 4 ms:
    # margin 4 - 1 = +3 ms, shown as a note (the pair that passes, as the report's)
    scn = breaker_case(0.001, 3.0)
    (f,) = check_coordination(scn, build_layout(scn))
    assert (f.severity, f.code) == ("info", "RF-COORD-012")
    assert f.message == ("breaker yard-cb trips at most 1 ms after the onset of a hard short "
                         "in its district, before booster east feeding it can trip (4 ms at "
                         "the earliest): least margin +3.000 ms")


def test_breaker_slower_than_its_booster_is_an_error():
    scn = breaker_case(0.005, 3.0)
    (f,) = check_coordination(scn, build_layout(scn))
    assert (f.severity, f.code) == ("error", "RF-COORD-004")
    assert "TM 5-811-14" in f.message


def test_breaker_jitter_overlap_is_a_warning():
    # breaker 3.95 ms on a 0.1 ms grid: latest 4.0 ms; booster 4 ms on the same grid:
    # earliest 3.9 ms -- nominally in order, but the booster may trip first
    scn = breaker_case(0.00395, 3.0, cb_period_s=1e-4, bst_period_s=1e-4)
    (f,) = check_coordination(scn, build_layout(scn))
    assert (f.severity, f.code) == ("warning", "RF-COORD-005")


def test_breaker_threshold_not_lower_is_a_warning():
    scn = breaker_case(0.001, 5.0)
    (f,) = race_and_order(scn, build_layout(scn))
    assert (f.severity, f.code) == ("warning", "RF-COORD-006")


def test_full_scale_below_trip_threshold_can_never_trip():
    b = ScenarioBuilder()
    b.booster("east", i_trip_a=5.0, period_s=1e-4, full_scale_a=4.0)
    b.section("main", 2.0, "east")
    scn = b.build()
    (f,) = check_coordination(scn, build_layout(scn))
    assert (f.severity, f.code) == ("error", "RF-COORD-007")
    assert "can never act" in f.message


def test_trip_threshold_below_running_draw():
    # two trains of two 0.8 A locomotives each visit the district: 3.2 A >= 3 A trip
    b = ScenarioBuilder()
    b.booster("east", i_trip_a=3.0)
    b.line(["s1", "s2"], feed="east", length_m=3.0)
    b.vehicle("loco", 0.2, [0.02, 0.18], draw_a=0.8)
    b.train("t1", ["loco", "loco"], ["s1", "s2"])
    b.train("t2", ["loco", "loco"], ["s2", "s1"])
    scn = b.build()
    (f,) = check_draw(scn, build_layout(scn))
    assert (f.severity, f.code) == ("error", "RF-COORD-008")
    assert "draw 3.2 A" in f.message and "(t1, t2)" in f.message
    assert "at 0.00 s" in f.message              # both stand in the district at the start


def test_booster_that_reverses_its_own_output_races_its_neighbour():
    # hand: loop booster senses 0.2 ms + swaps 1 ms = 1.2 ms; neighbour booster east
    # trips at 4 ms: +2.8 ms. Its own trip delay is not in the race (it swaps first).
    b = ScenarioBuilder()
    b.booster("east", t_trip_s=0.004)
    b.booster("loop", t_trip_s=0.0005, reverse_on_short=True, t_sense_reverse_s=2e-4,
              t_swap_s=1e-3)
    b.line(["main", "throat"], feed="east")
    b.section("balloon", 5.0, "loop")
    b.joint("throat.b", "balloon.a", "both")
    b.joint("throat.b", "balloon.b", "both")
    scn = b.build()
    lay = build_layout(scn)
    assert reversing_margins(scn, lay) == {"loop": pytest.approx({"east": 2.8e-3}, abs=1e-12)}
    (f,) = check_coordination(scn, lay)
    assert f.code == "RF-COORD-003" and "booster loop clears in 1.2 ms" in f.message


def test_reverser_own_trip_slower_than_its_booster_is_an_error():
    # a real short in the reversing section: the swap does not clear it, so the
    # reverser must trip before its booster (TM 5-811-14 4-1). Reverser trip 5 ms
    # against the booster's 4 ms: the booster trips first.
    from sim.model import Trip
    b = ScenarioBuilder()
    b.booster("east", t_trip_s=0.004)
    b.reverser("loop-ctl", feed="east", trip=Trip(3.0, 0.005))
    b.line(["main", "throat"], feed="east")
    b.section("loop", 5.0, "loop-ctl")
    b.joint("throat.b", "loop.a", "both")
    b.joint("throat.b", "loop.b", "both")
    scn = b.build()
    errs = [f for f in check_coordination(scn, build_layout(scn)) if f.severity == "error"]
    assert [f.code for f in errs] == ["RF-COORD-004"]
    assert "reverser loop-ctl trips after 5 ms" in errs[0].message


def test_inverse_time_upstream_uses_its_definite_delay_as_a_lower_bound():
    # IEC very inverse curve on the booster (IEC 60255-151); t_after_s 4 ms is taken as
    # the lower bound of its delay: margin 4 - 0.6 = +3.4 ms, flagged as a bound
    from sim.model import Trip
    b = ScenarioBuilder()
    b.booster("west", trip=Trip(5.0, 0.004, curve="iec-very-inverse"))
    b.reverser("tail-ctl", feed="west", trip=Trip(3.0, 0.001))
    b.section("main", 2.0, "west")
    b.section("loop", 5.0, "tail-ctl")
    b.joint("main.b", "loop.a", "both")
    b.joint("main.b", "loop.b", "both")
    scn = b.build()
    (f,) = race_and_order(scn, build_layout(scn))
    assert "+3.400 ms against booster west" in f.message and "lower bound" in f.message
