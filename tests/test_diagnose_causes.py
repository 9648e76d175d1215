"""Whole runs of tests/scenarios/diagnose/*.yaml: one finding per cause, with the right fix.

Every check value is derived by hand in the scenario file's header (spans from
axle positions, V/R for currents, delays for times) and repeated beside the
assertion. Each of these runs showed the wrong thing before the diagnosis: 23
identical errors, "make the reversing controller faster" for every gap short,
a PASS with a district dark for most of the run, or a PASS with nothing at all.
"""
from pathlib import Path

import pytest

from sim.scenario import load
from sim.world import run

HERE = Path(__file__).parent / "scenarios" / "diagnose"


def _run(name, **kw):
    return run(load(HERE / f"{name}.yaml"), **kw)


def _causes(res):
    return [f for f in res.findings if not f.because]


def _one(res, code):
    (f,) = [f for f in res.findings if f.code == code]
    return f


def _no_faster(res, but=None):
    """No fix tells the user to make a reversing controller faster (except ``but``)."""
    assert not [f for f in res.findings if "faster" in f.fix and f.code != but]


def test_misphased_gap_between_fixed_districts():
    res = _run("misphased-gap")
    assert [f.code for f in _causes(res)] == ["RF-RUN-031"]
    c = _one(res, "RF-RUN-031")
    # 23 shorts: from 0 s (the car stands on the gap), every 1.002 s (2 ms trip + 1 s retry)
    assert c.count == 23
    assert c.first_s == pytest.approx(0.0, abs=1e-9)
    assert c.last_s == pytest.approx(22 * 1.002, abs=1e-9)             # 22.044 s
    # the fewest settings to change, as railfault check finds them (RF-PHS-001)
    assert c.fix == "change 1 setting: booster west-bst: phase inverted -> normal"
    # railfault check's RF-PHS-001 at the same joint (line 46 of the file) is the same
    # cause: linked, not listed a second time
    assert c.same_as == "RF-PHS-001 loop1.b~loop2.a (line 46)"
    assert not [f for f in res.findings if f.code == "RF-PHS-001"]
    _no_faster(res)
    # the 23 trips are one line that follows from it, not 23
    (g,) = [f for f in res.findings if f.because]
    assert (g.code, g.count, g.because) == ("RF-RUN-001", 23, "RF-RUN-031 loop1.b~loop2.a")
    assert "23 shorts of train t1, every one tripped east-bst first" in g.message
    # through each rail's bridge: 16 V / (0.05 + 0.202 / 2) ohm / 2 = 52.98 A (header)
    ep = res.episodes[0]
    paths = getattr(ep, "paths_a", None)
    assert (max(paths.values()) if paths else ep.peak_a) == pytest.approx(52.98, rel=1e-3)
    # east-bst dark 22 x 1 s + (30 - 22.046) s = 29.954 s of 30 s: the headline
    assert res.headline[0].startswith("booster east-bst dark for 29.954 s of 30.000 s (100 %): "
                                      "gap loop1.b~loop2.a meets out of phase")
    assert res.verdict == "fail"


def test_train_longer_than_its_reversing_section():
    res = _run("long-lighted-train")
    c = _one(res, "RF-RUN-030")
    assert c is _causes(res)[0]
    # span: coach 2 axle 2 at 200 + 300 + 270 = 770 mm less loco axle 1 at 20 mm = 750 mm
    assert "train local spans 750 mm" in c.message
    assert "loco axle 1 at 20 mm to coach axle 2 at 770 mm" in c.message
    assert "reversing section rev-sec (fed by rev), 600 mm" in c.message
    # 750 - 600 = 150 mm short
    assert c.fix.startswith("lengthen rev-sec by more than 150 mm (to more than 750 mm), or "
                            "bring local's conducting span under 600 mm")
    # the run shows check's RF-LEN-001 (the same 750 - 600 = 150 mm) by linking to it
    assert c.same_as == "RF-LEN-001 trains.local.consist (line 48)"
    assert not [f for f in res.findings if f.code == "RF-LEN-001"]
    # onset: front pickup axle at 2.6 m when the front is at 2.62 m: 1.12 m / 0.5 m/s
    assert c.first_s == pytest.approx(1.12 / 0.5, abs=1e-9)              # 2.240 s
    _no_faster(res)
    assert res.verdict == "fail"


