"""A train's route as a 1-D coordinate.

The route coordinate ``s`` (metres) is the distance the train's *front* has
travelled since departure: it grows monotonically, through reversals. The
route is cut at its reversals into *legs*. Each leg lays the sections its
front passes along a straight line with its own coordinate ``u`` (metres,
growing in the direction of travel); within leg ``k`` the front stands at
``u = u_start + (s - s_start)``.

Joining consecutive route sections
----------------------------------
The train leaves a section by the end it heads to; the next route section
must have an end joined to that one (a joint of ``scn.track.joints``); the
train enters by the joined end and so heads to the section's other end. When
several joints qualify (a turnout whose routes both lead to the next section,
such as the throat of a balloon), the one that lets the rest of the route
continue is taken, the first in file order. The route is followed by the
layout's own follower (:meth:`sim.layout.Layout.route_path`, which the static
checks use too), so both see the same joints. A route whose consecutive
sections do not join raises :class:`sim.errors.ScenarioError` located at
``trains.<name>.route``.

Where the train stops and reverses
----------------------------------
* A train runs until its front reaches the end it heads to of the *last*
  route section, and stops there: ``route_length_m`` is that front distance.
* At a :class:`sim.model.Reversal` step the train runs on until its front
  reaches the end it heads to of the section it is in (the far end of a wye
  tail, say), stands for ``t_wait_s`` and runs back the other way. The old rear
  becomes the front; the axles stay where they are, only the direction flips.
  The heading in that section flips, so a train reversing in a stub leaves by
  the end it entered. The next route section must join that end (a section
  named right after the reversal is a section the train crosses into, as
  everywhere in a route: to reverse in a stub and leave it, name the next
  section after the reversal, not the stub again). Two reversals in a row
  shuttle the train: after the first it runs to the section's other end,
  reverses again and heads as it came.
* Leg ``k+1`` starts its line at the reversal point (``u = 0``) and lays the
  reversing section back to the end it now heads to, then the next route
  sections. At the start of leg ``k+1`` the train covers ``0 <= u <= L``
  (``L`` its length), its new front at ``u = L``. The track under the train
  must be the same on both lines: a train longer than the room it has in the
  reversing section, whose rear therefore stands beyond the end it must leave
  by, cannot follow a route that turns off there, and is refused with a
  located problem.
* At the start, leg 0 puts the front at ``u = 0`` and lays the track behind
  the start far enough to hold the whole train, following the joint at the
  rear end of each section (the lowest joint index at a turnout). A train that
  does not fit behind a dead end is refused at ``trains.<name>.start``.

Points exactly at a joint belong to the piece ahead of the joint, except at
the end of a leg (the reversal point, the route end), which belongs to the
last piece.
"""
from __future__ import annotations

from bisect import bisect_right
from dataclasses import dataclass, field
from typing import Optional

from sim.errors import Problem, ScenarioError
from sim.model import Joint, Reversal, Scenario, Train

OTHER = {"a": "b", "b": "a"}
_TOL_M = 1e-9


@dataclass(frozen=True)
class Piece:
    """A stretch of one section laid along a leg's line.

    ``at(u) = at_lo_m + direction * (u - u_lo_m)`` is the section coordinate
    (metres from its ``a`` end) of line point ``u``; ``direction`` is +1 when
    the train travels from ``a`` to ``b`` there, -1 from ``b`` to ``a``.
    """

    section: str
    u_lo_m: float
    u_hi_m: float
    at_lo_m: float
    direction: int

    def at(self, u_m: float) -> float:
        """Section coordinate of line point ``u_m``."""
        return self.at_lo_m + self.direction * (u_m - self.u_lo_m)

    @property
    def heading(self) -> str:
        """The section end the train heads to on this piece."""
        return "b" if self.direction > 0 else "a"


@dataclass(frozen=True)
class JointMark:
    """A joint crossed between two consecutive pieces, at line point ``u_m``."""

    u_m: float
    joint: Joint


@dataclass(frozen=True)
class Leg:
    """The part of a route between two reversals, laid along one line.

    Attributes
    ----------
    index : int
        0 for the first leg.
    pieces : tuple of Piece
        Contiguous, in ``u`` order.
    joints : tuple of JointMark
        Every joint between consecutive pieces, in ``u`` order.
    s_start_m, s_end_m : float
        Route coordinates of the front at the start and at the end of the leg.
    u_start_m : float
        Line coordinate of the front at ``s_start_m``.
    flipped : bool
        True after an odd number of reversals: the front is the consist's rear
        vehicle and an axle at offset ``d`` behind the original front is
        ``L - d`` behind the current one.
    """

    index: int
    pieces: tuple[Piece, ...]
    joints: tuple[JointMark, ...]
    s_start_m: float
    s_end_m: float
    u_start_m: float
    flipped: bool
    _u_los: tuple[float, ...] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "_u_los", tuple(p.u_lo_m for p in self.pieces))

    @property
    def u_end_m(self) -> float:
        """Line coordinate of the end of the leg (its last piece's end)."""
        return self.pieces[-1].u_hi_m

    def u_of(self, s_m: float) -> float:
        """Line coordinate of the front at route coordinate ``s_m``."""
        return self.u_start_m + (s_m - self.s_start_m)

    def s_of(self, u_m: float) -> float:
        """Route coordinate at which the front stands at line point ``u_m``."""
        return self.s_start_m + (u_m - self.u_start_m)

    def piece_at(self, u_m: float) -> Piece:
        """The piece holding line point ``u_m`` (the one ahead at a joint)."""
        i = bisect_right(self._u_los, u_m) - 1
        return self.pieces[min(max(i, 0), len(self.pieces) - 1)]


