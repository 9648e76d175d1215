"""Build the resistive DC-equivalent network of a scenario.

The bipolar track signal is modelled by its DC equivalent (see
``shared/design/domain.md``): a booster's two output terminals are joined to the
two sides of its supply, ``+`` and ``0``, and its phase (or a swap) decides
which terminal goes to which side. Boosters on one supply therefore share its
nodes, so a bridge between out-of-phase districts of two boosters on one supply
sees the full supply voltage; boosters on separate supplies are isolated from
each other except through the rails.

Elements
--------
supply
    Norton form: a current source ``V/r`` in parallel with ``1/r`` between its
    ``+`` node ``p`` and ``0`` node ``n`` (constant-current mode: the source at
    ``i_limit_a`` without the parallel conductance).
booster
    supply wire pair (one conductor in each side, ``wire_r_ohm / 2`` each),
    then two switched output leads of ``r_out_ohm / 2`` each: the loop through
    a booster sees its whole output resistance once.
breaker, reverser
    feed wire pair from the upstream device's output terminals, then two
    switched leads of ``r_on_ohm / 2`` each; a swap exchanges the leads.
feeders
    one conductor from each device output terminal to each rail at ``at_m``
    (``leads: swapped`` crosses them; a section whose file gives no ``leads`` is
    wired as the wiring sheet chooses, :func:`sim.checks.wiring.section_leads`);
    switchable (a feeder can open).
rails
    each rail of each section is a chain of nodes at its ends, feeders and
    optional grid points, joined by ``r/m * dx``.
joints
    bonded rails are one node (joiners of zero resistance); a ``gaps: one``
    joint bonds only the rail not named; ``rail`` is read as seen from
    ``ends[0]`` looking into its section (at an ``a`` end that is the section's
    own left/right, at a ``b`` end it is mirrored).

A permanent wire below ``R_JOIN_OHM`` (0.1 milli-ohm, under 1 cm of 14 AWG:
a negligible wire, a joiner) joins its nodes into one. A switchable element (supply, lead, feeder,
bridge, load, short) below ``R_MIN_OHM`` (1 milli-ohm, far below any real
wire run, contact or switch) is given ``R_MIN_OHM``: a current computed across
a smaller resistance from node voltages would lose its digits. Sources and
devices of zero resistance get a finding RF-CKT-003. Rail nodes closer than
1 mm (or than the rail length of ``R_JOIN_OHM``) are built as one node; loads
and shorts sit at their exact positions.

Finding codes (this module)
---------------------------
RF-CKT-002 (error)   a device or section is fed from a name that is not a
                     device that can feed it; that part stays unfed.
RF-CKT-003 (warning) an ideal element (zero source or on-resistance): the loop
                     would be ill-posed, so R_MIN_OHM stands in for it.
"""
from __future__ import annotations

import bisect
import math
from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from sim.circuit.conductors import rail_r_per_m_ohm, wire_r_ohm
from sim.errors import TopologyError
from sim.model import Finding, Scenario

#: Smallest resistance of a switchable branch (ohm); see the module docstring.
R_MIN_OHM = 1.0e-3

#: A permanent conductor below this is an ideal joiner: its nodes become one (ohm).
R_JOIN_OHM = 1.0e-4

#: Positions closer than this are one position (m) when locating a point.
POS_EPS_M = 1.0e-9

#: Rail nodes closer than this (feeders, grid points) are built as one node (m);
#: also closer than the length of rail with R_JOIN_OHM.
NODE_MERGE_M = 1.0e-3


def seen_to_section_rail(end: str, seen_rail: str) -> str:
    """The section's own rail (``left``/``right``, a->b) named as seen from ``end``.

    Looking into a section from its ``a`` end one faces ``b``, so names agree;
    from its ``b`` end they are mirrored.
    """
    if end == "a":
        return seen_rail
    return "right" if seen_rail == "left" else "left"


