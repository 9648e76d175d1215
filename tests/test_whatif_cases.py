"""The cases key and railfault compare.

Check values are derived by hand in tests/scenarios/whatif/compare.yaml (the race of
a 2 ms relay against a 4 ms booster trip, from the onset at 0.75 s); messages are
held to the format's rules (file, key path, line; exit 2; no traceback).
"""
from __future__ import annotations

import json
import subprocess

import pytest

from sim.errors import ScenarioError
from sim.scenario import load, loads
from sim.whatif import compare

FILE = "tests/scenarios/whatif/compare.yaml"
GAP = "main.b~rev-sec.a"


def run_cli(capsys, *args: str) -> subprocess.CompletedProcess:
    """The CLI in this process (``sim.cli.main``): exit status, standard output and error."""
    from sim.cli import main

    capsys.readouterr()
    code = main(list(args))
    out = capsys.readouterr()
    return subprocess.CompletedProcess(args, code, out.out, out.err)


def test_cases_are_whole_scenarios_with_the_values_in_place():
    scn = load(FILE)
    assert list(scn.cases) == ["slow-relay", "coin-short"]
    slow = scn.cases["slow-relay"]
    assert slow.reversers["rev"].t_swap_s == pytest.approx(0.006)
    assert scn.reversers["rev"].t_swap_s == pytest.approx(0.002)
    assert slow.cases == {}                       # a case has no cases of its own
    coin = scn.cases["coin-short"]
    assert len(coin.faults) == 1 and coin.faults[0].section == "main"
    assert coin.faults[0].r_ohm == pytest.approx(0.01)     # the loader's default short
    # locations point into the case
    line = open(FILE).read().splitlines().index(
        "  slow-relay: {reversers.rev.swap_time: 6 ms}") + 1
    assert slow.locations[("reversers", "rev", "swap_time")][0] == line


def test_compare_base_and_two_cases():
    res = compare(load(FILE))
    assert res.names == ["base", "slow-relay", "coin-short"]
    assert {n: r.verdict for n, r in res.results.items()} == \
        {"base": "pass", "slow-relay": "fail", "coin-short": "pass"}
    gap = next(g for g in res.gaps() if g["gap"] == GAP)
    assert gap["section"] == "rev-sec"
    # derived by hand: margin = trip delay - swap time
    assert gap["margin_s"]["base"] == pytest.approx(+0.002, abs=1e-9)
    assert gap["margin_s"]["slow-relay"] == pytest.approx(-0.002, abs=1e-9)
    assert gap["lost"] == {"base": False, "slow-relay": True, "coin-short": False}
    assert gap["episodes"]["coin-short"] == 0
    east = next(d for d in res.devices() if d["device"] == "east")
    assert east["trips"] == {"base": 0, "slow-relay": 1, "coin-short": 1}
    # dark from the trip to the end of the 1 s run: 1 - 0.754 and 1 - 0.204
    assert east["dark_s"]["slow-relay"] == pytest.approx(0.246, abs=1e-9)
    assert east["dark_s"]["coin-short"] == pytest.approx(0.796, abs=1e-9)
    diffs = res.differences()
    (changed,) = diffs["slow-relay"]
    assert changed["change"] == "changed"
    assert set(changed["fields"]) >= {"outcome", "acted", "margin_s"}
    assert changed["base"]["outcome"] == "swapped" and changed["case"]["outcome"] == "tripped"
    assert changed["case"]["acted_s"] == pytest.approx(0.754, abs=1e-9)
    kinds = sorted((d["change"], (d.get("case") or d.get("base"))["kind"])
                   for d in diffs["coin-short"])
    assert kinds == [("added", "fault"), ("removed", "gap")]
    added = next(d for d in diffs["coin-short"] if d["change"] == "added")["case"]
    assert added["acted"] == "east" and added["acted_s"] == pytest.approx(0.204, abs=1e-9)


def test_compare_cli_json_and_text(capsys):
    out = run_cli(capsys, "compare", FILE, "--json")
    assert out.returncode == 1, out.stderr              # a case fails
    data = json.loads(out.stdout)
    assert data["format"] == "railfault-compare/1"
    assert data["verdict"] == {"base": "pass", "slow-relay": "fail", "coin-short": "pass"}
    text = run_cli(capsys, "compare", FILE)
    assert "-2.000 ms LOST" in text.stdout and "+2.000 ms" in text.stdout
    assert "only in coin-short: fault at main@1 m" in text.stdout
    assert "does not replace a physical short test" in text.stdout


BASE = open(FILE, encoding="utf-8").read().split("cases:")[0]


@pytest.mark.parametrize("case,path,words", [
    ("{reversers.rev.swap_time: 2 A}", "cases.bad.reversers.rev.swap_time",
     "expected a time (s), got \"2 A\""),
    ("{reversers.rev.swap_tim: 2 ms}", "cases.bad.reversers.rev.swap_tim",
     "did you mean 'swap_time'"),
    ("{faults: [{at: 0.1 s, short: {section: nowhere, at: 1 m}}]}",
     "cases.bad.faults[0].short.section", "'nowhere' is not defined"),
    ("{reversers.ghost.swap_time: 2 ms}", "cases.bad.reversers.ghost.swap_time",
     "(in 'reversers.ghost', which this case adds)"),
    ("{format: railfault/2}", "cases.bad.format", "cannot change 'format'"),
    ("{track.sections.main.length: 1 m}", "trains.t1.start.at",
     "in case 'bad': at 1.75 m is beyond the length of section 'main'"),
])
def test_a_bad_case_is_located(tmp_path, capsys, case, path, words):
    f = tmp_path / "bad.yaml"
    f.write_text(BASE + f"cases:\n  ok: {{reversers.rev.swap_time: 1 ms}}\n  bad: {case}\n")
    with pytest.raises(ScenarioError) as err:
        load(f)
    probs = err.value.problems
    hit = [p for p in probs if p.path == path]
    assert hit, [str(p) for p in probs]
    assert words in hit[0].message
    assert hit[0].line is not None
    out = run_cli(capsys, "compare", str(f))
    assert out.returncode == 2 and out.stdout == ""
    assert "Traceback" not in out.stderr and f"{path}:" in out.stderr


def test_a_case_can_add_a_train():
    text = BASE + ("cases:\n  second:\n    trains.t2: {consist: [dummy], start: {section: "
                   "main, at: 0.5 m, heading: b}, route: [main, rev-sec], speed: 0.4 m/s}\n")
    scn = loads(text)
    assert list(scn.cases["second"].trains) == ["t1", "t2"]
    assert list(scn.trains) == ["t1"]


def test_compare_needs_cases(tmp_path, capsys):
    f = tmp_path / "plain.yaml"
    f.write_text(BASE)
    out = run_cli(capsys, "compare", str(f))
    assert out.returncode == 2 and "nothing to compare" in out.stderr
