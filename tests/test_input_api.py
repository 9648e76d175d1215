"""The library API gives the same verdicts and findings as the command line, on every
bundled and test scenario; one verdict and severity rule serves check, faultmap and run."""
from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import pytest

import sim
from sim.cli import main

ROOT = Path(__file__).resolve().parents[1]
SCENARIOS = sorted(ROOT.glob("scenarios/*.yaml")) + sorted(
    p for p in ROOT.glob("tests/scenarios/**/*.yaml")
    if "bad" not in p.parts and "input" not in p.parts)   # input: the engine's reproducers
IDS = [str(p.relative_to(ROOT)) for p in SCENARIOS]


def _cli_json(capsys, *args: str) -> tuple[int, dict]:
    code = main([*args, "--json"])
    return code, json.loads(capsys.readouterr().out)


@pytest.mark.parametrize("path", SCENARIOS, ids=IDS)
def test_the_api_and_the_cli_agree(path, capsys):
    scn = sim.load(path)
    for name, result in (("check", sim.check(scn)), ("faultmap", sim.faultmap(scn)),
                         ("run", sim.run(scn))):
        code, printed = _cli_json(capsys, name, str(path))
        assert result.as_dict() == printed, name
        assert code == {"pass": 0, "fail": 1}[result.verdict], name
        assert result.verdict == sim.verdict.decide(result.findings), name


def test_a_script_sees_the_circuit_findings_that_check_reports(capsys):
    # two reversers feeding each other: the static checks alone find no error, the trip
    # windows of the circuit do (RF-WIN-001); a script must not be told "pass"
    from sim.checks import run_checks
    from sim.layout import build_layout

    path = ROOT / "tests" / "scenarios" / "run" / "fight.yaml"
    scn = sim.load(path)
    assert run_checks(scn, build_layout(scn)).ok               # the static checks alone
    res = sim.check(scn)
    assert res.verdict == "fail" and "RF-WIN-001" in [f.code for f in res.errors]
    assert main(["check", str(path)]) == 1


def test_results_are_documented_dataclasses():
    scn = sim.load(ROOT / "scenarios" / "cinder-ridge.yaml")
    res = sim.check(scn)
    assert dataclasses.is_dataclass(res) and res.scenario is scn
    assert {f.name for f in dataclasses.fields(res)} == {
        "scenario", "verdict", "findings", "reversing", "fault_current", "step_m", "wiring",
        "coin_test"}
    assert res.passed and res.errors == []
    fm = sim.faultmap(scn, step_m=1.0, coin_ohm=0.02)
    assert (fm.step_m, fm.coin_ohm) == (1.0, 0.02)
    assert set(fm.as_dict()) == {"format", "scenario", "verdict", "step_m", "step_asked_m",
                                 "points", "max_points", "coin_ohm", "findings",
                                 "fault_current"}
    for cls in (sim.CheckResult, sim.FaultMapResult):
        assert "Attributes" in cls.__doc__


def test_the_api_takes_a_path_too():
    path = ROOT / "tests" / "scenarios" / "run" / "race-minus.yaml"
    assert sim.check(path).as_dict() == sim.check(sim.load(path)).as_dict()
    assert sim.run(str(path)).verdict == "fail"


def test_findings_are_listed_worst_first():
    res = sim.check(ROOT / "tests" / "scenarios" / "checks" / "polarity-crossover.yaml")
    keys = [(sim.verdict.SEVERITY_ORDER[f.severity], f.code, f.where) for f in res.findings]
    assert keys == sorted(keys)


def test_one_verdict_and_severity_rule():
    import sim.checks
    import sim.trace
    import sim.verdict

    assert sim.trace.decide is sim.verdict.decide
    assert sim.checks.SEVERITY_ORDER is sim.verdict.SEVERITY_ORDER
    info = sim.Finding("info", "RF-X-001", "here", "a note")
    warning = sim.Finding("warning", "RF-X-002", "here", "a warning")
    error = sim.Finding("error", "RF-X-003", "here", "an error")
    assert sim.verdict.decide([info, warning]) == "pass"
    assert sim.verdict.decide([info, error]) == "fail"
    assert sim.verdict.sort_findings([info, warning, error]) == [error, warning, info]


def test_the_readme_example_runs(capsys, monkeypatch):
    import re

    monkeypatch.chdir(ROOT)
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    code = re.search(r"## A library to script.*?```python\n(.*?)```", text, re.S).group(1)
    exec(compile(code, "README.md", "exec"), {"__name__": "readme"})
    assert capsys.readouterr().out.splitlines()[-1] == "pass pass pass"
