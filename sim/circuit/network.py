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
:meth:`Circuit.update_limited` applies the limits in an active-set loop. A
supply switched off keeps its internal resistance but no EMF.

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
from dataclasses import dataclass
from types import MappingProxyType
from typing import Mapping, Optional

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.sparse.linalg import splu

from sim.circuit.build import R_MIN_OHM, SectionNet, Topology
from sim.circuit.incremental import K_MAX, SNAP_FRACTION, SingularUpdate, Woodbury, segment_star
from sim.circuit.parts import PartTracker
from sim.errors import RailfaultError
from sim.model import Finding

#: Conductance of a part's reference anchor to the datum (S); it carries no current.
G_ANCHOR_S = 1.0

#: Factorizations kept for switching states (LRU).
BASES_KEPT = 4

#: An update whose port currents exceed the solution's largest current by this
#: factor has cancelled that many digits: re-factor on the present switching state.
CANCEL_MAX = 1.0e4

#: Kirchhoff residual allowed, relative to the largest current of the solve.
KCL_RTOL = 1e-9


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
            branch(s.p, s.n, 1.0 / s.r_ohm)
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
        g_sw += [1.0 / s.r_ohm for s in topo.supplies.values()]
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
        devs = [topo.devices[k] for k in self._dev_names]
        self._dq = np.array([[qpos[d.o_l], qpos[d.o_r], qpos[d.a], qpos[d.b]] for d in devs],
                            dtype=np.int64).reshape(len(devs), 4)
        self._dg = np.array([d.g_lead_s for d in devs])
        self._sup_names = list(topo.supplies)
        sups = [topo.supplies[k] for k in self._sup_names]
        self._sq = np.array([[qpos[s.p], qpos[s.n]] for s in sups], dtype=np.int64).reshape(len(sups), 2)
        self._sg = np.array([1.0 / s.r_ohm for s in sups])
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
        # state
        self._closed = np.ones(len(devs), dtype=bool)
        self._swapped = np.zeros(len(devs), dtype=bool)
        self._sup_on = np.ones(len(sups), dtype=bool)
        self._sup_v = np.array([s.v_emf_v for s in sups], dtype=float)
        self._sup_cc = np.full(len(sups), math.inf)
        self._sup_limit = np.array([s.i_limit_a for s in sups], dtype=float)
        self.bridges: dict = {}
        self.loads: dict = {}
        self.shorts: dict = {}
        self.feeders_open: set = set()
        self._seg_cache: dict = {}
        self._block_sections = None
        self._orig = _Base(self._key(), np.ones(len(devs), dtype=np.int64), frozenset(),
                           frozenset(), {}, None)
        self._base = self._orig
        self._bases: OrderedDict = OrderedDict()
        self._kcl_terms = 0.0
        self.rebases = 0

    def _sw(self, elem, u, v):
        self._sw_u.append(int(u))
        self._sw_v.append(int(v))
        self._sw_elem.append(elem)

    # ------------------------------------------------------------ state API
    def set_device(self, name: str, closed: Optional[bool] = None,
                   swapped: Optional[bool] = None) -> None:
        """Open/close a device output, or swap (exchange) its two output leads."""
        i = self._dev_names.index(name)
        if closed is not None:
            self._closed[i] = bool(closed)
        if swapped is not None:
            self._swapped[i] = bool(swapped)

    def set_supply(self, name: str, on: Optional[bool] = None, v_emf_v: Optional[float] = None,
                   i_limit_a: Optional[float] = None) -> None:
        """Switch a supply, set its EMF, or put it in (finite ``i_limit_a``) or out of
        (``math.inf``) constant-current mode."""
        i = self._sup_names.index(name)
        if on is not None:
            self._sup_on[i] = bool(on)
        if v_emf_v is not None:
            self._sup_v[i] = float(v_emf_v)
        if i_limit_a is not None:
            self._sup_cc[i] = float(i_limit_a)

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
            if kind == "sup" and self._sup_names.index(name) in cc:
                mask[idx] = False
            elif kind == "dev":
                i = self._dev_names.index(name)
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

    def _changes(self, base: Optional["_Base"] = None):
        """All active changes against ``base`` (default: the original base)."""
        base = base or self._orig
        items = self._structural_items(base)
        joins = []
        for _, _, _, pairs, delta in self.bridges.values():
            items.append(delta)
            joins.extend(pairs)
        segs: dict = {}
        for table in (self.loads, self.shorts):
            for key, a in table.items():
                if len(a.nodes) == 2:
                    items.append(_lap([(a.nodes[0], a.nodes[1], a.y_s)]))
                    joins.append(a.nodes)
                else:
                    segs.setdefault((a.section, a.k), []).append((table is self.shorts, key, a))
                    joins.append((a.nodes[0], a.nodes[2]))
        seg_out = {}
        for (section, k), members in segs.items():
            members.sort(key=lambda m: (m[2].t, m[0], str(m[1])))
            d, rv = self._seg_group(section, k, [m[2] for m in members])
            nodes = np.array(members[0][2].nodes, dtype=np.int64)
            items.append((nodes, d))
            for row, (is_short, key, a) in enumerate(members):
                seg_out[(is_short, key)] = (nodes, rv[row])
        st = self._structure()
        anchor_delta, group_of = self.parts.merge(st, joins)
        for node in set(anchor_delta) | set(base.anchor_delta):
            dg = anchor_delta.get(node, 0.0) - base.anchor_delta.get(node, 0.0)
            if dg != 0.0:
                items.append((np.array([node], dtype=np.int64), np.array([[dg]])))
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
            by_group: dict = {}
            for blk, names in self._block_sections.items():
                c = int(st.comp_of_block[blk])
                if c in floating:
                    by_group.setdefault(group_of(c)[0], set()).update(names)
            for names in by_group.values():
                findings.append(Finding(
                    "warning", "RF-CKT-001", ", ".join(sorted(names)),
                    f"no source reaches section(s) {', '.join(sorted(names))} (floating): "
                    f"taken as 0 V and 0 A"))
        return floating

    def solve(self) -> Solution:
        """Full sparse solve of the present state, part by part."""
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
        self._check_kcl(resid, scale, terms)
        vq = x[self.q_nodes]
        return self._solution(vq, lambda nodes: x[np.asarray(nodes, dtype=np.int64)], seg_out, st, group_of, floating,
                              j, findings, resid, "full")

    def update(self) -> Solution:
        """The present state's solution by low-rank updates (cost independent of layout size).

        The low-rank update is taken against the present *base* factorization.
        When the switching state leaves a part floating, when the update
        cancels more than four digits (its port currents exceed the result's
        largest current by :data:`CANCEL_MAX`), or a solve misses Kirchhoff's
        law, the circuit re-factors
        with the present switching state as its base (:meth:`_rebase`; the last
        few bases are kept, so toggling back is cheap) and solves again.
        """
        key = self._key()
        for attempt in range(2):
            base = self._base
            items, seg_out, st, group_of = self._changes(base)
            ports, d = self._combine(items)
            if len(ports) > K_MAX:
                return self.solve()
            findings: list = []
            j = self._sources(st, group_of, findings)
            floating = self._floating(st, group_of, findings)
            if floating and base.key != key and attempt == 0:
                self._rebase(key, st)
                continue
            if base.wb is None:
                base.wb = Woodbury(self._base_matrix(base), self._inj, self.q_nodes)
            try:
                v_q, v_p, res, mvec = base.wb.solve(ports, d, j)
                pmap = dict(zip(ports.tolist(), v_p.tolist()))

                def vget(nodes, pmap=pmap, v_q=v_q):
                    # bridges, loads and shorts are always ports; a device node is in Q
                    out = []
                    for nd in nodes:
                        nd = int(nd)
                        if nd in pmap:
                            out.append(pmap[nd])
                        else:
                            out.append(float(v_q[np.searchsorted(self.q_nodes, nd)]))
                    return np.array(out)

                resid = float(np.max(np.abs(res))) if res.size else 0.0
                self._kcl_terms = (float(np.max(np.abs(d)) * max(np.max(np.abs(v_p)), 1.0))
                                   if res.size else 0.0)
                sol = self._solution(v_q, vget, seg_out, st, group_of, floating, j, findings,
                                     resid, "incremental")
                if attempt == 0 and base.key != key and mvec.size:
                    scale = max(list(sol.device_i_a.values())
                                + [abs(v) for v in sol.supply_i_a.values()] + [1e-3])
                    if float(np.max(np.abs(mvec))) > CANCEL_MAX * scale:
                        self._rebase(key, st)
                        continue
                return sol
            except (KirchhoffError, SingularUpdate):
                if attempt == 1 or base.key == key:
                    raise
                self._rebase(key, st)
        raise SingularUpdate("no base solves this state")

    def _base_matrix(self, base: "_Base"):
        if base is self._orig:
            return self._a0
        items = self._structural_items_between(self._orig, base)
        for node, dg in base.anchor_delta.items():
            items.append((np.array([node], dtype=np.int64), np.array([[dg]])))
        return self._assemble(items).tocsc()

    def _structural_items_between(self, a: "_Base", b: "_Base"):
        saved = (self._closed.copy(), self._swapped.copy(), set(self.feeders_open),
                 self._sup_cc.copy())
        try:
            self._closed = b.codes > 0
            self._swapped = b.codes == 2
            self.feeders_open = set(b.feeders_open)
            self._sup_cc = np.where(np.isin(np.arange(len(self._sup_cc)), list(b.cc)), 1.0,
                                    math.inf)
            return self._structural_items(a)
        finally:
            self._closed, self._swapped, fo, self._sup_cc = saved
            self.feeders_open = fo

    def _rebase(self, key, st) -> None:
        """Make the present switching state the base of the low-rank updates."""
        hit = self._bases.get(key)
        if hit is None:
            cc = frozenset(np.nonzero(np.isfinite(self._sup_cc))[0].tolist())
            hit = _Base(key, self._codes().copy(), frozenset(self.feeders_open), cc,
                        dict(st.anchor_delta), None)
            self._bases[key] = hit
            self.rebases += 1
            while len(self._bases) > BASES_KEPT:
                self._bases.popitem(last=False)
        else:
            self._bases.move_to_end(key)
        self._base = hit

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

    def _check_kcl(self, resid: float, scale: float, terms: float = 0.0) -> None:
        """Raise unless ``resid <= 1e-9 * scale + 64 eps * terms`` (module docstring)."""
        if resid > KCL_RTOL * scale + 64.0 * np.finfo(float).eps * terms + 1e-300:
            raise KirchhoffError(
                f"RF-CKT-004: Kirchhoff's current law violated: residual {resid:.3e} A "
                f"against a largest current of {scale:.3e} A")

    def _solution(self, vq, vget, seg_out, st, group_of, floating, j, findings, resid, method):
        dq = self._dq
        g = self._dg
        sw = self._swapped
        v = vq[dq] if len(dq) else np.zeros((0, 4))
        other_a = np.where(sw, v[:, 3], v[:, 2])
        other_b = np.where(sw, v[:, 2], v[:, 3])
        i1 = np.where(self._closed, g * (v[:, 0] - other_a), 0.0)
        i2 = np.where(self._closed, g * (v[:, 1] - other_b), 0.0)
        if floating:
            blk = self.parts.block_of_node
            for k, name in enumerate(self._dev_names):
                if int(st.comp_of_block[blk[self.topo.devices[name].o_l]]) in floating:
                    i1[k] = i2[k] = 0.0
        dev_i = {n: float(max(abs(a), abs(b))) for n, a, b in zip(self._dev_names, i1, i2)}
        dev_lead = {n: (-float(a), -float(b)) for n, a, b in zip(self._dev_names, i1, i2)}
        vs = vq[self._sq] if len(self._sq) else np.zeros((0, 2))
        vt = vs[:, 0] - vs[:, 1]
        cc = np.isfinite(self._sup_cc)
        isup = np.where(cc, j, j - self._sg * vt)
        over = tuple(n for n, i, lim, c in zip(self._sup_names, isup, self._sup_limit, cc)
                     if not c and i > lim)

        def dead(node):
            return int(st.comp_of_block[self.parts.block_of_node[node]]) in floating

        br = {}
        for key, (_, _, gb, pairs, _) in self.bridges.items():
            vv = vget([p for pr in pairs for p in pr])
            cur = [gb * (vv[2 * i] - vv[2 * i + 1]) for i in range(len(pairs))]
            br[key] = 0.0 if dead(pairs[0][0]) else float(max(abs(c) for c in cur))
        out = {}
        for is_short, table in ((False, self.loads), (True, self.shorts)):
            vd, idict = {}, {}
            for key, a in table.items():
                if len(a.nodes) == 2:
                    vv = vget(a.nodes)
                    u = vv[0] - vv[1]
                else:
                    nodes, row = seg_out[(is_short, key)]
                    u = float(row @ vget(nodes))
                if dead(a.nodes[0]):
                    u = 0.0
                vd[key] = abs(float(u))
                idict[key] = abs(float(u)) * a.y_s
            out[is_short] = (vd, idict)
        scale = max([abs(x) for x in i1] + [abs(x) for x in i2] + [abs(x) for x in isup]
                    + list(br.values()) + list(out[False][1].values())
                    + list(out[True][1].values()) + [0.0])
        if method == "incremental":
            self._check_kcl(resid, scale, self._kcl_terms)
        mp = MappingProxyType
        return Solution(
            device_i_a=mp(dev_i), device_lead_i_a=mp(dev_lead),
            supply_i_a=mp({n: float(i) for n, i in zip(self._sup_names, isup)}),
            supply_v_v=mp({n: float(x) for n, x in zip(self._sup_names, vt)}),
            bridge_i_a=mp(br), load_v_v=mp(out[False][0]), load_i_a=mp(out[False][1]),
            short_i_a=mp(out[True][1]), short_v_v=mp(out[True][0]),
            findings=tuple(findings), over_limit=over, kcl_residual_a=resid, method=method)

    # ------------------------------------------------------------ limits
    def update_limited(self, full: bool = False) -> Solution:
        """Solve with every supply's scenario current limit applied (constant-current).

        An active-set loop: a supply above its limit goes to constant-current
        mode at the limit; one in that mode whose terminal voltage would exceed
        its EMF goes back to voltage mode. Returns the settled solution.
        """
        solve = self.solve if full else self.update
        sol = solve()
        for _ in range(2 * len(self._sup_names) + 2):
            changed = False
            for i, name in enumerate(self._sup_names):
                if math.isfinite(self._sup_cc[i]):
                    if sol.supply_v_v[name] > self._sup_v[i] * (self._sup_on[i]):
                        self._sup_cc[i] = math.inf
                        changed = True
                elif name in sol.over_limit:
                    self._sup_cc[i] = self._sup_limit[i]
                    changed = True
            if not changed:
                return sol
            sol = solve()
        return sol
