"""A train's consist: vehicles end to end, axle offsets and conducting groups.

Geometry
--------
Vehicles are laid end to end, front first, all facing forward; every axle
position of a vehicle type is measured from that vehicle's front
(:class:`sim.model.Vehicle`). The *offset* of an axle is its distance behind
the train's front, in metres::

    offset = (sum of the lengths of the vehicles ahead) + axle_m

Conducting groups
-----------------
Wheels that join the two rail ends of a gapped joint while they pass it:

``"pickup"``
    A vehicle whose ``pickup`` is not empty and whose ``r_join_ohm`` is zero
    (a locomotive, ``draw_a > 0``, or a powered dummy with ``pickup: all``):
    its pickup joins every pickup axle on each rail with no resistance, so it
    bridges a gapped joint -- on every gapped rail at once -- from the moment its
    first pickup axle crosses the joint until its last one does.
``"lighted"``
    A car whose pickup axles are joined through ``r_join_ohm`` > 0 (car
    lighting): the same geometry, through that resistance.
``"metal"``
    One group per plain metal wheelset (``metal_wheels``) that is not already
    part of its vehicle's pickup: it bridges only while its tread spans the gap
    (see :mod:`sim.world.trains`).

An axle that is neither a pickup axle nor a metal wheelset (insulated or
plastic wheels) joins nothing. A pickup group of a single axle has no span:
it never joins the two sides of a gap through its pickup, and is not listed.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Sequence

from sim.errors import Problem, ScenarioError
from sim.model import Scenario, Train, Vehicle

PICKUP = "pickup"
LIGHTED = "lighted"
METAL = "metal"


@dataclass(frozen=True)
class ConductingGroup:
    """Axles joined electrically, as offsets from the train front.

    Attributes
    ----------
    kind : str
        ``"pickup"``, ``"lighted"`` or ``"metal"``.
    axle_offsets_m : tuple of float
        Offsets of the group's axles behind the train front (ascending), in
        the consist's orientation at the start of the route.
    r_join_ohm : float
        Resistance joining the axles (0 for a pickup and a metal wheelset).
    vehicle : int
        Index of the vehicle in the consist, front first.
    """

    kind: str
    axle_offsets_m: tuple[float, ...]
    r_join_ohm: float
    vehicle: int

    @property
    def first_m(self) -> float:
        """Offset of the group's first (front-most) axle."""
        return self.axle_offsets_m[0]

    @property
    def last_m(self) -> float:
        """Offset of the group's last (rear-most) axle."""
        return self.axle_offsets_m[-1]

    @property
    def span_m(self) -> float:
        """Distance between the group's first and last axle."""
        return self.axle_offsets_m[-1] - self.axle_offsets_m[0]


@dataclass(frozen=True)
class LoadOffset:
    """Where a locomotive draws its current, as an offset from the train front.

    The draw point is midway between the locomotive's first and last pickup
    axle (its vehicle centre when it has no pickup axle).
    """

    vehicle: int
    name: str
    offset_m: float
    draw_a: float


@dataclass(frozen=True)
class Consist:
    """A train's vehicles laid end to end, front first.

    Attributes
    ----------
    vehicles : tuple of sim.model.Vehicle
    fronts_m : tuple of float
        Offset of each vehicle's front behind the train front.
    length_m : float
        Sum of the vehicle lengths.
    axle_offsets_m : tuple of float
        Every axle, ascending.
    groups : tuple of ConductingGroup
        In consist order (vehicle by vehicle, pickup group first).
    loads : tuple of LoadOffset
        Every vehicle with ``draw_a`` > 0.
    conducting_axles_m : tuple of float
        Offsets of every pickup axle and every metal wheelset, ascending.
    """

    vehicles: tuple[Vehicle, ...]
    fronts_m: tuple[float, ...]
    length_m: float
    axle_offsets_m: tuple[float, ...]
    groups: tuple[ConductingGroup, ...]
    loads: tuple[LoadOffset, ...]
    conducting_axles_m: tuple[float, ...] = ()

    @property
    def draw_a(self) -> float:
        """Sum of the locomotives' draw."""
        return sum(ld.draw_a for ld in self.loads)

    @property
    def t_keep_alive_s(self) -> float:
        """The largest keep-alive among the locomotives (0 with none)."""
        times = [self.vehicles[ld.vehicle].t_keep_alive_s for ld in self.loads]
        return max(times, default=0.0)

    @property
    def conducting_span_m(self) -> float:
        """Distance between the first and the last conducting axle.

        Conducting axles are every pickup axle (a lone one included) and
        every axle of a vehicle with metal wheels. This is the length of the
        train that can bridge two gaps at once: a reversing section shorter
        than this is bridged at both ends together (common practice: it must
        be longer than the longest train). 0 with fewer than two.
        """
        offsets = list(self.conducting_axles_m)
        if len(offsets) < 2:
            return 0.0
        return max(offsets) - min(offsets)


