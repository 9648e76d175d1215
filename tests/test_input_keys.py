"""New keys of the format: ``scale`` (the NMRA S-9.1 track-voltage range) and ``laps``
(a route run again and again, laid out at load into the route the engine follows)."""
from __future__ import annotations

import pytest

import sim
from sim import schema as S
from sim.circuit import check_findings
from sim.errors import ScenarioError
from sim.layout import build_layout
from sim.scenario import loads
from sim.world.geometry import build_route

OVAL = """\
format: railfault/1
duration: 60 s
supplies:
  psu: {voltage: 15 V, resistance: 0 ohm}
boosters:
  east: {supply: psu, output_resistance: 0 ohm}
track:
  sections:
    s1: {length: 4 m, feed: east}
    s2: {length: 4 m, feed: east}
  joints:
    - {ends: [s1.b, s2.a]}
    - {ends: [s2.b, s1.a]}
rolling_stock:
  loco: {length: 200 mm, axles: [20 mm, 180 mm], pickup: all, draw: 0.5 A}
trains:
  t:
    consist: [loco]
    start: {section: s1, at: 1 m, heading: b}
    route: [s1, s2, s1]
    laps: 3
    speed: 0.5 m/s
"""


# ------------------------------------------------------------------- scale
# NMRA S-9.1 (2020) table 3, peak track voltage at the power station, min / nominal /
# max: N and smaller 8.5 / 12 / 22 V; HO, S, O 8.5 / 15 / 22 V; large 8.5 / 18 / 22 V.
S91 = {"N": (8.5, 12.0, 22.0), "HO": (8.5, 15.0, 22.0), "large": (8.5, 18.0, 22.0)}


def codes(findings):
    return [f.code for f in findings]


def test_without_a_scale_a_note_says_ho_is_assumed():
    scn = loads(OVAL)
    assert scn.scale is None
    findings, _rows = check_findings(scn)
    (note,) = [f for f in findings if f.code == "RF-VOLT-003"]
    assert note.severity == "info" and "HO assumed" in note.message


@pytest.mark.parametrize("scale", list(S.SCALES))
def test_a_scale_silences_the_note_and_sets_its_range(scale):
    from sim.circuit.voltage import S91_TABLE3, scale_group

    scn = loads(OVAL + f"scale: {scale}\n")
    assert scn.scale == scale
    findings, _rows = check_findings(scn)
    assert "RF-VOLT-003" not in codes(findings)
    group, assumed = scale_group(scn.scale)
    assert not assumed
    assert S91_TABLE3[group] == S91[S.SCALES[scale]]


@pytest.mark.parametrize("scale, far_from_nominal", [("N", True), ("HO", False),
                                                      ("large", True)])
def test_the_scale_decides_the_nominal_voltage(scale, far_from_nominal):
    # no load: the rails stand at the supply's 15 V (ideal supply and booster); a note
    # (RF-VOLT-004) when that is more than 2 V from the scale's nominal: N 12 V (3 V off),
    # HO 15 V (0 V off), large 18 V (3 V off)
    findings, _rows = check_findings(loads(OVAL + f"scale: {scale}\n"))
    assert ("RF-VOLT-004" in codes(findings)) is far_from_nominal


def test_an_unknown_scale_is_refused_with_the_choices():
    with pytest.raises(ScenarioError) as info:
        loads(OVAL + "scale: HOn\n")
    (p,) = info.value.problems
    assert p.path == "scale" and "expected one of Z, N, HO, OO, S, O, G, large" in p.message
    assert "did you mean 'HO'?" in p.message


# -------------------------------------------------------------------- laps
def test_laps_lay_the_route_out_at_load():
    t = loads(OVAL).trains["t"]
    assert t.laps == 3
    assert t.route == ("s1", "s2", "s1", "s2", "s1", "s2", "s1")


def test_the_layouts_route_follower_follows_the_laps():
    scn = loads(OVAL)
    legs = build_layout(scn).route_path("t")
    assert [leg.section for leg in legs] == list(scn.trains["t"].route)
    assert [leg.joint_in.name for leg in legs[1:]] == ["s1.b~s2.a", "s2.b~s1.a"] * 3
    # the route's length, by hand: 3 m from the start (1 m) to s1.b, then three laps of
    # the 8 m oval = 27 m, run at 0.5 m/s in 54 s
    route = build_route(scn, scn.trains["t"], 0.2)
    assert route.route_length_m == pytest.approx(3.0 + 3 * 8.0)


def test_a_run_with_laps_ends_with_a_result():
    res = sim.run(loads(OVAL))
    assert res.verdict == "pass" and res.t_end_s == 60.0


def test_laps_that_cannot_follow_on_are_located_at_the_lap():
    # a lap of [s2] from s1: after s2 the train heads to s2.b, which joins nothing
    text = OVAL.replace("route: [s1, s2, s1]", "route: [s1, s2]").replace(
        "    - {ends: [s2.b, s1.a]}\n", "")
    scn = loads(text)
    with pytest.raises(ScenarioError) as info:
        build_layout(scn)
    (p,) = info.value.problems
    assert p.path == "trains.t.route" and "s2 and s2 are not joined at s2.b" in p.message
    assert (p.line, p.column) == (19, 17)       # the step the second lap repeats: s2


@pytest.mark.parametrize("old, new, path, fragment", [
    ("laps: 3", "laps: 0", "trains.t.laps", "must be at least 1"),
    ("laps: 3", "laps: 1001", "trains.t.laps", "must be at most 1,000"),
    ("laps: 3", "laps: 1.5", "trains.t.laps", "expected an integer"),
    ("route: [s1, s2, s1]", "route: [s1]", "trains.t.laps",
     "needs a route of the start section and at least one more step"),
    ("route: [s1, s2, s1]", "route: [s1, s2, s1, s2, s1, s2, s1, s2, s1, s2, s1]\n    laps: "
     "1000\n    depart: 0 s", "trains.t.laps",
     "10001 route steps per train (laps laid out): at most 10000"),
])
def test_laps_out_of_bounds_are_refused(old, new, path, fragment):
    text = OVAL.replace(old, new)
    if "laps: 1000" in new:
        text = text.replace("    laps: 3\n", "")
    with pytest.raises(ScenarioError) as info:
        loads(text)
    (p,) = info.value.problems
    assert p.path == path and fragment in p.message


def test_laid_out_steps_are_located_at_the_steps_they_repeat():
    scn = loads(OVAL)
    locs = scn.locations
    written = [locs[("trains", "t", "route", i)] for i in range(3)]
    laid_out = [locs[("trains", "t", "route", i)] for i in range(7)]
    assert laid_out == written + [written[1], written[2]] * 2


def test_an_out_and_back_lap_needs_its_second_reversal():
    # the example of scenarios/README.md: a lap that ends facing away from `main` cannot
    # follow on; with a second reversal it does, and the run ends with a result
    text = OVAL.replace("    - {ends: [s2.b, s1.a]}\n", "").replace(
        "route: [s1, s2, s1]", "route: [s1, s2, {reverse_after: 5 s}, s1, {reverse_after: 5 s}]")
    scn = loads(text)
    legs = build_layout(scn).route_path("t")
    assert len(legs) == 1 + 4 * 3
    assert sim.run(scn).verdict == "pass"
    with pytest.raises(ScenarioError) as info:
        build_layout(loads(text.replace(", {reverse_after: 5 s}]", "]")))
    assert "s1 and s2 are not joined at s1.a" in info.value.problems[0].message
