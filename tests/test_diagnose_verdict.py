"""One verdict rule, one severity order; the run's verdict rules of issue 8.

* a district dark for most of the run because of a short the layout makes itself
  fails the run, even when no gap episode failed; a scheduled short cleared by the
  device nearest it does not;
* ``check`` and ``run`` agree: a short ``check`` finds is never cleared shows in the
  run, marked as static, and the run cannot pass;
* a long let-through is stated beside the verdict with its I²t.
Check values are derived by hand in the scenario headers and beside the assertions.
"""
import json
from pathlib import Path

import pytest

from sim.cli import main
from sim.diagnose import diagnose_facts
from sim.diagnose.facts import RunFacts
from sim.diagnose.static import STATIC_MARK
from sim.layout import build_layout
from sim.model import Finding
from sim.scenario import load
from sim.trace import DeviceSummary, Episode
from sim.verdict import SEVERITY_ORDER, decide, sort_findings
from sim.world import run
from sim.world.render import render_text

ROOT = Path(__file__).resolve().parents[1]
DIAG = ROOT / "tests" / "scenarios" / "diagnose"
RUN = ROOT / "tests" / "scenarios" / "run"


def test_one_verdict_rule_and_severity_order():
    fs = [Finding("info", "RF-B-001", "x", "m"), Finding("error", "RF-A-002", "y", "m"),
          Finding("warning", "RF-A-001", "z", "m")]
    assert [f.severity for f in sort_findings(fs)] == ["error", "warning", "info"]
    assert decide(fs) == "fail" and decide(fs[::2]) == "pass"
    import sim.checks
    import sim.trace
    assert sim.trace.decide is decide                       # kept as a re-export
    assert sim.checks.SEVERITY_ORDER is SEVERITY_ORDER


def test_dark_for_most_of_the_run_without_a_failed_gap_fails():
    # inrush.yaml (tests/scenarios/run): no gap at all; yard is dark 1.998 s of 3 s
    # (67 %) because its restarts trip on keep-alive inrush (the layout's own doing)
    res = run(load(RUN / "inrush.yaml"))
    assert not [e for e in res.episodes if e.kind == "gap"]
    assert res.verdict == "fail"
    assert res.headline[0].startswith("breaker yard dark for 1.998 s of 3.000 s (67 %)")


def test_scheduled_short_cleared_by_the_nearest_device_passes():
    # backoff.yaml: a short that stays, cleared by east (the only device) every time:
    # east is dark 38.984 s of 40 s - the protection at work, said in the headline
    res = run(load(RUN / "backoff.yaml"))
    assert res.verdict == "pass"
    assert res.headline == ["booster east dark for 38.984 s of 40.000 s (97 %): the scheduled "
                            "short at main@3 m, cleared by east, the device nearest it (the "
                            "protection at work)"]
    (f,) = res.findings
    assert (f.code, f.severity, f.count) == ("RF-RUN-010", "info", 8)


def test_checks_never_cleared_short_shows_in_the_run(capsys):
    path = DIAG / "never-cleared.yaml"
    assert main(["check", str(path), "--json"]) == 1
    chk = json.loads(capsys.readouterr().out)
    assert "RF-FAULT-001" in {f["code"] for f in chk["findings"] if f["severity"] == "error"}
    res = run(load(path))
    assert not res.episodes                        # nothing happens in the run itself
    assert res.verdict == "fail"
    (f,) = [f for f in res.findings if f.code == "RF-FAULT-001"]
    assert f.message.startswith(STATIC_MARK)
    # a coin at 30 m: 16 V / 1.302 ohm = 12.29 A, under the 20 A trip (header)
    assert "at 30.00 m it draws 12.29 A through east (trips above 20 A)" in f.message
    # every static error shows, the never-cleared short first (check's RF-WIN-001: the
    # 20 A trip is above the weakest short, 12.29 A at 30 m, the same hand figure)
    assert res.headline == ["railfault check finds shorts that are never cleared: "
                            "RF-FAULT-001 main",
                            "railfault check also finds: RF-WIN-001 boosters.east.trip.above"]
    assert main(["run", str(path)]) == 1


def test_check_and_run_agree_on_every_scenario():
    # a layout whose check reports a never-cleared short never runs to a PASS
    from sim.commands.check import check_result
    from sim.diagnose.static import NEVER_CLEARED

    paths = sorted((ROOT / "scenarios").glob("*.yaml")) + sorted(RUN.glob("*.yaml")) \
        + sorted(DIAG.glob("*.yaml"))
    for p in paths:
        chk = check_result(str(p))
        never = {f["code"] for f in chk["findings"]
                 if f["severity"] == "error" and f["code"] in NEVER_CLEARED}
        if never:
            res = run(load(p))
            assert res.verdict == "fail", p.name
            assert never <= {f.code for f in res.findings}, p.name