def other_rail(rail: str) -> str:
    return "right" if rail == "left" else "left"


@dataclass
class SupplyNet:
    """A supply's two nodes and its Norton parameters."""

    name: str
    p: int
    n: int
    r_ohm: float
    v_emf_v: float
    i_limit_a: float


@dataclass
class DeviceNet:
    """A switched device output: terminals ``o_l``/``o_r`` and inputs ``a``/``b``.

    Straight (the base state) joins ``o_l-a`` and ``o_r-b``; swapped joins
    ``o_l-b`` and ``o_r-a``; each lead has conductance ``g_lead_s``.
    """

    name: str
    kind: str
    o_l: int
    o_r: int
    a: int
    b: int
    g_lead_s: float
    source: Optional[str]
    supply: Optional[str]


@dataclass
class FeederNet:
    """A feeder pair: ``(terminal, rail node)`` for each conductor, conductance each."""

    section: str
    index: int
    at_m: float
    device: str
    pairs: tuple[tuple[int, int], tuple[int, int]]
    g_s: float


@dataclass
class SectionNet:
    """The rail nodes of a section: ``left[k]``/``right[k]`` at ``xs_m[k]``."""

    name: str
    length_m: float
    xs_m: np.ndarray
    left: np.ndarray
    right: np.ndarray
    r_per_m_ohm: float
    device: Optional[str]

    def seg_g_s(self, k: int) -> float:
        """Conductance of one rail between nodes ``k`` and ``k + 1``."""
        return 1.0 / (self.r_per_m_ohm * (self.xs_m[k + 1] - self.xs_m[k]))

    def locate(self, at_m: float) -> tuple[int, float]:
        """``(k, t)``: ``at_m`` lies at fraction ``t`` of segment ``k``; ``t == 0`` at a node."""
        x = min(max(float(at_m), 0.0), self.length_m)
        xs = self.xs_m
        if len(xs) == 1:
            return 0, 0.0
        k = bisect.bisect_right(xs, x + POS_EPS_M) - 1
        k = min(max(k, 0), len(xs) - 1)
        if abs(xs[k] - x) <= POS_EPS_M:
            return k, 0.0
        if k == len(xs) - 1:
            return k, 0.0
        return k, (x - xs[k]) / (xs[k + 1] - xs[k])

    def end_index(self, end: str) -> int:
        return 0 if end == "a" else len(self.xs_m) - 1


@dataclass
class JointNet:
    """Rail-end node pairs of a joint, keyed by rail as seen from ``ends[0]``."""

    index: int
    gaps: str
    pairs: dict


@dataclass
class Topology:
    """The built network: nodes, permanent branches and switchable elements."""

    labels: list
    perm_a: np.ndarray
    perm_b: np.ndarray
    perm_r_ohm: np.ndarray
    perm_label: list
    supplies: dict
    devices: dict
    feeders: dict
    sections: dict
    joints: dict
    findings: list = field(default_factory=list)

    @property
    def n_nodes(self) -> int:
        return len(self.labels)


class _Nodes:
    """Node table with a union-find for zero-resistance joins."""

    def __init__(self):
        self.labels: list[str] = []
        self.parent: list[int] = []

    def add(self, label: str) -> int:
        self.labels.append(label)
        self.parent.append(len(self.parent))
        return len(self.parent) - 1

    def find(self, i: int) -> int:
        root = i
        while self.parent[root] != root:
            root = self.parent[root]
        while self.parent[i] != root:
            self.parent[i], i = root, self.parent[i]
        return root

    def union(self, a: int, b: int) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[max(ra, rb)] = min(ra, rb)


