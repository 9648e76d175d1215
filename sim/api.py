"""The library API: what ``railfault check``, ``faultmap`` and ``run`` do, for scripts.

Each function takes a loaded :class:`~sim.model.Scenario` (or the path of a file,
loaded first) and returns a documented result object with the same verdict and
findings as the command line, which is a thin layer over these functions
(:mod:`sim.commands`): it only parses its arguments, calls them and prints.

>>> import sim                                              # doctest: +SKIP
>>> scn = sim.load("scenarios/cinder-ridge.yaml")           # doctest: +SKIP
>>> res = sim.check(scn)                                    # doctest: +SKIP
>>> res.verdict, [f.code for f in res.errors]               # doctest: +SKIP
('pass', [])
>>> sim.run(scn).as_dict()["format"]                        # doctest: +SKIP
'railfault-result/1'

Every result has ``verdict`` (``"pass"`` or ``"fail"``, by the one rule of
:func:`sim.verdict.decide`: any error fails), ``findings`` (worst first,
:func:`sim.verdict.sort_findings`) and ``as_dict()``, the JSON object of the
results contract (``scenarios/README.md``, "Results"). Mistakes of the file raise
:class:`sim.errors.ScenarioError` with every problem located; any other exception
is a defect of railfault.
"""
from __future__ import annotations

import os
from dataclasses import dataclass
from typing import Optional, Union

from sim.model import Finding, Scenario
from sim.scenario import load, loads
from sim.trace import Result
from sim.verdict import decide, sort_findings

__all__ = ["load", "loads", "check", "faultmap", "run", "CheckResult", "FaultMapResult",
           "Result", "CHECK_FORMAT", "FAULTMAP_FORMAT", "DEFAULT_STEP_M", "DEFAULT_COIN_OHM"]

#: Format tags of the JSON objects of ``check`` and ``faultmap``.
CHECK_FORMAT = "railfault-check/1"
FAULTMAP_FORMAT = "railfault-faultmap/1"
#: Largest distance between coin-test points, m (the commands' ``--step`` default).
DEFAULT_STEP_M = 0.5
#: Resistance of the coin of the coin test, ohm (common practice: a coin or a
#: screwdriver blade across the rails; the same figure as the fault map's).
DEFAULT_COIN_OHM = 0.01

ScenarioLike = Union[Scenario, str, "os.PathLike[str]"]


def _scenario(scn: ScenarioLike) -> Scenario:
    return scn if isinstance(scn, Scenario) else load(scn)


def _source(scn: Scenario) -> dict:
    return {"title": scn.title, "path": scn.path, "sha256": scn.sha256}


class _Judged:
    """What every result has beside its ``verdict`` and ``findings``."""

    verdict: str
    findings: tuple

    @property
    def errors(self) -> list[Finding]:
        """The findings that fail the verdict."""
        return [f for f in self.findings if f.severity == "error"]

    @property
    def passed(self) -> bool:
        return self.verdict == "pass"


@dataclass(frozen=True)
class CheckResult(_Judged):
    """What ``railfault check`` finds: the static checks and the circuit checks.

    Attributes
    ----------
    scenario : Scenario
        The scenario checked.
    verdict : str
        ``"fail"`` when any finding is an error, else ``"pass"``.
    findings : tuple of Finding
        Static checks (polarity, coverage, gaps, phasing, train length, coordination)
        and circuit checks (coin test, trip windows, rail voltage), worst first.
    reversing : tuple of dict
        ``{cycle: [sections], covered_by: [sections]}`` per unbalanced cycle.
    fault_current : tuple of dict
        The coin-test rows ``{section, at_m, current_a, device, trip_a, ok,
        prospective_a}``.
    step_m : float
        The largest distance between coin-test points asked for.
    wiring : tuple of dict
        The wiring sheet ``{section, device, at_m, leads, chosen}``, one row per
        feeder (:func:`sim.checks.wiring.wiring_rows`).
    coin_test : dict or None
        How the coin test was sampled: ``{points, step_m, step_asked_m,
        max_points, text}`` (the step is widened when the points would exceed
        the bound).
    """

    scenario: Scenario
    verdict: str
    findings: tuple
    reversing: tuple
    fault_current: tuple
    step_m: float = DEFAULT_STEP_M
    wiring: tuple = ()
    coin_test: Optional[dict] = None

    def as_dict(self) -> dict:
        """The ``railfault-check/1`` JSON object (``railfault check --json``)."""
        d = {
            "format": CHECK_FORMAT,
            "scenario": _source(self.scenario),
            "verdict": self.verdict,
            "findings": [f.as_dict() for f in self.findings],
            "reversing": [dict(r) for r in self.reversing],
            "fault_current": [dict(r) for r in self.fault_current],
            "wiring": [dict(r) for r in self.wiring],
        }
        if self.coin_test is not None:
            d["coin_test"] = dict(self.coin_test)
        return d