@dataclass(frozen=True)
class ReversalPoint:
    """Where the train reverses: front distance ``s_m``, standing ``t_wait_s``."""

    s_m: float
    t_wait_s: float
    section: str


@dataclass(frozen=True)
class RouteStep:
    """One step of a resolved route.

    A section step has ``section``, ``enter_end`` (``None`` for the start
    section), ``heading`` (the end it heads to) and the ``joint`` crossed to
    enter it. A reversal step has ``reversal`` set and ``section`` the section
    it reverses in, ``heading`` the end it heads to afterwards.
    """

    section: str
    heading: str
    enter_end: Optional[str] = None
    joint: Optional[Joint] = None
    reversal: Optional[Reversal] = None


@dataclass(frozen=True)
class RoutePath:
    """A train's route laid out: legs, reversal points and the route length."""

    train: str
    train_length_m: float
    steps: tuple[RouteStep, ...]
    legs: tuple[Leg, ...]
    reversals: tuple[ReversalPoint, ...]

    @property
    def route_length_m(self) -> float:
        """Front distance from departure to the end of the route."""
        return self.legs[-1].s_end_m

    def leg_at(self, s_m: float, after_reversal: bool = False) -> Leg:
        """The leg the train is on at route coordinate ``s_m``.

        At a reversal point the train is on the leg it arrives by, unless
        ``after_reversal`` asks for the leg it leaves by.
        """
        if after_reversal:
            for leg in self.legs:
                if s_m < leg.s_end_m:
                    return leg
            return self.legs[-1]
        for leg in self.legs:
            if s_m <= leg.s_end_m:
                return leg
        return self.legs[-1]


# ------------------------------------------------------------------ joining
def _problem(scn: Scenario, path: tuple, message: str) -> Problem:
    loc = scn.locations.get(tuple(path))
    return Problem(file=scn.path, path=".".join(str(p) for p in path), message=message,
                   line=loc[0] if loc else None, column=loc[1] if loc else None)


def _route_error(scn: Scenario, train: Train, message: str) -> ScenarioError:
    return ScenarioError([_problem(scn, ("trains", train.name, "route"), message)])


def resolve_route(scn: Scenario, train: Train, layout=None) -> tuple[RouteStep, ...]:
    """The route as steps: the joint crossed into each section and the heading.

    The route is followed by the layout's follower
    (:meth:`sim.layout.Layout.route_path`, the one the static checks use: the
    first joint in file order that lets the rest of the route go on), so the
    moving trains and the checks cross the same joints; this only turns its
    legs into steps.

    Parameters
    ----------
    scn : Scenario
    train : sim.model.Train
    layout : sim.layout.Layout, optional
        The scenario's layout (built without the route check when ``None``).

    Raises
    ------
    ScenarioError
        Consecutive route sections that do not join, located at
        ``trains.<name>.route``.
    """
    if layout is None:
        from sim.layout import build_layout
        layout = build_layout(scn, check_routes=False)
    steps = []
    for k, leg in enumerate(layout.route_path(train)):
        heading = "b" if leg.direction == "ab" else "a"
        if k == 0:
            steps.append(RouteStep(leg.section, heading))
        elif leg.reversal is not None:
            steps.append(RouteStep(leg.section, heading, reversal=leg.reversal))
        else:
            steps.append(RouteStep(leg.section, heading, enter_end=leg.enter_end,
                                   joint=leg.joint_in))
    return tuple(steps)


