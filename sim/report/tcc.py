"""Time-current characteristics of every protection path, from the device models.

A protection study draws, on log-log axes of current against time, every
device that a fault current passes through. Here every curve is computed by
the very functions the event engine's device machines use, so that the chart
is the model and not a drawing of it:

* trip units, definite or inverse time (IEC 60255-151 / IEEE C37.112):
  :func:`sim.devices.curves.inverse_time_s` of the reading
  :func:`sim.devices.sensing.reading_a` (the ADC clamps at its full scale);
  with sampled sensing the trip needs ``n = ceil(t / Ts)`` samples, so it falls
  between ``(n - 1) Ts`` and ``n Ts`` after onset
  (:func:`sim.checks.coordination.earliest_trip_s` / ``latest_trip_s``): a band;
* thermal replicas (IEC 60255-149): :func:`sim.devices.thermal.trip_time_s`
  from cold (θ = 0) and hot (θ = 1, after running at the rated current);
* reversing controllers and self-reversing boosters: the time to clear,
  latest detection plus swap time (:func:`sim.checks.coordination.clear_time_s`),
  with the earliest beside it when the sensing is sampled; their own trip acts
  only on a short that a swap did not clear, and is drawn as such;
* a supply's current limit (a vertical: no more current flows) and, for a
  hiccup or latch supply, when it switches off.

Verticals mark the least and greatest prospective fault current of the path's
district (the coin test of :mod:`sim.circuit.faultmap`, without and with the
supply limit), the steady draw of its trains and that draw plus their
keep-alive inrush (:mod:`sim.circuit.windows`). The interval between each pair
of devices that must coordinate is measured at the greatest fault current the
district can carry (its supply limit applied), where an inverse-time upstream
device is fastest: from the downstream device's latest clear or trip to the
upstream device's earliest trip.

A protection path is a reversing device with every device a short at its gap
passes through (:func:`sim.checks.coordination.reversing_margins`), or the feed
chain of a district; paths contained in another are left out, and paths whose
devices have the same settings share one chart.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from sim.checks.coordination import (clear_time_s, earliest_trip_s, latest_trip_s,
                                     reversing_margins)
from sim.devices.curves import inverse_time_s
from sim.devices.sensing import reading_a
from sim.devices.thermal import trip_time_s
from sim.model import Reverser

#: Times below this are drawn at this level (a trip "at once" on log axes), s.
T_FLOOR_S = 1e-5
#: Times above this are off the chart, s.
T_CEIL_S = 1e4
#: Points per decade of current in the sampled curves.
PER_DECADE = 64
#: Charts drawn at most; the other paths are listed under the last one.
MAX_CHARTS = 12


def _thermal(dev):
    """The thermal replica of a booster or breaker; a reverser has none."""
    return None if isinstance(dev, Reverser) else dev.thermal


@dataclass
class Curve:
    """One characteristic: at each current ``i_a`` the time ``t_s`` (``inf``: never).

    ``t_lo_s`` / ``t_hi_s`` bound the sampled-sensing band (equal to ``t_s``
    for continuous sensing); ``kind`` is ``trip``, ``thermal-cold``,
    ``thermal-hot``, ``clear``, ``trip-after-swap`` or ``supply-off``.
    """

    device: str
    kind: str
    label: str
    i_a: np.ndarray
    t_s: np.ndarray
    t_lo_s: np.ndarray
    t_hi_s: np.ndarray
    threshold_a: float

    @property
    def sampled(self) -> bool:
        return bool(np.any(self.t_lo_s != self.t_hi_s))


@dataclass
class Vertical:
    """A current marked on the chart (A) and what it is."""

    i_a: float
    kind: str
    label: str


@dataclass
class Interval:
    """The coordination interval of a pair at ``i_a``: from the downstream device's
    latest action ``t_from_s`` to the upstream device's earliest trip ``t_to_s``."""

    down: str
    up: str
    i_a: float
    t_from_s: float
    t_to_s: float

    @property
    def margin_s(self) -> float:
        return self.t_to_s - self.t_from_s


@dataclass
class Chart:
    """The time-current chart of one protection path (devices from the track up)."""

    key: str
    path: tuple
    also: tuple = ()
    curves: list = field(default_factory=list)
    verticals: list = field(default_factory=list)
    intervals: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    i_lim: tuple = (0.1, 100.0)


