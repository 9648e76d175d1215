"""Coordination of the protection devices, from their settings alone.

The device nearest the fault must operate first (US Army TM 5-811-14,
*Coordinated Power Systems Protection*, 1991, section 4-1). For a reversing
controller that means its swap must interrupt the short a train makes at its
gap before any device upstream of that short reaches its trip delay
(``domain.md``, "The race").

Conventions (times after the onset of the short)
------------------------------------------------
The rules model what the device machines do (:mod:`sim.devices.sensing`,
:mod:`sim.devices.overcurrent`, :mod:`sim.devices.machine`):

* A device with continuous sensing trips ``t_after_s`` after onset.
* With sampled sensing (period ``Ts``) a delay ``t`` needs ``n = ceil(t/Ts)``
  samples over threshold (``n >= 1``); the first sample at or after the onset
  comes ``[0, Ts)`` after it, and the trip (or detection) instant is that
  sample plus ``(n - 1) Ts``. So the *earliest* trip is ``(n - 1) Ts`` and the
  *latest* detection ``n Ts`` (the supremum, taken as the worst case).
* A reverser's time to clear is its latest detection plus its swap time:
  ``t_clear = latest(t_sense_s) + t_swap_s``; for a booster with
  ``reverse_on_short`` the same with ``t_sense_reverse_s``.
* An upstream device is charged with its *earliest* trip. For an inverse-time
  curve ``t_after_s`` is used as a lower bound of the curve's delay (the real
  delay is longer, so the margin shown is pessimistic) and the finding says so.
* The short current is assumed to exceed every threshold on the short path
  (the static worst case); the fault-current map and the run judge actual
  currents.
* A dip in the current resets a device's count only if the device sees it: a
  continuous sensor sees any dip, a sampled one only a dip that holds one of
  its samples. A dip of ``d`` holds a sample whatever the grid's phase only if
  ``d > Ts``; a shorter one may fall between two samples and the count runs on
  as if the current had never stopped (:func:`dip_always_seen`).

Devices on a short path through a reversing device ``r``: the devices in the
feed chain of each of its sections (its own chain above it; for a reversing
booster also its breakers) and the devices feeding every section across its
joints, with their chains; ``r`` itself is left out, and so is a neighbouring
reversing controller (it senses the same short; its own trip acts only after a
swap).

A supply that switches off at its current limit (``on_limit: hiccup`` or
``latch``, :mod:`sim.devices.supply`) is a protective device in the race too:
once the current it delivers exceeds ``current_limit`` it holds the limit for
``limit_after`` and then switches off, taking down every booster on it. It
observes its current continuously, so it acts exactly ``limit_after`` after the
onset of a short that draws more than its limit (earliest = latest), and any
dip resets it. As for every other device, the static rule assumes the short
draws more than the limit (the fault map judges the prospective currents,
RF-FAULT-006); a supply whose limit is at or above ``voltage / resistance`` (its
own terminals shorted) can never reach it and is left out
(:func:`switches_off`). A reverser must clear before it (RF-COORD-001..003), and
every booster, breaker and reverser on it must trip before it on a short in its
district (RF-COORD-010, -011), or the whole supply goes dark.

Advice
------
A finding of the race names settings that are enough on their own, whatever the
sample grids' phases: a swap time, a sense delay (a whole number of samples on
a sampled sensor) and, per upstream device, a trip delay, each rounded to
0.01 ms on the safe side (:func:`race_advice`, :func:`nested_advice`; the tests
apply each and run the engine over a range of sample phases).

Codes
-----
RF-COORD-001 (error)
    Negative margin: an upstream device trips before the reversing device clears.
RF-COORD-002 (error; a warning before: a run fails such a race, RF-RUN-004)
    Margin not above the required margin (``require: {margin: ...}``): the file
    requires more than the race leaves.
RF-COORD-003 (info)
    The least margin of a reversing device, when none is short.
RF-COORD-004 (error)
    A nested device is not nominally sooner than a device feeding it on a hard
    short in its district, the upstream device trips first. A breaker: its trip
    delay against the upstream one. A reverser (a short its swap does not
    clear, e.g. a fault inside its section): its sense, swap, dead time and
    trip delay, against the upstream count, which restarts at the reclose if
    the swap leaves a dead time and runs on from the onset if it leaves none.
RF-COORD-005 (warning)
    Nominal delays are in order, but on some sample phase the upstream device
    trips first: sampling jitter, a reverser's dead time shorter than the
    upstream sample period (it may fall between two samples, so the upstream
    count runs on from the onset), or a breaker's restart interval shorter
    than the upstream sample period (the upstream count may run on through its
    retry).
RF-COORD-006 (warning)
    A nested device's trip threshold is not lower than that of a device
    feeding it: an overload between the two takes the upstream device down.
RF-COORD-007 (error)
    A sensing full scale at or below the device's own trip (or sense)
    threshold: the clamped reading never exceeds it, the device can never trip.
    The one rule of it: the fault map reports it with this code too.
RF-COORD-008, RF-COORD-009
    Thresholds against the running draw: :mod:`sim.checks.draw`.
RF-COORD-010 (error)
    A booster, breaker or reverser on a supply that switches off at its limit
    is not nominally sooner than the supply's ``limit_after``: on a hard short
    in its district that draws more than the limit, the supply switches off
    first and every district on it goes dark. (A trip threshold at or above the
    limit is RF-FAULT-003's rule, not this one.)
RF-COORD-011 (warning)
    Nominally sooner than the supply, but on some sample phase it trips at or
    after the supply's ``limit_after`` (sampling jitter).
RF-COORD-012 (info)
    A nested device that acts before every device and supply feeding it, with
    its least margin (the trip-order pair that passes; RF-COORD-003 is its
    counterpart for the race).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional

from sim.devices.sensing import samples_needed
from sim.model import Finding, Scenario

__all__ = ["check_coordination", "earliest_trip_s", "latest_trip_s", "sampled_count",
           "clear_time_s", "reversing_margins", "dip_always_seen", "Advice", "race_advice",
           "nested_advice", "nested_times", "nested_subjects", "full_scale_findings",
           "full_scale_subjects", "switches_off", "supply_of_device", "supply_dark"]

#: Resolution of the times the advice suggests (s): 0.01 ms.
ADVICE_STEP_S = 1e-5


def sampled_count(t_s: float, period_s: float) -> int:
    """Samples a delay needs: ``max(1, ceil(t / Ts))`` (:func:`sim.devices.sensing.samples_needed`)."""
    return samples_needed(t_s, period_s)


def earliest_trip_s(t_s: float, period_s: Optional[float]) -> float:
    """Earliest instant after onset a delay ``t_s`` can run out: ``(n - 1) Ts`` or ``t_s``."""
    if not period_s:
        return t_s
    return (sampled_count(t_s, period_s) - 1) * period_s


def latest_trip_s(t_s: float, period_s: Optional[float]) -> float:
    """Latest instant after onset (supremum): ``n Ts`` or ``t_s``."""
    if not period_s:
        return t_s
    return sampled_count(t_s, period_s) * period_s


def dip_always_seen(dip_s: float, period_s: Optional[float]) -> bool:
    """Whether a dip of ``dip_s`` resets a device's count whatever its grid's phase.

    A continuous sensor sees any dip longer than the 1 ns time base; a sampled one
    sees a dip ``[t, t + d)`` only if it holds a sample ``(k + phase) Ts`` more
    than 1 ns before its end, which every phase gives when ``d > Ts + 1 ns``
    (:mod:`sim.devices.overcurrent`, ``DefiniteTimer``).
    """
    from sim.timebase import T_TOL_S

    if dip_s <= T_TOL_S:
        return False
    return not period_s or dip_s > period_s + T_TOL_S


def switches_off(scn: Scenario, name: str) -> bool:
    """Whether supply ``name`` switches off at its current limit and can reach it.

    ``on_limit`` is ``hiccup`` or ``latch`` and its limit is below the current of
    its own terminals shorted, ``voltage / resistance`` (no short anywhere can draw
    more; :mod:`sim.devices.supply`).
    """
    sup = scn.supplies.get(name)
    if sup is None or sup.on_limit not in ("hiccup", "latch"):
        return False
    if not math.isfinite(sup.i_limit_a):
        return False
    i_max = abs(sup.v_emf_v) / sup.r_ohm if sup.r_ohm > 0.0 else math.inf
    return sup.i_limit_a < i_max


def supply_of_device(scn: Scenario, name: str) -> Optional[str]:
    """The supply at the top of a device's feed chain (``None``: none)."""
    b = scn.booster_of(name)
    return scn.boosters[b].supply if b is not None else None