def _positions(length_m: float, extra: list[float], grid_m: Optional[float],
               merge_m: float = NODE_MERGE_M) -> np.ndarray:
    """Sorted distinct rail-node positions: the ends, ``extra``, and a uniform grid."""
    pts = [0.0, length_m] + [min(max(float(x), 0.0), length_m) for x in extra]
    if grid_m is not None and grid_m > 0 and length_m > 0:
        n = max(1, math.ceil(length_m / grid_m - 1e-9))
        pts += [length_m * i / n for i in range(1, n)]
    pts.sort()
    out = [pts[0]]
    for x in pts[1:]:
        if x - out[-1] > merge_m:
            out.append(x)
    out[-1] = length_m if len(out) > 1 or length_m == 0.0 else out[-1]
    return np.array(out, dtype=float)


def rail_positions(sec, r_per_m_ohm: float, grid_m: Optional[float] = None,
                   extra_m=()) -> np.ndarray:
    """Sorted distinct positions along a section: its ends, its feeders (one at
    mid-length for a fed section without any), ``extra_m`` and a grid no more than
    ``grid_m`` apart; positions closer than :data:`NODE_MERGE_M` (or than the rail
    length of :data:`R_JOIN_OHM`, or a quarter of the grid) are one.

    The rail nodes of the circuit, and the coin-test points of the fault map.
    """
    feeders_m = [f.at_m for f in sec.feeders]
    if sec.feed is not None and not sec.feeders:
        feeders_m = [sec.length_m / 2.0]
    merge_m = max(NODE_MERGE_M, R_JOIN_OHM / r_per_m_ohm)
    if grid_m:
        merge_m = min(merge_m, grid_m / 4.0)
    return _positions(sec.length_m, feeders_m + list(extra_m), grid_m, merge_m)


def _leads(scn: Scenario, layout) -> dict:
    """``{section: +1|-1}``: the leads as given, or as the wiring sheet chooses them."""
    if all(sec.leads is not None for sec in scn.track.sections.values()):
        return {s: sec.leads for s, sec in scn.track.sections.items()}
    from sim.checks.wiring import section_leads
    from sim.layout import build_layout

    if layout is None:
        layout = build_layout(scn, check_routes=False)
    return {s: v for s, (v, _) in section_leads(scn, layout).items()}


