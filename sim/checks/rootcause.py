"""Root causes: the mistakes that make other findings, and the layout without them.

Some mistakes change the whole circuit, and the circuit checks (the coin test,
the trip windows, the rail voltage) then report what follows from them in every
district they reach. Each is reported once, as the root cause, by the check
that owns its rule; the circuit findings that follow only from it carry
``because: "CODE where"`` of that finding (:func:`sim.circuit.check_findings`
decides which: those that a copy of the layout with the mistake mended does not
show). The mistakes and their mends:

dead short
    A bonded joint (or one gapped on one rail) whose rails meet out of phase in
    the base state (every device closed, none swapped, the leads as built or as
    the wiring sheet chooses them) joins the two sides of the track signal: a
    short across the district at all times (``domain.md``). Found by a
    union-find over the rails (joined across bonded rails in file order; a rail
    group that would hold both polarities names the joint that joins them).
    The root is the finding that names the joint: RF-PHS-001 (fixed-phase track
    out of phase), RF-COV-001 or RF-COV-003 (a reversing district bonded to its
    neighbour), RF-POL-001 or RF-POL-003 (a loop that no wiring gives one
    polarity). Mended by gapping those joints on both rails.
full scale
    RF-COORD-007: a device whose sensing full scale is at or below its trip
    threshold never trips, so no coin in its district trips it. Mended by an
    unclamped sensor.
supply limit
    RF-FAULT-003: a trip threshold at or above the supply's current limit.
    Mended by lifting that supply's limit.

A root names only the places it feeds (:func:`root_for`): each mend carries the
devices its mistake concerns (the device whose threshold or sensor is wrong; for a
dead short, the devices feeding the sections on both sides of its joints), and a
finding follows from a root only when one of those devices is in the feed chain
of the finding's place (a section's chain, or a device and the chain above it).
Lifting a supply's limit mends every booster on it at once, so without this rule
the first of them would be named for the districts of the others. A dead short
draws its supply to its limit and so reaches every district on that supply: when
no root feeds a place, a dead short on the same supply is named.

A supply that switches off at its limit before a device trips (RF-FAULT-006 of
the coin test) follows from the trip-order finding of that device and supply
(RF-COORD-010 or -011, :func:`sim.checks.coordination.nested_subjects`).
"""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

from sim.checks.coordination import full_scale_subjects
from sim.checks.coverage import check_coverage
from sim.checks.phasing import phasing_subjects
from sim.checks.polarity import polarity_subjects
from sim.checks.wiring import section_leads
from sim.layout import joint_where
from sim.model import Finding, Joint, Scenario

__all__ = ["Mend", "dead_short_joints", "static_mends", "limit_mends", "because_of",
           "place_chain", "root_for", "supply_order_roots"]


@dataclass(frozen=True)
class Mend:
    """A root-cause finding, the scenario with that mistake mended, the devices the
    mistake concerns, and the supplies a dead short draws to their limit."""

    root: Finding
    scn: Scenario
    devices: frozenset = frozenset()
    supplies: frozenset = frozenset()


def because_of(f: Finding) -> str:
    """The ``because`` text naming a root finding: ``"CODE where"``."""
    return f"{f.code} {f.where}"


def _rail_pairs(j: Joint):
    """The rail pairs a joint bonds: ``[((x, rail), (y, rail)), ...]``."""
    from sim.circuit.build import other_rail, seen_to_section_rail

    x, y = j.ends
    seen_rails = ("left", "right") if j.gaps == "none" else \
        ((other_rail(j.rail if j.rail in ("left", "right") else "left"),) if j.gaps == "one"
         else ())
    out = []
    for seen in seen_rails:
        rx = seen_to_section_rail(x.end, seen)
        ry = rx if j.sign > 0 else other_rail(rx)
        out.append(((x.section, rx), (y.section, ry)))
    return out


def dead_short_joints(scn: Scenario, layout) -> list[Joint]:
    """The joints whose bonded rails meet out of phase in the base state (module doc)."""
    key = "dead_short_joints"
    if key in layout.cache:
        return layout.cache[key]
    leads = section_leads(scn, layout)
    parent: dict = {}
    label: dict = {}

    def find(r):
        parent.setdefault(r, r)
        while parent[r] != r:
            parent[r] = parent[parent[r]]
            r = parent[r]
        return r

    for s, (lead, _) in leads.items():
        b = scn.booster_of(s)
        ph = (scn.boosters[b].phase if b is not None else 1) * lead
        label[find((s, "left"))] = ph
        label[find((s, "right"))] = -ph
    out = []
    for j in scn.track.joints:
        pairs = [(find(a), find(b)) for a, b in _rail_pairs(j)]
        if any(ra != rb and label.get(ra) is not None and label.get(rb) is not None
               and label[ra] != label[rb] for ra, rb in pairs):
            out.append(j)
            continue
        for ra, rb in pairs:
            ra, rb = find(ra), find(rb)
            if ra != rb:
                parent[rb] = ra
                if label.get(ra) is None:
                    label[ra] = label.get(rb)
    layout.cache[key] = out
    return out


