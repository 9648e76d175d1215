"""District boundaries: bonded (devices in parallel), one rail (common rail), unfed track.

Rule (domain.md, "Power district"): districts are separated by gaps on both
rails, one rail only on a common-rail layout.
"""
from sim.checks.gaps import check_gaps
from sim.layout import build_layout
from tests.builders import ScenarioBuilder


def two_districts(gaps):
    b = ScenarioBuilder()
    b.booster("east")
    b.booster("west")
    b.section("w1", 3.0, "west")
    b.section("e1", 3.0, "east")
    b.joint("w1.b", "e1.a", gaps)
    return b


def test_both_rails_gapped_between_districts_passes():
    scn = two_districts("both").build()
    assert check_gaps(scn, build_layout(scn)) == []


def test_bonded_joint_between_districts_puts_devices_in_parallel():
    scn = two_districts("none").build()
    (f,) = check_gaps(scn, build_layout(scn))
    assert (f.severity, f.code) == ("error", "RF-GAP-001")
    assert "west and east are in parallel" in f.message
    line = scn.locations[("track", "joints", 0, "gaps")][0]
    assert f.where == f"w1.b~e1.a (line {line})"
    assert f.fix == "gap both rails at joint w1.b~e1.a (gaps: both)"


def test_one_rail_gap_between_districts_is_a_common_rail_warning():
    scn = two_districts("one").build()
    (f,) = check_gaps(scn, build_layout(scn))
    assert (f.severity, f.code) == ("warning", "RF-GAP-002")
    assert "common-rail" in f.message


def test_breaker_district_bonded_to_its_booster_is_also_parallel():
    b = two_districts("both")
    b.breaker("yard-cb", feed="east")
    b.section("yard", 2.0, "yard-cb")
    b.joint("e1.b", "yard.a")
    scn = b.build()
    (f,) = check_gaps(scn, build_layout(scn))
    assert f.code == "RF-GAP-001" and "east and yard-cb" in f.message


def test_gap_inside_one_district_is_info_only():
    b = ScenarioBuilder()
    b.booster("east")
    b.line(["s1", "s2"], feed="east", gaps="both")
    scn = b.build()
    (f,) = check_gaps(scn, build_layout(scn))
    assert (f.severity, f.code) == ("info", "RF-GAP-003")


def test_section_fed_by_nothing_is_a_finding():
    b = two_districts("both")
    b.section("siding", 1.0, None)
    b.joint("e1.b", "siding.a", "both")
    b.section("spur", 1.0, None)            # bonded to a fed section: fine
    b.joint("w1.a", "spur.b")
    scn = b.build()
    (f,) = check_gaps(scn, build_layout(scn))
    assert (f.severity, f.code) == ("error", "RF-GAP-004")
    assert f.where.startswith("track.sections.siding (line ")
    assert "dead track" in f.message


def test_reversing_booster_boundary_is_left_to_the_coverage_check():
    # a one-rail gap at a reverse_on_short booster's boundary: RF-COV-003 reports it
    # (see test_checks_coverage); the gaps check does not report it a second time
    b = ScenarioBuilder()
    b.booster("east")
    b.booster("loop", reverse_on_short=True)
    b.section("main", 2.0, "east")
    b.section("balloon", 5.0, "loop")
    b.joint("main.b", "balloon.a", "one")
    b.joint("main.b", "balloon.b", "both")
    scn = b.build()
    assert check_gaps(scn, build_layout(scn)) == []
