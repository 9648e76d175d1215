"""Property tests of whole runs over generated layouts and trains (hypothesis).

Two properties, checked from outside the episode bookkeeping:

* every run ends with a result: a verdict, and either the whole duration
  simulated or a finding that says where and why it stopped;
* no device carries more than its trip level for longer than its longest
  definite trip delay without being part of an episode that lists it. The
  currents are read as the engine tells them to the devices; the delay is
  worked out here from the sampling rule of domain.md ("Sensing": a trip
  needs ``n = ceil(delay / Ts)`` consecutive samples, so the last possible
  instant is ``n Ts`` after the onset; continuous sensing ``delay``), and for
  a swapping device its sense delay and swap time come first.

The layouts are invented: a line of sections fed by one or two boosters on
one supply (current-limited or not), an optional reverser, sections wired
either way, trains of pickup dummies, locomotives and lighted coaches, and an
optional fault. A few examples run by default; many more with ``-m slow``.
"""
from __future__ import annotations

import math

import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from sim.model import (Booster, End, Fault, Feed, Joint, Rail, Restart, Reverser, Scenario,
                       Section, Sense, Start, Supply, Thermal, Track, Train, Trip, Vehicle,
                       frozen_map)
from sim.world.engine import World

DURATION_S = 3.0
#: Findings with which a run may stop before its end (it says where and why).
STOP_CODES = {"RF-RUN-023", "RF-RUN-024", "RF-RUN-026"}


def _trip(draw, lo_a, hi_a):
    curve = draw(st.sampled_from([None, None, None, "iec-very-inverse"]))
    return Trip(draw(st.floats(lo_a, hi_a)), draw(st.sampled_from([0.0, 5e-4, 2e-3, 1e-2])),
                curve, draw(st.sampled_from([0.05, 0.2, 1.0])) if curve else 1.0)


def _sense(draw):
    period = draw(st.sampled_from([None, None, 1e-4, 5e-4]))
    full = draw(st.sampled_from([math.inf, math.inf, 4.0, 30.0]))
    return Sense(period, full, draw(st.floats(0.0, 0.99)) if period else None)


def _restart(draw):
    return draw(st.sampled_from([Restart("manual"), Restart("retry", tries=None, every_s=0.3),
                                 Restart("backoff", first_s=0.2, factor=2.0, cap_s=1.0)]))


@st.composite
def layouts(draw):
    limit = draw(st.sampled_from([math.inf, math.inf, 4.0, 12.0]))
    supply = Supply("psu", 16.0, draw(st.sampled_from([0.0, 0.05, 0.2])), limit,
                    draw(st.sampled_from(["constant-current", "hiccup", "latch"])), 0.4)
    boosters = {}
    for name in ("east", "west")[:draw(st.integers(1, 2))]:
        auto = draw(st.booleans()) and draw(st.booleans())
        boosters[name] = Booster(
            name, "psu", draw(st.sampled_from([0.0, 0.04, 0.2])), sense=_sense(draw),
            trip=_trip(draw, 3.0, 60.0), restart=_restart(draw),
            thermal=draw(st.sampled_from([None, Thermal(2.0, 0.5)])),
            reverse_on_short=auto, sense_reverse_a=draw(st.sampled_from([None, 2.0])),
            t_sense_reverse_s=draw(st.sampled_from([0.0, 5e-4])),
            t_swap_s=draw(st.sampled_from([0.0, 1e-3])),
            t_hold_off_s=draw(st.sampled_from([0.0, 1e-3, 5e-2])),
            t_undervoltage_s=draw(st.sampled_from([0.0, 0.02])))
    reversers = {}
    feeds = list(boosters)
    if draw(st.booleans()):
        reversers["rev"] = Reverser(
            "rev", Feed(draw(st.sampled_from(list(boosters)))), draw(st.floats(1.0, 40.0)),
            draw(st.sampled_from([0.0, 1e-4, 5e-4])), draw(st.sampled_from([0.0, 5e-4, 4e-3])),
            draw(st.sampled_from([0.0, 1e-3])), draw(st.sampled_from([0.0, 1e-3, 5e-2])),
            sense=_sense(draw), trip=_trip(draw, 4.0, 100.0), restart=_restart(draw))
        feeds.append("rev")
    n = draw(st.integers(2, 5))
    sections, joints = {}, []
    for k in range(n):
        # (the first section holds the trains at their start: up to 2.7 m long)
        sections[f"s{k}"] = Section(f"s{k}", 2.8 if k == 0 else draw(st.floats(0.5, 3.0)),
                                    draw(st.sampled_from(feeds)),
                                    leads=draw(st.sampled_from([1, 1, -1])))
        if k:
            same = sections[f"s{k}"].feed == sections[f"s{k - 1}"].feed
            gaps = draw(st.sampled_from(["none", "both"])) if same else "both"
            joints.append(Joint(k - 1, (End(f"s{k - 1}", "b"), End(f"s{k}", "a")), gaps))
    stock = {
        "dummy": Vehicle("dummy", 0.3, (0.05, 0.25), pickup=(0, 1)),
        "loco": Vehicle("loco", 0.2, (0.03, 0.17), pickup=(0, 1), draw_a=0.5,
                        t_keep_alive_s=draw(st.sampled_from([0.0, 0.2]))),
        "coach": Vehicle("coach", 0.9, (0.05, 0.85), pickup=(0, 1),
                         r_join_ohm=draw(st.sampled_from([4.0, 120.0]))),
    }
    trains = {}
    for j in range(draw(st.integers(0, 2))):
        consist = tuple(draw(st.lists(st.sampled_from(list(stock)), min_size=1, max_size=3)))
        trains[f"t{j}"] = Train(f"t{j}", consist, Start("s0", 2.75, "b"),
                                tuple(sections), draw(st.floats(0.2, 1.0)),
                                draw(st.floats(0.0, 1.0)))
    faults = ()
    if draw(st.booleans()):
        sec = draw(st.sampled_from(list(sections)))
        faults = (Fault(draw(st.floats(0.2, 2.0)), "short", sec,
                        draw(st.floats(0.0, sections[sec].length_m)),
                        draw(st.sampled_from([0.01, 0.5, 3.0])),
                        draw(st.sampled_from([None, 0.3]))),)
    track = Track(Rail(r_per_m_ohm=0.02), 0.05, frozen_map(sections), tuple(joints))
    return Scenario("railfault/1", "generated", draw(st.integers(0, 99)), DURATION_S,
                    frozen_map({"psu": supply}), frozen_map(boosters), frozen_map({}),
                    frozen_map(reversers), track, frozen_map(stock), frozen_map(trains),
                    faults)