def test_supply_at_its_limit_browns_the_boosters_out():
    res = _run("supply-brownout")
    c = _one(res, "RF-RUN-033")
    assert c is _causes(res)[0]
    assert c.where == "psu"
    # north drops out at 1.0 s and, after each 0.1 s undervoltage return delay, again:
    # 1.0, 1.1, ..., 4.9 s = 40 times
    assert c.count == 40
    assert c.first_s == pytest.approx(1.0) and c.last_s == pytest.approx(4.9)
    assert "held its 6.00 A current limit" in c.message
    assert "north trips only above 10.00 A" in c.message
    assert c.fix.startswith("give psu a current limit above 10.00 A")
    assert "fewer boosters on it (2 share its 6.00 A)" in c.fix
    # check's never-cleared errors about the same supply follow from it
    static = [f for f in res.findings if f.code in ("RF-FAULT-001", "RF-FAULT-003")]
    assert static and all(f.because == "RF-RUN-033 psu" for f in static)
    # north dark 1 s to 5 s: 4.000 s of 5 s
    assert res.headline[0].startswith("booster north dark for 4.000 s of 5.000 s (80 %): supply "
                                      "psu at its 6.00 A limit browns out north")
    _no_faster(res)


def test_keep_alive_inrush_locks_a_breaker_out():
    res = _run("inrush-lockout")
    c = _one(res, "RF-RUN-034")
    assert c.severity == "error" and c.count == 3
    # 4 x 16 V / 8 ohm = 8.00 A; 8 ohm x 2 mF = 16 ms; 16 ms x ln(8 / (4 - 1)) = 15.693 ms
    assert "charge at 8.00 A in all" in c.message
    assert "time constant 16.000 ms" in c.message
    assert "stay above its 4.00 A trip for 15.693 ms" in c.message
    # dark 300 - 60.0005 - 3 x 0.0005 = 239.998 s of 300 s
    assert "dark for 239.998 s of 300.000 s (80 %)" in c.message
    assert c.fix.startswith("raise yard's trip delay above 15.693 ms, or limit the keep-alives' "
                            "charging current to under 3.00 A in all")
    # the engine's three inrush trips are one line that follows from it
    e7 = _one(res, "RF-RUN-007")
    assert (e7.count, e7.because) == (3, "RF-RUN-034 yard")


def test_short_fed_back_through_a_bridging_car():
    res = _run("backfed-short")
    c = _one(res, "RF-RUN-035")
    # 16 V / 1.292 ohm = 12.38 A through the car once east (nearest) tripped at 1.002 s
    assert "fed back through train parked standing across e1.b~w1.a" in c.message
    assert "once east, the device nearest it, had tripped at 1.002000 s" in c.message
    assert "until west tripped at 1.012000 s" in c.message                 # + 10 ms
    i_a = float(c.message.split(" A through the train")[0].rsplit(" ", 1)[1])
    assert i_a == pytest.approx(16.0 / 1.292, abs=0.01)
    assert c.fix.startswith("keep trains from standing across e1.b~w1.a")
    # west dark 5 - 1.012 = 3.988 s: charged to the back-feed, an error; east's own
    # darkness is the protection at work (the short is in east's district)
    assert c.severity == "error"
    assert res.headline[0].startswith("booster west dark for 3.988 s of 5.000 s (80 %): the short "
                                      "at e1@2 m is fed back")
    assert "(the protection at work)" in res.headline[1]
    _no_faster(res)