def supply_dark(scn: Scenario, supply: str) -> list[str]:
    """Every booster, breaker and reverser that goes dark when ``supply`` switches off."""
    return [d for table in (scn.boosters, scn.breakers, scn.reversers) for d in table
            if supply_of_device(scn, d) == supply]


def _delay_of(scn: Scenario, name: str) -> tuple[float, Optional[float]]:
    """(delay s, sample period s or None) of a device's trip, or of a supply's switch-off
    (``limit_after``, observed continuously)."""
    if name in scn.supplies:
        return scn.supplies[name].t_limit_s, None
    dev = scn.device(name)
    return dev.trip.t_after_s, dev.sense.period_s


def _trip_of(scn: Scenario, name: str):
    """(earliest trip s, nominal s, threshold A, is_curve, period) of a booster, breaker,
    reverser, or a supply that switches off at its limit (``limit_after``, the limit)."""
    if name in scn.supplies:
        sup = scn.supplies[name]
        return sup.t_limit_s, sup.t_limit_s, sup.i_limit_a, False, None
    dev = scn.device(name)
    trip, period = dev.trip, dev.sense.period_s
    return (earliest_trip_s(trip.t_after_s, period), trip.t_after_s, trip.i_above_a,
            trip.curve is not None, period)


def _act_verb(scn: Scenario, name: str) -> str:
    """How a finding names what ``name`` does: ``trip`` or ``switch off``."""
    return "switch off" if name in scn.supplies else "trip"


