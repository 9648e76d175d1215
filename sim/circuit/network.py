"""The circuit: state changes, full and incremental solves, Kirchhoff's law.

:class:`Circuit` holds a :class:`~sim.circuit.build.Topology` and the state the
event engine changes (device outputs, supplies, bridges, loads, shorts, open
feeders). :meth:`Circuit.solve` assembles the whole nodal conductance matrix
(modified nodal analysis with the supplies in Norton form, so it is a pure
conductance matrix) and solves every electrically connected part on its own
with a sparse LU and one step of iterative refinement; :meth:`Circuit.update` gets the same answer from low-rank
updates of the base factorization (:mod:`sim.circuit.incremental`). Both check
Kirchhoff's current law and raise :class:`KirchhoffError` when the residual at
any node exceeds ``1e-9`` of the largest current (plus the rounding floor of
the sum: 64 machine epsilons of its largest term ``|g v|``, which matters only
when nothing flows).

Device current
--------------
A device's two leads can carry different currents (a bridge to another
district returns current through that district's leads); ``device_i_a`` is
the larger of the two magnitudes, ``device_lead_i_a`` both, signed out of the
output terminals.

Supplies
--------
``set_supply(name, i_limit_a=x)`` with a finite ``x`` puts the supply in
constant-current mode: a current source of ``x`` with no internal conductance,
so the solution gives the collapsed voltage; ``math.inf`` restores voltage
mode. ``supply_i_a`` in voltage mode is the unlimited current, and
``Solution.over_limit`` names the supplies above their scenario limit;
the world's supply loop (``sim.world.engine.World._solve_supplies``, the one
implementation) puts a supply into and out of that mode. A supply switched off keeps its internal resistance but no EMF.

Finding codes (this module)
---------------------------
RF-CKT-001 (warning) a part of the network has no source (floating): its
                     nodes get 0 V and its elements 0 A.
RF-CKT-004 (error)   Kirchhoff's current law violated (raised as KirchhoffError).
RF-CKT-005 (warning) a supply in constant-current mode has no load path; its
                     source current is taken as zero for that solve.
"""
from __future__ import annotations

import math
from collections import OrderedDict
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping, Optional

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.sparse.linalg import splu

from sim.circuit.build import R_MIN_OHM, SectionNet, Topology
from sim.circuit.incremental import (K_FOLD, K_MAX, SNAP_FRACTION, SingularUpdate, Woodbury,
                                      segment_star)
from sim.circuit.parts import PartTracker
from sim.errors import RailfaultError
from sim.model import Finding

#: Conductance of a part's reference anchor to the datum (S); it carries no current.
G_ANCHOR_S = 1.0

#: Factorizations kept for switching states (LRU).
BASES_KEPT = 4

#: An update whose port currents exceed the solution's largest current by this
#: factor has cancelled that many digits: fold the present state into a new base
#: (1e2: the ill-conditioned states of zero-ohm boosters and shorts need it to
#: stay within rtol 1e-9 of a full solve).
CANCEL_MAX = 1.0e2

#: Bridges, loads and shorts above this conductance (below 0.1 ohm) are never
#: folded into a base: removing one later as a low-rank change would cancel
#: digits of the base (they stay low-rank changes; they are few and short-lived).
G_FOLD_MAX_S = 10.0

#: Kirchhoff residual allowed, relative to the largest current of the solve.
KCL_RTOL = 1e-9


def _g_supply_s(s) -> float:
    """A supply's internal conductance, its resistance taken as at least
    ``R_MIN_OHM`` (the floor of every switchable branch): a resistance of a few
    femto-ohms or a denormal would make the conductance overflow."""
    return 1.0 / max(float(s.r_ohm), R_MIN_OHM)


class KirchhoffError(RailfaultError):
    """A solve whose node currents do not sum to zero (RF-CKT-004)."""


@dataclass(frozen=True)
class Solution:
    """Currents and voltages of one solve (magnitudes unless said otherwise)."""

    device_i_a: Mapping[str, float]
    device_lead_i_a: Mapping[str, tuple[float, float]]
    supply_i_a: Mapping[str, float]
    supply_v_v: Mapping[str, float]
    bridge_i_a: Mapping[str, float]
    load_v_v: Mapping[str, float]
    load_i_a: Mapping[str, float]
    short_i_a: Mapping[str, float]
    short_v_v: Mapping[str, float]
    findings: tuple = ()
    over_limit: tuple = ()
    kcl_residual_a: float = 0.0
    method: str = "full"
    #: Per bridge, the magnitude of the current over each gapped rail it joins
    #: ``(first, second)`` in the order of the joint's rails (left, right for a
    #: joint gapped on both; one value for a one-rail bridge). ``bridge_i_a`` is
    #: the larger of them; a device feeding the bridge can carry their sum.
    bridge_rail_i_a: Mapping[str, tuple] = field(default_factory=dict)
    #: Whether Kirchhoff's law was met within its tolerance (a solve taken with
    #: ``check=False`` reports a miss here instead of raising).
    kcl_ok: bool = True


def _lap(pairs):
    """Dense Laplacian ``(nodes, D)`` of branches ``[(u, v, g), ...]``."""
    nodes = sorted({int(u) for u, _, _ in pairs} | {int(v) for _, v, _ in pairs})
    pos = {n: i for i, n in enumerate(nodes)}
    d = np.zeros((len(nodes), len(nodes)))
    for u, v, g in pairs:
        i, j = pos[int(u)], pos[int(v)]
        if i == j:
            continue
        d[i, i] += g
        d[j, j] += g
        d[i, j] -= g
        d[j, i] -= g
    return np.array(nodes, dtype=np.int64), d


