"""A tiny builder of Scenario objects for the train tests (no YAML, no loader).

Invented layouts only; every number in a test that uses them is derived by hand
beside the assertion.
"""
from __future__ import annotations

from sim.model import (End, Joint, Rail, Reversal, Scenario, Section, Start, Track, Train,
                       Vehicle, frozen_map)


def end(text: str) -> End:
    """``"main.b"`` -> End("main", "b")."""
    section, _, e = text.rpartition(".")
    return End(section, e)


def scenario(sections: dict, joints: list, stock: dict | None = None,
             trains: dict | None = None, wheel_contact_ohm: float = 0.05,
             gap_width_m: float = 0.8e-3, contact_length_m: float = 1.0e-3,
             locations: dict | None = None) -> Scenario:
    """A scenario with only track, rolling stock and trains.

    ``sections`` maps name -> length in m; ``joints`` is a list of
    ``(end0, end1, gaps)`` or ``(end0, end1, gaps, rail)`` with ends as
    ``"section.a"`` strings.
    """
    secs = {n: Section(n, float(length), feed=None) for n, length in sections.items()}
    js = []
    for i, spec in enumerate(joints):
        e0, e1, gaps = spec[:3]
        rail = spec[3] if len(spec) > 3 else "left"
        js.append(Joint(i, (end(e0), end(e1)), gaps, rail))
    track = Track(Rail(), wheel_contact_ohm, frozen_map(secs), tuple(js),
                  gap_width_m=gap_width_m, contact_length_m=contact_length_m)
    return Scenario(format="railfault/1", title="test", seed=1, duration_s=60.0,
                    supplies=frozen_map({}), boosters=frozen_map({}),
                    breakers=frozen_map({}), reversers=frozen_map({}), track=track,
                    rolling_stock=frozen_map(stock or {}), trains=frozen_map(trains or {}),
                    path="test.yaml", locations=frozen_map(locations or {}))


def train(name: str, consist, start: tuple, route, speed_mps: float = 0.3,
          depart_s: float = 0.0) -> Train:
    """``start`` is ``(section, at_m, heading)``; a number in ``route`` is a
    reversal with that wait in seconds."""
    items = tuple(Reversal(float(r)) if isinstance(r, (int, float)) else r for r in route)
    return Train(name, tuple(consist), Start(*start), items, speed_mps, depart_s)


def loco(name: str = "loco", length_m: float = 0.2, axles_m=(0.03, 0.17), draw_a: float = 0.5,
         keep_alive_s: float = 0.0) -> Vehicle:
    """A locomotive with pickup on every axle."""
    return Vehicle(name, length_m, tuple(axles_m), pickup=tuple(range(len(axles_m))),
                   draw_a=draw_a, t_keep_alive_s=keep_alive_s)


def wye_plan():
    """The wye of test_trains_geometry (reversal in the tail at s = 5.5 m) as a plan."""
    from sim.world.trains import build_plan

    coach = Vehicle("coach", 0.3, (0.05, 0.25), pickup=(0, 1), r_join_ohm=100.0)
    joints = [("main.b", "legW.a", "none"), ("main.b", "legE.b", "none"),
              ("legW.b", "tail.a", "both"), ("tail.a", "legE.a", "both")]
    t = train("t", ["loco", "coach"], ("main", 8.0, "b"),
              ["main", "legW", "tail", 3.0, "legE", "main"], speed_mps=0.5, depart_s=1.0)
    scn = scenario({"main": 10.0, "legW": 2.0, "legE": 2.0, "tail": 1.5}, joints,
                   stock={"loco": loco(), "coach": coach}, trains={"t": t})
    return build_plan(scn, scn.trains["t"])