def _supply_how(scn: Scenario, name: str) -> str:
    sup = scn.supplies[name]
    return (f"on_limit {sup.on_limit}, {_ms(sup.t_limit_s)} after the current it delivers "
            f"exceeds its {sup.i_limit_a:g} A limit")


def _swap_of(scn: Scenario, name: str):
    """(sense delay, swap time, dead time, period, key paths of the sense delay and of the
    swap time) of a reversing device."""
    dev = scn.device(name)
    if name in scn.reversers:
        return (dev.t_sense_s, dev.t_swap_s, dev.t_dead_s, dev.sense.period_s,
                ("reversers", name, "sense", "after"), ("reversers", name, "swap_time"))
    return (dev.t_sense_reverse_s, dev.t_swap_s, 0.0, dev.sense.period_s,
            ("boosters", name, "reverse", "after"), ("boosters", name, "reverse", "swap_time"))


def clear_time_s(scn: Scenario, name: str) -> tuple[float, str]:
    """Time to clear of a reverser or reversing booster, and how it was reckoned."""
    t_sense, t_swap, _, period, _, _ = _swap_of(scn, name)
    t_det = latest_trip_s(t_sense, period)
    how = f"sense {t_sense * 1e3:.3g} ms"
    if period:
        how += (f" (up to {t_det * 1e3:.3g} ms on a {period * 1e3:.3g} ms sample grid)")
    how += f" + swap {t_swap * 1e3:.3g} ms"
    return t_det + t_swap, how


def _fmt_ms(t_s: float) -> str:
    return f"{t_s * 1e3:+.3f} ms"


def _ms(t_s: float) -> str:
    return f"{t_s * 1e3:.6g} ms"


# ------------------------------------------------------------------ advice
@dataclass(frozen=True)
class Advice:
    """One setting that is enough on its own: ``key`` (a key path of the file, as in
    ``("reversers", "loop-ctl", "swap_time")``) set to ``value_s`` seconds."""

    key: tuple
    value_s: float
    text: str


def _below(limit_s: float, strict: bool) -> float:
    """The largest multiple of 0.01 ms below ``limit_s`` (or at it, when not strict)."""
    k = math.floor(limit_s / ADVICE_STEP_S + 1e-9)
    if strict and k * ADVICE_STEP_S >= limit_s - 1e-12:
        k -= 1
    return round(k * ADVICE_STEP_S, 12)


def _above(limit_s: float, strict: bool) -> float:
    """The smallest multiple of 0.01 ms above ``limit_s`` (or at it, when not strict)."""
    k = math.ceil(limit_s / ADVICE_STEP_S - 1e-9)
    if strict and k * ADVICE_STEP_S <= limit_s + 1e-12:
        k += 1
    return round(k * ADVICE_STEP_S, 12)


def _delay_latest_below(budget_s: float, period_s: Optional[float], strict: bool,
                        minimum_s: float = 0.0) -> Optional[float]:
    """The longest delay whose latest run-out is below ``budget_s`` (None: none is)."""
    if period_s:
        n = math.ceil(budget_s / period_s - 1e-9) - 1 if strict else \
            math.floor(budget_s / period_s + 1e-9)
        return round(n * period_s, 12) if n >= 1 else None
    t = _below(budget_s, strict)
    return t if t > minimum_s else None


def _delay_earliest_above(limit_s: float, period_s: Optional[float], strict: bool) -> float:
    """The shortest delay whose earliest run-out is above ``limit_s``."""
    if period_s:
        k = limit_s / period_s
        n_minus_1 = math.floor(k + 1e-9) + 1 if strict else math.ceil(k - 1e-9)
        return round((max(n_minus_1, 0) + 1) * period_s, 12)
    return _above(limit_s, strict)