def test_long_let_through_is_stated_beside_the_verdict():
    # One overload of 0.5 s at 4 A through east: I²t = 4^2 x 0.5 = 8 A²s (the
    # episode's own figure); 0.5 s >= 0.1 s is a long let-through: a warning, and the
    # run still passes.
    scn = load(RUN / "thermal.yaml")
    ep = Episode(start_s=0.5, end_s=1.0, kind="overload", where="east", peak_a=4.0,
                 outcome="tripped", acted="east", acted_s=1.0)
    ep.i2t_a2s = 4.0 ** 2 * 0.5
    facts = RunFacts(scn=scn, layout=build_layout(scn), episodes=[ep],
                     devices={"east": DeviceSummary("booster", dark_s=0.1)}, summary=None,
                     engine_findings=[], static=[], t_end_s=3.0)
    d = diagnose_facts(facts)
    (lt,) = [f for f in d.findings if f.code == "RF-RUN-041"]
    assert lt.severity == "warning"
    assert "1 overload lasting up to 500.000 ms at up to 4.00 A, letting through up to 8 A²s" \
        in lt.message
    assert decide(d.findings) == "pass"
    assert d.headline == ["long let-through at east: 500.000 ms, 8 A²s"]


def test_text_leads_with_the_verdict_and_headline_then_findings_then_tables():
    res = run(load(DIAG / "inrush-lockout.yaml"))
    text = render_text(res)
    lines = text.splitlines()
    # the lock-out, the slow reverser, and check's RF-COORD-004 the run does not exercise
    assert lines[3].startswith("Verdict: FAIL - 3 causes of trouble")
    assert lines[4].startswith("  1. breaker yard dark for 239.998 s of 300.000 s (80 %)")
    # as many numbered lines as the count says (3), no more
    import re as _re
    verdict = text[text.index("Verdict:"):text.index("Findings:")]
    assert _re.findall(r"^  (\d+)\. ", verdict, _re.M) == ["1", "2", "3"]
    # the headline's dark time is the table's district dark time for yard: the same
    # 300 - 60.0005 - 3 x 0.0005 = 239.998 s (inrush-lockout.yaml header)
    (row,) = [ln for ln in lines if ln.startswith("yard ") and "breaker" in ln]
    assert row.split()[7:9] == ["239.998", "s"]          # the "district dark" column
    assert res.devices["yard"].district_dark_s == pytest.approx(239.998, abs=1e-3)
    order = [text.index(s) for s in ("Verdict:", "Findings:", "Short episodes", "Devices")]
    assert order == sorted(order)
    # grouped by place without --events: the three inrush trips are one row
    assert "yard              overload  -      3" in text
    # every figure of the findings carries its unit
    import re
    block = text[text.index("Findings:"):text.index("Short episodes")]
    bare = re.findall(r"\d+\.\d+(?![\d]| ?(?:ms|s|A|A²s|V|mm|m|ohm|%|\)))", block)
    assert not bare, bare


def test_json_carries_the_headline_and_grouped_findings():
    res = run(load(DIAG / "misphased-gap.yaml"))
    d = json.loads(json.dumps(res.as_dict(), allow_nan=False))
    assert d["headline"] == res.headline and d["headline"]
    grouped = [f for f in d["findings"] if f.get("count", 1) == 23]
    assert {f["code"] for f in grouped} == {"RF-RUN-031", "RF-RUN-001"}
    assert all(f["first_s"] == pytest.approx(0.0, abs=1e-9) for f in grouped)
    assert [f.get("because") for f in d["findings"]] == [None, "RF-RUN-031 loop1.b~loop2.a"]


def test_headline_leads_with_the_district_dark_for_most_of_the_run():
    # inrush-lockout.yaml: the lost race at 0.75 s comes first in time and is an error
    # too, but yard dark for 239.998 s of 300 s (80 %) is the headline
    res = run(load(DIAG / "inrush-lockout.yaml"))
    assert len(res.headline) == 3
    assert res.headline[0] == ("breaker yard dark for 239.998 s of 300.000 s (80 %): breaker "
                               "yard locked out by keep-alive inrush: 3 restarts failed and it "
                               "gave up")
    assert res.headline[1].startswith("reversing controller rev is too slow")
    # check's RF-COORD-004 (rev's own trip on a short in its section), not exercised by
    # the run, is shown as static, last
    assert res.headline[2] == "railfault check also finds: RF-COORD-004 reversers.rev.trip"
    assert [f.code for f in res.findings if not f.because][:2] == ["RF-RUN-034", "RF-RUN-036"]


SCENARIOS = sorted((ROOT / "scenarios").glob("*.yaml")) + sorted(
    p for d in ("run", "diagnose", "checks") for p in (ROOT / "tests" / "scenarios" / d).glob("*.yaml"))


@pytest.mark.parametrize("path", SCENARIOS, ids=lambda p: f"{p.parent.name}/{p.name}")
def test_every_scenario_is_diagnosed(path):
    res = run(load(path))
    d = json.loads(json.dumps(res.as_dict(), allow_nan=False))
    assert d["verdict"] == decide(res.findings)
    refs = {f"{f.code} {f.where}" for f in res.findings if not f.because}
    assert all(f.because in refs for f in res.findings if f.because)
    for f in res.findings:        # a finding of several occurrences knows when they were
        assert f.count >= 1
        if f.count > 1 and f.code.startswith("RF-RUN"):
            assert f.first_s is not None and f.last_s >= f.first_s
    assert ("Verdict: PASS" in render_text(res)) == (res.verdict == "pass")