# ------------------------------------------------------------------ models
def trip_band(dev, i_a: float) -> tuple[float, float, float]:
    """``(t, earliest, latest)`` of a trip unit at a steady current ``i_a`` (s, ``inf``: never).

    ``t`` is the operate time of the setting at the reading ``min(|I|, full
    scale)`` (IEC 60255-151 for a curve); sampled sensing moves the trip to
    between ``(n - 1) Ts`` and ``n Ts``, ``n = ceil(t / Ts)``.
    """
    t = inverse_time_s(reading_a(i_a, dev.sense.full_scale_a), dev.trip)
    if not math.isfinite(t):
        return t, t, t
    period = dev.sense.period_s
    return t, earliest_trip_s(t, period), latest_trip_s(t, period)


def clear_band(scn, name: str, i_a: float) -> tuple[float, float, float]:
    """``(latest, earliest, latest)`` time to clear of a reversing device at ``i_a``."""
    dev = scn.device(name)
    if name in scn.reversers:
        above, t_sense, t_swap = dev.sense_above_a, dev.t_sense_s, dev.t_swap_s
    else:
        above = dev.sense_reverse_a if dev.sense_reverse_a is not None else dev.trip.i_above_a
        t_sense, t_swap = dev.t_sense_reverse_s, dev.t_swap_s
    if not reading_a(i_a, dev.sense.full_scale_a) > above:
        return math.inf, math.inf, math.inf
    t_late, _ = clear_time_s(scn, name)
    t_early = earliest_trip_s(t_sense, dev.sense.period_s) + t_swap
    return t_late, t_early, t_late


def thermal_time(setting, i_a: float, theta0: float) -> float:
    """IEC 60255-149 trip time of a replica from ``theta0`` at ``i_a`` (s)."""
    return trip_time_s(i_a, theta0, setting)


def is_reversing(scn, name: str) -> bool:
    return name in scn.reversers or (name in scn.boosters and scn.boosters[name].reverse_on_short)


def earliest_action_s(scn, name: str, i_a: float) -> float:
    """The earliest an upstream device can trip at ``i_a``: its trip unit's earliest,
    or its thermal replica from hot, whichever is sooner (a reversing device's own
    trip does not act on a fresh short)."""
    dev = scn.device(name)
    times = []
    if not is_reversing(scn, name):
        times.append(trip_band(dev, i_a)[1])
    thermal = _thermal(dev)
    if thermal is not None and thermal.trip_at > 1.0:
        times.append(thermal_time(thermal, i_a, 1.0))
    return min(times) if times else math.inf


def latest_action_s(scn, name: str, i_a: float) -> float:
    """The latest a downstream device acts at ``i_a``: a reversing device's clear,
    else its trip unit's latest trip."""
    if is_reversing(scn, name):
        return clear_band(scn, name, i_a)[2]
    return trip_band(scn.device(name), i_a)[2]


# ------------------------------------------------------------------ paths
def _depth(scn, name: str) -> int:
    return len(scn.upstream(name))


def protection_paths(scn, layout) -> list[tuple]:
    """Every protection path (devices from the track up), the ones contained in
    another left out, in a stable order."""
    paths: list[tuple] = []
    for r, ups in sorted(reversing_margins(scn, layout).items()):
        rest = sorted(ups, key=lambda d: (-_depth(scn, d), d))
        paths.append((r,) + tuple(rest))
    for dev in sorted({layout.district(s) for s in scn.track.sections} - {None}):
        chain = tuple(d for d in (dev,) + scn.upstream(dev)
                      if scn.device_kind(d) in ("booster", "breaker", "reverser"))
        if chain:
            paths.append(chain)
    out: list[tuple] = []
    for p in paths:
        if p in out:
            continue
        if any(set(p) < set(q) or (set(p) == set(q) and q in out) for q in paths if q != p):
            continue
        out.append(p)
    return out


def signature(scn, path: tuple) -> tuple:
    """What a path's chart depends on: every device's kind and settings (phase of
    the sample grid aside), and its supply's limit."""
    sig = []
    for d in path:
        dev = scn.device(d)
        sense = (dev.sense.period_s, dev.sense.full_scale_a)
        extra = ()
        if d in scn.reversers:
            extra = (dev.sense_above_a, dev.t_sense_s, dev.t_swap_s)
        elif d in scn.boosters and dev.reverse_on_short:
            extra = (dev.sense_reverse_a, dev.t_sense_reverse_s, dev.t_swap_s)
        sup = supply_of(scn, d)
        lim = scn.supplies[sup].i_limit_a if sup else math.inf
        sig.append((scn.device_kind(d), dev.trip, sense, _thermal(dev),
                    extra, lim))
    return tuple(sig)


