"""The layout as a graph: sections, joints, districts and train routes.

:func:`build_layout` turns the track of a :class:`~sim.model.Scenario` into a
:class:`Layout`: a :class:`networkx.MultiGraph` whose nodes are section names
and whose edges are joints (edge key ``joint.index``; edge data ``joint``,
``sign`` +1 straight / -1 crossed, ``gaps`` ``"none"|"one"|"both"``), plus the
queries the checks, the circuit and the trains need.

Districts
---------
A power district is the set of sections fed by one device output (booster,
breaker or reverser). A section with ``feed`` ``None`` belongs to the district
of the nearest fed section it is bonded to (joints with ``gaps: none``, found
breadth first, joints in file order). A section bonded to no fed section is
*unfed*: it is listed in :attr:`Layout.unfed` (the checks report it), it is in
no district, and :meth:`Layout.district` returns ``None`` for it.

Routes
------
:meth:`Layout.route_path` follows a train's route: from the start heading, each
next section must be joined to the end the train is heading to; the train
enters it by the joined end and heads to its other end. A reversal step flips
the heading inside the current section, so a train that runs into a stub (a wye
tail), reverses and runs out again leaves by the end it came in by. Where a
turnout lets the route go on two ways (an end joined to both ends of a balloon
loop) the first joint in file order that lets the *rest* of the route go on is
taken (a forward search over at most two headings per step, linear in the
route length).

Examples
--------
>>> # doctest: +SKIP
>>> lay = build_layout(scn)
>>> lay.district("wye-tail")
'wye-tail-ctl'
>>> [leg.section for leg in lay.route_path("wye-turn")]
['main-west', 'leg-west', 'wye-tail', 'wye-tail', 'leg-east', 'main-east']
"""
from __future__ import annotations

from collections import deque
from typing import NamedTuple, Optional, Union

import networkx as nx

from sim.errors import Problem, ScenarioError
from sim.model import Joint, Reversal, Scenario, Train

ENDS = ("a", "b")
_new_tuple = tuple.__new__


def other_end(end: str) -> str:
    """The other end of a section: ``"a"`` <-> ``"b"``."""
    return "b" if end == "a" else "a"


class RouteLeg(NamedTuple):
    """One run of a train through one section.

    ``enter_end`` is ``None`` for the first leg (the train starts inside) and
    for a leg that begins with a reversal; ``exit_end`` is ``None`` for the
    last leg and for a leg that ends with a reversal. ``direction`` is ``"ab"``
    (travelling from end a to end b) or ``"ba"``. ``joint_in`` is the joint
    crossed to enter this leg (``None`` when none was), ``reversal`` the
    reversal step that began it (``None`` when none did).
    """

    section: str
    enter_end: Optional[str]
    exit_end: Optional[str]
    direction: str
    joint_in: Optional[Joint] = None
    reversal: Optional[Reversal] = None


class Neighbour(NamedTuple):
    """A section across a joint, with the joint."""

    section: str
    joint: Joint


