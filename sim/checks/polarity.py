"""Polarity balance of the track: where the layout needs reversing sections.

The track is a signed graph (sections are nodes, joints are edges of sign +1
straight / -1 crossed, see ``domain.md``). It can be wired without a reversing
section exactly when it is *balanced*: every cycle has an even number of
crossed joints (F. Harary, "On the notion of balance of a signed graph",
Michigan Math. J. 2 (1953) 143-146). Sections that can change polarity -- fed
by a reversing controller, or by a booster with ``reverse_on_short`` -- are
taken out; every connected part of what remains must be balanced.

Codes
-----
RF-POL-001 (error)
    A connected part of the fixed-polarity track is unbalanced: a reversing
    loop, wye or turntable with no reversing section on it. The finding names
    the sections of the *shortest* unbalanced cycle of that part and suggests
    as the reversing section its longest section whose reversing leaves the
    rest of the part balanced (the longest of all when none does).
RF-POL-002 (info)
    A reversing loop (an unbalanced cycle of the full track) and the reversing
    sections that handle it.
RF-POL-003 (error)
    An unbalanced cycle lying wholly in the district of one reversing device
    (all its sections switch together, so reversing cannot mend it).

Algorithms
----------
* Balance: breadth-first signed 2-colouring, ``colour(w) = sign * colour(u)``
  along tree edges; a non-tree edge that disagrees is *frustrated*. A part is
  balanced iff it has no frustrated edge. O(V + E).
* Shortest unbalanced cycle: breadth-first search on the signed double cover
  (nodes ``(section, parity)``; a joint of sign -1 flips the parity). A closed
  walk of odd parity through ``v`` is a path ``(v, 0) -> (v, 1)``. The shortest
  odd closed walk of the whole part is a simple cycle (split a walk that
  repeats a vertex into two shorter closed walks: one of them is odd), and
  every odd cycle contains a frustrated edge of any spanning-tree colouring,
  so searching from the endpoints of the frustrated edges only is enough.
  O(k (V + E)) for k frustrated edges, each search cut off at the best length
  found so far.
* The reversing cycles of the full track (``CheckReport.reversing``): one
  fundamental cycle (breadth-first tree path plus the edge) per frustrated
  edge of the full graph, each with the reversing sections on it. O(V + E +
  total cycle length).
* Sections on some unbalanced cycle: in a 2-connected unbalanced block every
  edge lies on an unbalanced cycle (for an edge e and an odd cycle C, two
  disjoint paths from e's ends to C close two cycles through e whose signs
  multiply to sign(C) = -1), so they are the nodes of the unbalanced
  biconnected blocks (parallel joints and self-loops included), found by one
  depth-first search (:func:`unbalanced_block_nodes`). O(V + E).
"""
from __future__ import annotations

from collections import deque
from typing import Iterable, Optional

import networkx as nx

from sim.model import Finding, Scenario

__all__ = ["check_polarity", "reversing_sections", "reverser_of", "signed_colouring",
           "is_balanced", "shortest_unbalanced_cycle", "reversing_cycles",
           "sections_on_unbalanced_cycles", "Colouring", "polarity_subjects"]


# ----------------------------------------------------------- feed helpers
def reverser_of(scn: Scenario, layout, section: str) -> Optional[str]:
    """The reversing controller in the feed chain of ``section`` (None if none)."""
    for dev in layout.device_chain(section):
        if dev in scn.reversers:
            return dev
    return None


def reversing_sections(scn: Scenario, layout) -> frozenset:
    """Sections that can change polarity: reverser-fed, or on a reversing booster."""
    key = "reversing_sections"
    if key not in layout.cache:
        out = set()
        for s in scn.track.sections:
            chain = layout.device_chain(s)
            if any(d in scn.reversers for d in chain):
                out.add(s)
            elif any(d in scn.boosters and scn.boosters[d].reverse_on_short for d in chain):
                out.add(s)
        layout.cache[key] = frozenset(out)
    return layout.cache[key]


# --------------------------------------------------------- signed graphs
def _raw_adj(graph):
    """The adjacency dicts of a networkx graph (read only), without the view layer."""
    adj = getattr(graph, "_adj", None)
    return adj if adj is not None else graph.adj


