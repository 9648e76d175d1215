"""Phasing: do the rails meet in phase at every joint of fixed-polarity track?

A section's phase is ``phase(X) = booster phase * leads(X)``, the booster being
the one at the top of its feed chain (:meth:`Scenario.booster_of`); a section
with ``feed`` None takes the phase of the fed section it is bonded to (times
the signs of the bonded joints between). Across a joint of sign ``s`` the
rails agree when ``phase(X) == s * phase(Y)`` (``domain.md``). A wheel that
bridges a gapped joint out of phase is a short through both feeds; a bonded
joint (or one gapped on one rail only) out of phase is a short at all times.
Reverser-fed sections and those of a booster with ``reverse_on_short`` change
phase by design and are left out.

Every joint between two fixed-phase sections is a constraint (bonded and
gapped alike; a bonded joint between two *districts* is also an RF-GAP-001
error, a separate matter).

Codes
-----
RF-PHS-001 (error)
    The rails meet out of phase at one or more joints. One finding per group
    of joints that one change can mend, with the change of the fewest settings
    (invert a booster, or swap a section's leads).

Minimal fix
-----------
Signed 2-colouring: the constraint graph (fed sections as nodes, joints as
signed edges) is colourable in each connected component ``C`` up to a global
flip ``eps_C``; the variables are ``eps_C`` and a flip ``delta_b`` of every
booster. Given them, a section ``p`` of booster ``b`` needs its leads swapped
iff ``delta_b * eps_C * phase(p) * colour(p) == -1``. The cost (settings
changed, then settings left away from normal, so that a change that restores
``normal`` wins a tie) is separable on either side once the other is fixed, so
the side with fewer variables is enumerated exhaustively (exact for up to 12
of them, which covers any layout with at most 12 boosters or 12 components in
one coupled group); beyond that a coordinate descent from the current settings
is used. A component that cannot be 2-coloured holds an unbalanced cycle: that
is the polarity check's finding (RF-POL-001), not reported again here.
"""
from __future__ import annotations

import itertools
from collections import deque

from sim.checks.polarity import reversing_sections, signed_colouring
from sim.layout import joint_where
from sim.model import Finding, Scenario

__all__ = ["check_phasing", "section_phases"]

_EXACT = 12


class _SignedAdjacency:
    """A light signed multigraph (the constraint graph): ``_adj`` dicts as networkx keeps
    them, so :func:`signed_colouring` walks it the same way, without building a graph."""

    def __init__(self, nodes, edges):
        self._adj = {n: {} for n in nodes}
        self.edges = edges
        for u, w, k, data in edges:
            self._adj[u].setdefault(w, {})[k] = data
            self._adj[w].setdefault(u, {})[k] = data

    def __iter__(self):
        return iter(self._adj)


def _reps(scn: Scenario, layout):
    """(rep, sign) of every fixed-phase section with a booster at the top of its chain."""
    rev = reversing_sections(scn, layout)
    secs = scn.track.sections
    booster = {}
    for s, sec in secs.items():
        if s in rev or sec.feed is None:
            continue
        b = next((d for d in layout.device_chain(s) if d in scn.boosters), None)
        if b is not None:
            booster[s] = b
    rep = {s: (s, 1) for s in booster}
    if not any(sec.feed is None and s not in rev for s, sec in secs.items()):
        return booster, rep               # no section takes its phase through bonds
    queue = deque(booster)
    while queue:
        u = queue.popleft()
        for nb in layout.neighbours(u):
            w, j = nb.section, nb.joint
            if j.gaps == "none" and w not in rep and w not in rev and secs[w].feed is None:
                rep[w] = (rep[u][0], rep[u][1] * j.sign)
                queue.append(w)
    return booster, rep


def section_phases(scn: Scenario, layout) -> dict[str, int]:
    """Current phase (+1/-1) of every fixed-phase section that has one."""
    booster, rep = _reps(scn, layout)
    secs = scn.track.sections
    out = {}
    for s, (p, sg) in rep.items():
        out[s] = sg * scn.boosters[booster[p]].phase * secs[p].leads
    return out


def _word(v: int, kind: str) -> str:
    if kind == "leads":
        return "normal" if v > 0 else "swapped"
    return "normal" if v > 0 else "inverted"


