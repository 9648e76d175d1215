"""A supply that switches off at its current limit (hiccup, latch) is a protective device in
the races, the trip order, the coin test and the trip windows; root causes name the place
they feed. Layout: tests/scenarios/checks/supply-junction.yaml (hand derivations in its
header and beside each value below); each variant changes one or two lines of it."""
from __future__ import annotations

from pathlib import Path

import pytest

from sim.checks.coordination import check_coordination, reversing_margins
from sim.circuit import check_findings
from sim.circuit.faultmap import fault_map
from sim.circuit.windows import window_findings
from sim.layout import build_layout
from sim.scenario import loads

BASE = Path(__file__).resolve().parent / "scenarios" / "checks" / "supply-junction.yaml"
PSU = """  psu: {voltage: 15 V, resistance: 0.05 ohm, current_limit: 14 A,
        on_limit: hiccup, limit_after: 20 ms, off_time: 1 s}"""


def variant(limit_a: float = 14.0, after_ms: float = 20.0, loop_swap_ms: float = 0.4,
            on_limit: str = "hiccup", ecb_after_ms: float = 1.0):
    text = BASE.read_text()
    assert PSU in text
    text = text.replace(PSU, f"""  psu: {{voltage: 15 V, resistance: 0.05 ohm, current_limit: {limit_a:g} A,
        on_limit: {on_limit}, limit_after: {after_ms:g} ms, off_time: 1 s}}""")
    loop = "    swap_time: 0.4 ms\n    dead_time: 0.2 ms\n    hold_off: 50 ms\n" \
           "    trip: {above: 3.5 A, after: 3 ms}\n\ntrack:"
    assert loop in text
    text = text.replace(loop, loop.replace("0.4 ms", f"{loop_swap_ms:g} ms"))
    ecb = "    trip: {above: 2.5 A, after: 1 ms}"
    assert ecb in text
    text = text.replace(ecb, f"    trip: {{above: 2.5 A, after: {ecb_after_ms:g} ms}}")
    return loads(text, str(BASE))


def by_code(findings, code):
    return {f.where.split(" (line ")[0]: f for f in findings if f.code == code}


def test_base_supply_is_slower_than_every_device():
    # header: psu 20 ms, every device acts by 4.0 ms: no supply finding, the yard pair passes
    scn = variant()
    f = check_coordination(scn, build_layout(scn))
    assert not by_code(f, "RF-COORD-010") and not by_code(f, "RF-COORD-011")
    note = by_code(f, "RF-COORD-012")["breakers.yard-ecb.trip"]
    # hand: yard-ecb 1 ms continuous; north 4 ms sampled 0.1 ms, earliest 39 x 0.1 = 3.9 ms
    assert "least margin +2.900 ms" in note.message and "booster north" in note.message


def test_boosters_slower_than_a_hiccuping_supply_are_errors():
    # w-F4: psu 6 A, hiccup after 2 ms; north and south trip after 4 ms (latest 40 x 0.1 ms =
    # 4.0 ms) >= 2 ms: the supply switches off first and the whole layout goes dark
    scn = variant(limit_a=6, after_ms=2)
    f = by_code(check_coordination(scn, build_layout(scn)), "RF-COORD-010")
    assert set(f) == {"boosters.north.trip", "boosters.south.trip",
                      "reversers.stub-ar.trip", "reversers.loop-ar.trip"}
    north = f["boosters.north.trip"]
    assert north.severity == "error"
    assert "psu switches off first" in north.message
    assert "(north, south, yard-ecb, stub-ar, loop-ar)" in north.message
    # hand: the longest 0.1 ms-sampled delay whose latest run-out (n x 0.1 ms) is below
    # 2 ms is n = 19: 1.9 ms; psu's limit_after must exceed north's latest 4.0 ms: 4.01 ms
    assert "set north's trip delay to 1.9 ms (19 samples of 0.1 ms) or less" in north.fix
    assert "set psu's limit_after to 4.01 ms or more (now 2 ms)" in north.fix