def _table(scn: Scenario, name: str) -> str:
    return {"booster": "boosters", "breaker": "breakers", "reverser": "reversers",
            "supply": "supplies"}[scn.device_kind(name)]


def _delay_key(scn: Scenario, name: str) -> tuple:
    """Key path of a device's trip delay, or of a supply's ``limit_after``."""
    if name in scn.supplies:
        return ("supplies", name, "limit_after")
    return (_table(scn, name), name, "trip", "after")


def _delay_word(scn: Scenario, name: str) -> str:
    return "limit_after" if name in scn.supplies else "trip delay"


def race_advice(scn: Scenario, layout, r: str) -> tuple[list[Advice], dict]:
    """What wins every race of reversing device ``r`` with the required margin.

    Returns
    -------
    (own, upstream)
        ``own``: settings of ``r`` that each win against every upstream device
        (its swap time; its sense delay). ``upstream``: per upstream device that
        is short of the margin, the trip delay that wins against ``r`` as it is.
    """
    secs = _reversing_devices(scn, layout).get(r, [])
    req = scn.t_margin_required_s
    strict = True              # a margin above the required one, never at it
    t_sense, t_swap, _, period, sense_key, swap_key = _swap_of(scn, r)
    t_det = latest_trip_s(t_sense, period)
    t_clear = t_det + t_swap
    ups = [(d, _trip_of(scn, d)) for d in _upstream_devices(scn, layout, r, secs,
                                                           supplies=True)]
    own: list[Advice] = []
    upstream: dict = {}
    if not ups:
        return own, upstream
    e_min = min(t[0] for _, t in ups)
    swap_max = _below(e_min - req - t_det, strict)
    if swap_max > 0.0:
        own.append(Advice(swap_key, swap_max,
                          f"set {r}'s swap time to {_ms(swap_max)} or less (now {_ms(t_swap)})"))
    sense_max = _delay_latest_below(e_min - req - t_swap, period, strict)
    if sense_max is not None and sense_max < t_sense:
        grid = f", {round(sense_max / period)} samples of {_ms(period)}" if period else ""
        own.append(Advice(sense_key, sense_max,
                          f"set {r}'s sense delay to {_ms(sense_max)}{grid} or less "
                          f"(now {_ms(t_sense)})"))
    for d, (t_early, nominal, _, curve, p_d) in ups:
        if t_early - t_clear > req:
            continue
        t_new = _delay_earliest_above(t_clear + req, p_d, strict)
        grid = f" ({round(t_new / p_d)} samples of {_ms(p_d)})" if p_d else ""
        upstream[d] = Advice(_delay_key(scn, d), t_new,
                             f"set {d}'s {_delay_word(scn, d)} to {_ms(t_new)}{grid} or "
                             f"more (now {_ms(nominal)})")
    return own, upstream


def nested_advice(scn: Scenario, k: str, u: str) -> list[Advice]:
    """Settings that each make nested device ``k`` act before upstream ``u`` (a booster,
    a breaker, or a supply that switches off at its limit) on a hard short in ``k``'s
    district, whatever the sample phases (:func:`nested_times`)."""
    tk = nested_times(scn, k, u)
    out: list[Advice] = []
    dev_k = scn.device(k)
    p_k = dev_k.sense.period_s
    t_u, p_u = _delay_of(scn, u)
    t_k_max = _delay_latest_below(tk["budget_s"], p_k, True)
    if t_k_max is not None and t_k_max < dev_k.trip.t_after_s:
        grid = f" ({round(t_k_max / p_k)} samples of {_ms(p_k)})" if p_k else ""
        out.append(Advice((_table(scn, k), k, "trip", "after"), t_k_max,
                          f"set {k}'s trip delay to {_ms(t_k_max)}{grid} or less "
                          f"(now {_ms(dev_k.trip.t_after_s)})"))
    if tk["dip_key"] is not None and not tk["seen"] and tk["latest_if_seen_s"] < tk["e_u_s"]:
        dip = _above(p_u, True) if p_u else ADVICE_STEP_S
        what = "dead time" if k in scn.reversers else "restart interval"
        out.append(Advice(tk["dip_key"], dip,
                          f"set {k}'s {what} to {_ms(dip)} or more (now {_ms(tk['dip_s'])}), "
                          f"so that {u} sees {k} open and counts afresh"))
    t_u_min = _delay_earliest_above(tk["latest_s"] - tk["restart_s"], p_u, True)
    if t_u_min > t_u:
        grid = f" ({round(t_u_min / p_u)} samples of {_ms(p_u)})" if p_u else ""
        out.append(Advice(_delay_key(scn, u), t_u_min,
                          f"set {u}'s {_delay_word(scn, u)} to {_ms(t_u_min)}{grid} or more "
                          f"(now {_ms(t_u)})"))
    return out


