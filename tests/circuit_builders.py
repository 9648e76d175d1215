"""Small scenario builders for the circuit tests (no YAML loader needed).

Every value here is an invented demo value except where a test names a source.
"""
from __future__ import annotations

import math
from typing import Optional

from sim.model import (Booster, Breaker, End, Feed, Feeder, Joint, Rail, Reverser, Scenario,
                       Section, Sense, Start, Supply, Track, Train, Trip, Vehicle, Wire,
                       frozen_map)


def supply(name, v=16.0, r=0.05, limit=math.inf, on_limit="constant-current"):
    return Supply(name, v_emf_v=v, r_ohm=r, i_limit_a=limit, on_limit=on_limit)


def booster(name, sup, r_out=0.04, phase=+1, trip_a=5.0, after_s=0.002, wire=None,
            full_scale=math.inf, thermal=None):
    return Booster(name, sup, r_out_ohm=r_out, phase=phase, trip=Trip(trip_a, after_s),
                   sense=Sense(full_scale_a=full_scale), wire=wire or Wire(),
                   thermal=thermal)


def breaker(name, src, trip_a=3.0, r_on=0.02, wire=None, full_scale=math.inf):
    return Breaker(name, Feed(src, wire or Wire()), r_on_ohm=r_on, trip=Trip(trip_a, 0.0005),
                   sense=Sense(full_scale_a=full_scale))


def reverser(name, src, trip_a=4.0, r_on=0.02, wire=None):
    return Reverser(name, Feed(src, wire or Wire()), sense_above_a=1.5, t_sense_s=1e-4,
                    t_swap_s=5e-4, r_on_ohm=r_on, trip=Trip(trip_a, 0.003))


def section(name, length, feed, feeders=None, leads=+1):
    """``feeders``: list of ``at_m`` or ``(at_m, Wire)``."""
    fs = []
    for f in feeders or ():
        if isinstance(f, tuple):
            fs.append(Feeder(f[0], f[1]))
        else:
            fs.append(Feeder(float(f)))
    return Section(name, length, feed, tuple(fs), leads)


def joint(index, a, b, gaps="none", rail="left"):
    sa, ea = a.split(".")
    sb, eb = b.split(".")
    return Joint(index, (End(sa, ea), End(sb, eb)), gaps, rail)


def scenario(supplies, boosters, sections, joints=(), breakers=(), reversers=(),
             rail: Optional[Rail] = None, wheel_contact=0.05, rolling_stock=(), trains=()):
    rail = rail or Rail(material=None, area_m2=None, r_per_m_ohm=0.02)
    return Scenario(
        format="railfault/1", title="circuit test", seed=1, duration_s=10.0,
        supplies=frozen_map({s.name: s for s in supplies}),
        boosters=frozen_map({b.name: b for b in boosters}),
        breakers=frozen_map({b.name: b for b in breakers}),
        reversers=frozen_map({r.name: r for r in reversers}),
        track=Track(rail, wheel_contact, frozen_map({s.name: s for s in sections}),
                    tuple(joints)),
        rolling_stock=frozen_map({v.name: v for v in rolling_stock}),
        trains=frozen_map({t.name: t for t in trains}))


def loco(name="loco", draw=0.6, keep_alive=0.0, c_f=0.0, r_charge=10.0):
    return Vehicle(name, 0.2, (0.03, 0.17), pickup=(0, 1), draw_a=draw,
                   t_keep_alive_s=keep_alive, c_keep_alive_f=c_f, r_charge_ohm=r_charge)


def train(name, consist, start_section, route, speed=0.3):
    return Train(name, tuple(consist), Start(start_section, 0.5, "b"), tuple(route), speed)


def ladder(n_sections, length=5.0, feeders_per=2, boosters=2, supplies=1, grid_m=None,
           gap_every=None):
    """A chain of sections fed round-robin by ``boosters``; joints gapped both
    rails between different boosters' districts, bonded within one."""
    sups = [supply(f"psu{i}") for i in range(supplies)]
    bs = [booster(f"b{i}", f"psu{i % supplies}", phase=+1 if i % 2 == 0 else -1)
          for i in range(boosters)]
    per = max(1, n_sections // boosters)
    secs, js = [], []
    for k in range(n_sections):
        dev = f"b{min(k // per, boosters - 1)}"
        fs = [length * (i + 0.5) / feeders_per for i in range(feeders_per)]
        secs.append(section(f"s{k}", length, dev, [(x, Wire(0.5, awg=20)) for x in fs]))
        if k:
            prev = secs[k - 1].feed
            gaps = "both" if prev != dev or (gap_every and k % gap_every == 0) else "none"
            js.append(joint(k - 1, f"s{k-1}.b", f"s{k}.a", gaps))
    return scenario(sups, bs, secs, js)
