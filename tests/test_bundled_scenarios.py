"""Every bundled scenario loads, checks and runs, and its key figures match the stored summary.

The stored summaries (tests/scenarios/summary/*.json, written by tests/make_summary.py) are
regression values of our own, not outside references: they catch an unintended change in
what the bundled layouts show. Times and margins compare within 1 us.
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.make_summary import ROOT, SUMMARY_DIR, summarise

SCENARIOS = sorted((ROOT / "scenarios").glob("*.yaml"))


def _close(a, b) -> bool:
    if isinstance(a, float) or isinstance(b, float):
        return a is not None and b is not None and abs(a - b) <= 1e-6
    if isinstance(a, dict):
        return a.keys() == b.keys() and all(_close(a[k], b[k]) for k in a)
    if isinstance(a, list):
        return len(a) == len(b) and all(_close(x, y) for x, y in zip(a, b))
    return a == b


def test_every_bundled_scenario_has_a_summary():
    assert SCENARIOS, "no bundled scenarios found"
    assert {p.stem for p in SCENARIOS} == {p.stem for p in SUMMARY_DIR.glob("*.json")}


@pytest.mark.parametrize("path", SCENARIOS, ids=[p.stem for p in SCENARIOS])
def test_bundled_scenario_matches_its_summary(path: Path):
    stored = json.loads((SUMMARY_DIR / (path.stem + ".json")).read_text(encoding="utf-8"))
    fresh = summarise(path)
    assert _close(fresh["check"], stored["check"]), fresh["check"]
    assert _close(fresh["run"], stored["run"]), fresh["run"]


def test_the_demo_layout_passes_check_and_run():
    s = json.loads((SUMMARY_DIR / "cinder-ridge.json").read_text(encoding="utf-8"))
    assert s["check"]["verdict"] == "pass" and s["run"]["verdict"] == "pass"
    # both reversing sections act in the run: one swap each (the demo's purpose)
    assert s["run"]["devices"]["wye-tail-ctl"]["swaps"] == 1
    assert s["run"]["devices"]["balloon-ctl"]["swaps"] == 1
