"""Mutation fuzzing as tests: no scenario, however mutated, ends ``railfault check`` or
``railfault run`` in a defect (exit 3) or runs past its time bound; every bundled and test
scenario checks and runs to a verdict (exit 0 or 1).

The mutants come from :mod:`tests.fuzz_mutants` (seeded ``numpy.random.Generator``; mutant
``k`` of a seed is the same everywhere). The default suite plays 150 mutants, each command
under 30 s of wall clock (most take about 0.1 s; a mutated duration of a day runs
up to the event budget); ``pytest -m slow`` plays 2,850 more under
60 s each. Defects the fuzzer found in the engine and the circuit's solvers belong to the
engine and were fixed there; their reproducers stay under ``tests/scenarios/input/``.
"""
from __future__ import annotations

from pathlib import Path

import pytest

from tests.fuzz_mutants import ROOT, SOURCES, mutants, play

SEED = 7
DEFAULT = range(0, 150)
SLOW = range(150, 3000)
BOUND_S, SLOW_BOUND_S = 30.0, 60.0

#: The reproducers under ``tests/scenarios/input/`` of the defects the fuzzer found in the
#: engine and the circuit's solvers (all fixed now; they stay as scenarios that must run to
#: a verdict): ``engine-draw-1ma.yaml`` (a locomotive drawing 1 mA: a base solve missed
#: Kirchhoff's law by an absolute tolerance), ``engine-feeders.yaml`` (100 feeders 0.2 m
#: apart: the same), ``engine-no-keep-alive.yaml`` (a locomotive without keep-alive on a
#: balloon: a train that lost power on its own bridge dropped and re-made it for ever).


def _play_mutant(k: int, bound_s: float, tmp_path: Path) -> None:
    m = next(mutants(SEED, 1, start=k))
    path = tmp_path / f"mutant-{k}.yaml"
    path.write_text(m.text, encoding="utf-8")
    out = play(str(path), bound_s)
    assert not out.defect, (f"mutant {k} of {m.source} ({m.change}): exit statuses "
                            f"{out.codes}{', ' + out.hang if out.hang else ''}\n{out.stderr}")
    assert set(out.codes.values()) <= {0, 1, 2}


@pytest.mark.parametrize("k", DEFAULT, ids=lambda k: f"mutant-{k}")
def test_a_mutant_ends_in_a_verdict_or_a_located_error(k, tmp_path):
    _play_mutant(k, BOUND_S, tmp_path)


@pytest.mark.slow
@pytest.mark.parametrize("k", SLOW, ids=lambda k: f"mutant-{k}")
def test_many_mutants_end_in_a_verdict_or_a_located_error(k, tmp_path):
    _play_mutant(k, SLOW_BOUND_S, tmp_path)


def test_the_mutants_are_the_same_everywhere():
    # one generator per mutant, from (seed, index): no global random state
    a, b = next(mutants(SEED, 1, start=42)), next(mutants(SEED, 1, start=42))
    assert a == b and a.index == 42
    assert [m.change for m in mutants(SEED, 3)] == [m.change for m in mutants(SEED, 3)]
    assert len({m.change for m in mutants(SEED, 20)}) > 10      # and they differ


SCENARIOS = sorted(p for p in ROOT.glob("scenarios/*.yaml")) + sorted(
    p for p in ROOT.glob("tests/scenarios/**/*.yaml") if "bad" not in p.parts)


@pytest.mark.parametrize("path", [pytest.param(p, id=str(p.relative_to(ROOT)))
                                  for p in SCENARIOS])
def test_every_scenario_checks_and_runs_to_a_verdict(path):
    out = play(str(path), SLOW_BOUND_S)
    assert out.codes == {"check": out.codes["check"], "run": out.codes["run"]}
    assert set(out.codes.values()) <= {0, 1}, f"{out.codes}\n{out.stderr}"


def test_the_fuzzer_mutates_every_kind_of_scenario():
    assert {p.parent.name for p in SOURCES} >= {"scenarios", "checks", "run", "load"}