class Layout:
    """The track graph of a scenario and its queries (see the module docstring).

    Attributes
    ----------
    scn : Scenario
    graph : networkx.MultiGraph
        Nodes: section names. Edges: joints (key ``joint.index``; data
        ``joint``, ``sign``, ``gaps``).
    ends : dict[(section, end), tuple[Joint, ...]]
        The joints at every section end (empty tuple for a free end).
    turnouts : dict[(section, end), tuple[Joint, ...]]
        The ends in more than one joint.
    districts : dict[str, tuple[str, ...]]
        Sections of each feeding device, in file order.
    unfed : tuple[str, ...]
        Sections bonded to no fed section.
    """

    def __init__(self, scn: Scenario):
        self.scn = scn
        secs = scn.track.sections
        ends: dict[tuple[str, str], list[Joint]] = {(s, e): [] for s in secs for e in ENDS}
        nbrs: dict[str, list[Neighbour]] = {s: [] for s in secs}
        edges = []
        problems = []
        for j in scn.track.joints:
            e0, e1 = j.ends
            u, w = e0.section, e1.section
            try:
                at0, at1, nb0, nb1 = ends[(u, e0.end)], ends[(w, e1.end)], nbrs[u], nbrs[w]
            except KeyError:
                bad = [str(e) for e in j.ends if e.section not in secs or e.end not in ENDS]
                loc = scn.locations.get(("track", "joints", j.index, "ends"))
                problems.append(Problem(
                    scn.path, f"track.joints.{j.index}.ends",
                    f"joint {j.name} names no section end {', '.join(bad)}",
                    loc[0] if loc else None, loc[1] if loc else None))
                continue
            sign = 1 if e0.end != e1.end else -1
            edges.append((u, w, j.index, {"joint": j, "sign": sign, "gaps": j.gaps}))
            at0.append(j)
            if at1 is not at0:
                at1.append(j)
            nb0.append(_new_tuple(Neighbour, (w, j)))     # Neighbour(w, j), C speed
            if w != u:
                nb1.append(_new_tuple(Neighbour, (u, j)))
        if problems:
            raise ScenarioError(problems)
        self.graph = nx.MultiGraph()
        self.graph.add_nodes_from(secs)
        self.graph.add_edges_from(edges)
        self.ends = {k: tuple(v) for k, v in ends.items()}
        self.turnouts = {k: v for k, v in self.ends.items() if len(v) > 1}
        self._neighbours = {s: tuple(v) for s, v in nbrs.items()}
        self._district: dict[str, Optional[str]] = {}
        self._assign_districts()
        groups: dict[str, list[str]] = {}
        for s in secs:
            d = self._district[s]
            if d is not None:
                groups.setdefault(d, []).append(s)
        self.districts = {d: tuple(v) for d, v in groups.items()}
        self.unfed = tuple(s for s in secs if self._district[s] is None)
        self._routes: dict[str, tuple[RouteLeg, ...]] = {}
        self._chains: dict[str, tuple[str, ...]] = {}
        self.cache: dict = {}  # for the checks: analyses shared between them

    # ------------------------------------------------------------ districts
    def _assign_districts(self) -> None:
        secs = self.scn.track.sections
        dist = self._district
        queue: deque = deque()
        for name, sec in secs.items():
            dist[name] = sec.feed
            if sec.feed is not None:
                queue.append(name)
        # multi-source breadth-first search over bonded joints, joints in file order
        nbrs = self._neighbours
        while queue:
            u = queue.popleft()
            for w, j in nbrs[u]:
                if dist[w] is None and j.gaps == "none":
                    dist[w] = dist[u]
                    queue.append(w)

    def district(self, section: str) -> Optional[str]:
        """The device feeding ``section`` (through bonds for a section with feed None).

        ``None`` for a section fed by nothing.
        """
        return self._district[section]

    def device_chain(self, section: str) -> tuple[str, ...]:
        """The feeding device of a section and every device above it, nearest first."""
        d = self._district[section]
        if d is None:
            return ()
        chain = self._chains.get(d)
        if chain is None:
            chain = self._chains[d] = (d,) + self.scn.upstream(d)
        return chain

    # ------------------------------------------------------------- queries
    def joints_at(self, section: str, end: Optional[str] = None) -> tuple[Joint, ...]:
        """The joints at one end of a section (both ends when ``end`` is None)."""
        if end is None:
            seen = {}
            for e in ENDS:
                for j in self.ends[(section, e)]:
                    seen[j.index] = j
            return tuple(seen[i] for i in sorted(seen))
        return self.ends[(section, end)]

    def neighbours(self, section: str) -> tuple[Neighbour, ...]:
        """Every (section, joint) across a joint of ``section``, by joint index."""
        return self._neighbours[section]

    def neighbours_across_gaps(self, section: str) -> tuple[Neighbour, ...]:
        """The (section, joint) pairs across joints of ``section`` gapped on a rail or both."""
        return tuple(n for n in self.neighbours(section) if n.joint.gaps != "none")

    @staticmethod
    def far_end(joint: Joint, section: str, end: str):
        """The other :class:`~sim.model.End` of ``joint`` seen from ``section.end``."""
        e0, e1 = joint.ends
        if e0.section == section and e0.end == end:
            return e1
        return e0

    # --------------------------------------------------------------- routes
    def route_path(self, train: Union[str, Train]) -> tuple[RouteLeg, ...]:
        """The legs of a train's route and the joints crossed between them.

        Raises
        ------
        ScenarioError
            When consecutive route sections are not joined at the end the train
            is heading to, located at ``trains.<name>.route``.
        """
        tr = self.scn.trains[train] if isinstance(train, str) else train
        if tr.name not in self._routes:
            self._routes[tr.name] = self._route(tr)
        return self._routes[tr.name]

    def check_routes(self) -> None:
        """Follow every train's route; raise one ScenarioError with every problem."""
        problems = []
        for tr in self.scn.trains.values():
            try:
                self.route_path(tr)
            except ScenarioError as err:
                problems.extend(err.problems)
        if problems:
            raise ScenarioError(problems)

    def _problem(self, tr: Train, step: Optional[int], message: str) -> ScenarioError:
        scn = self.scn
        loc = None
        if step is not None:
            loc = scn.locations.get(("trains", tr.name, "route", step))
        loc = loc or scn.locations.get(("trains", tr.name, "route"))
        return ScenarioError([Problem(scn.path, f"trains.{tr.name}.route", message,
                                      loc[0] if loc else None, loc[1] if loc else None)])

    def _route(self, tr: Train) -> tuple[RouteLeg, ...]:
        secs = self.scn.track.sections
        steps = list(tr.route)
        if not steps or isinstance(steps[0], Reversal) or steps[0] != tr.start.section:
            first = steps[0] if steps else None
            raise self._problem(tr, 0, f"the route must begin with the start section "
                                       f"{tr.start.section!r}, not {first!r}")
        for i, st in enumerate(steps):
            if not isinstance(st, Reversal) and st not in secs:
                raise self._problem(tr, i, f"route step {i} names no section: {st!r}")
        if tr.start.heading not in ENDS:
            raise self._problem(tr, None, f"start heading must be a or b, "
                                          f"not {tr.start.heading!r}")
        # sec_at[i]: the section the train is in after step i (the last section named
        # at or before i); heads[i]: the end of it the train then heads to.
        sec_at = []
        cur = steps[0]
        for st in steps:
            if not isinstance(st, Reversal):
                cur = st
            sec_at.append(cur)

        def moves(i: int, head: str) -> list:
            """(new heading, joint or None) for step i from ``head``, joints in file order."""
            st = steps[i]
            if isinstance(st, Reversal):
                return [(other_end(head), None)]
            out = []
            for j in self.ends[(sec_at[i - 1], head)]:
                far = self.far_end(j, sec_at[i - 1], head)
                if far.section == st:
                    out.append((other_end(far.end), j))
            return out

        # forward: the headings reachable at each step
        states: list[set] = [{tr.start.heading}]
        for i in range(1, len(steps)):
            nxt = {h for head in states[-1] for h, _ in moves(i, head)}
            if not nxt:
                raise self._problem(tr, i, self._why_not(sec_at[i - 1], steps[i], states[-1]))
            states.append(nxt)
        # backward: the headings from which the rest of the route can be run
        alive = [set() for _ in steps]
        alive[-1] = set(states[-1])
        for i in range(len(steps) - 1, 0, -1):
            alive[i - 1] = {head for head in states[i - 1]
                            if any(h in alive[i] for h, _ in moves(i, head))}
        # forward again: the first joint (file order) that keeps the route alive
        heads = [tr.start.heading] + [None] * (len(steps) - 1)
        joints: list[Optional[Joint]] = [None] * len(steps)
        for i in range(1, len(steps)):
            heads[i], joints[i] = next((h, j) for h, j in moves(i, heads[i - 1])
                                       if h in alive[i])
        legs = []
        for i, st in enumerate(steps):
            head = heads[i]
            direction = "ab" if head == "b" else "ba"
            if i == 0 or isinstance(st, Reversal):
                enter = None
            else:
                enter = other_end(head)
            nxt_step = steps[i + 1] if i + 1 < len(steps) else None
            exit_ = head if (nxt_step is not None and not isinstance(nxt_step, Reversal)) else None
            legs.append(RouteLeg(sec_at[i], enter, exit_, direction, joints[i],
                                 st if isinstance(st, Reversal) else None))
        return tuple(legs)

    def _why_not(self, prev_sec: str, nxt: str, heads: dict) -> str:
        heading = " or ".join(f"{prev_sec}.{h}" for h in sorted(heads))
        joined_at = sorted({f"{prev_sec}.{e}" for e in ENDS for j in self.ends[(prev_sec, e)]
                            if self.far_end(j, prev_sec, e).section == nxt})
        msg = (f"{prev_sec} and {nxt} are not joined at {heading}, the end the train "
               f"is heading to")
        if joined_at:
            msg += (f"; they join at {', '.join(joined_at)}: add a reversal step "
                    f"({{reverse_after: ...}}) before {nxt} or change the heading")
        return msg


def joint_where(scn: Scenario, joint: Joint, *sub) -> str:
    """A joint's name with its line in the file, e.g. ``"east-main.b~wye-east.a (line 40)"``."""
    loc = scn.locations.get(("track", "joints", joint.index) + sub) or \
        scn.locations.get(("track", "joints", joint.index))
    return f"{joint.name} (line {loc[0]})" if loc else joint.name


def build_layout(scn: Scenario, check_routes: bool = True) -> Layout:
    """Build the layout graph of a scenario.

    Parameters
    ----------
    scn : Scenario
    check_routes : bool
        Follow every train's route now (default), so that a bad route is
        reported at once with every other bad route.

    Raises
    ------
    ScenarioError
        A joint naming a section end that does not exist, or (with
        ``check_routes``) a route whose consecutive sections do not join.

    Notes
    -----
    Cost O(sections + joints + total route length).
    """
    layout = Layout(scn)
    if check_routes:
        layout.check_routes()
    return layout
