"""The command line: exit statuses, located errors without tracebacks, whole-or-nothing output."""
from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from sim.cli import main

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "scenarios" / "cinder-ridge.yaml"


def run_cli(*args: str) -> subprocess.CompletedProcess:
    """Run the installed entry point in a child process, as a user would."""
    return subprocess.run([sys.executable, "-m", "sim.cli", *args], capture_output=True,
                          text=True, cwd=ROOT, timeout=300)


BAD = """format: railfault/1
title: broken
seed: 1
duration: 10 s
supplies:
  psu: {voltage: 16 V, resistance: 0.05 ohm}
boosters:
  east:
    supply: psu
    trip: {above: 5 A, after: 2 A}
track:
  rail: {resistance: 0.02 ohm/m}
  wheel_contact: 0.05 ohm
  sections:
    s1: {length: -3 m, feed: east}
    s2: {length: 4 m, feed: nowhere, lenght: 2 m}
  joints: []
"""


def test_bad_input_exits_2_with_every_problem_located_and_no_traceback(tmp_path):
    f = tmp_path / "bad.yaml"
    f.write_text(BAD, encoding="utf-8")
    out = tmp_path / "out.json"
    p = run_cli("check", str(f), "--json", "-o", str(out))
    assert p.returncode == 2
    assert "Traceback" not in p.stderr and p.stdout == ""
    # the wrong dimension, with its key path and line (line 10 of the text above)
    assert "boosters.east.trip.after" in p.stderr and ":10:" in p.stderr
    assert 'expected a time (s), got "2 A"' in p.stderr
    assert "track.sections.s1.length" in p.stderr           # negative length
    assert "nowhere" in p.stderr                              # missing reference
    assert "did you mean 'length'" in p.stderr                # unknown key with a suggestion
    assert not out.exists()                                   # nothing written half-way


def test_missing_file_exits_2(tmp_path):
    assert main(["check", str(tmp_path / "none.yaml")]) == 2


def test_usage_error_exits_2():
    p = run_cli("check", str(DEMO), "--step", "2 A")
    assert p.returncode == 2 and "expected a length (m)" in p.stderr


def test_schema_is_json():
    p = run_cli("schema")
    assert p.returncode == 0
    schema = json.loads(p.stdout)
    assert schema["$schema"].endswith("2020-12/schema")


def test_check_reports_the_full_scale_rule_once():
    # the coordination scenario has a sensing full scale below a trip threshold: the static
    # check (RF-COORD-007) and the fault map (RF-FAULT-004) both see it; `check` says it once
    from sim.cli import check_result

    res = check_result(str(ROOT / "tests" / "scenarios" / "checks" / "coordination-race.yaml"))
    codes = [f["code"] for f in res["findings"]]
    assert "RF-COORD-007" in codes
    assert "RF-FAULT-004" not in codes