def check_phasing(scn: Scenario, layout) -> list[Finding]:
    """Joints whose rails meet out of phase, with the fewest changes that mend them."""
    booster, rep = _reps(scn, layout)
    secs = scn.track.sections
    bph = {b: scn.boosters[b].phase for b in set(booster.values())}
    cur = {p: bph[booster[p]] * secs[p].leads for p in booster}
    constraints = []
    in_phase = True
    for j in scn.track.joints:
        x, y = j.ends[0].section, j.ends[1].section
        if x not in rep or y not in rep:
            continue
        (p, sx), (q, sy) = rep[x], rep[y]
        if p == q:
            continue
        sign = j.sign * sx * sy
        constraints.append((p, q, sign, j))
        if cur[p] != sign * cur[q]:
            in_phase = False
    if in_phase:
        return []                          # every joint in phase: nothing to mend
    edges = [(p, q, j.index, {"sign": sign, "joint": j}) for p, q, sign, j in constraints]
    cg = _SignedAdjacency(booster, edges)
    col = signed_colouring(cg)
    bad_comp = set()
    comp_of = {}
    for i, comp in enumerate(col.components):
        for p in comp:
            comp_of[p] = i
    for u, _, _ in col.frustrated:
        bad_comp.add(comp_of[u])           # unbalanced: polarity reports it
    c = {p: cur[p] * col.colour[p] for p in booster}
    violated = {}
    for i, comp in enumerate(col.components):
        if i in bad_comp:
            continue
        if len({c[p] for p in comp}) > 1:
            violated[i] = comp
    if not violated:
        return []
    # couple components through shared boosters (union-find)
    parent = {}

    def find(x):
        while parent.setdefault(x, x) != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for i, comp in enumerate(col.components):
        if i in bad_comp:
            continue
        for p in comp:
            parent[find(("C", i))] = find(("B", booster[p]))
    groups: dict = {}
    for i, comp in enumerate(col.components):
        if i not in bad_comp:
            groups.setdefault(find(("C", i)), []).append(i)
    findings = []
    for root, comps in groups.items():
        if not any(i in violated for i in comps):
            continue
        findings.append(_solve_group(scn, comps, col, booster, bph, c, cg, secs))
    return findings


def _solve_group(scn, comps, col, booster, bph, c, cg, secs) -> Finding:
    members = {i: col.components[i] for i in comps}
    boosters = sorted({booster[p] for i in comps for p in members[i]})

    def comp_cost(i, delta, eps):
        chg = away = 0
        for p in members[i]:
            if delta[booster[p]] * eps != c[p]:
                chg += 1
                away += secs[p].leads > 0      # a normal lead would become swapped
        return chg, away

    def booster_cost(b, d):
        return (1, int(bph[b] * d < 0)) if d < 0 else (0, 0)

    def total(delta, eps):
        chg = away = 0
        for b in boosters:
            x, y = booster_cost(b, delta[b])
            chg, away = chg + x, away + y
        for i in comps:
            x, y = comp_cost(i, delta, eps[i])
            chg, away = chg + x, away + y
        return chg, away

    def best_eps(delta):
        return {i: min((+1, -1), key=lambda e: comp_cost(i, delta, e)) for i in comps}

    def best_delta(eps):
        out = {}
        for b in boosters:
            def cost(d, b=b):
                x, y = booster_cost(b, d)
                for i in comps:
                    for p in members[i]:
                        if booster[p] == b and d * eps[i] != c[p]:
                            x += 1
                            y += secs[p].leads > 0
                return x, y
            out[b] = min((+1, -1), key=cost)
        return out

    candidates = []
    if len(boosters) <= _EXACT:
        for flips in itertools.product((+1, -1), repeat=len(boosters)):
            delta = dict(zip(boosters, flips))
            candidates.append((delta, best_eps(delta)))
    elif len(comps) <= _EXACT:
        for flips in itertools.product((+1, -1), repeat=len(comps)):
            eps = dict(zip(comps, flips))
            candidates.append((best_delta(eps), eps))
    else:
        delta = {b: 1 for b in boosters}
        eps = best_eps(delta)
        improved = True
        while improved:
            improved = False
            for b in boosters:
                trial = dict(delta)
                trial[b] = -trial[b]
                teps = best_eps(trial)
                if total(trial, teps) < total(delta, eps):
                    delta, eps, improved = trial, teps, True
        candidates.append((delta, eps))
    delta, eps = min(candidates, key=lambda de: total(*de))
    fixes = []
    for b in boosters:
        if delta[b] < 0:
            fixes.append(f"booster {b}: phase {_word(bph[b], 'phase')} -> "
                         f"{_word(-bph[b], 'phase')}")
    for i in comps:
        for p in members[i]:
            if delta[booster[p]] * eps[i] != c[p]:
                fixes.append(f"section {p}: leads {_word(secs[p].leads, 'leads')} -> "
                             f"{_word(-secs[p].leads, 'leads')}")
    # the joints out of phase now
    bad = []
    sub = set().union(*members.values())
    for u, w, k, data in cg.edges:
        if u in sub and w in sub:
            pu = bph[booster[u]] * secs[u].leads
            pw = bph[booster[w]] * secs[w].leads
            if pu != data["sign"] * pw:
                bad.append(data["joint"])
    bad.sort(key=lambda j: j.index)

    def desc(j):
        kind = {"none": "bonded: a short at all times",
                "one": "gapped on one rail: the other rail shorts the two at all times",
                }.get(j.gaps, "gapped: a wheel bridging it is a short")
        return f"{j.name} ({kind})"

    shown = ", ".join(desc(j) for j in bad[:6]) + (" ..." if len(bad) > 6 else "")
    first = bad[0]
    n_chg = total(delta, eps)[0]
    return Finding(
        "error", "RF-PHS-001", joint_where(scn, first),
        f"the rails meet out of phase at {len(bad)} joint{'s' if len(bad) > 1 else ''}: "
        f"{shown}",
        f"change {n_chg} setting{'s' if n_chg > 1 else ''}: " + "; ".join(fixes))
