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

``leads`` is the orientation of a section's feeders as built, seen from ``a``
to ``b`` (``scenario-format.md``). A section whose file gives no ``leads`` is
not wired yet: its orientation is a free variable that the tool chooses
(:func:`solve_phases`, listed on the wiring sheet by :mod:`sim.checks.wiring`),
never a setting to change, so it is never called mis-phased.

Every joint between two fixed-phase sections is a constraint (bonded and
gapped alike; a bonded joint between two *districts* is also an RF-GAP-001
error, a separate matter).

Codes
-----
RF-PHS-001 (error)
    The rails meet out of phase at one or more joints. One finding per group
    of joints that one change can mend, with the change of the fewest settings
    (invert a booster, or swap the leads of a section whose file gives them).
    When that change inverts a booster that feeds neither side of any joint out
    of phase (a booster far from the trouble), the fix of the fewest leads
    alone (no booster changed: the local fix) comes first and the other is
    offered after it; the wiring sheet's chosen leads follow the first.

Minimal fix and the chosen orientations
---------------------------------------
Signed 2-colouring (:func:`sim.checks.polarity.signed_colouring`, the one that
finds reversing loops): the constraint graph (fed sections as nodes, joints as
signed edges) is coloured first along its bonded joints and then across its
gapped ones, so that where the graph is unbalanced (a reversing loop without a
reversing section, RF-POL-001) the out-of-phase joint falls on a gap when one
can. Each connected component ``C`` is coloured up to a global flip ``eps_C``;
the variables are ``eps_C`` and a flip ``delta_b`` of every booster. Given
them, a section ``p`` of booster ``b`` whose leads are given needs them swapped
iff ``delta_b * eps_C * phase(p) * colour(p) == -1``; a section without leads
gets ``leads = delta_b * eps_C * phase(b) * colour(p)``. The cost, compared in
order, is the settings changed, then settings moved away from normal (so that a
change that restores ``normal`` wins a tie), then the chosen orientations that
are ``swapped``. When every component's given sections already agree, no
booster flip can lower it and ``delta = 1`` is taken at once (the common case:
cost linear in the layout). Otherwise the cost is separable on either side once
the other is fixed, so the side with fewer variables is enumerated exhaustively
(exact for up to 12 of them, which covers any layout with at most 12 boosters
or 12 components in one coupled group); beyond that a coordinate descent from
the current settings is used. A component that cannot be 2-coloured holds an
unbalanced cycle: that is the polarity check's finding (RF-POL-001), not
reported again here.
"""
from __future__ import annotations

import itertools
from collections import deque
from dataclasses import dataclass, field

from sim.checks.polarity import reversing_sections, signed_colouring
from sim.layout import joint_where
from sim.model import Finding, Scenario

__all__ = ["check_phasing", "section_phases", "solve_phases", "PhaseSolution",
           "phasing_subjects"]

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


@dataclass
class PhaseSolution:
    """The phases of the fixed-phase track, as :func:`solve_phases` finds them.

    Attributes
    ----------
    booster : dict
        Fed fixed-phase section -> the booster at the top of its chain.
    rep : dict
        Fixed-phase section -> ``(fed section, sign)`` it takes its phase from
        (itself and +1 for a fed one).
    leads : dict
        Fed fixed-phase section -> its leads (+1/-1): as given, or as chosen.
    chosen : frozenset
        The sections whose leads the tool chose (the file gave none).
    groups : list of (Finding, tuple of Joint)
        One RF-PHS-001 finding per coupled group with joints out of phase now,
        and those joints.
    """

    booster: dict = field(default_factory=dict)
    rep: dict = field(default_factory=dict)
    leads: dict = field(default_factory=dict)
    chosen: frozenset = frozenset()
    groups: list = field(default_factory=list)


def _reps(scn: Scenario, layout):
    """(booster, rep) of every fixed-phase section with a booster at the top of its chain."""
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


def _bonded_first_colouring(nodes, edges):
    """Signed colouring along bonded joints first, then across gapped ones.

    Returns ``(colour, components, frustrated component indices)``.
    """
    bonded = [e for e in edges if e[3]["joint"].gaps != "both"]
    col1 = signed_colouring(_SignedAdjacency(nodes, bonded))
    part_of = {}
    for i, comp in enumerate(col1.components):
        for p in comp:
            part_of[p] = i
    quotient = []
    for u, w, k, data in edges:
        if data["joint"].gaps == "both":
            sign = data["sign"] * col1.colour[u] * col1.colour[w]
            quotient.append((part_of[u], part_of[w], k, {"sign": sign}))
    col2 = signed_colouring(_SignedAdjacency(range(len(col1.components)), quotient))
    colour = {p: col1.colour[p] * col2.colour[part_of[p]] for p in nodes}
    comps, bad = [], set()
    bad_parts = {part_of[u] for u, _, _ in col1.frustrated}
    bad_quot = {u for u, _, _ in col2.frustrated}
    for i, group in enumerate(col2.components):
        comps.append([p for q in group for p in col1.components[q]])
        if bad_quot & set(group) or bad_parts & set(group):
            bad.add(i)
    return colour, comps, bad


def solve_phases(scn: Scenario, layout) -> PhaseSolution:
    """Leads of every fed fixed-phase section (given or chosen) and the RF-PHS-001 groups.

    Cached in ``layout.cache``; see the module docstring for the method.
    """
    key = "phase_solution"
    if key in layout.cache:
        return layout.cache[key]
    booster, rep = _reps(scn, layout)
    secs = scn.track.sections
    bph = {b: scn.boosters[b].phase for b in set(booster.values())}
    given = {p: secs[p].leads for p in booster if secs[p].leads is not None}
    free = [p for p in booster if p not in given]
    edges = []
    for j in scn.track.joints:
        x, y = j.ends[0].section, j.ends[1].section
        if x not in rep or y not in rep:
            continue
        (p, sx), (q, sy) = rep[x], rep[y]
        if p == q:
            continue
        edges.append((p, q, j.index, {"sign": j.sign * sx * sy, "joint": j}))
    colour, comps, bad = _bonded_first_colouring(list(booster), edges)
    # c[p]: the component flip a given section agrees with when its booster is not flipped
    c = {p: bph[booster[p]] * given[p] * colour[p] for p in given}
    comp_of = {p: i for i, comp in enumerate(comps) for p in comp}

    def free_cost(comp, delta, eps):
        return sum(delta.get(booster[p], 1) * eps * bph[booster[p]] * colour[p] < 0
                   for p in comp if p not in given)

    def best_eps(i, delta):
        comp = comps[i]
        return min((+1, -1), key=lambda e: (
            sum(delta.get(booster[p], 1) * e != c[p] for p in comp if p in given),
            sum(delta.get(booster[p], 1) * e != c[p] and given[p] > 0
                for p in comp if p in given),
            free_cost(comp, delta, e)))

    delta: dict = {}
    agree = all(len({c[p] for p in comps[i] if p in given}) <= 1
                for i in range(len(comps)) if i not in bad)
    groups: list = []
    if not agree:
        delta, groups = _coupled_groups(scn, comps, bad, booster, bph, c, given, colour,
                                        best_eps, free_cost, edges)
    eps = {i: best_eps(i, delta) for i in range(len(comps))}
    leads = dict(given)
    for p in free:
        i = comp_of[p]
        leads[p] = delta.get(booster[p], 1) * eps[i] * bph[booster[p]] * colour[p]
    sol = PhaseSolution(booster, rep, leads, frozenset(free))
    for members, bs, alt in groups:
        sections = {p for i in members for p in comps[i]}
        other = None
        if alt is not None:
            other = _fixes(scn, sections, bs, alt[0], lambda p: alt[1][comp_of[p]], c, bph,
                           booster)
        sol.groups.append(_group_finding(scn, sol, edges, sections, bs, delta,
                                         lambda p: eps[comp_of[p]], c, bph, other))
    layout.cache[key] = sol
    return sol


def _coupled_groups(scn, comps, bad, booster, bph, c, given, colour, best_eps, free_cost,
                    edges=()):
    """The fewest-changes booster flips of every group of components coupled through a
    booster, for the groups where the given leads disagree; ``(delta, groups)`` with
    ``groups`` the component indices of each such group."""
    parent: dict = {}

    def find(x):
        while parent.setdefault(x, x) != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for i, comp in enumerate(comps):
        if i in bad:
            continue
        for p in comp:
            parent[find(("C", i))] = find(("B", booster[p]))
    coupled: dict = {}
    for i in range(len(comps)):
        if i not in bad:
            coupled.setdefault(find(("C", i)), []).append(i)
    delta: dict = {}
    groups = []
    for members in coupled.values():
        if all(len({c[p] for p in comps[i] if p in given}) <= 1 for i in members):
            continue
        bs = sorted({booster[p] for i in members for p in comps[i]})

        def comp_cost(i, dl, e):
            chg = away = 0
            for p in comps[i]:
                if p in given and dl[booster[p]] * e != c[p]:
                    chg += 1
                    away += given[p] > 0          # a normal lead would become swapped
            return chg, away, free_cost(comps[i], dl, e)

        def total(dl, ep):
            chg = away = fsw = 0
            for b in bs:
                if dl[b] < 0:
                    chg += 1
                    away += bph[b] > 0
            for i in members:
                x, y, z = comp_cost(i, dl, ep[i])
                chg, away, fsw = chg + x, away + y, fsw + z
            return chg, away, fsw

        def eps_for(dl):
            return {i: best_eps(i, dl) for i in members}

        candidates = []
        if len(bs) <= _EXACT:
            for flips in itertools.product((+1, -1), repeat=len(bs)):
                dl = dict(zip(bs, flips))
                candidates.append((dl, eps_for(dl)))
        elif len(members) <= _EXACT:
            for flips in itertools.product((+1, -1), repeat=len(members)):
                ep = dict(zip(members, flips))
                dl = {}
                for b in bs:
                    def cost(d, b=b):
                        x = y = 0
                        if d < 0:
                            x, y = 1, int(bph[b] > 0)
                        for i in members:
                            for p in comps[i]:
                                if booster[p] == b and p in given and d * ep[i] != c[p]:
                                    x += 1
                                    y += given[p] > 0
                        return x, y
                    dl[b] = min((+1, -1), key=cost)
                candidates.append((dl, ep))
        else:
            dl = {b: 1 for b in bs}
            ep = eps_for(dl)
            improved = True
            while improved:
                improved = False
                for b in bs:
                    trial = dict(dl)
                    trial[b] = -trial[b]
                    tep = eps_for(trial)
                    if total(trial, tep) < total(dl, ep):
                        dl, ep, improved = trial, tep, True
            candidates.append((dl, ep))
        best = min(candidates, key=lambda de: total(*de))
        ones = {b: 1 for b in bs}
        local = (ones, eps_for(ones))
        alt = None
        if any(d < 0 for d in best[0].values()) and total(*local) != total(*best):
            near = _near_boosters({p for i in members for p in comps[i]}, edges, booster, bph,
                                  given)
            if any(d < 0 and b not in near for b, d in best[0].items()):
                best, alt = local, best       # the local fix first
        delta.update(best[0])
        groups.append((members, bs, alt))
    return delta, groups


def _near_boosters(sections, edges, booster, bph, given) -> set:
    """The boosters feeding a side of a joint out of phase now (both sides' leads given)
    among ``sections``."""
    near: set = set()
    for u, w, _, data in edges:
        if u in sections and w in sections and u in given and w in given and \
                bph[booster[u]] * given[u] != data["sign"] * bph[booster[w]] * given[w]:
            near.update((booster[u], booster[w]))
    return near


def _word(v: int, kind: str) -> str:
    if kind == "leads":
        return "normal" if v > 0 else "swapped"
    return "normal" if v > 0 else "inverted"


def _fixes(scn, sections, bs, delta, eps_of, c, bph, booster) -> list:
    """The settings a choice of booster flips ``delta`` and component flips changes."""
    secs = scn.track.sections
    fixes = [f"booster {b}: phase {_word(bph[b], 'phase')} -> {_word(-bph[b], 'phase')}"
             for b in bs if delta.get(b, 1) < 0]
    for p in sorted(sections, key=list(secs).index):
        if p in c and delta.get(booster[p], 1) * eps_of(p) != c[p]:
            fixes.append(f"section {p}: leads {_word(secs[p].leads, 'leads')} -> "
                         f"{_word(-secs[p].leads, 'leads')}")
    return fixes


def _change(fixes) -> str:
    n = len(fixes)
    return f"change {n} setting{'s' if n > 1 else ''}: " + "; ".join(fixes)


def _group_finding(scn, sol, edges, sections, bs, delta, eps_of, c, bph, other=None):
    """The RF-PHS-001 finding of one coupled group and the joints out of phase now
    (``other``: the settings of the other fix offered, module docstring)."""
    booster, leads = sol.booster, sol.leads
    fixes = _fixes(scn, sections, bs, delta, eps_of, c, bph, booster)
    bad = []
    for u, w, k, data in edges:
        if u in sections and w in sections:
            pu = bph[booster[u]] * leads[u]
            pw = bph[booster[w]] * leads[w]
            if pu != data["sign"] * pw:
                bad.append(data["joint"])
    bad.sort(key=lambda j: j.index)

    def desc(j):
        kind = {"none": "bonded: a short at all times",
                "one": "gapped on one rail: the other rail shorts the two at all times",
                }.get(j.gaps, "gapped: a wheel bridging it is a short")
        return f"{j.name} ({kind})"

    shown = ", ".join(desc(j) for j in bad[:6]) + (" ..." if len(bad) > 6 else "")
    fix = _change(fixes)
    if other:
        fix += f"; or instead {_change(other)}"
    finding = Finding(
        "error", "RF-PHS-001", joint_where(scn, bad[0]),
        f"the rails meet out of phase at {len(bad)} joint{'s' if len(bad) > 1 else ''}: "
        f"{shown}",
        fix)
    return finding, tuple(bad)


def section_phases(scn: Scenario, layout) -> dict[str, int]:
    """Current phase (+1/-1) of every fixed-phase section that has one (chosen leads for
    the sections whose file gives none)."""
    sol = solve_phases(scn, layout)
    out = {}
    for s, (p, sg) in sol.rep.items():
        out[s] = sg * scn.boosters[sol.booster[p]].phase * sol.leads[p]
    return out


def phasing_subjects(scn: Scenario, layout) -> list:
    """``[(finding, joints)]``: each RF-PHS-001 finding and the joints it names."""
    return list(solve_phases(scn, layout).groups)


def check_phasing(scn: Scenario, layout) -> list[Finding]:
    """Joints whose rails meet out of phase, with the fewest changes that mend them."""
    return [f for f, _ in solve_phases(scn, layout).groups]
