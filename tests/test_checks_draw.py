"""The running draw of a district from the trains' schedules (spans and speeds by hand)."""
from __future__ import annotations

import math
from pathlib import Path

import pytest

from sim.checks.draw import check_draw, downstream_sections, loco_intervals, peak_draw
from sim.commands.check import check_result
from sim.layout import build_layout
from sim.scenario import load
from tests.builders import ScenarioBuilder, Start

HERE = Path(__file__).resolve().parent / "scenarios" / "checks"


def there_and_back():
    """s1 - s2 (5 m each); a 0.2 m locomotive (pickup axles 50 and 150 mm: draw point
    0.1 m behind the front) stands with its front at s1 1.0 m, departs at 2 s at
    0.5 m/s, runs to the end of s2, waits 1 s, and runs back to the end of s1."""
    b = ScenarioBuilder()
    b.booster("bst")
    b.line(["s1", "s2"], feed="bst", length_m=5.0)
    b.vehicle("loco", 0.2, [0.05, 0.15], draw_a=0.6)
    b.train("t", ["loco"], ["s1", "s2", "reverse", "s1"], start=Start("s1", 1.0, "b"),
            speed_mps=0.5, depart_s=2.0)
    return b.build()


def test_locomotive_sections_over_time_by_hand():
    # by hand: the draw point starts at 0.9 m (s1); it reaches s2 (5 m) after the front
    # runs 4.1 m: 2 + 4.1 / 0.5 = 10.2 s; the front reaches the end of s2 (9 m run) at
    # 2 + 18 = 20 s and stands 1 s; reversed, the draw point is 0.2 - 0.1 = 0.1 m behind
    # the new front, at 9.9 m, and is back in s1 after 4.9 m: 21 + 9.8 = 30.8 s; the
    # train then stands at the end of s1 for good
    scn = there_and_back()
    ivs = [(iv.section, iv.t_on_s, iv.t_off_s) for iv in loco_intervals(scn, build_layout(scn))]
    assert [s for s, _, _ in ivs] == ["s1", "s2", "s2", "s1"]
    assert [t for _, t, _ in ivs] == pytest.approx([0.0, 10.2, 20.0, 30.8])
    assert [t for _, _, t in ivs][:3] == pytest.approx([10.2, 20.0, 30.8])
    assert ivs[-1][2] == math.inf


def test_two_trains_that_never_meet_are_not_added():
    # t1 runs s1 -> s2 and t2 stands in s3 (another district): each district carries one
    # locomotive at a time. All-trains bound for bst's district: only t1 visits it.
    b = ScenarioBuilder()
    b.booster("bst", i_trip_a=1.0)
    b.booster("far", i_trip_a=1.0)
    b.line(["s1", "s2"], feed="bst", length_m=5.0)
    b.section("s3", 5.0, "far")
    b.joint("s2.b", "s3.a", "both")
    b.vehicle("loco", 0.2, [0.05, 0.15], draw_a=0.8)
    b.train("t1", ["loco"], ["s1", "s2"], start=Start("s1", 1.0, "b"))
    b.train("t2", ["loco"], ["s3"], start=Start("s3", 4.0, "b"))
    scn = b.build()
    lay = build_layout(scn)
    pk = peak_draw(scn, lay, downstream_sections(scn, lay, "bst"))
    assert (pk.i_a, pk.t_s, pk.trains) == (pytest.approx(0.8), 0.0, ("t1",))
    assert pk.all_trains == ("t1",)
    assert check_draw(scn, lay) == []          # 0.8 A < 1 A on both boosters


def test_club_ring_draw_by_the_schedules():
    # tests/scenarios/checks/club-ring.yaml (hand derivation in its header): 10 draw
    # points in every 40 m district at every instant, 10 x 0.45 = 4.5 A; 20 trains can
    # enter each district, 20 x 0.45 = 9.0 A all at once
    scn = load(HERE / "club-ring.yaml")
    lay = build_layout(scn)
    for b in ("b1", "b2", "b3"):
        pk = peak_draw(scn, lay, downstream_sections(scn, lay, b))
        assert pk.i_a == pytest.approx(4.5) and len(pk.trains) == 10
        assert pk.i_all_a == pytest.approx(9.0) and len(pk.all_trains) == 20
    res = check_result(str(HERE / "club-ring.yaml"))
    assert res["verdict"] == "pass"
    notes = [f for f in res["findings"] if f["code"] == "RF-COORD-009"]
    assert len(notes) == 3 and all(f["severity"] == "info" for f in notes)
    assert "would draw 9 A all at once" in notes[0]["message"]
    assert "at most 4.5 A" in notes[0]["message"]
    assert not [f for f in res["findings"] if f["code"] in ("RF-COORD-008", "RF-WIN-002")]