def test_bonded_joint_out_of_phase_is_one_root_cause():
    res = _run("bonded-out-of-phase")
    causes = _causes(res)
    assert [f.code for f in causes] == ["RF-RUN-032"]
    c = causes[0]
    assert c.where == "e1.b~e2.a" and "dead short across district east" in c.message
    assert c.fix == "change 1 setting: section e2: leads swapped -> normal"
    # 6 overloads: 0 s, then 1.002 s apart (2 ms trip + 1 s retry), the last at 5.010 s
    assert c.count == 6 and c.last_s == pytest.approx(5 * 1.002, abs=1e-9)
    # everything else follows from it: the trips and check's coin-test failures
    rest = [f for f in res.findings if f is not c]
    assert rest and all(f.because == "RF-RUN-032 e1.b~e2.a" for f in rest)
    assert {f.code for f in rest} >= {"RF-RUN-010", "RF-FAULT-001"}
    # dark 5 x 1 s + 10 - 5.012 s = 9.988 s
    assert res.headline == ["booster east dark for 9.988 s of 10.000 s (100 %): bonded joint "
                            "e1.b~e2.a meets out of phase: a dead short across district east"]


def test_reverser_too_slow_names_the_figure_to_reach():
    res = _run("inrush-lockout")
    c = _one(res, "RF-RUN-036")
    # rev clears 0.5 + 4 = 4.5 ms after the onset; east trips after 3 ms: -1.5 ms
    assert "clears a short at its gap 4.500 ms after the onset" in c.message
    assert "booster east trips 3.000 ms after it" in c.message
    assert c.fix.startswith("make rev clear within 3.000 ms of the onset, 1.500 ms faster")
    assert c.first_s == pytest.approx(0.75, abs=1e-9)          # 0.375 m / 0.5 m/s
    _no_faster(res, but="RF-RUN-036")


def test_required_margin_is_in_the_figure():
    # balloon-relay: loop-ctl would clear 6.1 ms after the onset; main-bst tripped
    # 3.909 ms after it in this run (40 samples of 0.1 ms, the first 9 us after the
    # onset) and can trip as early as (40 - 1) x 0.1 ms = 3.9 ms on another sample
    # phase (TM 5-811-14 and the sampled-sensing rule of railfault check); with the
    # required 0.5 ms, loop-ctl must clear within 3.9 - 0.5 = 3.400 ms: 2.700 ms faster,
    # enough whatever the phase (the run's 3.909 ms would give 3.409 ms, not enough)
    res = run(load(Path(__file__).resolve().parents[1] / "scenarios" / "balloon-relay.yaml"))
    c = _one(res, "RF-RUN-036")
    assert "make loop-ctl clear within 3.400 ms of the onset, 2.700 ms faster" in c.fix
    assert "lengthen main-bst's trip delay by more than 2.700 ms" in c.fix
    # the same cause as railfault check's race finding: one line when merged
    assert c.same_as == "RF-COORD-001 reversers.loop-ctl (line 26)"


def test_reverser_that_never_senses_the_short():
    res = _run("reverser-blind")
    c = _one(res, "RF-RUN-037")
    # 48.19 A through each rail's bridge (header), under rev's 100 A sense level
    assert "not above its 100.00 A sense level" in c.message
    assert c.fix == "lower rev's sense level below 48.19 A"
    _no_faster(res)


def test_two_reversers_fighting():
    res = run(load(Path(__file__).parent / "scenarios" / "run" / "fight.yaml"))
    c = _one(res, "RF-RUN-038")
    # ra senses after 0.5 ms and swaps in 1 ms: rb must wait longer than 1.5 ms
    assert "give rb a sense delay above 1.500 ms" in c.fix
    _no_faster(res)


def test_short_cleared_by_the_device_above_the_nearest():
    res = _run("fault-upstream")
    c = _one(res, "RF-RUN-039")
    # 16 V / 1.112 ohm = 14.39 A, under yard-cb's 20 A
    assert "yard-cb trips only above 20.00 A and the short drew 14.39 A" in c.message
    assert c.fix == "lower yard-cb's trip below 14.39 A"
    # east dark 6 - 1.004 = 4.996 s of 6 s: not the protection at work, so an error
    assert c.severity == "error" and res.verdict == "fail"
    assert res.headline[0].startswith("booster east dark for 4.996 s of 6.000 s (83 %)")


