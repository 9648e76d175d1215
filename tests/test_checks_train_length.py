"""Trains against reversing sections.

Rule (domain.md, rules of thumb, common practice): a reversing section must be
longer than the longest train that passes through it. The span is measured
between the outermost conducting axles; check values derived by hand below.
"""
import pytest

from sim.checks.train_length import check_train_length, conducting_span_m
from sim.layout import build_layout
from tests.builders import ScenarioBuilder


def stock(b):
    # loco 200 mm, axles 20, 50, 150, 180 mm, all pickup
    b.vehicle("loco", 0.200, [0.020, 0.050, 0.150, 0.180], pickup="all", draw_a=0.5)
    # lighted coach 250 mm, pickup on axles 0 and 3 (25 and 230 mm)
    b.vehicle("coach", 0.250, [0.025, 0.050, 0.200, 0.230], pickup=[0, 3], r_join_ohm=120.0)
    # metal-wheel hopper 100 mm, axles 20 and 80 mm
    b.vehicle("hopper", 0.100, [0.020, 0.080], pickup=None, metal_wheels=True)
    # plain box car 120 mm, insulated wheels: does not conduct
    b.vehicle("box", 0.120, [0.020, 0.100], pickup=None)


def test_span_derived_by_hand():
    # laid end to end: loco 0-200, coach 200-450, hopper 450-550, box 550-670 mm.
    # Conducting axles: loco 20..180, coach 225 and 430, hopper 470 and 530, box none.
    # Foremost 20 mm, rearmost 530 mm: span 510 mm.
    b = ScenarioBuilder()
    stock(b)
    scn = b.build()
    span, first, last = conducting_span_m(scn, ["loco", "coach", "hopper", "box"])
    assert span == pytest.approx(0.510, abs=1e-12)
    assert first[1:] == ("loco", 0, pytest.approx(0.020))
    assert last[1:] == ("hopper", 1, pytest.approx(0.530))


def balloon_with_train(loop_m, consist):
    b = ScenarioBuilder()
    b.booster("east")
    b.reverser("loop-ctl", feed="east")
    b.line(["main", "throat"], feed="east", length_m=3.0)
    b.section("loop", loop_m, "loop-ctl")
    b.joint("throat.b", "loop.a", "both")
    b.joint("throat.b", "loop.b", "both")
    stock(b)
    b.train("t1", consist, ["main", "throat", "loop", "throat", "main"])
    return b.build()


def test_train_longer_than_the_reversing_section_reports_the_shortfall_in_mm():
    # span 510 mm (above) against a 480 mm loop: 30 mm short.
    scn = balloon_with_train(0.480, ["loco", "coach", "hopper", "box"])
    (f,) = check_train_length(scn, build_layout(scn))
    assert (f.severity, f.code) == ("error", "RF-LEN-001")
    assert "spans 510 mm" in f.message and "is 480 mm long: 30 mm short" in f.message
    assert f.where == f"trains.t1.consist (line {scn.locations[('trains', 't1', 'consist')][0]})"


def test_train_shorter_than_the_reversing_section_passes():
    scn = balloon_with_train(0.520, ["loco", "coach", "hopper", "box"])
    assert check_train_length(scn, build_layout(scn)) == []


def test_equal_length_is_not_shorter():
    # loco alone: span 180 - 20 = 160 mm; a 160 mm loop is not longer: 0 mm short.
    scn = balloon_with_train(0.160, ["loco"])
    (f,) = check_train_length(scn, build_layout(scn))
    assert "0 mm short" in f.message


@pytest.mark.parametrize("tail2_m, short_mm", [(0.250, None), (0.200, 10)])
def test_consecutive_sections_of_one_reverser_count_as_one_zone(tail2_m, short_mm):
    # wye tail made of two bonded reverser-fed sections: 300 + 250 = 550 mm > 510 mm
    # passes; 300 + 200 = 500 mm is 10 mm short of the 510 mm span.
    b = ScenarioBuilder()
    b.booster("west")
    b.reverser("tail-ctl", feed="west")
    for n in ("main", "west", "east"):
        b.section(n, 2.0, "west")
    b.section("tail1", 0.300, "tail-ctl")
    b.section("tail2", tail2_m, "tail-ctl")
    b.joint("main.b", "west.a")
    b.joint("main.b", "east.b")
    b.joint("tail1.a", "west.b", "both")
    b.joint("tail1.a", "east.a", "both")
    b.joint("tail1.b", "tail2.a")
    stock(b)
    b.train("t1", ["loco", "coach", "hopper"],
            ["main", "west", "tail1", "tail2", "reverse", "tail1", "east", "main"])
    scn = b.build()
    fs = check_train_length(scn, build_layout(scn))
    if short_mm is None:
        assert fs == []
    else:
        (f,) = fs
        assert f"tail1 + tail2 (fed by tail-ctl) is 500 mm long: {short_mm} mm short" \
            in f.message
