"""Coordination pairs: every reversing controller and breaker against each device
it must beat, with the static margin of ``check``, the least margin the run
measured, the required margin, pass or fail in words, and the smallest setting
change that restores a failing pair.

Two kinds of pair (US Army TM 5-811-14 section 4-1: the device nearest the
fault operates first):

* **race**: a reversing device (a reverser, or a booster that reverses its own
  output) against every device a short at its gap passes through. Its time to
  clear is the latest detection plus the swap time; the upstream device's trip
  time is its earliest trip (sampled sensing: ``(n - 1) Ts``). The static margin
  is :func:`sim.checks.coordination.reversing_margins`; the run's margin is the
  least over the episodes that device cleared (``Episode.margins``). Required:
  ``require.margin``.
* **order**: a breaker (or a reverser's own trip) against every breaker or
  booster feeding it: its latest trip must come before their earliest trip
  (the rule of RF-COORD-004/005); required: strictly before.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

from sim.checks.coordination import (clear_time_s, earliest_trip_s, latest_trip_s,
                                     reversing_margins, sampled_count)


@dataclass
class Pair:
    kind: str                 # race | order
    device: str
    upstream: str
    t_device_s: float         # its time to clear (race) or latest trip (order)
    t_upstream_s: float       # the upstream device's earliest trip
    static_margin_s: float
    run_margin_s: Optional[float]
    n_episodes: int
    required_s: float
    fix: str

    @property
    def ok(self) -> bool:
        least = self.static_margin_s if self.run_margin_s is None else \
            min(self.static_margin_s, self.run_margin_s)
        if self.kind == "order":
            return least > 0.0
        return least >= self.required_s and least >= 0.0


def _joint_sections(where: str) -> set:
    """The sections of a joint name ``x.b~y.a`` (empty for another place)."""
    if "~" not in where:
        return set()
    return {end.rsplit(".", 1)[0] for end in where.split("~")}


def swapper_of(scn, layout, ep) -> Optional[str]:
    """The reversing device that cleared (or had to clear) an episode's short."""
    from sim.report.tcc import is_reversing

    for d in list(getattr(ep, "devices", None) or []) + [ep.acted]:
        if d and is_reversing(scn, d):
            return d
    for s in sorted(_joint_sections(ep.where)):
        for d in layout.device_chain(s):
            if is_reversing(scn, d):
                return d
    return None


def _fix_race(scn, r: str, up: str, deficit_s: float) -> str:
    dev = scn.device(r)
    t_sense = dev.t_sense_s if r in scn.reversers else dev.t_sense_reverse_s
    u = scn.device(up)
    period = u.sense.period_s
    step = deficit_s
    if period:
        step = sampled_count(deficit_s, period) * period
    parts = []
    if dev.t_swap_s + t_sense >= deficit_s:
        parts.append(f"make {r} clear at least {deficit_s * 1e3:.3f} ms sooner (sense delay "
                     f"{t_sense * 1e3:g} ms + swap time {dev.t_swap_s * 1e3:g} ms today)")
    parts.append(f"lengthen {up}'s trip delay by {step * 1e3:.3f} ms (to "
                 f"{(u.trip.t_after_s + step) * 1e3:.3f} ms)")
    return " or ".join(parts)


def coordination_pairs(scn, layout, result) -> list[Pair]:
    """Every race and order pair of a scenario, with the run's least margins."""
    req = scn.t_margin_required_s
    run_least: dict = {}
    run_count: dict = {}
    for ep in result.episodes if result is not None else ():
        if not ep.margins:
            continue
        r = swapper_of(scn, layout, ep)
        if r is None:
            continue
        for d, m in ep.margins.items():
            if m is None or not math.isfinite(m):
                continue
            key = (r, d)
            run_count[key] = run_count.get(key, 0) + 1
            run_least[key] = m if key not in run_least else min(run_least[key], m)
    pairs: list[Pair] = []
    for r, ups in sorted(reversing_margins(scn, layout).items()):
        t_clear, _ = clear_time_s(scn, r)
        for up, static in sorted(ups.items(), key=lambda kv: (kv[1], kv[0])):
            u = scn.device(up)
            t_up = earliest_trip_s(u.trip.t_after_s, u.sense.period_s)
            run_m = run_least.get((r, up))
            least = static if run_m is None else min(static, run_m)
            need = max(req, 0.0)
            fix = "" if least >= need else _fix_race(scn, r, up, need - least)
            pairs.append(Pair("race", r, up, t_clear, t_up, static, run_m,
                              run_count.get((r, up), 0), req, fix))
    nested = [(k, scn.breakers[k]) for k in scn.breakers] + \
        [(k, scn.reversers[k]) for k in scn.reversers]
    for k, dev in sorted(nested):
        t_late = latest_trip_s(dev.trip.t_after_s, dev.sense.period_s)
        for up in scn.upstream(k):
            if up not in scn.boosters and up not in scn.breakers:
                continue
            u = scn.device(up)
            t_early = earliest_trip_s(u.trip.t_after_s, u.sense.period_s)
            margin = t_early - t_late
            fix = ""
            if margin <= 0.0:
                fix = (f"set {k}'s trip delay below {t_early * 1e3:.3g} ms"
                       + (" minus one sample period" if dev.sense.period_s else "")
                       + f", or lengthen {up}'s")
            pairs.append(Pair("order", k, up, t_late, t_early, margin, None, 0, 0.0, fix))
    return pairs