def build_topology(scn: Scenario, grid_m: Optional[float] = None,
                   points_m: Optional[dict] = None, layout=None) -> Topology:
    """Turn a scenario into a :class:`Topology` (see the module docstring).

    Parameters
    ----------
    layout
        The scenario's :class:`~sim.layout.Layout` (built when ``None``), for the
        orientation of the sections whose file gives no ``leads``.
    grid_m
        Optional spacing: rail nodes no more than ``grid_m`` apart (besides the
        ends and feeders, which are always nodes). ``None``: ends and feeders only.
    points_m
        Optional ``{section: [at_m, ...]}`` of extra rail nodes.
    """
    nodes = _Nodes()
    findings: list[Finding] = []
    perm: list[tuple[int, int, float, str]] = []
    leads = _leads(scn, layout)

    def wire(a: int, b: int, r_ohm: float, label: str) -> None:
        if r_ohm < R_JOIN_OHM:
            nodes.union(a, b)
        else:
            perm.append((a, b, r_ohm, label))

    # supplies ---------------------------------------------------------------
    supplies: dict[str, SupplyNet] = {}
    for name, s in scn.supplies.items():
        r = s.r_ohm
        if r <= 0.0:
            findings.append(Finding(
                "warning", "RF-CKT-003", scn.where("supplies", name, "resistance"),
                f"supply {name} has no internal resistance: an ideal source makes a short "
                f"ill-posed; {R_MIN_OHM:g} ohm is assumed", "give the supply's resistance"))
            r = R_MIN_OHM
        supplies[name] = SupplyNet(name, nodes.add(f"supply:{name}.p"),
                                   nodes.add(f"supply:{name}.n"), r, s.v_emf_v, s.i_limit_a)

    # device terminals ---------------------------------------------------------
    devices: dict[str, DeviceNet] = {}
    kinds = [("booster", scn.boosters), ("breaker", scn.breakers), ("reverser", scn.reversers)]
    term: dict[str, tuple[int, int]] = {}
    for kind, table in kinds:
        for name in table:
            term[name] = (nodes.add(f"{kind}:{name}.out_left"), nodes.add(f"{kind}:{name}.out_right"))

    def lead_g(r_ohm: float, where: str, what: str) -> float:
        if r_ohm <= 0.0:
            findings.append(Finding(
                "warning", "RF-CKT-003", where,
                f"{what} has zero resistance: {R_MIN_OHM:g} ohm is assumed"))
        return 1.0 / max(r_ohm / 2.0, R_MIN_OHM)

    for name, b in scn.boosters.items():
        ip, in_ = nodes.add(f"booster:{name}.in_plus"), nodes.add(f"booster:{name}.in_zero")
        sup = supplies.get(b.supply)
        if sup is None:
            findings.append(Finding(
                "error", "RF-CKT-002", scn.where("boosters", name, "supply"),
                f"booster {name} names supply {b.supply!r}, which is not a supply: its "
                f"district has no source", "name one of the supplies"))
        else:
            r_w = wire_r_ohm(b.wire) / 2.0
            wire(sup.p, ip, r_w, f"wire {b.supply}->{name} (+)")
            wire(sup.n, in_, r_w, f"wire {b.supply}->{name} (0)")
        o_l, o_r = term[name]
        a, bb = (ip, in_) if b.phase >= 0 else (in_, ip)
        devices[name] = DeviceNet(name, "booster", o_l, o_r, a, bb,
                                  lead_g(b.r_out_ohm, scn.where("boosters", name), f"booster {name}'s output"),
                                  b.supply, b.supply if sup else None)
    for kind, table in kinds[1:]:
        for name, d in table.items():
            i_l, i_r = nodes.add(f"{kind}:{name}.in_left"), nodes.add(f"{kind}:{name}.in_right")
            src = d.feed.source
            key = "breakers" if kind == "breaker" else "reversers"
            if src not in term:
                findings.append(Finding(
                    "error", "RF-CKT-002", scn.where(key, name, "feed"),
                    f"{kind} {name} is fed from {src!r}, which is not a booster, breaker or "
                    f"reverser: its output has no source", "feed it from a device output"))
            else:
                r_w = wire_r_ohm(d.feed.wire) / 2.0
                wire(term[src][0], i_l, r_w, f"wire {src}->{name} (left)")
                wire(term[src][1], i_r, r_w, f"wire {src}->{name} (right)")
            o_l, o_r = term[name]
            devices[name] = DeviceNet(name, kind, o_l, o_r, i_l, i_r,
                                      lead_g(d.r_on_ohm, scn.where(key, name), f"{kind} {name}"),
                                      src, None)
    for d in devices.values():
        seen = set()
        cur = d
        while cur is not None and cur.kind != "booster" and cur.name not in seen:
            seen.add(cur.name)
            cur = devices.get(cur.source)
        d.supply = cur.supply if cur is not None and cur.kind == "booster" else None

    # sections -----------------------------------------------------------------
    r_m = rail_r_per_m_ohm(scn.track.rail)
    if r_m <= 0.0:
        raise TopologyError("the rail resistance must be positive")
    sections: dict[str, SectionNet] = {}
    for name, sec in scn.track.sections.items():
        xs = rail_positions(sec, r_m, grid_m, (points_m or {}).get(name, ()))
        left = np.array([nodes.add(f"rail:{name}.left@{x:.6g}m") for x in xs], dtype=np.int64)
        right = np.array([nodes.add(f"rail:{name}.right@{x:.6g}m") for x in xs], dtype=np.int64)
        dev = sec.feed
        if dev is not None and dev not in devices:
            findings.append(Finding(
                "error", "RF-CKT-002", scn.where("track", "sections", name, "feed"),
                f"section {name} is fed from {dev!r}, which is not a booster, breaker or "
                f"reverser: it has no source", "feed it from a device output"))
            dev = None
        sections[name] = SectionNet(name, sec.length_m, xs, left, right, r_m, dev)
        for k in range(len(xs) - 1):
            r = r_m * (xs[k + 1] - xs[k])
            perm.append((int(left[k]), int(left[k + 1]), r, f"rail {name}.left {k}"))
            perm.append((int(right[k]), int(right[k + 1]), r, f"rail {name}.right {k}"))

    # feeders ------------------------------------------------------------------
    feeders: dict[tuple[str, int], FeederNet] = {}
    for name, sec in scn.track.sections.items():
        snet = sections[name]
        if snet.device is None:
            continue
        o_l, o_r = term[snet.device]
        fl = list(sec.feeders) or [None]
        for i, f in enumerate(fl):
            at = sec.length_m / 2.0 if f is None else f.at_m
            r_c = 0.0 if f is None else wire_r_ohm(f.wire) / 2.0
            k, _ = snet.locate(at)
            rl, rr = int(snet.left[k]), int(snet.right[k])
            if leads.get(name, 1) < 0:
                rl, rr = rr, rl
            feeders[(name, i)] = FeederNet(name, i, at, snet.device, ((o_l, rl), (o_r, rr)),
                                           1.0 / max(r_c, R_MIN_OHM))

    # joints ---------------------------------------------------------------------
    joints: dict[int, JointNet] = {}
    for j in scn.track.joints:
        x, y = j.ends
        if x.section not in sections or y.section not in sections:
            continue
        sx, sy = sections[x.section], sections[y.section]
        ix, iy = sx.end_index(x.end), sy.end_index(y.end)

        def rail_node(snet, idx, rail):
            return int(snet.left[idx] if rail == "left" else snet.right[idx])

        pairs = {}
        for seen in ("left", "right"):
            rx = seen_to_section_rail(x.end, seen)
            ry = rx if j.sign > 0 else other_rail(rx)
            pairs[seen] = (rail_node(sx, ix, rx), rail_node(sy, iy, ry))
        if j.gaps == "none":
            for u, v in pairs.values():
                nodes.union(u, v)
        elif j.gaps == "one":
            bonded = other_rail(j.rail if j.rail in ("left", "right") else "left")
            nodes.union(*pairs[bonded])
        joints[j.index] = JointNet(j.index, j.gaps, pairs)

    # compact ------------------------------------------------------------------
    roots = sorted({nodes.find(i) for i in range(len(nodes.labels))})
    new = {r: k for k, r in enumerate(roots)}
    m = np.array([new[nodes.find(i)] for i in range(len(nodes.labels))], dtype=np.int64)
    labels = [nodes.labels[r] for r in roots]

    def c(i):
        return int(m[i])

    for s in supplies.values():
        s.p, s.n = c(s.p), c(s.n)
    for d in devices.values():
        d.o_l, d.o_r, d.a, d.b = c(d.o_l), c(d.o_r), c(d.a), c(d.b)
    for f in feeders.values():
        f.pairs = tuple((c(u), c(v)) for u, v in f.pairs)
    for s in sections.values():
        s.left, s.right = m[s.left], m[s.right]
    for jn in joints.values():
        jn.pairs = {k: (c(u), c(v)) for k, (u, v) in jn.pairs.items()}
    keep = [(c(a), c(b), r, lab) for a, b, r, lab in perm if c(a) != c(b)]
    return Topology(
        labels=labels,
        perm_a=np.array([k[0] for k in keep], dtype=np.int64),
        perm_b=np.array([k[1] for k in keep], dtype=np.int64),
        perm_r_ohm=np.array([k[2] for k in keep], dtype=float),
        perm_label=[k[3] for k in keep],
        supplies=supplies, devices=devices, feeders=feeders, sections=sections,
        joints=joints, findings=findings)
