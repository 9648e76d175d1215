"""RF-RUN-034: keep-alive inrush that keeps a device from restarting (a lock-out).

When a breaker or booster closes again after a trip, the keep-alive
capacitors of every locomotive in its district charge at once: ``V/R`` each
(peak), decaying with the time constant ``RC`` (:mod:`sim.circuit.inrush`). If
their sum, on top of the running draw, stays above the device's trip threshold
for longer than its trip delay, the restart trips again on inrush alone, and
again at every try: the district stays dark although the short that tripped it
first is long gone. The engine reports each such trip (RF-RUN-007, tied here by
``because``); this cause names the device, the figures and the fix (a longer
trip delay than the time above the threshold, or a smaller charging current),
and how long the district was dark. An error when the device gave up or was
dark for most of the run (a lock-out), else a warning.

The time above the threshold is the trip-window rule
(:func:`sim.circuit.inrush.time_above_s`, ``tau ln(I_peak / (I_trip - I_steady))``)
for the locomotives in the district at the first failed restart: the trains'
schedules at that instant (:func:`sim.checks.draw.loco_intervals`, the motion
the run plays), except that a train standing still then (the run's stands,
:class:`sim.diagnose.runlog.RunLog`) counts where it stood. A train the run
held up earlier and that runs on behind its schedule is counted by its
schedule (the run keeps no positions of moving trains). Without a failed
restart episode, the trip windows' own instant of most draw
(:mod:`sim.circuit.windows`).
"""
from __future__ import annotations

from sim.circuit.faultmap import supply_of
from sim.circuit.inrush import time_above_s

try:        # the trip windows' power-up load by the trains' schedules
    from sim.circuit.windows import power_up_load
except ImportError:     # a tree whose windows still count every train that can be there
    power_up_load = None
    from sim.circuit.windows import district_trains, train_load
from sim.diagnose.cause import Cause
from sim.diagnose.facts import RunFacts
from sim.diagnose.text import a_text, dur_text, ms_text, plural, share_text, t_text
from sim.model import Finding

__all__ = ["find", "ENGINE_CODE"]

#: The engine's own finding for one restart tripped on inrush.
ENGINE_CODE = "RF-RUN-007"


def _power_up(facts: RunFacts, dev: str, v_track_v: float):
    """``(steady_a, inrush_peak_a, tau_s, trains)`` of the locomotives that power up
    together when ``dev`` closes: the trip windows' own figures."""
    secs = facts.sections_of(dev)
    if power_up_load is not None:
        steady, peak, tau, trains, _t = power_up_load(facts.scn, facts.layout, secs, v_track_v)
        return steady, peak, tau, tuple(trains)
    trains = district_trains(facts.scn, secs)
    return (*train_load(facts.scn, trains, v_track_v), trains)


def _power_up_at(facts: RunFacts, dev: str, v_track_v: float, t_s: float):
    """``(steady_a, inrush_peak_a, tau_s, trains)`` of the locomotives in ``dev``'s
    district at ``t_s`` (module docstring: schedules, and stands where trains stood)."""
    from sim.checks.draw import loco_intervals
    from sim.circuit.inrush import inrush

    scn = facts.scn
    secs = set(facts.sections_of(dev))
    ivs = loco_intervals(scn, facts.layout)
    standing = {}
    if facts.log is not None:
        standing = {st.train: st for st in facts.log.stands
                    if st.t_stop_s <= t_s and (st.t_go_s is None or st.t_go_s > t_s)}
    on: dict = {}
    for iv in ivs:
        st = standing.get(iv.train)
        here = (set(st.sections) & secs) if st is not None else \
            (iv.section in secs and iv.t_on_s <= t_s < iv.t_off_s)
        if here:
            on[(iv.train, iv.vehicle)] = iv
    steady = peak = tau = 0.0
    for iv in on.values():
        rush_a, tau_s = inrush(scn.rolling_stock[iv.name], v_track_v) \
            if iv.name in scn.rolling_stock else (0.0, 0.0)
        steady += iv.draw_a
        peak += rush_a
        tau = max(tau, tau_s)
    return steady, peak, tau, tuple(sorted({t for t, _ in on}))


def find(facts: RunFacts, claimed: set) -> list[Cause]:
    scn = facts.scn
    per_dev: dict[str, int] = {}
    for f in facts.engine_findings:
        if f.code == ENGINE_CODE:
            per_dev[f.where] = per_dev.get(f.where, 0) + f.count
    causes = []
    for dev, n in per_dev.items():
        if scn.device_kind(dev) not in ("booster", "breaker", "reverser"):
            continue
        eps = [e for e in facts.episodes if id(e) not in claimed and e.kind == "overload"
               and e.acted == dev
               and facts.fault_on(dev, e.start_s,
                                  e.end_s if e.end_s is not None else facts.t_end_s) is None]
        trip = scn.device(dev).trip
        sup = supply_of(scn, dev)
        v = scn.supplies[sup].v_emf_v if sup in scn.supplies else 0.0
        first = min((e.start_s for e in eps), default=None)
        last = max((e.start_s for e in eps), default=None)
        if first is not None:
            steady_a, peak_a, tau_s, trains = _power_up_at(facts, dev, v, first)
            then = f" at {t_text(first)}"
        else:
            steady_a, peak_a, tau_s, trains = _power_up(facts, dev, v)
            then = ""
        t_over_s = time_above_s(steady_a, peak_a, tau_s, trip.i_above_a)
        dark_s = facts.district_dark_s(dev)
        gave_up = facts.count(dev, "give_up") > 0
        msg = (f"{facts.named(dev)} cannot restart: the keep-alive capacitors of the trains in "
               f"its district{then} ({', '.join(trains) or 'none'}) charge at "
               f"{a_text(peak_a)} in all ({v:g} V over each charging resistance), time constant "
               f"{ms_text(tau_s)}, on top of {a_text(steady_a)} running draw, and stay above its "
               f"{a_text(trip.i_above_a)} trip for {ms_text(t_over_s)}, longer than its "
               f"{ms_text(trip.t_after_s)} delay: {plural(n, 'restart')} tripped again on inrush "
               f"alone")
        if first is not None:
            msg += f" (from {t_text(first)} to {t_text(last)})"
        if gave_up:
            msg += " and it gave up"
        msg += (f"; dark for {dur_text(dark_s)} of {dur_text(facts.t_end_s)} "
                f"({share_text(dark_s, facts.t_end_s)})")
        room_a = trip.i_above_a - steady_a
        fix = f"raise {dev}'s trip delay above {ms_text(t_over_s)}"
        if room_a > 0:
            fix += (f", or limit the keep-alives' charging current to under {a_text(room_a)} "
                    f"in all ({a_text(trip.i_above_a)} trip less {a_text(steady_a)} running "
                    f"draw; now {a_text(peak_a)}): a larger charging resistance")
        else:
            fix += ", or split the district: its running draw alone reaches the trip"
        causes.append(Cause(
            Finding("error" if gave_up or facts.dark_most(dev) else "warning", "RF-RUN-034", dev, msg, fix, count=n, first_s=first, last_s=last),
            f"{facts.named(dev)} locked out by keep-alive inrush: {plural(n, 'restart')} "
            f"failed" + (" and it gave up" if gave_up else ""),
            episodes=eps, dark=(dev,)))
        claimed.update(id(e) for e in eps)
    return causes