def test_reverser_race_counts_the_supply_switch_off():
    # w-F4c: psu hiccups 1 ms after it exceeds 6 A; loop-ar clears 0.1 + 0.7 = 0.8 ms:
    # margin 1.0 - 0.8 = +0.2 ms, not above the required 0.5 ms (RF-COORD-002); stub-ar
    # clears 0.1 + 0.4 = 0.5 ms: 1.0 - 0.5 = +0.5 ms, not above 0.5 ms either
    scn = variant(limit_a=6, after_ms=1, loop_swap_ms=0.7)
    lay = build_layout(scn)
    m = reversing_margins(scn, lay, supplies=True)
    assert m["loop-ar"]["psu"] == pytest.approx(0.2e-3, abs=1e-12)
    assert m["stub-ar"]["psu"] == pytest.approx(0.5e-3, abs=1e-12)
    race = by_code(check_coordination(scn, lay), "RF-COORD-002")
    loop = race["reversers.loop-ar"]
    assert loop.severity == "error"      # the file requires 0.5 ms and the race leaves 0.2
    assert "supply psu can switch off 1 ms after onset" in loop.message
    assert "margin +0.200 ms" in loop.message
    # hand: the swap must end 0.5 ms before 1 ms less the 0.1 ms sense: below 0.4 ms
    assert "set loop-ar's swap time to 0.39 ms or less (now 0.7 ms)" in loop.fix
    # hand: limit_after above 0.8 + 0.5 = 1.3 ms: 1.31 ms on the 0.01 ms grid
    assert "set psu's limit_after to 1.31 ms or more (now 1 ms)" in loop.fix
    # and yard-ecb (1 ms) is not before psu's 1 ms: a trip-order error
    assert by_code(check_coordination(scn, lay), "RF-COORD-010")[
        "breakers.yard-ecb.trip"].severity == "error"


def test_a_supply_that_only_limits_is_not_in_the_race():
    # on_limit "constant-current" holds its current and never switches off: no supply rows
    scn = variant(limit_a=6, after_ms=1, on_limit="constant-current")
    f = check_coordination(scn, build_layout(scn))
    assert not by_code(f, "RF-COORD-010")
    assert "against booster south" in by_code(f, "RF-COORD-003")["reversers.loop-ar"].message


def test_coin_test_says_the_supply_switches_off_first():
    # w-F4: a coin on west-main draws far more than 6 A through psu (prospective 27.30 A at
    # 0.00 m, 15 V over about 0.55 ohm of supply, booster, wire and rail); north may trip as
    # late as 4.0 ms, psu switches off at 2 ms: RF-FAULT-006 (error)
    scn = variant(limit_a=6, after_ms=2)
    fm = fault_map(scn)
    f = by_code(fm.findings, "RF-FAULT-006")
    assert {"track.sections.west-main", "track.sections.east-main"} <= set(f)
    west = f["track.sections.west-main"]
    assert "switches off (hiccup) 2 ms after the onset" in west.message
    assert "north, the nearest device that trips there, may trip as late as 4 ms" in west.message
    # the yard: yard-ecb trips by 1 ms < 2 ms: the yard is not in the list
    assert "track.sections.yard-1" not in f
    assert fm.supply_first["west-main"] == ("north", "psu")


def test_coin_test_in_time_when_the_supply_waits():
    # base: psu 14 A after 20 ms: no coin point where the supply acts first
    fm = fault_map(variant())
    assert not by_code(fm.findings, "RF-FAULT-006")


