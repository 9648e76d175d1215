"""railfault: a discrete-event simulator of a model-railroad layout's faults and auto-reversing.

The public API: :func:`load` / :func:`loads` read a scenario file into a frozen
:class:`Scenario`; ``sim.layout.build_layout``, ``sim.checks.run_checks``,
``sim.circuit.build_circuit`` and ``sim.world.run`` take it from there.
"""
from sim.errors import Problem, RailfaultError, ScenarioError, TopologyError
from sim.model import Finding, Scenario
from sim.scenario import load, loads

__version__ = "0.1.0"

__all__ = ["Finding", "Problem", "RailfaultError", "Scenario", "ScenarioError",
           "TopologyError", "__version__", "load", "loads"]
