"""railfault: a discrete-event simulator of a model-railroad layout's faults and auto-reversing."""
from sim.errors import Problem, RailfaultError, ScenarioError, TopologyError
from sim.model import Finding, Scenario

__version__ = "0.1.0"

__all__ = ["Finding", "Problem", "RailfaultError", "Scenario", "ScenarioError",
           "TopologyError", "__version__"]
