"""Coordination pairs: every reversing controller and breaker against each device
it must beat, with the static margin of ``check``, the least margin the run
measured, the required margin, pass or fail in words, and the smallest setting
change that restores a failing pair.

Two kinds of pair (US Army TM 5-811-14 section 4-1: the device nearest the
fault operates first), each timed and mended by the rules of ``railfault
check`` (:mod:`sim.checks.coordination`), never by a second copy of them:

* **race**: a reversing device (a reverser, or a booster that reverses its own
  output) against every device a short at its gap passes through. Its time to
  clear is the latest detection plus the swap time
  (:func:`~sim.checks.coordination.clear_time_s`); the static margin is
  :func:`~sim.checks.coordination.reversing_margins` (the upstream device's
  earliest trip minus that time to clear); the run's margin is the least over
  the episodes at its gaps (``Episode.margins``); required: ``require.margin``.
  The fix is the check's advice (:func:`~sim.checks.coordination.race_advice`):
  each setting there wins on its own, whatever the sample phases.
* **order**: a breaker (or a reverser's own trip, on a short its swap does not
  clear) against every breaker or booster feeding it, on the time line of a hard
  short in its district (:func:`~sim.checks.coordination.nested_times`, the rule
  of RF-COORD-004/005): its latest action must come before their earliest trip;
  the fix is :func:`~sim.checks.coordination.nested_advice`.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

from sim.checks.coordination import (clear_time_s, nested_advice, nested_times, race_advice,
                                     reversing_margins)


@dataclass
class Pair:
    kind: str                 # race | order
    device: str
    upstream: str
    t_device_s: float         # its time to clear (race) or latest action (order), after onset
    t_upstream_s: float       # the upstream device's earliest trip, after onset
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

    for d in list(ep.devices) + [ep.acted]:
        if d and is_reversing(scn, d):
            return d
    for s in sorted(_joint_sections(ep.where)):
        for d in layout.device_chain(s):
            if is_reversing(scn, d):
                return d
    return None


def _options(texts: list[str]) -> str:
    return ("any one of: " + "; or ".join(texts)) if texts else ""


def coordination_pairs(scn, layout, result) -> list[Pair]:
    """Every race and order pair of a scenario, with the run's least margins."""
    req = scn.t_margin_required_s
    run_least: dict = {}
    run_count: dict = {}
    for ep in result.episodes:
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
        if not ups:
            continue
        t_clear, _ = clear_time_s(scn, r)
        advice = None
        for up, static in sorted(ups.items(), key=lambda kv: (kv[1], kv[0])):
            run_m = run_least.get((r, up))
            least = static if run_m is None else min(static, run_m)
            fix = ""
            if least < max(req, 0.0):
                if advice is None:
                    advice = race_advice(scn, layout, r)
                own, upstream = advice
                texts = [a.text for a in own] + ([upstream[up].text] if up in upstream
                                                 else [])
                fix = _options(texts) or f"no single setting of {r} or {up} wins the race: " \
                                         f"change the devices"
            pairs.append(Pair("race", r, up, t_clear, t_clear + static, static, run_m,
                              run_count.get((r, up), 0), req, fix))
    nested = sorted(list(scn.breakers) + list(scn.reversers))
    for k in nested:
        for up in scn.upstream(k):
            if up not in scn.boosters and up not in scn.breakers:
                continue
            tl = nested_times(scn, k, up)
            margin = tl["e_u_s"] - tl["latest_s"]
            fix = ""
            if margin <= 0.0:
                fix = _options([a.text for a in nested_advice(scn, k, up)]) or \
                    f"set {k}'s trip delay shorter"
            pairs.append(Pair("order", k, up, tl["latest_s"], tl["e_u_s"], margin, None, 0,
                              0.0, fix))
    return pairs
