"""Coordination of the protection devices, from their settings alone.

The device nearest the fault must operate first (US Army TM 5-811-14,
*Coordinated Power Systems Protection*, 1991, section 4-1). For a reversing
controller that means its swap must interrupt the short a train makes at its
gap before any device upstream of that short reaches its trip delay
(``domain.md``, "The race").

Conventions (times after the onset of the short)
------------------------------------------------
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

Devices on a short path through a reversing device ``r``: the devices in the
feed chain of each of its sections (its own chain above it; for a reversing
booster also its breakers) and the devices feeding every section across its
joints, with their chains; supplies and ``r`` itself are left out, and so is a
neighbouring reversing controller (it senses the same short; its own trip acts
only after a swap).

Codes
-----
RF-COORD-001 (error)
    Negative margin: an upstream device trips before the reversing device clears.
RF-COORD-002 (warning)
    Margin below the required margin (``require: {margin: ...}``).
RF-COORD-003 (info)
    The least margin of a reversing device, when none is short.
RF-COORD-004 (error)
    A breaker's (or a reverser's own) trip delay is not shorter than that of a
    device feeding it: on a hard short the upstream device trips first. A
    reverser's trip acts on a short its swap does not clear; it is timed from
    the reclose after the swap, as is the upstream device's second try, so the
    two delays are compared directly.
RF-COORD-005 (warning)
    Nominal delays are in order, but with sampling jitter the nested device's
    latest trip is not before the upstream device's earliest.
RF-COORD-006 (warning)
    A nested device's trip threshold is not lower than that of a device
    feeding it: an overload between the two takes the upstream device down.
RF-COORD-007 (error)
    A sensing full scale at or below the device's own trip (or sense)
    threshold: the clamped reading never exceeds it, the device can never trip.
RF-COORD-008 (error)
    A trip (or reverser sense) threshold below the steady draw of the
    trains that can be in the device's district at once (every locomotive of
    every train whose route visits it).
"""
from __future__ import annotations

import math
from typing import Optional

from sim.model import Finding, Scenario

__all__ = ["check_coordination", "earliest_trip_s", "latest_trip_s", "sampled_count",
           "clear_time_s", "reversing_margins"]

_EPS = 1e-9


def sampled_count(t_s: float, period_s: float) -> int:
    """Samples a delay needs: ``max(1, ceil(t / Ts))`` (with a 1e-9 relative tolerance)."""
    return max(1, math.ceil(t_s / period_s - _EPS))


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


def _trip_of(scn: Scenario, name: str):
    """(earliest trip s, nominal s, threshold A, is_curve, period) of a booster/breaker/reverser."""
    dev = scn.device(name)
    trip, period = dev.trip, dev.sense.period_s
    return (earliest_trip_s(trip.t_after_s, period), trip.t_after_s, trip.i_above_a,
            trip.curve is not None, period)


def clear_time_s(scn: Scenario, name: str) -> tuple[float, str]:
    """Time to clear of a reverser or reversing booster, and how it was reckoned."""
    dev = scn.device(name)
    if name in scn.reversers:
        t_sense, t_swap = dev.t_sense_s, dev.t_swap_s
    else:
        t_sense, t_swap = dev.t_sense_reverse_s, dev.t_swap_s
    period = dev.sense.period_s
    t_det = latest_trip_s(t_sense, period)
    how = f"sense {t_sense * 1e3:.3g} ms"
    if period:
        how += (f" (up to {t_det * 1e3:.3g} ms on a {period * 1e3:.3g} ms sample grid)")
    how += f" + swap {t_swap * 1e3:.3g} ms"
    return t_det + t_swap, how


def _fmt_ms(t_s: float) -> str:
    return f"{t_s * 1e3:+.3f} ms"


def _reversing_devices(scn: Scenario, layout) -> dict[str, list[str]]:
    """Reversing device -> its sections (reversers, and boosters with reverse_on_short)."""
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
    return out


def reversing_margins(scn: Scenario, layout) -> dict[str, dict[str, float]]:
    """Static margin ``t_trip(upstream) - t_clear`` of every reversing device, per device."""
    out = {}
    for r, secs in _reversing_devices(scn, layout).items():
        t_clear, _ = clear_time_s(scn, r)
        out[r] = {d: _trip_of(scn, d)[0] - t_clear for d in _upstream_devices(scn, layout, r, secs)}
    return out


def _upstream_devices(scn: Scenario, layout, r: str, secs) -> list[str]:
    own = set(secs)
    devs: dict[str, None] = {}

    def add(chain):
        for d in chain:
            if d == r or d in scn.supplies or scn.device_kind(d) is None:
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