def test_club_layout_gets_one_finding_per_cause():
    # A wye, a balloon, lighted cars and a current-limited supply (club-layout.yaml):
    # two mistakes, two causes, each with its fix; the wye that works says nothing.
    res = _run("club-layout")
    assert [f.code for f in _causes(res)] == ["RF-RUN-030", "RF-RUN-033"]
    length = _one(res, "RF-RUN-030")
    # mogul axle 1 at 30 mm to coach 3 axle 4 at 250 + 2 x 260 + 235 = 1005 mm: 975 mm
    assert "train balloon-local spans 975 mm" in length.message
    assert length.fix.startswith("lengthen balloon by more than 75 mm (to more than 975 mm)")
    supply = _one(res, "RF-RUN-033")
    assert supply.fix.startswith("give psu-main a current limit above 10.00 A")
    assert all(f.because for f in res.findings if f not in _causes(res))
    assert not [f for f in res.findings if "wye" in f.where and not f.because]
    assert res.devices["wye-tail-ctl"].swaps == 1
    _no_faster(res)


def test_slow_breaker_is_a_coordination_error_with_the_check_fix():
    """slow-breaker.yaml (hand figures in its header): a breaker under its 14.39 A short
    that trips after 6 ms loses to its booster (4 ms, sensing every 0.1 ms)."""
    from sim.world.render import render_text

    res = _run("slow-breaker")
    c = _one(res, "RF-RUN-039")
    # a coordination failure is an error of its own (TM 5-811-14 4-1), even though east
    # is dark only 6 - 5.00395 = 0.996 s of 6 s (17 %, not most of the run)
    assert c.severity == "error" and res.verdict == "fail"
    assert res.devices["east"].district_dark_s == pytest.approx(6.0 - 5.00395, abs=1e-6)
    # the check's advice: east's earliest trip (40 - 1) x 0.1 ms = 3.9 ms whatever the
    # phase, so yard-cb must trip in 3.89 ms or less (steps of 0.01 ms), not "below 4 ms"
    assert "set yard-cb's trip delay to 3.89 ms or less (now 6 ms)" in c.fix
    assert "below 4.000 ms" not in c.fix
    # the trip instant, not the onset: 5 s + 0.05 ms + 39 x 0.1 ms = 5.003950 s
    assert "east acted at 5.003950 s, 3.950 ms after the onset" in c.message
    # one cause, listed once: linked to check's RF-COORD-004, not repeated as a static line
    assert c.same_as == "RF-COORD-004 breakers.yard-cb.trip (line 35)"
    assert not [f for f in res.findings if f.code.startswith("RF-COORD")]
    assert len(res.headline) == 1
    text = render_text(res)
    assert "Verdict: FAIL - 1 cause of trouble" in text
    assert "  1. " in text and "  2. " not in text
    assert "same as: RF-COORD-004 breakers.yard-cb.trip (line 35)" in text


