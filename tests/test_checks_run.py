"""run_checks as a whole, the per-check YAML scenarios through the loader, and the demo.

Every expected finding of a YAML scenario is derived by hand in the file's
header comment from the rules cited in the check modules.
"""
from pathlib import Path

import pytest

from sim.checks import CHECKS, SEVERITY_ORDER, run_checks
from sim.layout import build_layout
from sim.scenario import load

ROOT = Path(__file__).resolve().parents[1]
HERE = ROOT / "tests" / "scenarios" / "checks"


def report(name):
    scn = load(HERE / name)
    return scn, run_checks(scn, build_layout(scn))


def by_code(rep, severity=None):
    return sorted(f.code for f in rep.findings if severity in (None, f.severity))


def test_registry_lists_every_check():
    names = [c.__name__ for c in CHECKS]
    assert names == ["check_polarity", "check_coverage", "check_gaps", "check_phasing",
                     "check_train_length", "check_coordination", "check_draw"]


def test_findings_sorted_by_severity_code_where():
    _, rep = report("coverage-bonded-reverser.yaml")
    keys = [(SEVERITY_ORDER[f.severity], f.code, f.where) for f in rep.findings]
    assert keys == sorted(keys)
    assert {f.severity for f in rep.findings} == {"error", "warning", "info"}


def test_yaml_polarity_wye():
    scn, rep = report("polarity-wye.yaml")
    assert by_code(rep, "error") == ["RF-POL-001"]
    (f,) = rep.errors
    assert f.where == "track.sections.out (line 19)"          # the line in the file
    assert rep.reversing == [{"cycle": ["main", "leg-w", "tail", "leg-e", "out", "base"],
                              "covered_by": []}]


def test_yaml_polarity_crossover_hides_a_reversing_loop():
    _, rep = report("polarity-crossover.yaml")
    (f,) = rep.errors
    assert f.code == "RF-POL-001" and "1 crossed joint (east-loop.b~d3.b)" in f.message
    cycle = f.message.split("unbalanced loop ")[1].split(":")[0].split(" > ")[:-1]
    assert sorted(cycle) == sorted(["u2", "x", "d3", "east-loop", "u3"])   # by hand
    assert all(c["covered_by"] == [] for c in rep.reversing) and len(rep.reversing) == 2


def test_yaml_coverage():
    _, rep = report("coverage-bonded-reverser.yaml")
    assert by_code(rep, "error") == ["RF-COV-001"]          # once: not also RF-GAP-001
    assert by_code(rep, "warning") == ["RF-COV-002"]
    assert rep.errors[0].where == "throat.b~loop.b (line 26)"


def test_yaml_gaps():
    _, rep = report("gaps-districts.yaml")
    assert by_code(rep) == ["RF-GAP-001", "RF-GAP-002", "RF-GAP-004"]


def test_yaml_phasing():
    _, rep = report("phasing-inverted.yaml")
    (f,) = rep.findings
    assert f.code == "RF-PHS-001"
    assert f.fix == "change 1 setting: booster mid: phase inverted -> normal"


def test_yaml_train_length():
    # loco 0-200 mm (axles 20..180), coach 200-450 (pickup 225, 430), hopper 450-550
    # (metal, 470 and 530): span 530 - 20 = 510 mm; loop 400 mm: 110 mm short
    _, rep = report("train-length-balloon.yaml")
    (f,) = rep.errors
    assert f.code == "RF-LEN-001" and "110 mm short" in f.message


def test_yaml_coordination():
    _, rep = report("coordination-race.yaml")
    assert by_code(rep, "error") == ["RF-COORD-001", "RF-COORD-004", "RF-COORD-004",
                                     "RF-COORD-007"]
    f = next(f for f in rep.errors if f.code == "RF-COORD-001")
    assert "margin -0.100 ms" in f.message                     # 0.5 - (0.1 + 0.5) ms
    # loop-ctl on a fault in its loop: no dead time, so east's count never stops; the
    # reverser trips 0.1 + 0.5 + 0.3 = 0.9 ms after the onset, east at 0.5 ms
    f = next(f for f in rep.errors if f.code == "RF-COORD-004" and "loop-ctl" in f.where)
    assert "(0.9 ms after the onset)" in f.message and "(0.5 ms)" in f.message


def test_demo_layout_has_no_errors():
    scn = load(ROOT / "scenarios" / "cinder-ridge.yaml")
    rep = run_checks(scn, build_layout(scn))
    assert rep.errors == []
    covered = sorted(tuple(c["covered_by"]) for c in rep.reversing)
    assert covered == [("balloon",), ("wye-tail",)]
    # demo margins by hand: wye-tail-ctl 0.1 + 0.5 = 0.6 ms against booster west, 4 ms
    # on a 0.1 ms grid (earliest 3.9 ms): +3.3 ms; balloon-ctl 0.6 ms against loop-cb
    # 2 ms continuous: +1.4 ms
    infos = {f.where.split(" ")[0]: f.message for f in rep.findings
             if f.code == "RF-COORD-003"}
    assert "+3.300 ms against booster west" in infos["reversers.wye-tail-ctl"]
    assert "+1.400 ms against breaker loop-cb" in infos["reversers.balloon-ctl"]


@pytest.mark.parametrize("name", sorted(p.name for p in HERE.glob("*.yaml")))
def test_every_check_scenario_loads_and_finds_something(name):
    # static and circuit checks together (some scenarios pass: the club ring, the
    # wiring sheet; their findings are notes)
    from sim.commands.check import check_result

    res = check_result(str(HERE / name))
    assert res["findings"]