def test_rating_warning_blames_the_supply_limit_not_the_wiring():
    # w-F4: every short in north's district is capped at psu's 6 A; the prospective currents
    # are 20 A and more. Common practice: rating at most 70 % of the weakest short.
    # Hand: 5 / 6 = 83 %; 5 A / 0.7 = 7.14 A; 0.7 x 6 A = 4.20 A
    scn = variant(limit_a=6, after_ms=2)
    lay = build_layout(scn)
    f = by_code(window_findings(scn, fault_map(scn, lay), lay), "RF-WIN-004")
    north = f["boosters.north.trip.above"]
    assert "83 % of the weakest short current 6.00 A" in north.message
    assert "that current is supply psu's limit" in north.message
    assert "add feeders" not in north.fix
    assert north.fix.startswith("give psu a current limit of 7.14 A or more, or set north's "
                                "continuous rating to 4.20 A or less")


def test_root_cause_links_to_the_booster_that_feeds_the_section():
    # w-small-psu: psu limited at 5 A, both boosters trip above 5 A (RF-FAULT-003 each).
    # east-main, leg-n, leg-s, loop-lead, wye-base are fed by south; west-main by north
    scn = variant(limit_a=5)
    findings, _ = check_findings(scn)
    dead = by_code(findings, "RF-FAULT-001")
    south = {"east-main", "leg-n", "leg-s", "loop-lead", "wye-base"}
    for sec in south:
        assert dead[f"track.sections.{sec}"].because.startswith(
            "RF-FAULT-003 boosters.south.trip.above"), sec
    assert dead["track.sections.west-main"].because.startswith(
        "RF-FAULT-003 boosters.north.trip.above")
    win = by_code(findings, "RF-WIN-001")
    assert win["boosters.south.trip.above"].because.startswith(
        "RF-FAULT-003 boosters.south.trip.above")


def test_supply_first_coin_findings_follow_from_the_trip_order():
    # w-F4: RF-FAULT-006 on east-main follows from south's RF-COORD-010 against psu
    findings, _ = check_findings(variant(limit_a=6, after_ms=2))
    f = by_code(findings, "RF-FAULT-006")
    assert f["track.sections.east-main"].because.startswith("RF-COORD-010 boosters.south.trip")
    assert f["track.sections.west-main"].because.startswith("RF-COORD-010 boosters.north.trip")


def test_slow_breaker_fix_counts_the_sampled_booster():
    # w-slow-ecb: yard-ecb trips after 6 ms (continuous) under north, 4 ms sampled every
    # 0.1 ms: north's earliest trip is (40 - 1) x 0.1 = 3.9 ms, so yard-ecb must trip
    # before it: 3.89 ms on the 0.01 ms grid (not "below 4 ms"); or north's earliest trip
    # must exceed yard-ecb's 6 ms: (n - 1) x 0.1 > 6 -> n = 62 samples, 6.2 ms
    scn = variant(ecb_after_ms=6)
    f = by_code(check_coordination(scn, build_layout(scn)), "RF-COORD-004")
    ecb = f["breakers.yard-ecb.trip"]
    assert ecb.severity == "error"
    assert "set yard-ecb's trip delay to 3.89 ms or less (now 6 ms)" in ecb.fix
    assert "set north's trip delay to 6.2 ms (62 samples of 0.1 ms) or more" in ecb.fix


def test_coin_table_names_the_nearest_device():
    # the yard sections are fed by yard-ecb (its file: feed: yard-ecb), the stub by
    # stub-ar, the balloon by loop-ar: the weakest-short table of check names those, the
    # devices that should clear a short there, not the booster above them
    from sim.commands.check import check_result, render_check

    text = render_check(check_result(str(BASE)))
    table = text.split("Weakest coin-test short per section")[1].split("\n\n")[0]
    rows = {ln.split()[0]: ln.split() for ln in table.splitlines()[3:]}
    assert rows["yard-1"][3] == "yard-ecb" and rows["yard-lead"][3] == "yard-ecb"
    assert rows["stub"][3] == "stub-ar" and rows["balloon"][3] == "loop-ar"
    assert rows["west-main"][3] == "north"
    # yard-ecb trips above 2.5 A (its file)
    assert rows["yard-1"][8:11] == ["2.50", "A", "trips"]
