"""Running samples: apply a sample's values to the frozen model and play it.

A :class:`Runner` is made once per process from the loaded base scenario and
the varied key paths. What the samples share is built once
(:func:`sim.whatif.paths.reuse_of` decides from the paths): the layout graph,
and the circuit with its factorization, which each sample starts from again
with :meth:`sim.circuit.network.Circuit.rewind` (a rewound circuit solves every
state as a new one does, so a sample's result does not depend on which samples
ran before it in the same process). Each sample is the base model with its
values put in by :func:`sim.whatif.paths.apply` (``dataclasses.replace``
along each path), played by :class:`sim.world.World`.

A sample whose values make the scenario unusable (a route that no longer
joins, a circuit that cannot be built) is recorded as ``invalid`` with the
message; any other exception is a defect and propagates.
"""
from __future__ import annotations

from typing import Mapping

from sim.errors import ScenarioError, TopologyError
from sim.whatif.outcome import crossed_gaps, run_record
from sim.whatif.paths import PathError, apply_all, reuse_of

__all__ = ["Runner"]


class Runner:
    """Plays samples of one base scenario (module docstring).

    Parameters
    ----------
    scn : sim.model.Scenario
        The base, loaded and validated once.
    paths : Mapping[str, tuple]
        ``{key text: path}`` of the varied keys.
    """

    def __init__(self, scn, paths: Mapping[str, tuple]):
        from sim.circuit import build_circuit
        from sim.layout import build_layout

        self.base = scn
        self.paths = dict(paths)
        self.reuse = reuse_of(self.paths.values())
        self.layout = build_layout(scn) if self.reuse.layout else None
        self.circuit = build_circuit(scn, self.layout) if self.reuse.circuit else None
        self.static = None
        if self.reuse.static:
            from sim.diagnose.static import static_findings

            self.static = static_findings(scn, self.layout or build_layout(scn))

    def scenario(self, values: Mapping[str, object]):
        """The base with ``{key text: value}`` applied."""
        return apply_all(self.base, {self.paths[k]: v for k, v in values.items()})

    def result(self, values: Mapping[str, object]):
        """The diagnosed :class:`sim.trace.Result` of the base with ``values`` applied:
        the verdict and findings of ``railfault run`` on that scenario."""
        return self._played(values)[0]

    def _played(self, values: Mapping[str, object]):
        """``(diagnosed result, scenario)`` of the base with ``values`` applied."""
        from sim.diagnose import diagnose
        from sim.world import World

        scn = self.scenario(values)
        circuit = self.circuit
        if circuit is not None:
            circuit.rewind()
        res = World(scn, layout=self.layout, circuit=circuit).run()
        return diagnose(scn, res, layout=self.layout, static=self.static), scn

    def record(self, i: int, values: Mapping[str, object]) -> dict:
        """The sweep's row of sample ``i``: inputs, verdict, gaps, trips (or ``invalid``)."""
        row = {"i": int(i), "inputs": dict(values)}
        try:
            res, scn = self._played(values)
            layout = self.layout
            if layout is None:
                from sim.layout import build_layout
                layout = build_layout(scn)
            crossed = crossed_gaps(scn, layout, res)
        except (ScenarioError, PathError, TopologyError) as exc:
            row["invalid"] = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
            return row
        row.update(run_record(res))
        row["crossed"] = crossed
        return row
