"""railfault: circuit — conductors, the nodal network, incremental solving, fault map.

Public API
----------
- :func:`build_circuit` ``(scn, layout=None, grid_m=None) -> Circuit``
- :class:`~sim.circuit.network.Circuit`: ``set_device``, ``set_supply``,
  ``set_bridge``/``clear_bridge``, ``set_load``/``clear_load``,
  ``set_short``/``clear_short``, ``set_feeder_open``; ``solve()`` (full),
  ``update()`` (incremental);
  ``device_state``, ``supply_state`` (the switching state, read).
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


#: Finding codes the fault map repeats from the static rules (for ``railfault faultmap``,
#: which runs no static check); ``railfault check`` reports them once, from the checks.
STATIC_CODES = frozenset({"RF-COORD-007"})


def _circuit_findings(scn: Scenario, layout, step_m: float):
    """``(findings, fault map)`` of the coin test, trip windows and rail voltage."""
    from sim.circuit.faultmap import fault_map
    from sim.circuit.voltage import rail_voltage_findings
    from sim.circuit.windows import window_findings

    fm = fault_map(scn, layout, step_m=step_m)
    findings = [f for f in fm.findings if f.code not in STATIC_CODES]
    findings += window_findings(scn, fm, layout)
    findings += rail_voltage_findings(scn, fm, layout)
    return findings, fm


def check_findings(scn: Scenario, layout=None, step_m: float = 0.5, with_map: bool = False):
    """Findings of the circuit checks and the fault-current rows for ``railfault check``.

    Runs the coin test everywhere (:func:`sim.circuit.faultmap.fault_map`), the
    trip windows (:func:`sim.circuit.windows.trip_windows`) and the rail voltage
    under load (:func:`sim.circuit.voltage.rail_voltage`).

    Root causes (:mod:`sim.checks.rootcause`): a circuit finding that a copy of
    the layout with one root-cause mistake mended (a dead short gapped, a clamped
    sensor freed, a supply limit lifted) does not show follows only from that
    mistake: it is kept, with ``because`` naming the root finding, provided the
    root feeds the finding's place (:func:`sim.checks.rootcause.root_for`: lifting
    a shared supply's limit mends every booster on it, but a district is tied to
    the booster that feeds it). A finding that only all the mends together remove
    names the first of their roots that feeds its place. A supply that switches
    off before a device trips (RF-FAULT-006) follows from that pair's trip-order
    finding (RF-COORD-010/-011).

    Returns
    -------
    (findings, rows), or (findings, rows, fault map) with ``with_map``
        A list of :class:`~sim.model.Finding` and the ``fault_current`` rows
        ``{section, at_m, current_a, device, trip_a, ok}``.
    """
    import dataclasses

    from sim.checks.rootcause import (because_of, limit_mends, root_for, static_mends,
                                      supply_order_roots)
    from sim.circuit.incremental import SingularUpdate
    from sim.errors import TopologyError
    from sim.layout import build_layout
    from sim.model import Finding

    if layout is None:
        layout = build_layout(scn)
    try:
        findings, fm = _circuit_findings(scn, layout, step_m)
    except (TopologyError, KeyError, ValueError, SingularUpdate, KirchhoffError) as exc:
        err = [Finding("error", "RF-CKT-006", "track",
                       f"the circuit of this layout cannot be built or solved: {exc}",
                       "check the rail, wire and device values")]
        return (err, [], None) if with_map else (err, [])
    mends = static_mends(scn, layout) + limit_mends(scn, fm.devices)
    passes = [([m], m.scn) for m in mends]
    if len(mends) > 1:
        merged = scn
        for m in mends:
            merged = _merge(merged, m.scn, scn)
        passes.append((mends, merged))
    because: dict = {}
    order = supply_order_roots(scn) if fm.supply_first else {}
    for f in findings:
        if f.code == "RF-FAULT-006":
            sec = f.where.split(" (line ")[0].split(".", 2)[-1]
            root = order.get(fm.supply_first.get(sec))
            if root is not None:
                because[(f.code, f.where)] = because_of(root)
    for roots, mended in passes:
        mended_layout = build_layout(mended, check_routes=False)
        mended_layout.cache.update({k: v for k, v in layout.cache.items()
                                    if k in ("loco_intervals", "train_visits", "train_draw")})
        try:
            after, _ = _circuit_findings(mended, mended_layout, step_m)
        except (TopologyError, SingularUpdate, KirchhoffError):
            continue                     # the mended copy cannot be solved: no marks from it
        left = {(f.code, f.where) for f in after}
        for f in findings:
            key = (f.code, f.where)
            if f.code == "RF-FAULT-003" or key in because or key in left:
                continue
            m = root_for(scn, layout, f.where, [r for r in roots
                                                if key != (r.root.code, r.root.where)])
            if m is not None:
                because[key] = because_of(m.root)
    findings = [dataclasses.replace(f, because=because[(f.code, f.where)])
                if (f.code, f.where) in because else f for f in findings]
    return (findings, list(fm.rows), fm) if with_map else (findings, list(fm.rows))


def _merge(acc: Scenario, mended: Scenario, orig: Scenario) -> Scenario:
    """``acc`` with every part ``mended`` changed against ``orig``."""
    import dataclasses

    changes = {}
    for fld in ("supplies", "boosters", "breakers", "reversers"):
        a, m, o = getattr(acc, fld), getattr(mended, fld), getattr(orig, fld)
        if m is not o:
            changes[fld] = {k: (m[k] if m[k] is not o[k] else a[k]) for k in o}
    if mended.track is not orig.track:
        joints = tuple(mj if mj is not oj else aj for aj, mj, oj in
                       zip(acc.track.joints, mended.track.joints, orig.track.joints))
        changes["track"] = dataclasses.replace(acc.track, joints=joints)
    return dataclasses.replace(acc, **changes)


__all__ = ["Circuit", "KirchhoffError", "Solution", "build_circuit", "check_findings"]
