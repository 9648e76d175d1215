"""Mutation fuzzing as tests: no scenario, however mutated, ends ``railfault check`` or
``railfault run`` in a defect (exit 3) or runs past its time bound; every bundled and test
scenario checks and runs to a verdict (exit 0 or 1).

The mutants come from :mod:`tests.fuzz_mutants` (seeded ``numpy.random.Generator``; mutant
``k`` of a seed is the same everywhere). The default suite plays 150 mutants, each command
under 10 s of wall clock (they take about 0.1 s); ``pytest -m slow`` plays 2,850 more under
60 s each. Defects the fuzzer found in the engine and the circuit's solvers belong to the
engine's branch: a mutant that ends in one of them is marked ``xfail`` with the reason and
its reproducer under ``tests/scenarios/input/`` (:data:`KNOWN`), until that branch lands.
"""
from __future__ import annotations

import re
from pathlib import Path

import pytest

from tests.fuzz_mutants import ROOT, SOURCES, classify, mutants, play

SEED = 7
DEFAULT = range(0, 150)
SLOW = range(150, 3000)
BOUND_S, SLOW_BOUND_S = 10.0, 60.0

_SINGULAR = ("engine: SingularUpdate 'a base solve does not meet Kirchhoff's current law' "
             "(sim/circuit/incremental.py)")
#: Reproducers of the defects the fuzzer found in the engine's branch, and what each shows.
KNOWN_FILES = {
    "engine-draw-1ma.yaml": f"{_SINGULAR} with a locomotive drawing 1 mA",
    "engine-feeders.yaml": f"{_SINGULAR} with 100 feeders 0.2 m apart",
    "engine-no-keep-alive.yaml": "engine: 'no progress ... after 100000 settle passes' after "
                                 "about 40 s: a locomotive without keep-alive on a balloon",
}
#: Mutants that end in those defects: (source, what was changed: a pattern) -> reproducer.
#: A mutant is excused (xfail) only when it matches and its defect is in the engine's
#: modules (or is a hang); any other defect fails the test.
KNOWN = (
    (r".*", r"long list track\.sections\.[^.]+\.feeders", "engine-feeders.yaml"),
    (r"tests/scenarios/run/stall\.yaml", r"edge rolling_stock\.switcher\.draw = '1 mA'",
     "engine-draw-1ma.yaml"),
    (r"scenarios/balloon-relay\.yaml", r"delete rolling_stock\.ten-wheeler\.keep_alive",
     "engine-no-keep-alive.yaml"),
)
_HANGS = {"engine-no-keep-alive.yaml"}


def known_defect(source: str, change: str) -> str:
    """The reproducer a mutant's defect is known by, or ``""``."""
    for src, pattern, reproducer in KNOWN:
        if re.fullmatch(src, source) and re.search(pattern, change):
            return reproducer
    return ""


def _play_mutant(k: int, bound_s: float, tmp_path: Path) -> None:
    m = next(mutants(SEED, 1, start=k))
    path = tmp_path / f"mutant-{k}.yaml"
    path.write_text(m.text, encoding="utf-8")
    out = play(str(path), bound_s)
    reproducer = known_defect(m.source, m.change)
    if out.defect and reproducer and (out.hang or classify(out.stderr) == "engine"):
        pytest.xfail(f"{KNOWN_FILES[reproducer]}; see tests/scenarios/input/{reproducer}")
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


def _scenario_params():
    out = []
    for p in SCENARIOS:
        marks = ()
        if p.name in KNOWN_FILES:
            marks = pytest.mark.xfail(reason=KNOWN_FILES[p.name], strict=False,
                                      run=p.name not in _HANGS)
        out.append(pytest.param(p, id=str(p.relative_to(ROOT)), marks=marks))
    return out


@pytest.mark.parametrize("path", _scenario_params())
def test_every_scenario_checks_and_runs_to_a_verdict(path):
    out = play(str(path), SLOW_BOUND_S)
    assert out.codes == {"check": out.codes["check"], "run": out.codes["run"]}
    assert set(out.codes.values()) <= {0, 1}, f"{out.codes}\n{out.stderr}"


def test_the_fuzzer_mutates_every_kind_of_scenario():
    assert {p.parent.name for p in SOURCES} >= {"scenarios", "checks", "run", "load"}