class Colouring:
    """Result of :func:`signed_colouring`.

    ``colour[node]`` is +1/-1; ``parent[node]`` is ``(parent, key)`` along the
    breadth-first tree (``None`` for a root); ``depth[node]``; ``frustrated`` the
    non-tree edges ``(u, w, key)`` whose sign disagrees with the colours;
    ``components`` the node lists of the connected parts, in search order.
    """

    __slots__ = ("colour", "parent", "depth", "frustrated", "components")

    def __init__(self):
        self.colour: dict = {}
        self.parent: dict = {}
        self.depth: dict = {}
        self.frustrated: list = []
        self.components: list = []


def signed_colouring(graph: nx.MultiGraph, allowed: Optional[Iterable] = None,
                     sign_attr: str = "sign") -> Colouring:
    """Breadth-first signed 2-colouring of ``graph`` (restricted to ``allowed`` nodes).

    Notes
    -----
    O(V + E) of the part searched. Roots are taken in graph order (in the order
    of ``allowed`` when given), edges in adjacency order, so the result is
    deterministic.
    """
    adj = _raw_adj(graph)
    if allowed is None:
        allow, roots = None, graph
    else:
        roots = [n for n in allowed if n in adj]
        allow = set(roots)
    res = Colouring()
    colour, parent, depth = res.colour, res.parent, res.depth
    seen_bad: set = set()
    for root in roots:
        if root in colour:
            continue
        colour[root] = 1
        parent[root] = None
        depth[root] = 0
        comp = [root]
        queue = deque([root])
        while queue:
            u = queue.popleft()
            cu = colour[u]
            pu = parent[u]
            pkey = pu[1] if pu is not None else None
            for w, kd in adj[u].items():
                if allow is not None and w not in allow:
                    continue
                for k, data in kd.items():
                    s = data[sign_attr]
                    cw = colour.get(w)
                    if cw is None:
                        colour[w] = cu * s
                        parent[w] = (u, k)
                        depth[w] = depth[u] + 1
                        comp.append(w)
                        queue.append(w)
                    elif cw != cu * s and k != pkey and k not in seen_bad:
                        seen_bad.add(k)
                        res.frustrated.append((u, w, k))
        res.components.append(comp)
    return res


def is_balanced(graph: nx.MultiGraph, allowed: Optional[Iterable] = None) -> bool:
    """True when every cycle of ``graph`` has an even number of -1 edges (Harary 1953)."""
    return not signed_colouring(graph, allowed).frustrated


def shortest_unbalanced_cycle(graph: nx.MultiGraph, allowed: Optional[Iterable] = None,
                              starts: Optional[Iterable] = None):
    """The shortest cycle with an odd number of -1 edges, or None when balanced.

    Returns
    -------
    (nodes, keys)
        ``nodes[i]`` and ``nodes[i+1]`` (cyclically) are joined by edge
        ``keys[i]``.

    Notes
    -----
    Breadth-first search on the signed double cover from each of ``starts``
    (default: the endpoints of the frustrated edges of a breadth-first
    colouring, which every odd cycle touches); O(k (V + E)).
    """
    allow = None if allowed is None else set(allowed)
    if starts is None:
        col = signed_colouring(graph, allow)
        if not col.frustrated:
            return None
        starts = []
        for u, w, _ in col.frustrated:
            starts.extend((u, w))
    adj = _raw_adj(graph)
    best = None
    best_len = float("inf")
    for v in dict.fromkeys(starts):
        if allow is not None and v not in allow:
            continue
        start, goal = (v, 0), (v, 1)
        parent = {start: None}
        dist = {start: 0}
        queue = deque([start])
        found = False
        while queue and not found:
            state = queue.popleft()
            d = dist[state]
            if d + 1 >= best_len:
                break
            u, p = state
            for w, kd in adj[u].items():
                if allow is not None and w not in allow:
                    continue
                for k, data in kd.items():
                    nxt = (w, p ^ (data["sign"] < 0))
                    if nxt in dist:
                        continue
                    dist[nxt] = d + 1
                    parent[nxt] = (state, k)
                    if nxt == goal:
                        found = True
                        break
                    queue.append(nxt)
                if found:
                    break
        if found:
            nodes, keys = [], []
            st = goal
            while parent[st] is not None:
                prev, k = parent[st]
                keys.append(k)
                nodes.append(prev[0])
                st = prev
            nodes.reverse()
            keys.reverse()
            best, best_len = (nodes, keys), len(keys)
    return best