def _root_of(scn: Scenario, layout, j: Joint):
    """The static finding that names a dead-short joint (module docstring), or None."""
    for f, joints in phasing_subjects(scn, layout):
        if any(x.index == j.index for x in joints):
            return f
    where = joint_where(scn, j)
    for f in check_coverage(scn, layout):
        if f.code in ("RF-COV-001", "RF-COV-003") and f.where == where:
            return f
    ends = {j.ends[0].section, j.ends[1].section}
    for f, secs in polarity_subjects(scn, layout):
        if ends <= secs:
            return f
    return None


def _with_gaps(scn: Scenario, joints) -> Scenario:
    idx = {j.index for j in joints}
    new = tuple(dataclasses.replace(j, gaps="both") if j.index in idx else j
                for j in scn.track.joints)
    return dataclasses.replace(scn, track=dataclasses.replace(scn.track, joints=new))


def static_mends(scn: Scenario, layout) -> list[Mend]:
    """The dead shorts and clamped sensors, each with its root finding and its mend."""
    mends: list[Mend] = []
    by_root: dict = {}
    for j in dead_short_joints(scn, layout):
        root = _root_of(scn, layout, j)
        if root is not None:
            by_root.setdefault(root, []).append(j)
    for root, joints in by_root.items():
        devs = {d for j in joints for e in j.ends for d in _feeding(scn, layout, e.section)}
        sups = {d for d in devs if d in scn.supplies}
        mends.append(Mend(root, _with_gaps(scn, joints), frozenset(devs - sups),
                          frozenset(sups)))
    for f, table, name in full_scale_subjects(scn):
        dev = getattr(scn, table)[name]
        dev = dataclasses.replace(dev, sense=dataclasses.replace(dev.sense,
                                                                 full_scale_a=math.inf))
        mends.append(Mend(f, dataclasses.replace(
            scn, **{table: {**getattr(scn, table), name: dev}}), frozenset({name})))
    return mends


def _feeding(scn: Scenario, layout, section: str) -> tuple:
    """The devices feeding a section, nearest first, its supply last."""
    d = layout.district(section)
    if d is None:
        return ()
    return (d,) + scn.upstream(d)


def place_chain(scn: Scenario, layout, where: str) -> "tuple | None":
    """The devices feeding the place a circuit finding names (``None``: no place).

    ``track.sections.NAME``: the devices feeding that section; a device's key path
    (``boosters.NAME.trip.above``) or its bare name (the rail-voltage findings): the
    device and the chain above it, its supply last.
    """
    path = where.split(" (line ")[0]
    parts = path.split(".")
    if len(parts) >= 3 and parts[0] == "track" and parts[1] == "sections":
        name = ".".join(parts[2:])
        if name in scn.track.sections:
            return _feeding(scn, layout, name)
    for table in ("boosters", "breakers", "reversers"):
        if parts[0] == table and len(parts) >= 2:
            for name in getattr(scn, table):
                if path == f"{table}.{name}" or path.startswith(f"{table}.{name}."):
                    return (name,) + scn.upstream(name)
    if scn.device_kind(path) in ("booster", "breaker", "reverser"):
        return (path,) + scn.upstream(path)
    return None


def root_for(scn: Scenario, layout, where: str, mends) -> "Mend | None":
    """Of the ``mends`` whose mended layout no longer shows a finding at ``where``, the
    one that feeds that place (module docstring), or ``None``."""
    chain = place_chain(scn, layout, where)
    if chain is None:
        return mends[0] if mends else None
    feeds = set(chain)
    for m in mends:
        if m.devices & feeds:
            return m
    for m in mends:
        if m.supplies & feeds:
            return m
    return None


def supply_order_roots(scn: Scenario) -> dict:
    """``{(device, supply): finding}``: the trip-order findings of a device against the
    supply above it (RF-COORD-010, -011), the roots of RF-FAULT-006."""
    from sim.checks.coordination import nested_subjects

    return {(k, u): f for f, k, u in nested_subjects(scn)
            if f.code in ("RF-COORD-010", "RF-COORD-011")}


def limit_mends(scn: Scenario, devices) -> list[Mend]:
    """One mend per RF-FAULT-003 finding: the supply of its device unlimited."""
    from sim.circuit.faultmap import limit_subjects, supply_of

    mends = []
    for f, name in limit_subjects(scn, devices):
        sup = supply_of(scn, name)
        s = dataclasses.replace(scn.supplies[sup], i_limit_a=math.inf)
        mends.append(Mend(f, dataclasses.replace(scn, supplies={**scn.supplies, sup: s}),
                          frozenset({name})))
    return mends
