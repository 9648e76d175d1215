"""``railfault report``: exit codes, what it prints, what it refuses; a report of every
bundled scenario.

Check values: the verdicts of ``railfault check`` and ``railfault run`` on the same
files (the report's verdict is the worse of the two) and the exit codes of the
README (0 pass, 1 fail, 2 unusable input).
"""
from __future__ import annotations

import json
import os
from pathlib import Path

import pytest

from sim.cli import main
from sim.report import build, write
from sim.scenario import load

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "scenarios" / "cinder-ridge.yaml"
BUNDLED = sorted((ROOT / "scenarios").glob("*.yaml"))


def test_report_writes_the_folder_and_says_so(tmp_path, capsys):
    out = tmp_path / "cr"
    assert main(["report", str(DEMO), "-o", str(out), "--detail", "2"]) == 0
    text = capsys.readouterr().out
    assert "Verdict: PASS" in text and str(out / "index.html") in text
    assert "does not replace a physical short test" in text
    assert (out / "index.html").is_file() and (out / "sequence-2.png").is_file()
    assert not (out / "sequence-3.png").exists()          # --detail 2


def test_a_failing_layout_exits_1(tmp_path, capsys):
    # balloon-relay: its reverser loses the race (scenarios/README: a bundled failing demo)
    assert main(["report", str(ROOT / "scenarios" / "balloon-relay.yaml"), "-o",
                 str(tmp_path / "br"), "--detail", "1"]) == 1
    assert "Verdict: FAIL" in capsys.readouterr().out


def test_unusable_output_or_input_exits_2_and_writes_nothing(tmp_path, capsys):
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "a.txt").write_text("x")
    assert main(["report", str(DEMO), "-o", str(mine)]) == 2
    assert "not a railfault report" in capsys.readouterr().err
    assert os.listdir(mine) == ["a.txt"]
    out = tmp_path / "bad"
    assert main(["report", str(ROOT / "tests" / "scenarios" / "bad" / "ten-mistakes.yaml"),
                 "-o", str(out)]) == 2
    assert not out.exists() and os.listdir(tmp_path) == ["mine"]


@pytest.mark.parametrize("path", BUNDLED, ids=[p.stem for p in BUNDLED])
def test_report_of_every_bundled_scenario(path, tmp_path):
    from sim.commands.check import check_result
    from sim.world import run

    rep = build(load(path), png=False, detail=2)
    write(rep, str(tmp_path / path.stem))
    assert (tmp_path / path.stem / "index.html").stat().st_size > 10_000
    res = json.loads((tmp_path / path.stem / "result.json").read_text(encoding="utf-8"))
    assert res == run(load(path)).as_dict()
    check = check_result(str(path))
    want = "fail" if "fail" in (check["verdict"], res["verdict"]) else "pass"
    assert rep.verdict == want