def test_a_slow_relay_is_its_own_cause_beside_a_small_supply():
    """slow-relay-small-supply.yaml (hand figures in its header): psu switches off 2 ms
    after the onset, rev clears after 0.1 + 5 = 5.1 ms; without psu east trips at 4 ms,
    so the race is still lost by 5.1 - 4 = 1.1 ms: two causes, neither under the other."""
    res = _run("slow-relay-small-supply")
    causes = _causes(res)
    # a third, static cause the run cannot disprove: rev's own trip (3 ms from its reclose
    # after 0.1 + 5 + 1 = 6.1 ms, so 9.1 ms) is later than psu's switch-off on a fault in
    # its own section (6.1 + 2 = 8.1 ms), and no such fault is played
    assert sorted(f.code for f in causes) == ["RF-COORD-010", "RF-RUN-033", "RF-RUN-036"]
    (static_rev,) = [f for f in causes if f.code == "RF-COORD-010"]
    assert static_rev.where.startswith("reversers.rev.trip")
    # the supply's switch-off is check's RF-COORD-010 for east (4 ms > 2 ms): listed once
    assert _one(res, "RF-RUN-033").same_as.startswith("RF-COORD-010 boosters.east.trip")
    relay = _one(res, "RF-RUN-036")
    assert not relay.because
    assert "the race is still lost by 1.100 ms, so mending psu alone does not win it" \
        in relay.message
    # with the required 0.5 ms: clear within 2 - 0.5 = 1.5 ms, 5.1 - 1.5 = 3.6 ms faster;
    # or east's delay longer by 5.1 + 0.5 - 4 = 1.6 ms (and psu holding its limit)
    assert "make rev clear within 1.500 ms of the onset, 3.600 ms faster" in relay.fix
    assert "lengthen east's trip delay by more than 1.600 ms" in relay.fix
    # the gap's short (margin 2 - 5.1 = -3.1 ms) follows from the relay, not the supply
    (gap,) = [f for f in res.findings if f.code == "RF-RUN-001"]
    assert gap.because == "RF-RUN-036 reversers.rev (line 34)"
    assert "worst margin -3.100 ms" in gap.message
    assert len(res.headline) == 3


def test_keep_alive_inrush_counts_the_trains_there_at_the_restart():
    """inrush-left.yaml (hand figures in its header): s4 left the yard at 8.75 s, so
    the restart at 70.0005 s closes onto 3 keep-alives, not the 4 that stood there at
    0 s."""
    res = _run("inrush-left")
    c = _one(res, "RF-RUN-034")
    assert "trains in its district at 70.000500 s (s1, s2, s3)" in c.message
    # 3 x 16 V / 8 ohm = 6.00 A on top of 3 x 0.25 A = 0.75 A
    assert "charge at 6.00 A in all" in c.message
    assert "on top of 0.75 A running draw" in c.message
    # 16 ms x ln(6 / (4 - 0.75)) = 9.810 ms
    assert "stay above its 4.00 A trip for 9.810 ms" in c.message
    # 4 A - 0.75 A = 3.25 A
    assert "charging current to under 3.25 A in all" in c.fix


def test_trains_that_stood_without_power_follow_from_the_lock_out():
    """inrush-lockout.yaml: yard's last retry trips at 90.0015 s + 0.5 ms = 90.002 s and
    it gives up; each switcher's 0.5 s keep-alive runs out at 90.502 s and it stands to
    the end: 300 - 90.502 = 209.498 s (RF-RUN-042, 10 s or more). The earlier dark spell,
    60.5005 s to the retry at 70.0005 s, is 9.5 s: under 10 s, not reported."""
    res = _run("inrush-lockout")
    stands = [f for f in res.findings if f.code == "RF-RUN-042"]
    assert sorted(f.where.split()[0] for f in stands) == [f"trains.s{k}" for k in (1, 2, 3, 4)]
    for f in stands:
        assert f.because == "RF-RUN-034 yard" and f.severity == "warning"
        assert f.count == 1 and f.first_s == pytest.approx(90.502, abs=1e-9)
        assert "from 90.502000 s to the end of the run (209.498 s)" in f.message
        assert "breaker yard was open" in f.message


def test_a_stand_across_a_gap_follows_from_the_short_that_stopped_it():
    """slow-relay-stand.yaml (header): the engine's RF-RUN-027 stand across
    main.b~rev-sec.a from the short's onset at 0.75 s ((2 m - 1.75 m + 0.125 m) /
    0.5 m/s), for over 1 s (psu's 1 s off time), is tied to the slow relay; no second
    stand finding."""
    res = _run("slow-relay-stand")
    (st,) = [f for f in res.findings if f.code == "RF-RUN-027"]
    assert st.where == "t1" and st.first_s == pytest.approx(0.75, abs=1e-9)
    assert st.because == "RF-RUN-036 reversers.rev (line 25)"
    assert not [f for f in res.findings if f.code == "RF-RUN-042"]
