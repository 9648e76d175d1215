"""A small builder of :class:`sim.model.Scenario` objects for tests.

Every item added gets an invented "line" in ``Scenario.locations`` (one line
per call, in call order), so tests can check that findings and errors are
located. Values are SI floats, as in the model.

Example
-------
>>> from tests.builders import ScenarioBuilder
>>> b = ScenarioBuilder()
>>> b.booster("east")                                    # on supply "psu"
>>> b.line(["s1", "s2", "s3"], feed="east", length_m=2.0)  # s1.b~s2.a, s2.b~s3.a
>>> scn = b.build()
"""
from __future__ import annotations

import math
from typing import Iterable, Optional, Sequence

from sim.model import (Booster, Breaker, End, Feed, Feeder, Joint, Rail, Restart, Reversal,
                       Reverser, Scenario, Section, Sense, Start, Supply, Track, Train, Trip,
                       Vehicle, frozen_map)


def end(text: str) -> End:
    """``"east-main.b"`` -> ``End("east-main", "b")``."""
    sec, _, e = text.rpartition(".")
    return End(sec, e)


class ScenarioBuilder:
    """Collects devices, sections, joints, vehicles and trains; :meth:`build` makes a Scenario."""

    def __init__(self, title: str = "test layout", path: str = "<builder>"):
        self.title = title
        self.path = path
        self.supplies: dict = {}
        self.boosters: dict = {}
        self.breakers: dict = {}
        self.reversers: dict = {}
        self.sections: dict = {}
        self.joints: list = []
        self.vehicles: dict = {}
        self.trains: dict = {}
        self.locations: dict = {}
        self.t_margin_required_s = 0.0
        self._line = 1

    def _loc(self, *path) -> None:
        self._line += 1
        self.locations[tuple(path)] = (self._line, 3)

    # -------------------------------------------------------------- power
    def supply(self, name: str = "psu", v_emf_v: float = 16.0, **kw) -> "ScenarioBuilder":
        self.supplies[name] = Supply(name, v_emf_v, **kw)
        self._loc("supplies", name)
        return self

    def booster(self, name: str, supply: str = "psu", i_trip_a: float = 5.0,
                t_trip_s: float = 0.004, period_s: Optional[float] = None,
                full_scale_a: float = math.inf, phase: int = +1, **kw) -> "ScenarioBuilder":
        if supply not in self.supplies:
            self.supply(supply)
        self.boosters[name] = Booster(name, supply, phase=phase,
                                      sense=Sense(period_s, full_scale_a, 0.0),
                                      trip=kw.pop("trip", Trip(i_trip_a, t_trip_s)), **kw)
        self._loc("boosters", name)
        for key in ("trip", "sense", "phase"):
            self._loc("boosters", name, key)
        return self

    def breaker(self, name: str, feed: str, i_trip_a: float = 3.0, t_trip_s: float = 0.0005,
                period_s: Optional[float] = None, full_scale_a: float = math.inf,
                **kw) -> "ScenarioBuilder":
        self.breakers[name] = Breaker(name, Feed(feed), sense=Sense(period_s, full_scale_a, 0.0),
                                      trip=kw.pop("trip", Trip(i_trip_a, t_trip_s)), **kw)
        self._loc("breakers", name)
        for key in ("trip", "sense"):
            self._loc("breakers", name, key)
        return self

    def reverser(self, name: str, feed: str, sense_above_a: float = 1.5,
                 t_sense_s: float = 1e-4, t_swap_s: float = 5e-4,
                 period_s: Optional[float] = None, full_scale_a: float = math.inf,
                 **kw) -> "ScenarioBuilder":
        self.reversers[name] = Reverser(name, Feed(feed), sense_above_a, t_sense_s, t_swap_s,
                                        sense=Sense(period_s, full_scale_a, 0.0), **kw)
        self._loc("reversers", name)
        for key in ("sense", "swap_time", "trip"):
            self._loc("reversers", name, key)
        return self

    # -------------------------------------------------------------- track
    def section(self, name: str, length_m: float = 1.0, feed: Optional[str] = None,
                leads: int = +1) -> "ScenarioBuilder":
        self.sections[name] = Section(name, length_m, feed, (Feeder(length_m / 2),), leads)
        self._loc("track", "sections", name)
        self._loc("track", "sections", name, "leads")
        return self

    def joint(self, a: str, b: str, gaps: str = "none", rail: str = "left") -> "ScenarioBuilder":
        idx = len(self.joints)
        self.joints.append(Joint(idx, (end(a), end(b)), gaps, rail))
        self._loc("track", "joints", idx)
        self._loc("track", "joints", idx, "gaps")
        return self

    def line(self, names: Sequence[str], feed: Optional[str] = None, length_m: float = 1.0,
             gaps: str = "none") -> "ScenarioBuilder":
        """Sections in a row, each ``.b`` joined straight to the next ``.a``."""
        for n in names:
            if n not in self.sections:
                self.section(n, length_m, feed)
        for x, y in zip(names, names[1:]):
            self.joint(f"{x}.b", f"{y}.a", gaps)
        return self

    # ------------------------------------------------------ rolling stock
    def vehicle(self, name: str, length_m: float, axles_m: Iterable[float],
                pickup="all", **kw) -> "ScenarioBuilder":
        axles = tuple(axles_m)
        if pickup == "all":
            pickup = tuple(range(len(axles)))
        elif pickup is None:
            pickup = ()
        self.vehicles[name] = Vehicle(name, length_m, axles, tuple(pickup), **kw)
        self._loc("rolling_stock", name)
        return self

    def train(self, name: str, consist: Sequence[str], route: Sequence,
              start: Optional[Start] = None, speed_mps: float = 0.3,
              depart_s: float = 0.0) -> "ScenarioBuilder":
        """Route items: section names, :class:`Reversal` or the string ``"reverse"``."""
        steps = tuple(Reversal(1.0) if st == "reverse" else st for st in route)
        if start is None:
            first = steps[0]
            heading = "b"
            nxt = next((s for s in steps[1:]), None)
            if isinstance(nxt, str):
                ends_here = [j for j in self.joints
                             for e, f in (j.ends, j.ends[::-1])
                             if e.section == first and f.section == nxt]
                for j in ends_here:
                    e = j.ends[0] if j.ends[0].section == first else j.ends[1]
                    heading = e.end
                    break
            start = Start(first, self.sections[first].length_m / 2, heading)
        self.trains[name] = Train(name, tuple(consist), start, steps, speed_mps, depart_s)
        self._loc("trains", name)
        self._loc("trains", name, "consist")
        self._loc("trains", name, "route")
        for i in range(len(steps)):
            self._loc("trains", name, "route", i)
        return self

    # -------------------------------------------------------------- build
    def build(self) -> Scenario:
        track = Track(Rail(r_per_m_ohm=0.02), 0.05, frozen_map(self.sections),
                      tuple(self.joints))
        return Scenario(
            format="railfault/1", title=self.title, seed=1, duration_s=10.0,
            supplies=frozen_map(self.supplies), boosters=frozen_map(self.boosters),
            breakers=frozen_map(self.breakers), reversers=frozen_map(self.reversers),
            track=track, rolling_stock=frozen_map(self.vehicles),
            trains=frozen_map(self.trains), t_margin_required_s=self.t_margin_required_s,
            path=self.path, locations=frozen_map(self.locations))


__all__ = ["ScenarioBuilder", "end", "Restart", "Reversal", "Start", "Trip", "Sense"]