def _race(scn: Scenario, layout) -> list[Finding]:
    findings = []
    req = scn.t_margin_required_s
    for r, secs in _reversing_devices(scn, layout).items():
        kind = "reverser" if r in scn.reversers else "booster"
        where = scn.where("reversers" if kind == "reverser" else "boosters", r)
        t_clear, how = clear_time_s(scn, r)
        rows = []
        for d in _upstream_devices(scn, layout, r, secs):
            t_trip, nominal, _, curve, period = _trip_of(scn, d)
            rows.append((t_trip - t_clear, d, t_trip, nominal, curve, period))
        if not rows:
            continue
        rows.sort()
        short = False
        for margin, d, t_trip, nominal, curve, period in rows:
            trip_how = f"{t_trip * 1e3:.3g} ms after onset"
            if period:
                trip_how += f" (delay {nominal * 1e3:.3g} ms sampled every {period * 1e3:.3g} ms)"
            if curve:
                trip_how += " (the trip delay is a lower bound of its inverse-time curve)"
            text = (f"{kind} {r} clears a short at its gap {t_clear * 1e3:.3g} ms after "
                    f"onset ({how}); {scn.device_kind(d)} {d} can trip {trip_how}: "
                    f"margin {_fmt_ms(margin)}")
            if margin < 0:
                short = True
                findings.append(Finding(
                    "error", "RF-COORD-001", where,
                    text + f": {d} trips first and the train stops",
                    f"make {r} clear faster by more than {-margin * 1e3:.3f} ms (a shorter "
                    f"sense delay or swap time) or lengthen {d}'s trip delay"))
            elif margin < req:
                short = True
                findings.append(Finding(
                    "warning", "RF-COORD-002", where,
                    text + f", below the required {req * 1e3:.3g} ms",
                    f"gain {(req - margin) * 1e3:.3f} ms: a faster {r} or a slower {d}"))
        if not short:
            margin, d, t_trip, nominal, curve, period = rows[0]
            findings.append(Finding(
                "info", "RF-COORD-003", where,
                f"{kind} {r} clears in {t_clear * 1e3:.3g} ms ({how}); least margin "
                f"{_fmt_ms(margin)} against {scn.device_kind(d)} {d} (earliest trip "
                f"{t_trip * 1e3:.3g} ms"
                + (", a lower bound of its curve" if curve else "") + ")"))
    return findings


def _breakers(scn: Scenario) -> list[Finding]:
    findings = []
    nested = [("breaker", k, d) for k, d in scn.breakers.items()] + \
        [("reverser", k, d) for k, d in scn.reversers.items()]
    for own, k, brk in nested:
        tk_nom, tk_late = brk.trip.t_after_s, latest_trip_s(brk.trip.t_after_s,
                                                             brk.sense.period_s)
        where = scn.where(own + "s", k, "trip")
        when = (" on a short that its swap does not clear (timed from the reclose after "
                "the swap)" if own == "reverser" else "")
        for u in scn.upstream(k):
            if u not in scn.boosters and u not in scn.breakers:
                continue
            t_early, tu_nom, iu, _, _ = _trip_of(scn, u)
            kind = scn.device_kind(u)
            if tk_nom >= tu_nom:
                findings.append(Finding(
                    "error", "RF-COORD-004", where,
                    f"{own} {k} trips after {tk_nom * 1e3:.3g} ms, not sooner than the "
                    f"{kind} {u} feeding it ({tu_nom * 1e3:.3g} ms){when}: on a hard short "
                    f"in {k}'s district {u} trips first (TM 5-811-14 4-1: the device "
                    f"nearest the fault must operate first)",
                    f"set {k}'s trip delay below {tu_nom * 1e3:.3g} ms"))
            elif tk_late >= t_early:
                findings.append(Finding(
                    "warning", "RF-COORD-005", where,
                    f"{own} {k} may trip as late as {tk_late * 1e3:.3g} ms, and {kind} {u} "
                    f"feeding it as early as {t_early * 1e3:.3g} ms (sampling jitter){when}: "
                    f"{u} may trip first",
                    f"set {k}'s trip delay below {t_early * 1e3:.3g} ms minus one sample "
                    f"period"))
            if brk.trip.i_above_a >= iu:
                findings.append(Finding(
                    "warning", "RF-COORD-006", where,
                    f"{own} {k} trips above {brk.trip.i_above_a:g} A, not lower than the "
                    f"{kind} {u} feeding it ({iu:g} A): an overload between the two takes "
                    f"{u} down instead",
                    f"set {k}'s trip threshold below {iu:g} A"))
    return findings


def _full_scale(scn: Scenario) -> list[Finding]:
    findings = []
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
                    findings.append(Finding(
                        "error", "RF-COORD-007", scn.where(kind, name, "sense"),
                        f"{kind[:-1]} {name} reads at most {fs:g} A (full scale) but its "
                        f"{what} is {level:g} A: the clamped reading never exceeds it, so "
                        f"it can never act",
                        f"raise the full scale above {level:g} A or lower the {what}"))
    return findings


def _draw(scn: Scenario, layout) -> list[Finding]:
    findings = []
    train_draw = {}
    visits: dict[str, set] = {}
    for tname, tr in scn.trains.items():
        train_draw[tname] = sum(scn.rolling_stock[v].draw_a for v in tr.consist
                                if v in scn.rolling_stock)
        for st in (tr.start.section,) + tuple(tr.route):
            if isinstance(st, str) and st in scn.track.sections:
                for d in layout.device_chain(st):
                    visits.setdefault(d, set()).add(tname)
    for d, trains in visits.items():
        kind = scn.device_kind(d)
        if kind not in ("booster", "breaker", "reverser"):
            continue
        total = sum(train_draw[t] for t in trains)
        if total <= 0:
            continue
        dev = scn.device(d)
        levels = [("trip threshold", dev.trip.i_above_a, "trip")]
        if kind == "reverser":
            levels.append(("sense threshold", dev.sense_above_a, "sense"))
        names = ", ".join(sorted(trains))
        for what, level, key in levels:
            if level < total:
                findings.append(Finding(
                    "error", "RF-COORD-008", scn.where(kind + "s", d, key),
                    f"{kind} {d} has a {what} of {level:g} A, but the trains that can be in "
                    f"its district at once ({names}) draw {total:g} A steadily: it acts on "
                    f"normal running",
                    f"raise the {what} above {total:g} A or split the district"))
    return findings


def check_coordination(scn: Scenario, layout) -> list[Finding]:
    """The reversing race (RF-COORD-001..003), breaker order (-004..006), full scale
    (-007) and thresholds against the running draw (-008)."""
    return _race(scn, layout) + _breakers(scn) + _full_scale(scn) + _draw(scn, layout)