def supply_of(scn, name: str) -> Optional[str]:
    b = scn.booster_of(name)
    return scn.boosters[b].supply if b is not None else None


def district_sections(scn, layout, device: str) -> list[str]:
    """Sections whose feed chain passes through ``device``."""
    return [s for s in scn.track.sections if device in layout.device_chain(s)]


# ------------------------------------------------------------------ charts
def _grid(i_lo: float, i_hi: float, thresholds) -> np.ndarray:
    n = max(8, int(PER_DECADE * math.log10(i_hi / i_lo)) + 1)
    xs = set(np.geomspace(i_lo, i_hi, n).tolist())
    for thr in thresholds:
        if i_lo < thr < i_hi:
            xs.add(thr * (1.0 + 1e-6))
    return np.array(sorted(xs))


def _curves_of(scn, name: str, grid: np.ndarray) -> list[Curve]:
    dev = scn.device(name)
    kind = scn.device_kind(name)
    out = []
    reversing = is_reversing(scn, name)

    def label_trip():
        t = dev.trip
        text = f"{name}: trip above {t.i_above_a:g} A"
        text += (f", {t.curve} TMS {t.tms:g} (at least {t.t_after_s * 1e3:g} ms)" if t.curve
                 else f" after {t.t_after_s * 1e3:g} ms")
        if dev.sense.period_s:
            text += f", sampled every {dev.sense.period_s * 1e6:g} µs"
        return text

    if reversing:
        vals = np.array([clear_band(scn, name, i) for i in grid])
        above = dev.sense_above_a if kind == "reverser" else (
            dev.sense_reverse_a if dev.sense_reverse_a is not None else dev.trip.i_above_a)
        _, how = clear_time_s(scn, name)
        out.append(Curve(name, "clear", f"{name}: clears a short above {above:g} A ({how})",
                         grid, vals[:, 0], vals[:, 1], vals[:, 2], above))
        vals = np.array([trip_band(dev, i) for i in grid])
        out.append(Curve(name, "trip-after-swap", label_trip() + " (only on a short a swap "
                         "did not clear)", grid, vals[:, 0], vals[:, 1], vals[:, 2],
                         dev.trip.i_above_a))
    else:
        vals = np.array([trip_band(dev, i) for i in grid])
        out.append(Curve(name, "trip", label_trip(), grid, vals[:, 0], vals[:, 1], vals[:, 2],
                         dev.trip.i_above_a))
    thermal = _thermal(dev)
    if thermal is not None:
        cold = np.array([thermal_time(thermal, i, 0.0) for i in grid])
        out.append(Curve(name, "thermal-cold",
                         f"{name}: thermal replica from cold (rated {thermal.i_rated_a:g} A, "
                         f"tau {thermal.tau_s:g} s, trips at θ = {thermal.trip_at:g})",
                         grid, cold, cold, cold, thermal.i_rated_a))
        if thermal.trip_at > 1.0:
            hot = np.array([thermal_time(thermal, i, 1.0) for i in grid])
            out.append(Curve(name, "thermal-hot", f"{name}: thermal replica hot (θ = 1, after "
                             f"running at {thermal.i_rated_a:g} A)", grid, hot, hot, hot,
                             thermal.i_rated_a))
    return out


def _supply_curves(scn, sup: str, grid: np.ndarray) -> list[Curve]:
    s = scn.supplies[sup]
    if not math.isfinite(s.i_limit_a) or s.on_limit == "constant-current":
        return []
    t = np.where(grid > s.i_limit_a, s.t_limit_s, math.inf)
    return [Curve(sup, "supply-off", f"{sup}: switches off ({s.on_limit}) over "
                  f"{s.i_limit_a:g} A after {s.t_limit_s * 1e3:g} ms", grid, t, t, t,
                  s.i_limit_a)]