@dataclass
class _Base:
    """A factorization the low-rank updates are taken against."""

    key: tuple
    codes: np.ndarray          # per device: 0 open, 1 straight, 2 swapped
    feeders_open: frozenset
    cc: frozenset              # supplies in constant-current mode
    anchor_delta: dict         # anchors against the original base
    wb: Optional[Woodbury]
    folded: dict = field(default_factory=dict)   # additions in the base: key -> (sig, nodes, D)
    a: object = None           # the base matrix (sparse), when not the original one


class _Tracked(dict):
    """A dict of active additions that records which keys changed since last read."""

    def __init__(self):
        super().__init__()
        self.dirty: set = set()
        self.all_dirty = False

    def __setitem__(self, key, value):
        self.dirty.add(key)
        super().__setitem__(key, value)

    def __delitem__(self, key):
        self.dirty.add(key)
        super().__delitem__(key)

    def pop(self, key, *default):
        self.dirty.add(key)
        return super().pop(key, *default)

    def popitem(self):
        key, value = super().popitem()
        self.dirty.add(key)
        return key, value

    def clear(self):
        self.all_dirty = True
        super().clear()

    def update(self, *args, **kw):
        self.all_dirty = True
        super().update(*args, **kw)

    def setdefault(self, key, default=None):
        self.dirty.add(key)
        return super().setdefault(key, default)

    def take_dirty(self):
        """``(keys, everything)``: the changed keys, and whether all may have changed."""
        keys, everything = self.dirty, self.all_dirty
        self.dirty, self.all_dirty = set(), False
        return keys, everything


@dataclass
class _Attach:
    """Where a load or short sits: at a node pair, or inside a segment."""

    section: str
    k: int
    t: float
    y_s: float
    nodes: tuple  # (left, right) at a node, or (l0, l1, r0, r1) in a segment


