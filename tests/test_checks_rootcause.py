"""One finding per cause: a dead short reported once as the root cause, and rules kept
in one place (hand derivations in each scenario's header)."""
from __future__ import annotations

from pathlib import Path

import pytest

from sim.checks import run_checks
from sim.checks.rootcause import dead_short_joints
from sim.circuit import check_findings
from sim.circuit.faultmap import fault_map
from sim.commands.check import check_result, render_check
from sim.layout import build_layout
from sim.scenario import load

HERE = Path(__file__).resolve().parent / "scenarios" / "checks"


def test_bonded_joint_out_of_phase_is_reported_once_as_the_root_cause():
    res = check_result(str(HERE / "rootcause-bonded.yaml"))
    causes = [f for f in res["findings"] if f["severity"] == "error" and not f.get("because")]
    assert [f["code"] for f in causes] == ["RF-PHS-001"]
    root = f"RF-PHS-001 {causes[0]['where']}"
    assert causes[0]["where"].startswith("s1.b~s2.a (line ")
    assert causes[0]["fix"] == "change 1 setting: section s2: leads swapped -> normal"
    followers = sorted((f["code"], f["where"].split(" (")[0]) for f in res["findings"]
                       if f.get("because") == root)
    assert followers == [("RF-FAULT-001", "track.sections.s1"),
                         ("RF-FAULT-001", "track.sections.s2"),
                         ("RF-VOLT-001", "main"), ("RF-VOLT-004", "main"),
                         ("RF-WIN-001", "boosters.main.trip.above")]
    # every other finding is a cause of its own
    assert {f["code"] for f in res["findings"] if not f.get("because")} == {"RF-PHS-001",
                                                                           "RF-VOLT-003"}
    text = render_check(res)
    assert "1 error(s), 0 warning(s), 1 note(s) (5 more follow from them)." in text
    assert "Follow only from a finding above" in text


def test_dead_short_figures_by_hand():
    # header of rootcause-bonded.yaml: both rails at the midpoint of one divider: 0 V
    # between them; the booster carries 16 / (0.05 + 0.04 + 0.001) = 175.8 A
    scn = load(HERE / "rootcause-bonded.yaml")
    lay = build_layout(scn)
    assert [j.name for j in dead_short_joints(scn, lay)] == ["s1.b~s2.a"]
    fm = fault_map(scn, lay)
    assert max(p.v_oc_v for p in fm.points) == pytest.approx(0.0, abs=1e-9)
    from sim.circuit import build_circuit
    sol = build_circuit(scn, lay).solve()
    assert sol.device_i_a["main"] == pytest.approx(16.0 / 0.091, rel=1e-6)


def test_coin_test_failure_names_section_point_device_current():
    # what the run's diagnosis needs of a coin-test failure (issue 8, check/run agreement)
    findings, _ = check_findings(load(HERE / "long-line.yaml"))
    f = next(f for f in findings if f.code == "RF-FAULT-001")
    assert f.where.startswith("track.sections.line (line ")
    assert "at 1000.00 m it draws 0.40 A through main (trips above 5 A)" in f.message


def test_same_rule_is_reported_once():
    res = check_result(str(HERE / "same-rule-once.yaml"))
    codes = sorted(f["code"] for f in res["findings"])
    # full scale below the trip: RF-COORD-007 once, RF-FAULT-004 never (retired)
    assert codes.count("RF-COORD-007") == 1 and "RF-FAULT-004" not in codes
    # the running draw: RF-COORD-008 once (3.0 A = 2 x 1.5 A > 2 A), RF-WIN-002 never
    assert codes.count("RF-COORD-008") == 1 and "RF-WIN-002" not in codes
    f8 = next(f for f in res["findings"] if f["code"] == "RF-COORD-008")
    assert "(t1, t2) draw 3 A" in f8["message"] and "at 0.00 s" in f8["message"]
    # the coin test in y1 trips nothing only because yard's sensor clamps at 4 A
    f1 = next(f for f in res["findings"] if f["code"] == "RF-FAULT-001")
    f7 = next(f for f in res["findings"] if f["code"] == "RF-COORD-007")
    assert f1["because"] == f"RF-COORD-007 {f7['where']}"


def test_full_scale_rule_lives_in_one_function():
    # the fault map reports the static rule's own finding (same code, place and text)
    scn = load(HERE / "same-rule-once.yaml")
    lay = build_layout(scn)
    static = [f for f in run_checks(scn, lay).findings if f.code == "RF-COORD-007"]
    mapped = [f for f in fault_map(scn, lay).findings if f.code == "RF-COORD-007"]
    assert static == mapped and len(static) == 1


def test_a_finding_of_its_own_is_not_marked():
    # coordination-race.yaml: RF-FAULT-001 in yard1 follows from yard's clamp (4 A full
    # scale against a 5 A trip); nothing follows from the race findings
    res = check_result(str(HERE / "coordination-race.yaml"))
    marked = {(f["code"], f["because"].split(" ")[0]) for f in res["findings"]
              if f.get("because")}
    assert marked == {("RF-FAULT-001", "RF-COORD-007")}
