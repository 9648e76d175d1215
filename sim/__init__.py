"""railfault: a discrete-event simulator of a model-railroad layout's faults and auto-reversing.

The library API (:mod:`sim.api`), the same verdicts and findings as the command line:

- :func:`load` / :func:`loads` read a scenario file into a frozen :class:`Scenario`
  (mistakes raise :class:`ScenarioError`, every problem located);
- :func:`check` (static and circuit checks) returns a :class:`CheckResult`;
- :func:`faultmap` (the coin test everywhere) returns a :class:`FaultMapResult`;
- :func:`run` (the event simulation) returns a :class:`Result`.

Each result has ``verdict``, ``findings`` and ``as_dict()`` (the JSON contract of
``scenarios/README.md``).

>>> import sim                                              # doctest: +SKIP
>>> res = sim.run(sim.load("scenarios/cinder-ridge.yaml"))  # doctest: +SKIP
>>> res.verdict                                             # doctest: +SKIP
'pass'
"""
from sim.api import CheckResult, FaultMapResult, check, faultmap, run
from sim.errors import OutputError, Problem, RailfaultError, ScenarioError, TopologyError
from sim.model import Finding, Scenario
from sim.scenario import load, loads
from sim.trace import Result

__version__ = "0.1.0"

__all__ = ["CheckResult", "FaultMapResult", "Finding", "OutputError", "Problem",
           "RailfaultError", "Result", "Scenario", "ScenarioError", "TopologyError",
           "__version__", "check", "faultmap", "load", "loads", "run"]