def build_charts(scn, layout, fm, windows) -> list[Chart]:
    """The charts of every protection path (see the module doc).

    Parameters
    ----------
    scn, layout :
        The scenario and its layout.
    fm : sim.circuit.faultmap.FaultMap
        The coin test everywhere (for the fault-current verticals).
    windows : list of sim.circuit.windows.TripWindow
        The trip windows (for the running draw and inrush).
    """
    paths = protection_paths(scn, layout)
    groups: dict[tuple, list[tuple]] = {}
    for p in paths:
        groups.setdefault(signature(scn, p), []).append(p)
    win = {w.device: w for w in windows}
    charts = []
    for k, (sig, members) in enumerate(groups.items()):
        path = members[0]
        chart = Chart(key=f"tcc-{k + 1}", path=path, also=tuple(members[1:]))
        leaves = [m[0] for m in members]
        pro, eff = [], []
        for p in fm.points:
            for leaf in leaves:
                if leaf in p.chain:
                    j = p.chain.index(leaf)
                    pro.append(p.device_i_a[j])
                    eff.append(p.effective_i_a[j])
        thresholds = []
        for d in path:
            dev = scn.device(d)
            thresholds.append(dev.trip.i_above_a)
            if d in scn.reversers:
                thresholds.append(dev.sense_above_a)
            if _thermal(dev) is not None:
                thresholds.append(dev.thermal.i_rated_a * math.sqrt(dev.thermal.trip_at))
        sups = sorted({supply_of(scn, d) for d in path} - {None})
        limits = [scn.supplies[s].i_limit_a for s in sups
                  if math.isfinite(scn.supplies[s].i_limit_a)]
        scales = [scn.device(d).sense.full_scale_a for d in path
                  if math.isfinite(scn.device(d).sense.full_scale_a)]
        marks = [x for x in thresholds + pro + limits + scales if x > 0]
        i_lo = 10 ** math.floor(math.log10(min(marks) / 2.0))
        i_hi = 10 ** math.ceil(math.log10(max(marks) * 2.0))
        grid = _grid(i_lo, i_hi, thresholds + limits + scales)
        chart.i_lim = (i_lo, i_hi)
        for d in path:
            chart.curves.extend(_curves_of(scn, d, grid))
        for s in sups:
            chart.curves.extend(_supply_curves(scn, s, grid))
            lim = scn.supplies[s].i_limit_a
            if math.isfinite(lim):
                chart.verticals.append(Vertical(lim, "limit", f"{s}: current limit "
                                                f"{lim:g} A"))
        for d in path:
            fs = scn.device(d).sense.full_scale_a
            if math.isfinite(fs):
                chart.verticals.append(Vertical(fs, "full-scale",
                                                f"{d}: sensing full scale {fs:g} A"))
        where = "districts" if len(members) > 1 else "district"
        if pro:
            chart.verticals.append(Vertical(min(pro), "fault-min", f"least prospective fault "
                                            f"current of the {where} {min(pro):.2f} A"))
            chart.verticals.append(Vertical(max(pro), "fault-max", f"greatest prospective fault "
                                            f"current of the {where} {max(pro):.2f} A"))
        steady = max((win[x].i_steady_a for x in leaves if x in win), default=0.0)
        bottom = max((win[x].bottom_a for x in leaves if x in win), default=0.0)
        if steady > 0:
            chart.verticals.append(Vertical(steady, "draw", f"steady draw of the trains "
                                            f"{steady:.2f} A"))
        if bottom > steady:
            chart.verticals.append(Vertical(bottom, "draw-inrush", f"steady draw plus keep-"
                                            f"alive inrush {bottom:.2f} A"))
        i_star = max(eff) if eff else None
        if i_star:
            for a, down in enumerate(path):
                for up in path[a + 1:]:
                    if not (a == 0 or up in scn.upstream(down)):
                        continue
                    t_from = latest_action_s(scn, down, i_star)
                    t_to = earliest_action_s(scn, up, i_star)
                    if math.isfinite(t_from) and math.isfinite(t_to):
                        chart.intervals.append(Interval(down, up, i_star, t_from, t_to))
                    else:
                        who = down if not math.isfinite(t_from) else up
                        chart.notes.append(f"{who} does not act at {i_star:.2f} A, the "
                                           f"greatest fault current of the {where}: no "
                                           f"interval {down} / {up}")
        charts.append(chart)
    if len(charts) > MAX_CHARTS:
        rest = charts[MAX_CHARTS:]
        charts = charts[:MAX_CHARTS]
        charts[-1].notes.append(
            "not drawn (more than %d charts): %s" % (MAX_CHARTS, "; ".join(
                " / ".join(c.path) for c in rest)))
    return charts