def _swaps(scn: Scenario, k: str) -> bool:
    """Whether ``k`` swaps before it trips: a reverser, or a booster that reverses."""
    return k in scn.reversers or (k in scn.boosters and scn.boosters[k].reverse_on_short)


def nested_times(scn: Scenario, k: str, u: str) -> dict:
    """The hard-short timeline of nested ``k`` under upstream ``u`` (times after onset).

    ``u`` is a booster or breaker feeding ``k``, or the supply above it when that
    switches off at its limit (a continuous observer: its delay is ``limit_after``).
    A breaker or booster trips at ``[e_k, l_k]``; the current stops until its
    restart (a dip of its first restart wait, none for a manual restart) and the
    upstream count is judged on the trip itself. A reverser (or a booster that
    reverses) first swaps (a short its swap does not clear), stays open for its
    dead time (the dip) and times its trip from the reclose ``R``: it trips at
    ``R + [e_k, l_k]``. The upstream count restarts at ``R`` if it surely sees
    the dip, else it runs on from the onset (:func:`dip_always_seen`).

    Returns a dict: ``latest_s`` (k's latest action that matters), ``e_u_s``
    (u's earliest trip on the same time axis), ``budget_s`` (what k's own trip
    delay must stay below), ``restart_s`` (when u's count starts), ``seen``,
    ``dip_s``, ``dip_key`` (key path of the dip setting), ``latest_if_seen_s``,
    and the nominal (phase-free) ``nominal_k_s``, ``nominal_u_s``.
    """
    dev = scn.device(k)
    t_u, p_u = _delay_of(scn, u)
    p_k = dev.sense.period_s
    l_k = latest_trip_s(dev.trip.t_after_s, p_k)
    e_u = earliest_trip_s(t_u, p_u)
    if _swaps(scn, k):
        t_sense, t_swap, t_dead, p_s, _, _ = _swap_of(scn, k)
        r_late = latest_trip_s(t_sense, p_s) + t_swap + t_dead
        seen = dip_always_seen(t_dead, p_u)
        start_u = r_late if seen else 0.0       # where u's count starts
        return {"latest_s": r_late + l_k, "e_u_s": start_u + e_u,
                "budget_s": start_u + e_u - r_late, "restart_s": start_u,
                "seen": seen, "dip_s": t_dead,
                "dip_key": ("reversers", k, "dead_time") if k in scn.reversers else None,
                "latest_if_seen_s": l_k,
                "nominal_k_s": dev.trip.t_after_s + (0.0 if t_dead > 0.0 else
                                                      t_sense + t_swap),
                "nominal_u_s": t_u}
    wait = _first_wait_s(dev.restart)
    seen = wait is None or dip_always_seen(wait, p_u)
    return {"latest_s": l_k, "e_u_s": e_u, "budget_s": e_u, "restart_s": 0.0,
            "seen": seen, "dip_s": wait, "latest_if_seen_s": l_k,
            "dip_key": None if wait is None else
            (_table(scn, k), k, "restart", "every" if dev.restart.policy == "retry"
             else "first"),
            "nominal_k_s": dev.trip.t_after_s, "nominal_u_s": t_u}


def _first_wait_s(restart) -> Optional[float]:
    """The first restart wait of a policy (None for a manual restart)."""
    if restart.policy == "retry":
        return restart.every_s
    if restart.policy == "backoff":
        return min(restart.first_s, restart.cap_s)
    return None


# ------------------------------------------------------------------ race
def _reversing_devices(scn: Scenario, layout) -> dict[str, list[str]]:
    """Reversing device -> its sections (reversers, and boosters with reverse_on_short)."""
    key = "reversing_devices"
    if key in layout.cache:
        return layout.cache[key]
    out: dict[str, list[str]] = {}
    for s in scn.track.sections:
        chain = layout.device_chain(s)
        rv = next((d for d in chain if d in scn.reversers), None)
        if rv is None:
            rv = next((d for d in chain if d in scn.boosters
                       and scn.boosters[d].reverse_on_short), None)
        if rv is not None:
            out.setdefault(rv, []).append(s)
    for r in scn.reversers:
        out.setdefault(r, [])
    layout.cache[key] = out
    return out


