"""Shared by the report tests: reports built once per test process."""
from __future__ import annotations

import functools
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "scenarios" / "cinder-ridge.yaml"
REPORT_SCENARIOS = ROOT / "tests" / "scenarios" / "report"


@functools.lru_cache(maxsize=None)
def report_of(path: str, png: bool = False):
    """The page model of a scenario (built once; figures without PNG unless asked)."""
    from sim.report import build
    from sim.scenario import load

    return build(load(path), png=png, date="2026-01-01")


def demo_report(png: bool = False):
    return report_of(str(DEMO), png)