# ------------------------------------------------------------------- laying
def build_route(scn: Scenario, train: Train, train_length_m: float,
                layout=None) -> RoutePath:
    """Lay ``train``'s route out in legs (see the module notes).

    Parameters
    ----------
    scn : Scenario
    train : sim.model.Train
    train_length_m : float
        The consist's length, front to rear.
    layout : sim.layout.Layout, optional
        The scenario's layout, whose route follower gives the joints crossed.

    Returns
    -------
    RoutePath

    Raises
    ------
    ScenarioError
        Sections that do not join (``trains.<name>.route``), a train that does
        not fit behind its start (``trains.<name>.start``) or that cannot leave
        a reversing section the way its route goes (``trains.<name>.route``).

    Notes
    -----
    Cost linear in the route length; the joints at each section end come from
    the layout (built once when ``layout`` is not given).
    """
    if layout is None:
        from sim.layout import build_layout
        layout = build_layout(scn, check_routes=False)
    steps = resolve_route(scn, train, layout)
    sections = scn.track.sections
    length = float(train_length_m)
    start = train.start
    sec0 = sections[start.section]
    d0 = +1 if start.heading == "b" else -1
    fwd = sec0.length_m - start.at_m if d0 > 0 else start.at_m
    room = start.at_m if d0 > 0 else sec0.length_m - start.at_m

    # leg 0: the start section, then the track behind the start
    pieces: list[Piece] = [Piece(start.section, -room, fwd, start.at_m - d0 * room, d0)]
    marks: list[JointMark] = []
    need = length - room
    cur, rear_end, u = start.section, OTHER[start.heading], -room
    guard = 0
    while need > 0.0:
        guard += 1
        around = layout.joints_at(cur, rear_end)          # in file order
        if not around or guard > 10 * max(1, len(sections)):
            raise ScenarioError([_problem(
                scn, ("trains", train.name, "start"),
                f"train {train.name!r} ({length:g} m) does not fit behind its start: its rear "
                f"would stand beyond the dead end {cur}.{rear_end}")])
        joint = around[0]
        far = layout.far_end(joint, cur, rear_end)
        other, oend = far.section, far.end
        olen = sections[other].length_m
        d = +1 if oend == "b" else -1
        at_f = olen if oend == "b" else 0.0
        pieces.insert(0, Piece(other, u - olen, u, at_f - d * olen, d))
        marks.insert(0, JointMark(u, joint))
        u -= olen
        need -= olen
        cur, rear_end = other, OTHER[oend]

    legs: list[Leg] = []
    reversals: list[ReversalPoint] = []
    s_start, u_start, flipped = 0.0, 0.0, False
    for step in steps[1:]:
        if step.reversal is None:
            u0 = pieces[-1].u_hi_m
            slen = sections[step.section].length_m
            d = +1 if step.heading == "b" else -1
            at_lo = 0.0 if step.enter_end == "a" else slen
            marks.append(JointMark(u0, step.joint))
            pieces.append(Piece(step.section, u0, u0 + slen, at_lo, d))
            continue
        leg = Leg(len(legs), tuple(pieces), tuple(marks), s_start,
                  s_start + (pieces[-1].u_hi_m - u_start), u_start, flipped)
        legs.append(leg)
        reversals.append(ReversalPoint(leg.s_end_m, float(step.reversal.t_wait_s), step.section))
        last = pieces[-1]
        slen = sections[last.section].length_m
        pieces = [Piece(last.section, 0.0, slen, last.at(last.u_hi_m), -last.direction)]
        marks = []
        s_start, u_start, flipped = leg.s_end_m, length, not flipped
    legs.append(Leg(len(legs), tuple(pieces), tuple(marks), s_start,
                    s_start + (pieces[-1].u_hi_m - u_start), u_start, flipped))
    for k in range(1, len(legs)):
        if not _same_track_under_train(legs[k - 1], legs[k], length):
            rev = reversals[k - 1]
            room_m = sections[rev.section].length_m
            raise _route_error(scn, train, (
                f"train {train.name!r} ({length:g} m) reverses in {rev.section!r}, which gives "
                f"it {room_m:g} m: its other end stands beyond the end it must leave by, so it "
                f"cannot follow the route after the reversal"))
    return RoutePath(train.name, length, steps, tuple(legs), tuple(reversals))


def _same_track_under_train(old: Leg, new: Leg, length_m: float) -> bool:
    """Whether the train's body at the end of ``old`` lies on ``new``'s ``[0, L]``."""
    if length_m <= 0.0:
        return True
    u_end = old.u_end_m
    if new.u_end_m < length_m - _TOL_M or old.pieces[0].u_lo_m > u_end - length_m + _TOL_M:
        return False
    ws = {0.0, length_m}
    for p in old.pieces:
        for u in (p.u_lo_m, p.u_hi_m):
            if 0.0 < u_end - u < length_m:
                ws.add(u_end - u)
    for p in new.pieces:
        for u in (p.u_lo_m, p.u_hi_m):
            if 0.0 < u < length_m:
                ws.add(u)
    pts = sorted(ws)
    for w0, w1 in zip(pts, pts[1:]):
        w = 0.5 * (w0 + w1)
        po, pn = old.piece_at(u_end - w), new.piece_at(w)
        if po.section != pn.section or abs(po.at(u_end - w) - pn.at(w)) > 1e-6:
            return False
    return True