def reversing_margins(scn: Scenario, layout, supplies: bool = False) -> dict[str, dict[str, float]]:
    """Static margin ``t_trip(upstream) - t_clear`` of every reversing device, per device.

    With ``supplies`` the supplies that switch off at their limit
    (:func:`switches_off`) are among the upstream devices, their time being
    ``limit_after``; the findings count them (the report's pairs, which read the
    devices' sensing, do not yet).
    """
    out = {}
    for r, secs in _reversing_devices(scn, layout).items():
        t_clear, _ = clear_time_s(scn, r)
        out[r] = {d: _trip_of(scn, d)[0] - t_clear
                  for d in _upstream_devices(scn, layout, r, secs, supplies=supplies)}
    return out


def _upstream_devices(scn: Scenario, layout, r: str, secs, supplies: bool = False) -> list[str]:
    own = set(secs)
    devs: dict[str, None] = {}

    def add(chain):
        for d in chain:
            if d == r or scn.device_kind(d) is None:
                continue
            if d in scn.supplies:
                if supplies and switches_off(scn, d):
                    devs[d] = None
                continue
            if d in scn.reversers:
                continue
            devs[d] = None

    add(scn.upstream(r))
    for s in secs:
        add(layout.device_chain(s))
        for nb in layout.neighbours(s):
            if nb.section in own:
                continue
            add(layout.device_chain(nb.section))
    return list(devs)


def _what(scn: Scenario, d: str) -> str:
    """``"booster south"``, ``"supply psu"``."""
    return f"{scn.device_kind(d)} {d}"


def _race(scn: Scenario, layout) -> list[Finding]:
    findings = []
    req = scn.t_margin_required_s
    for r, secs in _reversing_devices(scn, layout).items():
        kind = "reverser" if r in scn.reversers else "booster"
        where = scn.where("reversers" if kind == "reverser" else "boosters", r)
        t_clear, how = clear_time_s(scn, r)
        rows = []
        for d in _upstream_devices(scn, layout, r, secs, supplies=True):
            t_trip, nominal, _, curve, period = _trip_of(scn, d)
            rows.append((t_trip - t_clear, d, t_trip, nominal, curve, period))
        if not rows:
            continue
        rows.sort()
        short = [row for row in rows if row[0] <= 0.0 or row[0] <= req]
        own, upstream = race_advice(scn, layout, r) if short else ([], {})
        for margin, d, t_trip, nominal, curve, period in short:
            if d in scn.supplies:
                trip_how = (f"{t_trip * 1e3:.3g} ms after onset if the short draws more than "
                            f"its {scn.supplies[d].i_limit_a:g} A limit (on_limit "
                            f"{scn.supplies[d].on_limit}, limit_after "
                            f"{nominal * 1e3:.3g} ms)")
            else:
                trip_how = f"{t_trip * 1e3:.3g} ms after onset"
            if period:
                trip_how += f" (delay {nominal * 1e3:.3g} ms sampled every {period * 1e3:.3g} ms)"
            if curve:
                trip_how += " (the trip delay is a lower bound of its inverse-time curve)"
            text = (f"{kind} {r} clears a short at its gap {t_clear * 1e3:.3g} ms after "
                    f"onset ({how}); {_what(scn, d)} can {_act_verb(scn, d)} {trip_how}: "
                    f"margin {_fmt_ms(margin)}")
            options = [a.text for a in own] + ([upstream[d].text] if d in upstream else [])
            if d in scn.supplies:
                options.append(f"give {d} a current limit above the short's current "
                               f"(railfault faultmap shows it)")
            need = (f"the race by more than the required {req * 1e3:.3g} ms" if req > 0
                    else "the race")
            fix = (f"any one of these wins {need} whatever the sample phases: "
                   + "; or ".join(options)) if options else \
                f"no single setting of {r} or {d} wins {need}: change the devices"
            if d in scn.supplies:
                first = (f": {d} switches off first and every district on it goes dark "
                         f"({', '.join(supply_dark(scn, d))})")
            else:
                first = f": {d} trips first and the train stops"
            if margin <= 0:
                findings.append(Finding("error", "RF-COORD-001", where, text + first, fix))
            else:
                findings.append(Finding(
                    "error", "RF-COORD-002", where,
                    text + f", not above the required {req * 1e3:.3g} ms", fix))
        if not short:
            margin, d, t_trip, nominal, curve, period = rows[0]
            findings.append(Finding(
                "info", "RF-COORD-003", where,
                f"{kind} {r} clears in {t_clear * 1e3:.3g} ms ({how}); least margin "
                f"{_fmt_ms(margin)} against {_what(scn, d)} (earliest "
                f"{'switch-off' if d in scn.supplies else 'trip'} {t_trip * 1e3:.3g} ms"
                + (", a lower bound of its curve" if curve else "") + ")"))
    return findings


