"""railfault: circuit — conductors, the nodal network, incremental solving, fault map.

Public API
----------
- :func:`build_circuit` ``(scn, layout=None, grid_m=None) -> Circuit``
- :class:`~sim.circuit.network.Circuit`: ``set_device``, ``set_supply``,
  ``set_bridge``/``clear_bridge``, ``set_load``/``clear_load``,
  ``set_short``/``clear_short``, ``set_feeder_open``; ``solve()`` (full),
  ``update()`` (incremental), ``update_limited()``.
- :func:`check_findings` ``(scn, layout=None, step_m=0.5) -> (findings, fault_current_rows)``
- :mod:`sim.circuit.faultmap`, :mod:`sim.circuit.windows`, :mod:`sim.circuit.voltage`,
  :mod:`sim.circuit.conductors`, :mod:`sim.circuit.inrush`, :mod:`sim.circuit.spice`.

Finding codes: RF-CKT-006 (error, here): the circuit cannot be built or solved
(a bad rail value, an ill-posed network); RF-CKT-NNN (:mod:`sim.circuit.build`, :mod:`sim.circuit.network`),
RF-FAULT-NNN (:mod:`sim.circuit.faultmap`), RF-WIN-NNN (:mod:`sim.circuit.windows`),
RF-VOLT-NNN (:mod:`sim.circuit.voltage`).
"""
from __future__ import annotations

from typing import Optional

from sim.circuit.build import build_topology
from sim.circuit.network import Circuit, KirchhoffError, Solution
from sim.model import Scenario


def build_circuit(scn: Scenario, layout=None, grid_m: Optional[float] = None,
                  points_m: Optional[dict] = None) -> Circuit:
    """Build the circuit of a scenario.

    Parameters
    ----------
    scn
        The scenario.
    layout
        The scenario's layout (built when ``None``): the orientation of the
        sections whose file gives no ``leads`` comes from its wiring sheet.
    grid_m
        Optional rail-node spacing (see :func:`sim.circuit.build.build_topology`);
        loads and shorts are exact at any position without it.
    """
    circuit = Circuit(build_topology(scn, grid_m=grid_m, points_m=points_m, layout=layout))
    circuit.scn = scn
    return circuit


#: Fault-map finding codes whose rule a static check reports too, and that check's
#: code: `railfault faultmap` shows them, `railfault check` only once, as the latter.
REPORTED_BY_STATIC_CHECKS = {"RF-FAULT-004": "RF-COORD-007"}  # full scale below the trip


def check_findings(scn: Scenario, layout=None, step_m: float = 0.5):
    """Findings of the circuit checks and the fault-current rows for ``railfault check``.

    Runs the coin test everywhere (:func:`sim.circuit.faultmap.fault_map`), the
    trip windows (:func:`sim.circuit.windows.trip_windows`) and the rail voltage
    under load (:func:`sim.circuit.voltage.rail_voltage`).

    Returns
    -------
    (findings, rows)
        A list of :class:`~sim.model.Finding` and the ``fault_current`` rows
        ``{section, at_m, current_a, device, trip_a, ok}``.
    """
    from sim.circuit.faultmap import fault_map
    from sim.circuit.voltage import rail_voltage_findings
    from sim.circuit.windows import window_findings
    from sim.circuit.incremental import SingularUpdate
    from sim.errors import TopologyError
    from sim.model import Finding

    try:
        fm = fault_map(scn, layout, step_m=step_m)
    except (TopologyError, KeyError, ValueError, SingularUpdate, KirchhoffError) as exc:
        return [Finding("error", "RF-CKT-006", "track",
                        f"the circuit of this layout cannot be built or solved: {exc}",
                        "check the rail, wire and device values")], []
    # a rule the static checks already report is not reported twice by `check`
    findings = [f for f in fm.findings if f.code not in REPORTED_BY_STATIC_CHECKS]
    findings += window_findings(scn, fm)
    findings += rail_voltage_findings(scn, fm)
    return findings, list(fm.rows)


__all__ = ["Circuit", "KirchhoffError", "Solution", "build_circuit", "check_findings"]
