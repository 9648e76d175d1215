"""Reversing sections gapped on both rails at every joint, and needed at all.

Rule (domain.md, "Reversing section"): a reversing section is gapped on both
rails at both ends and fed by a reversing controller.
"""
from sim.checks.coverage import check_coverage
from sim.layout import build_layout
from tests.builders import ScenarioBuilder


def balloon(gaps_a="both", gaps_b="both"):
    b = ScenarioBuilder()
    b.booster("east")
    b.reverser("loop-ctl", feed="east")
    b.line(["main", "throat"], feed="east", length_m=2.0)
    b.section("loop", 6.0, "loop-ctl")
    b.joint("throat.b", "loop.a", gaps_a)
    b.joint("throat.b", "loop.b", gaps_b)
    return b


def test_gapped_reversing_section_passes():
    scn = balloon().build()
    assert check_coverage(scn, build_layout(scn)) == []


def test_bonded_joint_of_reversing_section_is_an_error_naming_the_joint():
    scn = balloon(gaps_b="none").build()
    (f,) = check_coverage(scn, build_layout(scn))
    assert (f.severity, f.code) == ("error", "RF-COV-001")
    assert f.where == f"throat.b~loop.b (line {scn.locations[('track', 'joints', 2)][0]})"
    assert "bonded" in f.message
    assert f.fix == "gap both rails at joint throat.b~loop.b (gaps: both)"


def test_one_rail_gap_is_not_enough():
    scn = balloon(gaps_a="one").build()
    (f,) = check_coverage(scn, build_layout(scn))
    assert f.code == "RF-COV-001" and "one rail only" in f.message
    assert f.where.startswith("throat.b~loop.a")


def test_two_sections_of_one_reverser_need_no_gap_between_them():
    b = balloon()
    b.section("loop2", 2.0, None)              # bonded to loop: the same reversing zone
    b.joints.pop()                             # replace throat.b~loop.b
    b.joint("loop.b", "loop2.a")
    b.joint("loop2.b", "throat.b", "both")     # b with b: crossed, closes the loop
    scn = b.build()
    assert check_coverage(scn, build_layout(scn)) == []


def test_reverser_on_no_reversing_loop_is_a_warning():
    b = ScenarioBuilder()
    b.booster("east")
    b.reverser("idle-ctl", feed="east")
    b.line(["s1", "s2"], feed="east")
    b.section("s3", 2.0, "idle-ctl")
    b.joint("s2.b", "s3.a", "both")
    scn = b.build()
    (f,) = check_coverage(scn, build_layout(scn))
    assert (f.severity, f.code) == ("warning", "RF-COV-002")
    assert "s3" in f.message and "idle-ctl" in f.message


def test_reversing_booster_district_must_be_gapped_from_other_boosters():
    b = ScenarioBuilder()
    b.booster("east")
    b.booster("loop", reverse_on_short=True)
    b.line(["main", "throat"], feed="east")
    b.section("balloon", 5.0, "loop")
    b.joint("throat.b", "balloon.a", "one")
    b.joint("throat.b", "balloon.b", "both")
    scn = b.build()
    (f,) = check_coverage(scn, build_layout(scn))
    assert (f.severity, f.code) == ("error", "RF-COV-003")
    assert f.where.startswith("throat.b~balloon.a")