# ------------------------------------------------------------- nested
def _nested_pairs(scn: Scenario) -> list[tuple[str, str, str]]:
    """``(kind, k, u)``: every nested device and each device above it it must beat: the
    boosters and breakers feeding it, and its supply when that switches off at its
    limit and ``k``'s trip threshold is below the limit (RF-FAULT-003 otherwise)."""
    out = []
    nested = [("booster", k) for k in scn.boosters] + \
        [("breaker", k) for k in scn.breakers] + [("reverser", k) for k in scn.reversers]
    for own, k in nested:
        above = (scn.boosters[k].supply,) if own == "booster" else scn.upstream(k)
        for u in above:
            if u in scn.boosters or u in scn.breakers:
                out.append((own, k, u))
            elif u in scn.supplies and switches_off(scn, u) and \
                    scn.device(k).trip.i_above_a < scn.supplies[u].i_limit_a:
                out.append((own, k, u))
    return out


def _nested_finding(scn: Scenario, own: str, k: str, u: str) -> Optional[Finding]:
    """The RF-COORD-004/-005 (a device above) or -010/-011 (its supply) finding of one
    pair, or ``None`` when ``k`` surely acts first."""
    dev = scn.device(k)
    where = scn.where(own + "s", k, "trip")
    kind = scn.device_kind(u)
    tl = nested_times(scn, k, u)
    supply = u in scn.supplies
    if _swaps(scn, k):
        t_swap = dev.t_swap_s
        t_dead = dev.t_dead_s if k in scn.reversers else 0.0
        when = (f" on a short its swap does not clear (a fault in its section): it "
                f"senses, swaps in {_ms(t_swap)}, ")
        when += (f"stays open {_ms(t_dead)} and times its trip from the reclose"
                 if t_dead > 0 else
                 "recloses at once and times its trip from then, while the current "
                 f"through {u} never stops")
    else:
        when = ""
    advice = "; or ".join(a.text for a in nested_advice(scn, k, u))
    if supply:
        advice += (("; or " if advice else "")
                   + f"give {u} a current limit above the short's current (railfault "
                   f"faultmap shows it)")
    fix = f"any one of: {advice}" if advice else f"set {k}'s trip delay shorter"
    nominal_k, nominal_u = tl["nominal_k_s"], tl["nominal_u_s"]
    trips_after = (f"{own} {k} trips after {dev.trip.t_after_s * 1e3:.3g} ms"
                   + (f" ({_ms(nominal_k)} after the onset)"
                      if nominal_k != dev.trip.t_after_s else ""))
    first = "(TM 5-811-14 4-1: the device nearest the fault must operate first)"
    if supply:
        dark = ", ".join(supply_dark(scn, u))
        u_how = f"supply {u} feeding it ({_supply_how(scn, u)})"
        if nominal_k >= nominal_u:
            return Finding(
                "error", "RF-COORD-010", where,
                f"{trips_after}, not before the {u_how}{when}: on a hard short in {k}'s "
                f"district that draws more than the limit, {u} switches off first and every "
                f"district on it goes dark ({dark}) {first}", fix)
        if tl["latest_s"] >= tl["e_u_s"]:
            return Finding(
                "warning", "RF-COORD-011", where,
                f"{own} {k} may trip as late as {_ms(tl['latest_s'])} after the onset, and "
                f"the {u_how} switches off {_ms(tl['e_u_s'])} after it{when} (sampling "
                f"jitter): {u} may switch off first and take down {dark}", fix)
        return None
    if nominal_k >= nominal_u:
        return Finding(
            "error", "RF-COORD-004", where,
            f"{trips_after}, not sooner than the {kind} {u} feeding it "
            f"({nominal_u * 1e3:.3g} ms){when}: on a hard short in {k}'s district "
            f"{u} trips first {first}", fix)
    if tl["latest_s"] >= tl["e_u_s"]:
        why = "sampling jitter"
        if tl["dip_s"] is not None and not tl["seen"]:
            what = "dead time" if own == "reverser" else "restart interval"
            why = (f"its {what} of {_ms(tl['dip_s'])} may fall between two of "
                   f"{u}'s samples, so {u} counts on from the onset")
        return Finding(
            "warning", "RF-COORD-005", where,
            f"{own} {k} may trip as late as {_ms(tl['latest_s'])} after the onset, "
            f"and {kind} {u} feeding it as early as {_ms(tl['e_u_s'])}{when} "
            f"({why}): {u} may trip first", fix)
    if own == "breaker" and not tl["seen"]:
        return Finding(
            "warning", "RF-COORD-005", where,
            f"breaker {k} retries after {_ms(tl['dip_s'])}, shorter than {kind} "
            f"{u}'s sample period: {u} may not see {k} open and counts on through "
            f"the retry: {u} may trip first", fix)
    return None


