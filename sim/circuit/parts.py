"""Electrically connected parts, tracked on a small graph of blocks.

A *block* is a set of nodes joined by permanent conductors (a rail net, a
device terminal with its wires). Blocks are joined by switchable elements:
device leads, feeders, supply internal conductances (the *structure*), and by
bridges, loads and shorts (the *additions*). The parts of the network are the
connected components of this block graph.

Every part must have exactly one reference (an anchor: a conductance to the
datum node); more would make current flow through the datum, none would leave
the part's potential undefined. The base network has one anchor per part (at a
supply's ``0`` node where it has one). When the structure changes, parts split
or join: the tracker recomputes the components of the block graph
(:func:`scipy.sparse.csgraph.connected_components`, memoised per switching
state) and lists anchors to add (a part cut off from every anchor, e.g. a
district whose device is open) or remove (two anchored parts joined). The
additions only ever join parts; they are merged with a union-find over the few
parts they touch, so a bridge costs nothing that grows with the layout.

A part that holds no supply is *floating*: its nodes get 0 V and its elements
0 A, and the solution carries a finding.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components


@dataclass
class Structure:
    """Components of the block graph for one switching state."""

    comp_of_block: np.ndarray
    n_comp: int
    has_source: np.ndarray
    chosen: list            # per component: ("base", node) or ("add", node)
    anchor_delta: dict      # node -> conductance change (S) for this structure


class PartTracker:
    """Parts and anchors of a network (see the module docstring).

    Parameters
    ----------
    n_nodes
        Number of nodes.
    perm_a, perm_b
        Permanent branches.
    base_anchors
        Nodes that carry an anchor in the base matrix.
    source_nodes
        Nodes that make a part a sourced one (supply nodes).
    g_anchor_s
        The conductance of the base anchors.
    g_add_s
        The conductance of an anchor added to a part cut off by a switching:
        as large as the largest switchable conductance, so that cutting a
        strong branch and anchoring the part it leaves stays well conditioned
        in the low-rank update (a single tie carries no current, whatever
        its value).
    """

    def __init__(self, n_nodes: int, perm_a, perm_b, base_anchors, source_nodes,
                 g_anchor_s: float, g_add_s: float = None):
        g = coo_matrix((np.ones(len(perm_a)), (perm_a, perm_b)), shape=(n_nodes, n_nodes))
        self.n_blocks, self.block_of_node = connected_components(g, directed=False)
        self.g_anchor_s = g_anchor_s
        self.g_add_s = g_add_s if g_add_s is not None else g_anchor_s
        self.base_anchors = [int(a) for a in base_anchors]
        self.anchor_block = np.array([self.block_of_node[a] for a in self.base_anchors],
                                     dtype=np.int64)
        first = np.full(self.n_blocks, n_nodes, dtype=np.int64)
        np.minimum.at(first, self.block_of_node, np.arange(n_nodes))
        self.block_first_node = first
        self.source_block = np.zeros(self.n_blocks, dtype=bool)
        self.source_block[[self.block_of_node[s] for s in source_nodes]] = True
        self._cache: dict = {}

    def block(self, node: int) -> int:
        return int(self.block_of_node[node])

    def structure(self, key, edges_u: np.ndarray, edges_v: np.ndarray) -> Structure:
        """The components for switching state ``key`` with node edges ``(u, v)``."""
        hit = self._cache.get(key)
        if hit is not None:
            return hit
        bu = self.block_of_node[edges_u]
        bv = self.block_of_node[edges_v]
        nb = self.n_blocks
        g = coo_matrix((np.ones(len(bu)), (bu, bv)), shape=(nb, nb))
        n_comp, comp = connected_components(g, directed=False)
        has_source = np.zeros(n_comp, dtype=bool)
        has_source[comp[self.source_block]] = True
        rep = np.full(n_comp, np.iinfo(np.int64).max, dtype=np.int64)
        np.minimum.at(rep, comp, self.block_first_node)
        chosen: list = [None] * n_comp
        delta: dict = {}
        for node, blk in zip(self.base_anchors, self.anchor_block):
            c = comp[blk]
            if chosen[c] is None:
                chosen[c] = ("base", node)
            else:
                delta[node] = delta.get(node, 0.0) - self.g_anchor_s
        for c in range(n_comp):
            if chosen[c] is None:
                chosen[c] = ("add", int(rep[c]))
                delta[int(rep[c])] = delta.get(int(rep[c]), 0.0) + self.g_add_s
        st = Structure(comp, n_comp, has_source, chosen, delta)
        if len(self._cache) > 256:
            self._cache.clear()
        self._cache[key] = st
        return st

    def merge(self, st: Structure, joins):
        """Join parts by the addition edges ``joins`` (node pairs, a list or an ``(m, 2)`` array).

        Returns
        -------
        (anchor_delta, group_of)
            The anchor changes for this state, and a function mapping a
            component to its merged group's (root, has_source).
        """
        parent: dict[int, int] = {}

        def find(c):
            parent.setdefault(c, c)
            while parent[c] != c:
                parent[c] = parent[parent[c]]
                c = parent[c]
            return c

        # only the joins between different components matter (vectorised filter,
        # so the many loads that join the two rails of one part cost no Python work)
        pairs = np.asarray(joins, dtype=np.int64).reshape(-1, 2)
        if len(pairs):
            cu = st.comp_of_block[self.block_of_node[pairs[:, 0]]]
            cv = st.comp_of_block[self.block_of_node[pairs[:, 1]]]
            cross = cu != cv
            for a, b in set(zip(cu[cross].tolist(), cv[cross].tolist())):
                ru, rv = find(a), find(b)
                if ru != rv:
                    parent[max(ru, rv)] = min(ru, rv)
        delta = st.anchor_delta
        groups: dict[int, list[int]] = {}
        for c in parent:
            groups.setdefault(find(c), []).append(c)
        src: dict[int, bool] = {}
        if any(len(m) > 1 for m in groups.values()):
            delta = dict(delta)
            for root, members in groups.items():
                src[root] = bool(any(st.has_source[m] for m in members))
                if len(members) < 2:
                    continue
                members.sort(key=lambda c: (st.chosen[c][0] != "base", c))
                for c in members[1:]:
                    kind, node = st.chosen[c]
                    change = -self.g_anchor_s if kind == "base" else -self.g_add_s
                    delta[node] = delta.get(node, 0.0) + change
                    if abs(delta[node]) <= 1e-12 * max(self.g_anchor_s, self.g_add_s):
                        del delta[node]

        def group_of(c: int):
            if c in parent:
                r = find(c)
                return r, src.get(r, bool(st.has_source[c]))
            return c, bool(st.has_source[c])

        return delta, group_of
