"""The report's verdict, headline and findings are the commands' own, shown as they show them.

Check values: the JSON objects of ``railfault check --json`` and ``railfault run --json``
for the same file (``sim.api.check(...).as_dict()`` and ``sim.api.run(...).as_dict()``,
the results contract of scenarios/README.md, "Results"), and the one verdict rule of
every command (``sim.verdict.decide``: any error fails; scenarios/README.md, "Results").
The expected verdicts of each file are also written beside it, from the file's header
or the output of the two commands read by hand.
"""
from __future__ import annotations

import csv
import io
from pathlib import Path

import pytest

from markupsafe import escape

from sim import api
from sim.report.output import files_of
from sim.scenario import load
from tests.report_helpers import report_of

ROOT = Path(__file__).resolve().parent.parent
CASES = {
    # check and run both fail: a train longer than its reversing section and a supply
    # limit under a booster's trip (tests/scenarios/diagnose/club-layout.yaml, header)
    "both": (ROOT / "tests" / "scenarios" / "diagnose" / "club-layout.yaml", "fail", "fail"),
    # the checks fail (two boosters bonded, a siding fed by nothing), no train runs; the
    # run fails too: it shows every static error no run of it can disprove
    # (sim/diagnose/static.py), so a run never passes where its check finds an error
    "check": (ROOT / "tests" / "scenarios" / "checks" / "gaps-districts.yaml", "fail", "fail"),
    # the checks pass, the run fails: a restart lost to keep-alive inrush (file header)
    "run": (ROOT / "tests" / "scenarios" / "run" / "inrush.yaml", "pass", "fail"),
    # the demo passes both (scenarios/README.md)
    "pass": (ROOT / "scenarios" / "cinder-ridge.yaml", "pass", "pass"),
}


def _e(text: str) -> str:
    """Text as the page's autoescaping writes it."""
    return str(escape(text))


@pytest.fixture(scope="module", params=sorted(CASES))
def case(request):
    path, check_v, run_v = CASES[request.param]
    scn = load(path)
    return (report_of(str(path)), api.check(scn).as_dict(), api.run(scn).as_dict(), check_v,
            run_v)


def test_verdict_is_the_one_rule_over_both_commands(case):
    rep, check, run, check_v, run_v = case
    assert (check["verdict"], run["verdict"]) == (check_v, run_v)     # the files' own
    assert (rep.check_verdict, rep.run_verdict) == (check_v, run_v)
    any_error = any(f["severity"] == "error" for f in check["findings"] + run["findings"])
    assert rep.verdict == ("fail" if any_error else "pass")
    assert rep.verdict == ("fail" if "fail" in (check_v, run_v) else "pass")


def test_headline_is_the_runs_and_the_checks_causes(case):
    rep, check, run, _, _ = case
    assert rep.headline == run["headline"]
    assert [f.as_dict() for f in rep.check_headline] == [
        f for f in check["findings"]
        if not f.get("because") and f["severity"] in ("error", "warning")]
    page = files_of(rep)["index.html"]
    header = page[:page.index("<nav")]
    for line in run["headline"]:
        assert _e(line) in header
    for f in rep.check_headline:
        assert _e(f.message) in header
    if not rep.headline and not rep.check_headline:
        assert "Neither the checks nor the simulation found an error or a warning" in header


def test_findings_csv_holds_every_finding_of_both_commands(case):
    rep, check, run, _, _ = case
    rows = list(csv.DictReader(io.StringIO(rep.findings_table.csv_text())))
    want = [("run", f) for f in run["findings"]] + [("check", f) for f in check["findings"]]
    assert len(rows) == len(want)
    for row, (source, f) in zip(rows, want):
        assert row["source"] == source
        for key in ("severity", "code", "where", "message"):
            assert row[key] == f[key]
        assert row["fix"] == f.get("fix", "") and row["because"] == f.get("because", "")
        assert int(row["count"]) == f.get("count", 1)
        for key in ("first_s", "last_s"):
            assert (float(row[key]) if row[key] else None) == f.get(key)


def test_run_findings_keep_their_order_and_each_follower_sits_under_its_cause(case):
    rep, _, run, _, _ = case
    flat = [f for b in rep.run_blocks for f in (b.finding,) + b.followers]
    assert [f.as_dict() for f in flat] == run["findings"]
    for b in rep.run_blocks:
        for x in b.followers:
            assert x.because == f"{b.finding.code} {b.finding.where}"


def test_check_findings_are_listed_as_railfault_check_lists_them(case):
    rep, check, _, _, _ = case
    assert [f.as_dict() for f in rep.check_causes] == [f for f in check["findings"]
                                                        if not f.get("because")]
    assert [f.as_dict() for f in rep.check_followers] == [f for f in check["findings"]
                                                           if f.get("because")]


def test_the_page_shows_each_cause_with_its_fix_and_what_follows_from_it():
    # club-layout: the run's supply cause RF-RUN-033 (psu-main) has four static findings
    # following from it; the check lists 5 findings that follow from RF-FAULT-003.
    rep = report_of(str(CASES["both"][0]))
    page = files_of(rep)["index.html"]
    section = page[page.index('id="h-findings"'):page.index('id="h-settings"')]
    heads = [b for b in rep.run_blocks]
    pos = [section.index(_e(b.finding.message)) for b in heads]
    assert pos == sorted(pos)                                   # the run's own order
    for k, b in enumerate(heads):
        end = pos[k + 1] if k + 1 < len(pos) else len(section)
        if b.finding.fix:
            assert _e(b.finding.fix) in section[pos[k]:end]
        for x in b.followers:
            assert pos[k] < section.index(_e(x.message), pos[k]) < end
    supply = [b for b in heads if b.finding.code == "RF-RUN-033"]
    assert supply and len([x for x in supply[0].followers if x.code == "RF-FAULT-001"]) == 4
    assert len(rep.check_followers) == 5
    assert section.count("<code>RF-FAULT-003 boosters.west.trip.above (line 28)</code>") == 5