def _tree_cycle(col: Colouring, u, w, k):
    """Fundamental cycle of the non-tree edge (u, w, k): nodes and keys, from the LCA."""
    if u == w:
        return [u], [k]
    pu, ku, pw, kw = [u], [], [w], []
    a, b = u, w
    while col.depth[a] > col.depth[b]:
        par, key = col.parent[a]
        ku.append(key)
        a = par
        pu.append(a)
    while col.depth[b] > col.depth[a]:
        par, key = col.parent[b]
        kw.append(key)
        b = par
        pw.append(b)
    while a != b:
        par, key = col.parent[a]
        ku.append(key)
        a = par
        pu.append(a)
        par, key = col.parent[b]
        kw.append(key)
        b = par
        pw.append(b)
    # lca = a; walk lca -> ... -> u -> (k) -> w -> ... -> lca
    nodes = list(reversed(pu)) + pw[:-1]
    keys = list(reversed(ku)) + [k] + kw
    return nodes, keys


def reversing_cycles(scn: Scenario, layout) -> list[dict]:
    """Every fundamental unbalanced cycle of the full track and the reversing sections on it.

    Returns
    -------
    list of ``{"cycle": [sections], "joints": [joint names], "covered_by": [sections]}``
    """
    key = "reversing_cycles"
    if key in layout.cache:
        return layout.cache[key]
    rev = reversing_sections(scn, layout)
    col = signed_colouring(layout.graph)
    joints = {j.index: j for j in scn.track.joints}
    out = []
    seen = set()
    for u, w, k in sorted(col.frustrated, key=lambda e: e[2]):
        nodes, keys = _tree_cycle(col, u, w, k)
        sig = frozenset(keys)
        if sig in seen:
            continue
        seen.add(sig)
        out.append({"cycle": nodes,
                    "joints": [joints[x].name for x in keys],
                    "covered_by": [s for s in dict.fromkeys(nodes) if s in rev]})
    layout.cache[key] = out
    return out


def _edges_of(adj, u):
    for w, kd in adj[u].items():
        for k, d in kd.items():
            yield w, k, d["sign"]


def unbalanced_block_nodes(graph) -> set:
    """Nodes of the unbalanced biconnected blocks of a signed multigraph.

    One iterative depth-first search (Hopcroft-Tarjan blocks with an edge
    stack). Parallel edges count as cycles (only the tree edge itself is
    skipped going back to the parent), a negative self-loop is an unbalanced
    block of its own. The search tree restricted to a block spans it, so the
    block is unbalanced iff one of its non-tree edges disagrees with the tree
    colouring. O(V + E).
    """
    adj = _raw_adj(graph)
    disc: dict = {}
    low: dict = {}
    colour: dict = {}
    out: set = set()
    counter = 0
    for root in adj:
        if root in disc:
            continue
        disc[root] = low[root] = counter
        counter += 1
        colour[root] = 1
        stack = [(root, None, _edges_of(adj, root))]
        estack: list = []          # (a, b, frustrated, is_tree)
        while stack:
            u, pk, it = stack[-1]
            advanced = False
            for w, k, sg in it:
                if w == u:
                    if sg < 0:
                        out.add(u)
                    continue
                if k == pk:
                    continue
                dw = disc.get(w)
                if dw is None:
                    disc[w] = low[w] = counter
                    counter += 1
                    colour[w] = colour[u] * sg
                    estack.append((u, w, False, True))
                    stack.append((w, k, _edges_of(adj, w)))
                    advanced = True
                    break
                if dw < disc[u]:   # back edge to an ancestor (or a parallel edge)
                    if dw < low[u]:
                        low[u] = dw
                    estack.append((u, w, colour[w] != colour[u] * sg, False))
            if advanced:
                continue
            stack.pop()
            if not stack:
                break
            p = stack[-1][0]
            if low[u] < low[p]:
                low[p] = low[u]
            if low[u] >= disc[p]:
                bad = False
                nodes = []
                while True:
                    a, b, frustrated, tree = estack.pop()
                    bad = bad or frustrated
                    nodes.append(a)
                    nodes.append(b)
                    if tree and a == p and b == u:
                        break
                if bad:
                    out.update(nodes)
    return out


def sections_on_unbalanced_cycles(layout) -> frozenset:
    """Sections that lie on at least one unbalanced cycle (see the module Notes)."""
    key = "on_unbalanced"
    if key not in layout.cache:
        layout.cache[key] = frozenset(unbalanced_block_nodes(layout.graph))
    return layout.cache[key]