def nested_subjects(scn: Scenario) -> list[tuple[Finding, str, str]]:
    """``[(finding, k, u)]``: the trip-order findings of every nested pair that may lose
    (RF-COORD-004, -005, -010, -011; ``k`` the nested device, ``u`` the device or
    supply above it that may act first) and of every nested device whose pairs all
    pass (RF-COORD-012, ``u`` the pair of its least margin).

    The one place of the trip-order rule: a run's diagnosis that sees ``u`` clear a
    short in ``k``'s district finds the pair here and says the same thing, with the
    same fix (the advice counts sampled sensing: :func:`nested_advice`).
    """
    out = []
    least: dict = {}
    failing: set = set()
    for own, k, u in _nested_pairs(scn):
        f = _nested_finding(scn, own, k, u)
        if f is not None:
            out.append((f, k, u))
            failing.add(k)
            continue
        tl = nested_times(scn, k, u)
        margin = tl["e_u_s"] - tl["latest_s"]
        if k not in least or margin < least[k][0]:
            least[k] = (margin, own, u, tl)
    for k, (margin, own, u, tl) in least.items():
        if k in failing:
            continue
        which = " (one its swap does not clear)" if _swaps(scn, k) else ""
        out.append((Finding(
            "info", "RF-COORD-012", scn.where(own + "s", k, "trip"),
            f"{own} {k} trips at most {_ms(tl['latest_s'])} after the onset of a hard short "
            f"in its district{which}, before {_what(scn, u)} feeding it can "
            f"{_act_verb(scn, u)} "
            f"({_ms(tl['e_u_s'])} at the earliest): least margin {_fmt_ms(margin)}"), k, u))
    return out


def _nested(scn: Scenario) -> list[Finding]:
    findings = [f for f, _, _ in nested_subjects(scn)]
    for own, k, u in _nested_pairs(scn):
        if u in scn.supplies:
            continue
        brk = scn.device(k)
        iu = scn.device(u).trip.i_above_a
        if brk.trip.i_above_a >= iu:
            findings.append(Finding(
                "warning", "RF-COORD-006", scn.where(own + "s", k, "trip"),
                f"{own} {k} trips above {brk.trip.i_above_a:g} A, not lower than the "
                f"{scn.device_kind(u)} {u} feeding it ({iu:g} A): an overload between the two "
                f"takes {u} down instead",
                f"set {k}'s trip threshold below {iu:g} A"))
    return findings


# ----------------------------------------------------------- full scale
def full_scale_findings(scn: Scenario) -> list[Finding]:
    """RF-COORD-007: a sensing full scale at or below a threshold of the same device.

    The one place of this rule: ``railfault check`` and ``railfault faultmap``
    both report it from here.
    """
    return [f for f, _, _ in full_scale_subjects(scn)]


def full_scale_subjects(scn: Scenario) -> list:
    """``[(finding, table, device)]`` of :func:`full_scale_findings`."""
    out = []
    for table, kind in ((scn.boosters, "boosters"), (scn.breakers, "breakers"),
                        (scn.reversers, "reversers")):
        for name, dev in table.items():
            fs = dev.sense.full_scale_a
            levels = [("trip threshold", dev.trip.i_above_a)]
            if kind == "reversers":
                levels.append(("sense threshold", dev.sense_above_a))
            if kind == "boosters" and dev.reverse_on_short and dev.sense_reverse_a:
                levels.append(("reverse sense threshold", dev.sense_reverse_a))
            for what, level in levels:
                if fs <= level:
                    out.append((Finding(
                        "error", "RF-COORD-007", scn.where(kind, name, "sense"),
                        f"{kind[:-1]} {name} reads at most {fs:g} A (full scale) but its "
                        f"{what} is {level:g} A: the clamped reading never exceeds it, so "
                        f"it can never act",
                        f"raise the full scale above {level:g} A or lower the {what}"),
                        kind, name))
    return out


def check_coordination(scn: Scenario, layout) -> list[Finding]:
    """The reversing race (RF-COORD-001..003), nested devices against their upstream
    ones (-004..006) and the sensing full scale (-007)."""
    return _race(scn, layout) + _nested(scn) + full_scale_findings(scn)