def build_consist(vehicles: Sequence[Vehicle]) -> Consist:
    """Lay ``vehicles`` end to end, front first, and find the conducting groups.

    Parameters
    ----------
    vehicles : sequence of sim.model.Vehicle
        Front first (a loader's ``"hopper x 12"`` is already twelve entries).

    Returns
    -------
    Consist

    Examples
    --------
    >>> from sim.model import Vehicle
    >>> loco = Vehicle("loco", 0.2, (0.03, 0.17), pickup=(0, 1), draw_a=0.5)
    >>> car = Vehicle("car", 0.1, (0.02, 0.08), metal_wheels=True)
    >>> c = build_consist([loco, car])
    >>> [(g.kind, g.axle_offsets_m) for g in c.groups]
    [('pickup', (0.03, 0.17)), ('metal', (0.22,)), ('metal', (0.28,))]
    """
    fronts: list[float] = []
    axles: list[float] = []
    groups: list[ConductingGroup] = []
    loads: list[LoadOffset] = []
    conducting: list[float] = []
    front = 0.0
    for i, veh in enumerate(vehicles):
        fronts.append(front)
        offs = [front + a for a in veh.axles_m]
        axles.extend(offs)
        pick = sorted({p for p in veh.pickup if 0 <= p < len(offs)})
        pick_offs = tuple(offs[p] for p in pick)
        conducting.extend(offs if veh.metal_wheels else pick_offs)
        if len(pick_offs) >= 2:
            kind = LIGHTED if veh.r_join_ohm > 0.0 else PICKUP
            groups.append(ConductingGroup(kind, pick_offs, float(veh.r_join_ohm), i))
        if veh.metal_wheels:
            for k, d in enumerate(offs):
                if k not in pick:
                    groups.append(ConductingGroup(METAL, (d,), 0.0, i))
        if veh.draw_a > 0.0:
            if pick_offs:
                at = 0.5 * (pick_offs[0] + pick_offs[-1])
            else:
                at = front + 0.5 * veh.length_m
            loads.append(LoadOffset(i, veh.name, at, float(veh.draw_a)))
        front += veh.length_m
    return Consist(tuple(vehicles), tuple(fronts), front, tuple(sorted(axles)),
                   tuple(groups), tuple(loads), tuple(sorted(conducting)))


def consist_of(scn: Scenario, train: Train) -> Consist:
    """The consist of ``train``, its vehicle names looked up in the rolling stock.

    Raises
    ------
    ScenarioError
        A vehicle name not in ``rolling_stock`` or a pickup index that is not
        an axle of its vehicle, located at ``trains.<name>.consist`` or
        ``rolling_stock.<vehicle>.pickup``.
    """
    problems: list[Problem] = []
    stock: Mapping[str, Vehicle] = scn.rolling_stock
    vehicles: list[Vehicle] = []
    for name in train.consist:
        veh = stock.get(name)
        if veh is None:
            problems.append(_problem(scn, ("trains", train.name, "consist"),
                                     f"vehicle {name!r} is not in rolling_stock"))
            continue
        bad = [p for p in veh.pickup if not 0 <= p < len(veh.axles_m)]
        if bad:
            problems.append(_problem(scn, ("rolling_stock", name, "pickup"),
                                     f"pickup axle {bad[0]} is not an axle of {name!r} "
                                     f"(it has {len(veh.axles_m)})"))
        vehicles.append(veh)
    if problems:
        raise ScenarioError(_unique(problems))
    return build_consist(vehicles)


def _problem(scn: Scenario, path: tuple, message: str) -> Problem:
    loc = scn.locations.get(tuple(path))
    return Problem(file=scn.path, path=".".join(str(p) for p in path), message=message,
                   line=loc[0] if loc else None, column=loc[1] if loc else None)


def _unique(problems: list[Problem]) -> list[Problem]:
    seen: list[Problem] = []
    for p in problems:
        if p not in seen:
            seen.append(p)
    return seen