# ----------------------------------------------------------------- check
def _arrow(nodes) -> str:
    return " > ".join(list(nodes) + [nodes[0]])


def check_polarity(scn: Scenario, layout) -> list[Finding]:
    """Report every unbalanced part of the fixed-polarity track (RF-POL-001), loops that
    lie in one reversing district (RF-POL-003) and the reversing loops found and
    handled (RF-POL-002)."""
    return [f for f, _ in _polarity(scn, layout)]


def polarity_subjects(scn: Scenario, layout) -> list:
    """``[(finding, sections)]``: each RF-POL-001 and RF-POL-003 finding and the
    sections of the part (or reversing district) whose loop it reports."""
    return [(f, secs) for f, secs in _polarity(scn, layout) if secs]


def _polarity(scn: Scenario, layout) -> list:
    """The polarity findings with the sections each is about (cached)."""
    key = "polarity_findings"
    if key in layout.cache:
        return layout.cache[key]
    findings: list = []
    rev = reversing_sections(scn, layout)
    fixed = [s for s in layout.graph if s not in rev]
    col = signed_colouring(layout.graph, fixed)
    joints = {j.index: j for j in scn.track.joints}
    if col.frustrated:
        comp_of = {}
        for i, comp in enumerate(col.components):
            for s in comp:
                comp_of[s] = i
        starts_by_comp: dict[int, list] = {}
        for u, w, _ in col.frustrated:
            starts_by_comp.setdefault(comp_of[u], []).extend((u, w))
        for ci in sorted(starts_by_comp):
            cyc = shortest_unbalanced_cycle(layout.graph, col.components[ci],
                                            starts_by_comp[ci])
            nodes, keys = cyc
            secs = scn.track.sections
            comp = set(col.components[ci])
            # prefer a section whose removal balances the whole part, then the longest
            ranked = sorted(((is_balanced(layout.graph, comp - {s}), secs[s].length_m, s)
                             for s in dict.fromkeys(nodes)), reverse=True)
            balances, _, best = ranked[0]
            why = ("the longest of the loop whose reversing leaves the rest balanced"
                   if balances else "the longest of the loop; other loops of this part "
                   "need their own")
            crossed = [joints[k].name for k in keys if joints[k].sign < 0]
            findings.append((Finding(
                "error", "RF-POL-001", scn.where("track", "sections", best),
                f"unbalanced loop {_arrow(nodes)}: it has {len(crossed)} crossed "
                f"joint{'s' if len(crossed) != 1 else ''} ({', '.join(crossed)}), an odd "
                f"number, so no wiring gives it one polarity all round; it needs a "
                f"reversing section",
                f"make one section of this loop a reversing section: gap both rails at "
                f"both its ends and feed it from a reversing controller, e.g. {best} "
                f"({secs[best].length_m:g} m), {why}"), frozenset(comp)))
    groups: dict[str, list] = {}
    for s in layout.graph:
        if s in rev:
            dev = reverser_of(scn, layout, s) or scn.booster_of(layout.district(s))
            groups.setdefault(dev, []).append(s)
    for dev in sorted(groups):
        cyc = shortest_unbalanced_cycle(layout.graph, groups[dev])
        if cyc is None:
            continue
        nodes, keys = cyc
        crossed = [joints[k].name for k in keys if joints[k].sign < 0]
        findings.append((Finding(
            "error", "RF-POL-003", scn.where("track", "sections", nodes[0]),
            f"unbalanced loop {_arrow(nodes)} (crossed: {', '.join(crossed)}) lies wholly "
            f"in the district of {dev}, which reverses it all at once: no setting of "
            f"{dev} gives it one polarity all round",
            "feed one section of this loop from a fixed-polarity district, gapped on both "
            "rails at both its ends"), frozenset(groups[dev])))
    for cyc in reversing_cycles(scn, layout):
        if cyc["covered_by"]:
            findings.append((Finding(
                "info", "RF-POL-002", "loop " + cyc["cycle"][0],
                f"reversing loop {_arrow(cyc['cycle'])} is handled by reversing "
                f"section{'s' if len(cyc['covered_by']) > 1 else ''} "
                f"{', '.join(cyc['covered_by'])}"), None))
    layout.cache[key] = findings
    return findings