class Circuit:
    """A built circuit and its state (see the module docstring).

    Parameters
    ----------
    topo
        The network from :func:`sim.circuit.build.build_topology`.
    """

    def __init__(self, topo: Topology):
        self.topo = topo
        n = topo.n_nodes
        self.n_nodes = n
        self.findings: list[Finding] = list(topo.findings)
        rows, cols, vals = [], [], []

        def branch(u, v, g):
            rows.extend((u, v, u, v))
            cols.extend((u, v, v, u))
            vals.extend((g, g, -g, -g))

        for u, v, r in zip(topo.perm_a, topo.perm_b, topo.perm_r_ohm):
            branch(int(u), int(v), 1.0 / r)
        for s in topo.supplies.values():
            branch(s.p, s.n, _g_supply_s(s))
        for d in topo.devices.values():
            branch(d.o_l, d.a, d.g_lead_s)
            branch(d.o_r, d.b, d.g_lead_s)
        for f in topo.feeders.values():
            for u, v in f.pairs:
                branch(u, v, f.g_s)
        # structure edges (switchable) for the part tracker
        self._sw_u: list[int] = []
        self._sw_v: list[int] = []
        self._sw_elem: list = []
        for s in topo.supplies.values():
            self._sw(("sup", s.name), s.p, s.n)
        for d in topo.devices.values():
            self._sw(("dev", d.name), d.o_l, d.a)
            self._sw(("dev", d.name), d.o_r, d.b)
        for key, f in topo.feeders.items():
            for u, v in f.pairs:
                self._sw(("feed", key), u, v)
        self._sw_u_arr = np.array(self._sw_u, dtype=np.int64)
        self._sw_v_arr = np.array(self._sw_v, dtype=np.int64)
        # base parts and anchors
        lap = coo_matrix((vals, (rows, cols)), shape=(n, n)).tocsr()
        n_comp, comp = connected_components(lap, directed=False)
        anchor = [None] * n_comp
        for s in topo.supplies.values():
            if anchor[comp[s.n]] is None:
                anchor[comp[s.n]] = s.n
        first = np.full(n_comp, n, dtype=np.int64)
        np.minimum.at(first, comp, np.arange(n))
        self.base_anchors = [int(a) if a is not None else int(first[c])
                             for c, a in enumerate(anchor)]
        rows.extend(self.base_anchors)
        cols.extend(self.base_anchors)
        vals.extend([G_ANCHOR_S] * len(self.base_anchors))
        self._a0 = coo_matrix((vals, (rows, cols)), shape=(n, n)).tocsc()
        self._a0.sum_duplicates()
        src_nodes = [s.p for s in topo.supplies.values()] + [s.n for s in topo.supplies.values()]
        g_sw = [d.g_lead_s for d in topo.devices.values()] + [f.g_s for f in topo.feeders.values()]
        g_sw += [_g_supply_s(s) for s in topo.supplies.values()]
        self.parts = PartTracker(n, topo.perm_a, topo.perm_b, self.base_anchors, src_nodes,
                                 G_ANCHOR_S, G_ANCHOR_S)
        # outputs: device terminals and supply nodes
        q = []
        for d in topo.devices.values():
            q.extend((d.o_l, d.o_r, d.a, d.b))
        for s in topo.supplies.values():
            q.extend((s.p, s.n))
        self.q_nodes = np.array(sorted(set(q)), dtype=np.int64)
        qpos = {int(v): i for i, v in enumerate(self.q_nodes)}
        self._dev_names = list(topo.devices)
        self._dev_pos = {k: i for i, k in enumerate(self._dev_names)}
        devs = [topo.devices[k] for k in self._dev_names]
        self._dq = np.array([[qpos[d.o_l], qpos[d.o_r], qpos[d.a], qpos[d.b]] for d in devs],
                            dtype=np.int64).reshape(len(devs), 4)
        self._dg = np.array([d.g_lead_s for d in devs])
        self._sup_names = list(topo.supplies)
        self._sup_pos = {k: i for i, k in enumerate(self._sup_names)}
        sups = [topo.supplies[k] for k in self._sup_names]
        self._sq = np.array([[qpos[s.p], qpos[s.n]] for s in sups], dtype=np.int64).reshape(len(sups), 2)
        self._sg = np.array([_g_supply_s(s) for s in sups])
        inj = np.zeros((n, len(sups)))
        for i, s in enumerate(sups):
            inj[s.p, i] += 1.0
            inj[s.n, i] -= 1.0
        self._inj = inj
        # device lead edges per state code: 0 open, 1 straight, 2 swapped
        self._dev_edges = []
        for d in devs:
            self._dev_edges.append((
                [],
                [(d.o_l, d.a, d.g_lead_s), (d.o_r, d.b, d.g_lead_s)],
                [(d.o_l, d.b, d.g_lead_s), (d.o_r, d.a, d.g_lead_s)]))
        self._dev_delta: dict = {}
        self._sup_limit = np.array([s.i_limit_a for s in sups], dtype=float)
        self._seg_cache: dict = {}
        self._node_items: dict = {}
        self._floating_cache: dict = {}
        self._dev_ol = None
        self._block_sections = None
        self._start_state()
        self._orig = _Base(self._key(), np.ones(len(devs), dtype=np.int64), frozenset(),
                           frozenset(), {}, None)
        self._base = self._orig

    def _start_state(self) -> None:
        """The state of a new circuit: every device closed and straight, supplies on at
        their EMF, no bridge, load, short or open feeder, no folded base."""
        sups = [self.topo.supplies[k] for k in self._sup_names]
        self._closed = np.ones(len(self._dev_names), dtype=bool)
        self._swapped = np.zeros(len(self._dev_names), dtype=bool)
        self._sup_on = np.ones(len(sups), dtype=bool)
        self._sup_v = np.array([s.v_emf_v for s in sups], dtype=float)
        self._sup_cc = np.full(len(sups), math.inf)
        self.bridges: dict = _Tracked()
        self.loads: dict = _Tracked()
        self.shorts: dict = _Tracked()
        # the additions, kept up to date from the tables' changed keys (_additions)
        self._adds: dict = {}
        self._add_of: dict = {}        # (table, key) -> its key in _adds
        self._seg_members: dict = {}   # (section, k) -> {(is_short, key): _Attach}
        self._joins: dict = {}         # (table, key) -> node pairs it joins
        self._seg_out: dict = {}
        self._rows: dict = {1: {}, 2: {}}  # load/short key -> (4 nodes, 4 weights, y, node)
        self._strong: set = set()      # additions above G_FOLD_MAX_S: never folded
        self._add_arrays = None
        self.feeders_open: set = set()
        self._bases: OrderedDict = OrderedDict()
        self._kcl_terms = 0.0
        self.rebases = 0
        self.parts_factored = 0

    def rewind(self) -> None:
        """Back to the state of a new circuit, keeping what depends on the network only.

        The original base and its factorization (computed at the first update),
        the part structures and the cached element matrices are kept; the state,
        the folded bases and the counters start again. A rewound circuit solves
        every state exactly as a new one does (a sweep runs many samples that
        differ in timing settings only on one circuit: ``sim.whatif``).
        """
        self._start_state()
        self._base = self._orig
        self.findings = list(self.topo.findings)

    def _sw(self, elem, u, v):
        self._sw_u.append(int(u))
        self._sw_v.append(int(v))
        self._sw_elem.append(elem)

    # ------------------------------------------------------------ state API
    def set_device(self, name: str, closed: Optional[bool] = None,
                   swapped: Optional[bool] = None) -> None:
        """Open/close a device output, or swap (exchange) its two output leads."""
        i = self._dev_pos[name]
        if closed is not None:
            self._closed[i] = bool(closed)
        if swapped is not None:
            self._swapped[i] = bool(swapped)

    def set_supply(self, name: str, on: Optional[bool] = None, v_emf_v: Optional[float] = None,
                   i_limit_a: Optional[float] = None) -> None:
        """Switch a supply, set its EMF, or put it in (finite ``i_limit_a``) or out of
        (``math.inf``) constant-current mode."""
        i = self._sup_pos[name]
        if on is not None:
            self._sup_on[i] = bool(on)
        if v_emf_v is not None:
            self._sup_v[i] = float(v_emf_v)
        if i_limit_a is not None:
            self._sup_cc[i] = float(i_limit_a)

    def device_state(self, name: str) -> tuple[bool, bool]:
        """``(closed, swapped)`` of a device's output, as :meth:`set_device` left it."""
        i = self._dev_pos[name]
        return bool(self._closed[i]), bool(self._swapped[i])

    def supply_state(self, name: str) -> tuple[bool, float, float]:
        """``(on, v_emf_v, i_cc_a)`` of a supply, as :meth:`set_supply` left it;
        ``i_cc_a`` is the current it is held at in constant-current mode, ``math.inf``
        when it regulates its voltage."""
        i = self._sup_pos[name]
        return bool(self._sup_on[i]), float(self._sup_v[i]), float(self._sup_cc[i])

    def set_bridge(self, key, joint_index: int, rail: str, r_ohm: float) -> None:
        """Wheels joining the rail ends of a gapped joint (``rail``: left/right/both,
        as seen from the joint's ``ends[0]`` into its section)."""
        jn = self.topo.joints[joint_index]
        rails = ("left", "right") if rail == "both" else (rail,)
        g = 1.0 / max(float(r_ohm), R_MIN_OHM)
        pairs = [jn.pairs[r] for r in rails]
        self.bridges[key] = (joint_index, rail, g, pairs, _lap([(u, v, g) for u, v in pairs]))

    def clear_bridge(self, key) -> None:
        self.bridges.pop(key, None)

    def _attach(self, section: str, at_m: float, r_ohm: float) -> _Attach:
        snet: SectionNet = self.topo.sections[section]
        k, t = snet.locate(at_m)
        y = 1.0 / max(float(r_ohm), R_MIN_OHM)
        if t < SNAP_FRACTION or t > 1.0 - SNAP_FRACTION or len(snet.xs_m) == 1:
            if t > 0.5:
                k += 1
            return _Attach(section, k, 0.0, y, (int(snet.left[k]), int(snet.right[k])))
        return _Attach(section, k, t, y, (int(snet.left[k]), int(snet.left[k + 1]),
                                          int(snet.right[k]), int(snet.right[k + 1])))

    def set_load(self, key, section: str, at_m: float, r_ohm: float) -> None:
        """A rail-to-rail load (a train's draw as a resistance) at ``at_m``."""
        self.loads[key] = self._attach(section, at_m, r_ohm)

    def clear_load(self, key) -> None:
        self.loads.pop(key, None)

    def set_short(self, key, section: str, at_m: float, r_ohm: float) -> None:
        """A fault of ``r_ohm`` across the rails at ``at_m``."""
        self.shorts[key] = self._attach(section, at_m, r_ohm)

    def clear_short(self, key) -> None:
        self.shorts.pop(key, None)

    def set_feeder_open(self, section: str, index: int, opened: bool = True) -> None:
        if (section, index) not in self.topo.feeders:
            raise KeyError(f"section {section} has no feeder {index}")
        if opened:
            self.feeders_open.add((section, index))
        else:
            self.feeders_open.discard((section, index))

    # -------------------------------------------------------------- changes
    def _key(self):
        open_d = frozenset(np.nonzero(~self._closed)[0].tolist())
        swap_d = frozenset(np.nonzero(self._closed & self._swapped)[0].tolist())
        cc = frozenset(np.nonzero(np.isfinite(self._sup_cc))[0].tolist())
        return (open_d, swap_d, frozenset(self.feeders_open), cc)

    def _codes(self) -> np.ndarray:
        return np.where(self._closed, 1 + self._swapped.astype(np.int64), 0)

    def _structure(self):
        key = self._key()
        open_d, swap_d, _, cc = key
        hit = self.parts._cache.get(key)
        if hit is not None:
            return hit
        mask = np.ones(len(self._sw_elem), dtype=bool)
        extra_u, extra_v = [], []
        for idx, elem in enumerate(self._sw_elem):
            kind, name = elem
            if kind == "sup" and self._sup_pos[name] in cc:
                mask[idx] = False
            elif kind == "dev":
                i = self._dev_pos[name]
                if i in open_d or i in swap_d:
                    mask[idx] = False
            elif kind == "feed" and name in self.feeders_open:
                mask[idx] = False
        for i in swap_d:
            d = self.topo.devices[self._dev_names[i]]
            extra_u += [d.o_l, d.o_r]
            extra_v += [d.b, d.a]
        eu = np.concatenate([self._sw_u_arr[mask], np.array(extra_u, dtype=np.int64)])
        ev = np.concatenate([self._sw_v_arr[mask], np.array(extra_v, dtype=np.int64)])
        return self.parts.structure(key, eu, ev)

    def _seg_group(self, section, k, items):
        snet = self.topo.sections[section]
        g = snet.seg_g_s(k)
        key = (section, k, tuple((a.t, a.y_s) for a in items))
        hit = self._seg_cache.get(key)
        if hit is None:
            if len(self._seg_cache) > 4096:
                self._seg_cache.clear()
            hit = segment_star(g, g, [(a.t, a.y_s) for a in items])
            self._seg_cache[key] = hit
        return hit

    def _structural_items(self, base: "_Base"):
        """Conductance changes of devices, feeders and constant-current supplies
        between the base ``base`` and the present state."""
        items = []
        codes = self._codes()
        for i in np.nonzero(codes != base.codes)[0]:
            key = (int(i), int(base.codes[i]), int(codes[i]))
            hit = self._dev_delta.get(key)
            if hit is None:
                edges = self._dev_edges[i]
                hit = _lap(list(edges[codes[i]]) + [(u, v, -g) for u, v, g in edges[base.codes[i]]])
                self._dev_delta[key] = hit
            items.append(hit)
        for key in self.feeders_open ^ base.feeders_open:
            f = self.topo.feeders[key]
            sign = -1.0 if key in self.feeders_open else 1.0
            items.append(_lap([(u, v, sign * f.g_s) for u, v in f.pairs]))
        cc_now = set(np.nonzero(np.isfinite(self._sup_cc))[0].tolist())
        for i in cc_now ^ set(base.cc):
            s = self.topo.supplies[self._sup_names[i]]
            sign = -1.0 if i in cc_now else 1.0
            items.append(_lap([(s.p, s.n, sign * self._sg[i])]))
        return items

    def _additions(self):
        """The bridges, loads and shorts now active, keyed for folding.

        Returns ``(adds, joins, seg_out)``: ``adds`` maps a key (a bridge, a
        load or short at a node pair, or a segment holding loads/shorts) to
        ``(signature, nodes, D)``; equal signatures mean equal ``D``. ``joins``
        is an ``(m, 2)`` array of node pairs the additions join. They are kept
        up to date from the keys changed since the last call, so one change
        costs work for that change only (and for the segment it sits in).
        """
        changed = []
        for tid, table in ((0, self.bridges), (1, self.loads), (2, self.shorts)):
            keys, everything = table.take_dirty()
            if everything:
                keys = {k for (t, k) in self._add_of if t == tid} | set(table)
            changed.extend((tid, k) for k in keys)
        if not changed and self._add_arrays is not None:
            return self._adds, self._add_arrays, self._seg_out
        segs_dirty = set()
        for tid, key in changed:
            old = self._add_of.pop((tid, key), None)
            self._joins.pop((tid, key), None)
            if old is not None:
                if old[0] == "seg":
                    members = self._seg_members.get(old[1:])
                    if members is not None:
                        members.pop((tid == 2, key), None)
                    self._seg_out.pop((tid == 2, key), None)
                    segs_dirty.add(old[1:])
                else:
                    self._adds.pop(old, None)
                    self._strong.discard(old)
            if tid:
                self._rows[tid].pop(key, None)
            table = (self.bridges, self.loads, self.shorts)[tid]
            if key not in table:
                continue
            if tid == 0:
                ji, rail, g, pairs, delta = table[key]
                akey = ("br", key)
                self._adds[akey] = ((ji, rail, g), delta[0], delta[1])
                self._strong.discard(akey)
                if g > G_FOLD_MAX_S:
                    self._strong.add(akey)
                self._joins[(tid, key)] = [tuple(pr) for pr in pairs]
                self._add_of[(tid, key)] = akey
                continue
            a = table[key]
            if len(a.nodes) == 2:
                akey = ("nd", tid == 2, key)
                hit = self._node_items.get((a.nodes, a.y_s))
                if hit is None:
                    hit = _lap([(a.nodes[0], a.nodes[1], a.y_s)])
                    if len(self._node_items) > 4096:
                        self._node_items.clear()
                    self._node_items[(a.nodes, a.y_s)] = hit
                self._adds[akey] = ((a.nodes, a.y_s), hit[0], hit[1])
                self._strong.discard(akey)
                if a.y_s > G_FOLD_MAX_S:
                    self._strong.add(akey)
                n0, n1 = a.nodes
                self._rows[tid][key] = (n0, n1, n0, n1, 1.0, -1.0, 0.0, 0.0, a.y_s, n0)
                self._joins[(tid, key)] = [a.nodes]
                self._add_of[(tid, key)] = akey
            else:
                sk = (a.section, a.k)
                self._seg_members.setdefault(sk, {})[(tid == 2, key)] = a
                self._joins[(tid, key)] = [(a.nodes[0], a.nodes[2])]
                self._add_of[(tid, key)] = ("seg",) + sk
                segs_dirty.add(sk)
        for sk in segs_dirty:
            akey = ("seg",) + sk
            members = self._seg_members.get(sk)
            self._strong.discard(akey)
            if not members:
                self._seg_members.pop(sk, None)
                self._adds.pop(akey, None)
                continue
            if any(a.y_s > G_FOLD_MAX_S for a in members.values()):
                self._strong.add(akey)
            ms = sorted((((a.t, is_short, str(key)), is_short, key, a)
                         for (is_short, key), a in members.items()), key=lambda m: m[0])
            sig = tuple((m[3].t, m[3].y_s) for m in ms)
            d, rv = self._seg_group(sk[0], sk[1], [m[3] for m in ms])
            nodes = np.array(ms[0][3].nodes, dtype=np.int64)
            self._adds[akey] = (sig, nodes, d)
            nl = tuple(nodes.tolist())
            for row, (_, is_short, key, a) in enumerate(ms):
                self._seg_out[(is_short, key)] = (nodes, rv[row])
                self._rows[2 if is_short else 1][key] = nl + tuple(rv[row].tolist()) + (
                    a.y_s, a.nodes[0])
        pairs = [pr for prs in self._joins.values() for pr in prs]
        self._add_arrays = np.array(pairs, dtype=np.int64).reshape(len(pairs), 2)
        return self._adds, self._add_arrays, self._seg_out

    def _changes(self, base: Optional["_Base"] = None, detail: bool = False,
                 foldable: bool = False):
        """All active changes against ``base`` (default: the original base).

        The additions folded into ``base`` count only where they differ from
        the present ones. With ``detail`` also the present additions and
        anchor changes are returned (what a new folded base would hold).
        """
        base = base or self._orig
        items = self._structural_items(base)
        adds, joins, seg_out = self._additions()
        if foldable and self._strong:
            # the state a new base holds: without the strong additions
            adds = {k: v for k, v in adds.items() if k not in self._strong}
            pairs = [pr for tk, prs in self._joins.items()
                     if self._add_of.get(tk) not in self._strong for pr in prs]
            joins = np.array(pairs, dtype=np.int64).reshape(len(pairs), 2)
        folded = base.folded
        for akey, (sig, nodes, d) in adds.items():
            old = folded.get(akey)
            if old is not None:
                if old[0] == sig:
                    continue
                items.append((old[1], -old[2]))
            items.append((nodes, d))
        for akey, old in folded.items():
            if akey not in adds:
                items.append((old[1], -old[2]))
        st = self._structure()
        anchor_delta, group_of = self.parts.merge(st, joins)
        for node in set(anchor_delta) | set(base.anchor_delta):
            dg = anchor_delta.get(node, 0.0) - base.anchor_delta.get(node, 0.0)
            if dg != 0.0:
                items.append((np.array([node], dtype=np.int64), np.array([[dg]])))
        if detail:
            return items, seg_out, st, group_of, adds, anchor_delta
        return items, seg_out, st, group_of

    @staticmethod
    def _combine(items):
        if not items:
            return np.zeros(0, dtype=np.int64), np.zeros((0, 0))
        ports = np.unique(np.concatenate([n for n, _ in items]))
        pos = np.searchsorted(ports, np.concatenate([n for n, _ in items]))
        d = np.zeros((len(ports), len(ports)))
        off = 0
        for nodes, dd in items:
            ix = pos[off:off + len(nodes)]
            off += len(nodes)
            # np.add.at sums repeated nodes (a segment whose rails are bonded at its ends)
            np.add.at(d, (ix[:, None], ix[None, :]), dd)
        return ports, d

    def _sources(self, st, group_of, findings):
        j = np.where(self._sup_on, self._sup_v * self._sg, 0.0)
        cc = np.isfinite(self._sup_cc)
        j = np.where(cc, self._sup_cc, j)
        for i in np.nonzero(cc)[0]:
            s = self.topo.supplies[self._sup_names[i]]
            gp = group_of(int(st.comp_of_block[self.parts.block_of_node[s.p]]))[0]
            gn = group_of(int(st.comp_of_block[self.parts.block_of_node[s.n]]))[0]
            if gp != gn:
                j[i] = 0.0
                findings.append(Finding(
                    "warning", "RF-CKT-005", f"supplies.{s.name}",
                    f"supply {s.name} is in constant-current mode with no load path; "
                    f"its current is taken as 0 A"))
        return j

    # ---------------------------------------------------------------- solves
    def _floating(self, st, group_of, findings):
        """Per-component floating flags, and a finding per floating part."""
        if self._block_sections is None:
            bs: dict = {}
            for name, s in self.topo.sections.items():
                for node in np.concatenate([s.left, s.right]):
                    bs.setdefault(int(self.parts.block_of_node[node]), set()).add(name)
            self._block_sections = bs
        floating = set()
        for c in np.nonzero(~st.has_source)[0]:
            root, src = group_of(int(c))
            if not src:
                floating.add(int(c))
        if floating:
            fkey = (id(st), tuple(sorted((c, group_of(c)[0]) for c in floating)))
            hit = self._floating_cache.get(fkey)
            if hit is None or hit[0] is not st:
                by_group: dict = {}
                for blk, names in self._block_sections.items():
                    c = int(st.comp_of_block[blk])
                    if c in floating:
                        by_group.setdefault(group_of(c)[0], set()).update(names)
                found = [Finding(
                    "warning", "RF-CKT-001", ", ".join(sorted(names)),
                    f"no source reaches section(s) {', '.join(sorted(names))} (floating): "
                    f"taken as 0 V and 0 A") for names in by_group.values()]
                if len(self._floating_cache) > 256:
                    self._floating_cache.clear()
                hit = (st, found)
                self._floating_cache[fkey] = hit
            findings.extend(hit[1])
        return floating

    def solve(self, check: bool = True) -> Solution:
        """Full sparse solve of the present state, part by part.

        With ``check`` False a solve that misses Kirchhoff's law is returned
        with ``kcl_ok`` False instead of raising :class:`KirchhoffError` (the
        engine's last resort; see :mod:`sim.world.engine`, Solves). A part that
        cannot be factored still raises :class:`SingularUpdate`.
        """
        items, seg_out, st, group_of = self._changes()
        findings: list = []
        j = self._sources(st, group_of, findings)
        floating = self._floating(st, group_of, findings)
        n = self.n_nodes
        full = self._assemble(items)
        b = self._inj @ j
        x = np.zeros(n)
        n_c, lab = connected_components(full, directed=False)
        has_b = np.zeros(n_c, dtype=bool)
        has_b[lab[np.abs(b) > 0]] = True
        order = np.argsort(lab, kind="stable")
        bounds = np.searchsorted(lab[order], np.arange(n_c + 1))
        for c in np.nonzero(has_b)[0]:
            idx = order[bounds[c]:bounds[c + 1]]
            sub = full[idx][:, idx].tocsc()
            try:
                lu = splu(sub)
            except RuntimeError as exc:
                raise SingularUpdate("an ill-posed part: the system is singular") from exc
            xi = lu.solve(b[idx])
            xi += lu.solve(b[idx] - sub @ xi)      # one step of iterative refinement
            x[idx] = xi
        res = full @ x - b
        fc = full.tocoo()
        off = fc.row != fc.col
        branch = np.abs(fc.data[off] * (x[fc.row[off]] - x[fc.col[off]]))
        scale = max(float(branch.max()) if branch.size else 0.0, float(np.max(np.abs(j))) if j.size else 0.0)
        resid = float(np.max(np.abs(res))) if n else 0.0
        terms = float(np.max(np.abs(fc.data) * np.abs(x[fc.col]))) if fc.nnz else 0.0
        if not np.all(np.isfinite(x)):
            raise SingularUpdate("the network's solution is not finite")
        if check:
            self._check_kcl(resid, scale, terms)
        vq = x[self.q_nodes]
        return self._solution(vq, lambda nodes: x[np.asarray(nodes, dtype=np.int64)], seg_out, st, group_of, floating,
                              j, findings, resid, "full", None if check else (scale, terms))

    def update(self) -> Solution:
        """The present state's solution by low-rank updates of the base (module docstring).

        The low-rank update is taken against the present *base* factorization,
        which holds a switching state and the additions (bridges, loads,
        shorts) folded into it. When the changes against the base exceed
        :data:`~sim.circuit.incremental.K_FOLD` port nodes, when the switching
        state leaves a part floating, when the update cancels more than four
        digits (its port currents exceed the result's largest current by
        :data:`CANCEL_MAX`), or a solve misses Kirchhoff's law, the circuit
        folds the present state into a new base (:meth:`_rebase`, re-factoring
        only the parts the changes touch; the last few bases are kept, so
        toggling back is cheap) and solves again.
        """
        key = self._key()
        for attempt in range(2):
            base = self._base
            items, seg_out, st, group_of, adds, anchors = self._changes(base, detail=True)
            ports, d = self._combine(items)
            fresh = base.key == key and len(ports) == 0
            n_strong = sum(len(adds[a][1]) for a in self._strong if a in adds)
            if len(ports) > K_FOLD + n_strong and attempt == 0:
                self._rebase(key, st, adds, anchors, ports, d)
                continue
            if len(ports) > K_MAX:
                return self.solve()
            findings: list = []
            j = self._sources(st, group_of, findings)
            floating = self._floating(st, group_of, findings)
            if floating and base.key != key and attempt == 0:
                self._rebase(key, st, adds, anchors, ports, d)
                continue
            if base.wb is None:
                base.wb = Woodbury(self._base_matrix(base), self._inj, self.q_nodes)
            try:
                wb = base.wb
                v_q, v_p, res, mvec = wb.solve(ports, d, j)
                need = [p for _, _, _, pairs, _ in self.bridges.values()
                        for pr in pairs for p in pr]
                for table in (self.loads, self.shorts):
                    for a in table.values():
                        need.extend(a.nodes)
                need_arr = np.unique(np.array(need, dtype=np.int64))
                at = np.searchsorted(ports, need_arr)
                if len(ports) and bool(np.all(ports[np.minimum(at, len(ports) - 1)] == need_arr)):
                    v_need = v_p[at]                # every node needed is a port
                else:
                    v_need = wb.voltages(need_arr, j)

                def vget(nodes, need_arr=need_arr, v_need=v_need):
                    return v_need[np.searchsorted(need_arr, np.asarray(nodes, dtype=np.int64))]

                resid = float(np.max(np.abs(res))) if res.size else 0.0
                self._kcl_terms = (float(np.max(np.abs(d)) * max(np.max(np.abs(v_p)), 1.0))
                                   if res.size else 0.0)
                sol = self._solution(v_q, vget, seg_out, st, group_of, floating, j, findings,
                                     resid, "incremental")
                if attempt == 0 and not fresh and mvec.size:
                    scale = max(list(sol.device_i_a.values())
                                + [abs(v) for v in sol.supply_i_a.values()] + [1e-3])
                    if float(np.max(np.abs(mvec))) > CANCEL_MAX * scale:
                        self._rebase(key, st, adds, anchors, ports, d)
                        continue
                return sol
            except (KirchhoffError, SingularUpdate):
                if attempt == 1 or fresh:
                    raise
                self._rebase(key, st, adds, anchors, ports, d)
        raise SingularUpdate("no base solves this state")

    def _base_matrix(self, base: "_Base"):
        if base.a is not None:
            return base.a
        return self._a0

    def _rebase(self, key, st, adds, anchors, ports, d) -> None:
        """Make the present state (switching and additions) the base of the updates.

        A kept base of the same switching state is taken when the present
        state differs from it by at most :data:`K_FOLD` port nodes. Otherwise
        the new base matrix is the present base plus the change ``(ports, d)``
        against it (``A = A_base + E_P D E_P^T``, one sparse sum), and only the
        connected parts holding a port are re-factored
        (:class:`~sim.circuit.incremental.Woodbury` with ``prev``).
        """
        hit = self._bases.get(key)
        if hit is not None and hit is not self._base:
            items = self._changes(hit)[0]
            if len(self._combine(items)[0]) <= K_FOLD:
                self._bases.move_to_end(key)
                self._base = hit
                return
        prev = self._base
        if prev.wb is None:
            prev.wb = Woodbury(self._base_matrix(prev), self._inj, self.q_nodes)
        if self._strong:
            items, _, _, _, adds, anchors = self._changes(prev, detail=True, foldable=True)
            ports, d = self._combine(items)
        a = self._base_matrix(prev).tocsr()
        if len(ports):
            m = len(ports)
            a = (a + coo_matrix((d.ravel(), (np.repeat(ports, m), np.tile(ports, m))),
                                shape=a.shape).tocsr()).tocsr()
            scale_g = float(np.max(np.abs(a.data))) if a.nnz else 1.0
            a.data[np.abs(a.data) < 1e-14 * scale_g] = 0.0
            a.eliminate_zeros()
        cc = frozenset(np.nonzero(np.isfinite(self._sup_cc))[0].tolist())
        wb = Woodbury(a, self._inj, self.q_nodes, prev=prev.wb, touched=ports)
        new = _Base(key, self._codes().copy(), frozenset(self.feeders_open), cc,
                    dict(anchors), wb, dict(adds), a)
        self._bases[key] = new
        self._bases.move_to_end(key)
        self.rebases += 1
        self.parts_factored += wb.lu.n_factored
        while len(self._bases) > BASES_KEPT:
            self._bases.popitem(last=False)
        self._base = new

    def _assemble(self, items):
        n = self.n_nodes
        a = self._a0.tocoo()
        rows, cols, vals = [a.row], [a.col], [a.data]
        for nodes, d in items:
            rr, cc_ = np.meshgrid(nodes, nodes, indexing="ij")
            rows.append(rr.ravel())
            cols.append(cc_.ravel())
            vals.append(d.ravel())
        full = coo_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                          shape=(n, n)).tocsr()
        full.sum_duplicates()
        scale_g = float(np.max(np.abs(full.data))) if full.nnz else 1.0
        full.data[np.abs(full.data) < 1e-14 * scale_g] = 0.0
        full.eliminate_zeros()
        return full

    @staticmethod
    def _kcl_met(resid: float, scale: float, terms: float = 0.0) -> bool:
        """Whether ``resid <= 1e-9 * scale + 64 eps * terms`` (module docstring)."""
        return bool(resid <= KCL_RTOL * scale + 64.0 * np.finfo(float).eps * terms + 1e-300)

    def _check_kcl(self, resid: float, scale: float, terms: float = 0.0) -> None:
        """Raise unless ``resid <= 1e-9 * scale + 64 eps * terms`` (module docstring)."""
        if not self._kcl_met(resid, scale, terms):
            raise KirchhoffError(
                f"RF-CKT-004: Kirchhoff's current law violated: residual {resid:.3e} A "
                f"against a largest current of {scale:.3e} A")

    def _solution(self, vq, vget, seg_out, st, group_of, floating, j, findings, resid, method,
                  check_scale=None):
        dq = self._dq
        g = self._dg
        sw = self._swapped
        v = vq[dq] if len(dq) else np.zeros((0, 4))
        other_a = np.where(sw, v[:, 3], v[:, 2])
        other_b = np.where(sw, v[:, 2], v[:, 3])
        i1 = np.where(self._closed, g * (v[:, 0] - other_a), 0.0)
        i2 = np.where(self._closed, g * (v[:, 1] - other_b), 0.0)
        if floating:
            fl = np.zeros(st.n_comp, dtype=bool)    # per component: floating
            fl[list(floating)] = True
        if floating and len(i1):
            if self._dev_ol is None:
                self._dev_ol = np.array([self.topo.devices[nm].o_l for nm in self._dev_names],
                                        dtype=np.int64)
            off = fl[st.comp_of_block[self.parts.block_of_node[self._dev_ol]]]
            i1[off] = 0.0
            i2[off] = 0.0
        dev_vals = np.maximum(np.abs(i1), np.abs(i2)).tolist()
        dev_i = dict(zip(self._dev_names, dev_vals))
        dev_lead = dict(zip(self._dev_names, zip((-i1).tolist(), (-i2).tolist())))
        vs = vq[self._sq] if len(self._sq) else np.zeros((0, 2))
        vt = vs[:, 0] - vs[:, 1]
        cc = np.isfinite(self._sup_cc)
        isup = np.where(cc, j, j - self._sg * vt)
        over = tuple(self._sup_names[i] for i in np.nonzero(~cc & (isup > self._sup_limit))[0])

        br = {}
        br_rails: dict = {}
        if self.bridges:
            bkeys = list(self.bridges)
            flat = [(b[3][0][0], b[3][0][1], b[3][-1][0], b[3][-1][1], b[2])
                    for b in self.bridges.values()]
            bd = np.array(flat)
            bn = bd[:, :4].astype(np.int64)
            vv = vget(bn.ravel()).reshape(len(bkeys), 4)
            c0 = np.abs(vv[:, 0] - vv[:, 1]) * bd[:, 4]
            c1 = np.abs(vv[:, 2] - vv[:, 3]) * bd[:, 4]
            if floating:
                off_b = fl[st.comp_of_block[self.parts.block_of_node[bn[:, 0]]]]
                c0[off_b] = 0.0
                c1[off_b] = 0.0
            cur = np.maximum(c0, c1)
            br = dict(zip(bkeys, cur.tolist()))
            two = [len(b[3]) > 1 for b in self.bridges.values()]
            br_rails = {k: ((a, b) if t else (a,))
                        for k, a, b, t in zip(bkeys, c0.tolist(), c1.tolist(), two)}
        out = {}
        for is_short, tid in ((False, 1), (True, 2)):
            rows = self._rows[tid]
            keys = list(rows)
            m = len(keys)
            if not m:
                out[is_short] = ({}, {})
                continue
            data = np.array(list(rows.values()))
            nodes = data[:, :4].astype(np.int64)
            u = np.abs(np.sum(data[:, 4:8] * vget(nodes.ravel()).reshape(m, 4), axis=1))
            if floating:
                first = data[:, 9].astype(np.int64)
                u[fl[st.comp_of_block[self.parts.block_of_node[first]]]] = 0.0
            out[is_short] = (dict(zip(keys, u.tolist())),
                             dict(zip(keys, (u * data[:, 8]).tolist())))
        isup_l = isup.tolist()
        scale = max(max(dev_vals, default=0.0), max(map(abs, isup_l), default=0.0),
                    max(br.values(), default=0.0), max(out[False][1].values(), default=0.0),
                    max(out[True][1].values(), default=0.0), 0.0)
        kcl_ok = True
        if method == "incremental":
            self._check_kcl(resid, scale, self._kcl_terms)
        elif check_scale is not None:
            kcl_ok = self._kcl_met(resid, check_scale[0], check_scale[1])
        mp = MappingProxyType
        return Solution(
            device_i_a=mp(dev_i), device_lead_i_a=mp(dev_lead),
            supply_i_a=mp(dict(zip(self._sup_names, isup_l))),
            supply_v_v=mp(dict(zip(self._sup_names, vt.tolist()))),
            bridge_i_a=mp(br), load_v_v=mp(out[False][0]), load_i_a=mp(out[False][1]),
            short_i_a=mp(out[True][1]), short_v_v=mp(out[True][0]),
            findings=tuple(findings), over_limit=over, kcl_residual_a=resid, method=method,
            bridge_rail_i_a=mp(br_rails), kcl_ok=kcl_ok)
