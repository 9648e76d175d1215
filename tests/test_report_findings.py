"""Findings grouped by cause, the verdict and the headline (hand-made findings: the
grouping rule of sim/report/findings.py, applied by hand beside each assertion)."""
from __future__ import annotations

from types import SimpleNamespace

from sim.report.findings import group_findings, headline_of, verdict_of


def _f(sev, code, where, because="", count=1):
    d = {"severity": sev, "code": code, "where": where, "message": f"{code} at {where}"}
    if because:
        d["because"] = because
    if count != 1:
        d["count"] = count
    return d


def test_followers_sit_under_their_cause_and_repeats_are_counted():
    check = [_f("error", "RF-FAULT-001", "sec a", because="RF-PHS-001 j1"),
             _f("error", "RF-PHS-001", "j1"), _f("warning", "RF-WIN-004", "east")]
    run = [_f("info", "RF-RUN-010", "main@6 m"), _f("info", "RF-RUN-010", "main@6 m"),
           _f("error", "RF-RUN-001", "g1", count=4)]
    groups = group_findings(check, run)
    # errors first, the run's before the checks'; then warnings, then notes
    assert [(g.source, g.finding["code"]) for g in groups] == [
        ("run", "RF-RUN-001"), ("check", "RF-PHS-001"), ("check", "RF-WIN-004"),
        ("run", "RF-RUN-010")]
    assert groups[0].count == 4                       # a grouped run finding keeps its count
    assert [x["code"] for x in groups[1].followers] == ["RF-FAULT-001"]
    assert groups[3].count == 2                       # two equal findings shown once


def test_causes_before_consequences_among_check_errors():
    groups = group_findings([_f("error", "RF-FAULT-001", "a"), _f("error", "RF-POL-001", "b")],
                            [])
    assert [g.finding["code"] for g in groups] == ["RF-POL-001", "RF-FAULT-001"]


def test_verdict_is_the_worse_and_the_headline_the_results_own_when_it_has_one():
    passed = SimpleNamespace(verdict="pass", episodes=[], findings=[])
    failed = SimpleNamespace(verdict="fail", episodes=[], findings=[],
                             headline=["district east dark for 80 % of the run"])
    assert verdict_of({"verdict": "pass"}, passed) == "pass"
    assert verdict_of({"verdict": "fail"}, passed) == "fail"
    assert verdict_of({"verdict": "pass"}, failed) == "fail"
    assert headline_of({}, failed, []) == ["district east dark for 80 % of the run"]
    groups = group_findings([_f("error", "RF-POL-001", "b")], [])
    assert headline_of({}, passed, groups) == ["check: RF-POL-001 b: RF-POL-001 at b"]
    assert headline_of({}, passed, [])[0].startswith("No errors")