@dataclass(frozen=True)
class FaultMapResult(_Judged):
    """What ``railfault faultmap`` finds: the coin test at every point of every district.

    Attributes
    ----------
    scenario : Scenario
    verdict : str
        ``"fail"`` when any finding is an error (a short that trips nothing, a
        threshold no short reaches), else ``"pass"``.
    findings : tuple of Finding
        The fault map's findings (``RF-FAULT-*`` and circuit findings), worst first.
    fault_current : tuple of dict
        One row per point and device on its path (as :class:`CheckResult`).
    step_m, coin_ohm : float
        The distance between points used (the step asked for, widened when the
        points would exceed ``max_points``), and the coin's resistance.
    step_asked_m : float
        The step asked for.
    points, max_points : int
        How many points were tested, and the bound on them.
    sampling : str
        One sentence saying how the points were chosen (printed under the title).
    """

    scenario: Scenario
    verdict: str
    findings: tuple
    fault_current: tuple
    step_m: float = DEFAULT_STEP_M
    coin_ohm: float = DEFAULT_COIN_OHM
    step_asked_m: float = DEFAULT_STEP_M
    points: int = 0
    max_points: int = 0
    sampling: str = ""

    def as_dict(self) -> dict:
        """The ``railfault-faultmap/1`` JSON object (``railfault faultmap --json``)."""
        return {"format": FAULTMAP_FORMAT, "scenario": _source(self.scenario),
                "verdict": self.verdict, "step_m": self.step_m,
                "step_asked_m": self.step_asked_m, "points": self.points,
                "max_points": self.max_points, "coin_ohm": self.coin_ohm,
                "findings": [f.as_dict() for f in self.findings],
                "fault_current": [dict(r) for r in self.fault_current]}


def check(scn: ScenarioLike, step_m: float = DEFAULT_STEP_M) -> CheckResult:
    """Every static and circuit check of a layout (``railfault check``).

    Parameters
    ----------
    scn
        A loaded scenario, or the path of a scenario file.
    step_m
        Largest distance between coin-test points, m.

    Raises
    ------
    sim.errors.ScenarioError
        The file cannot be used (a route whose sections do not join, ...).
    """
    from sim.checks import run_checks
    from sim.checks.wiring import wiring_rows
    from sim.circuit import check_findings
    from sim.layout import build_layout

    scn = _scenario(scn)
    layout = build_layout(scn)
    report = run_checks(scn, layout)
    circuit_findings, rows, fm = check_findings(scn, layout, step_m=step_m, with_map=True)
    findings = tuple(sort_findings(list(report.findings) + list(circuit_findings)))
    coin = None
    if fm is not None:
        coin = {"points": len(fm.points), "step_m": fm.step_m, "step_asked_m": fm.step_asked_m,
                "max_points": fm.max_points, "text": fm.describe()}
    return CheckResult(scenario=scn, verdict=decide(findings), findings=findings,
                       reversing=tuple(dict(r) for r in report.reversing),
                       fault_current=tuple(dict(r) for r in rows), step_m=step_m,
                       wiring=tuple(wiring_rows(scn, layout)), coin_test=coin)


def faultmap(scn: ScenarioLike, step_m: float = DEFAULT_STEP_M,
             coin_ohm: float = DEFAULT_COIN_OHM) -> FaultMapResult:
    """The prospective short-circuit current everywhere (``railfault faultmap``).

    Parameters
    ----------
    scn
        A loaded scenario, or the path of a scenario file.
    step_m
        Largest distance between points, m.
    coin_ohm
        Resistance of the short laid across the rails, ohm.
    """
    from sim.circuit.faultmap import fault_map
    from sim.layout import build_layout

    scn = _scenario(scn)
    fmap = fault_map(scn, build_layout(scn), step_m=step_m, r_coin_ohm=coin_ohm)
    findings = tuple(sort_findings(fmap.findings))
    return FaultMapResult(scenario=scn, verdict=decide(findings), findings=findings,
                          fault_current=tuple(dict(r) for r in fmap.rows), step_m=fmap.step_m,
                          coin_ohm=coin_ohm, step_asked_m=step_m, points=len(fmap.points),
                          max_points=fmap.max_points, sampling=fmap.describe())


def run(scn: ScenarioLike, until_s: Optional[float] = None,
        keep_events: bool = False, event_budget: Optional[int] = None) -> Result:
    """Play the scenario in the event engine (``railfault run``).

    Parameters
    ----------
    scn
        A loaded scenario, or the path of a scenario file.
    until_s
        Stop at this instant instead of the scenario's duration, s.
    keep_events
        Keep every event (``--events``); without it events are summarised.
    event_budget
        The most engine events the run may take (``--budget``; default
        :data:`sim.world.engine.EVENT_BUDGET`): a run that reaches it stops there
        with RF-RUN-023 and cannot pass.

    Returns
    -------
    sim.trace.Result
        ``verdict``, ``findings``, ``episodes``, ``devices`` and ``as_dict()`` (the
        ``railfault-result/1`` JSON object).
    """
    from sim.world import run as play

    kw = {} if event_budget is None else {"event_budget": int(event_budget)}
    return play(_scenario(scn), until_s=until_s, keep_events=keep_events, **kw)