def _latest_s(t_delay_s: float, period_s) -> float:
    """The last instant after the onset at which a definite delay can end (domain.md)."""
    if not period_s:
        return t_delay_s
    return max(1, math.ceil(t_delay_s / period_s - 1e-9)) * period_s


def _allow_s(scn: Scenario, name: str) -> float:
    dev = scn.device(name)
    period = dev.sense.period_s
    allow = _latest_s(dev.trip.t_after_s, period)
    if name in scn.reversers:
        allow += _latest_s(dev.t_sense_s, period) + dev.t_swap_s
    elif name in scn.boosters and dev.reverse_on_short:
        allow += _latest_s(dev.t_sense_reverse_s, period) + dev.t_swap_s
    return allow


def _run_recording(scn):
    """Run ``scn`` and record, per protective device, the currents the engine told
    it: ``[(t, i), ...]`` (piecewise constant, each from its instant on)."""
    w = World(scn, keep_events=True)
    names = [n for n, d in w.drivers.items() if d.kind != "supply"]
    log = {n: [(0.0, 0.0)] for n in names}
    inner = w._solve_and_observe

    def observe(t):
        inner(t)
        for n in names:
            i = abs(w._i[n])
            if i != log[n][-1][1]:
                log[n].append((t, i))

    w._solve_and_observe = observe
    return w.run(), log


def _over_runs(samples, level_a, t_end_s):
    """``[(t0, t1)]``: where the recorded current is over ``level_a``."""
    runs, t0 = [], None
    for t, i in samples:
        if i > level_a and t0 is None:
            t0 = t
        elif i <= level_a and t0 is not None:
            runs.append((t0, t))
            t0 = None
    if t0 is not None:
        runs.append((t0, t_end_s))
    return runs


def _check(scn):
    res, log = _run_recording(scn)
    event(f"episodes: {min(len(res.episodes), 3)}+; findings "
          + ",".join(sorted({f.code for f in res.findings if f.code >= "RF-RUN-020"})))
    # every run ends with a result
    assert res.verdict in ("pass", "fail")
    codes = {f.code for f in res.findings}
    assert res.t_end_s == scn.duration_s or codes & STOP_CODES, codes
    res.as_dict()
    # no device over its trip level for longer than its delay outside an episode
    for name, samples in log.items():
        level = scn.device(name).trip.i_above_a
        allow = _allow_s(scn, name)
        for t0, t1 in _over_runs(samples, level, res.t_end_s):
            if t1 - t0 <= allow + 1e-9:
                continue
            event(f"{name}: over its trip level past its delay")
            late = t0 + allow
            held = [ep for ep in res.episodes if name in ep.devices
                    and ep.start_s <= t1 and (ep.end_s is None or ep.end_s >= late - 1e-9)]
            assert held, (name, t0, t1, allow, [e.as_dict() for e in res.episodes])


@settings(max_examples=20, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(layouts())
def test_every_run_ends_and_no_overrun_is_silent(scn):
    _check(scn)


@pytest.mark.slow
@settings(max_examples=400, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(layouts())
def test_every_run_ends_and_no_overrun_is_silent_many(scn):
    _check(scn)
