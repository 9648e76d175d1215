"""Trains against the reversing sections they pass.

A reversing section must be longer than the longest train that passes through
it, or both of its ends are bridged at once and no polarity clears the short
*(common practice; see domain.md, "Rules of thumb")*. What counts is the
distance between the train's outermost electrically conducting axles: pickup
axles of any vehicle with pickup (locomotives, lighted cars) and every axle of
a vehicle with metal wheels, from the foremost such axle of the whole consist
to the rearmost one. Vehicles are laid end to end, front first; axle positions
are measured from each vehicle's front.

Consecutive sections fed by the same reversing controller switch together, so
a run of them along the route counts as one reversing zone whose length is the
sum of its distinct sections.

Codes
-----
RF-LEN-001 (error)
    A train's conducting span is not shorter than a reversing zone on its
    route; the message gives the shortfall in mm (span - zone length).
"""
from __future__ import annotations

from typing import NamedTuple, Optional

from sim.checks.polarity import reverser_of
from sim.model import Finding, Scenario

__all__ = ["check_train_length", "conducting_span_m", "long_trains", "LongTrain"]


def conducting_span_m(scn: Scenario, consist) -> tuple[float, Optional[tuple], Optional[tuple]]:
    """Distance between the foremost and rearmost conducting axles of a consist.

    Returns
    -------
    (span_m, first, last)
        ``first``/``last`` are ``(vehicle index, vehicle name, axle index,
        position from the train front in m)``; None when no axle conducts.
    """
    offset = 0.0
    first = last = None
    for vi, name in enumerate(consist):
        v = scn.rolling_stock.get(name)
        if v is None:
            continue
        axles = range(len(v.axles_m)) if v.metal_wheels else v.pickup
        for ai in axles:
            pos = offset + v.axles_m[ai]
            if first is None or pos < first[3]:
                first = (vi, name, ai, pos)
            if last is None or pos > last[3]:
                last = (vi, name, ai, pos)
        offset += v.length_m
    if first is None:
        return 0.0, None, None
    return last[3] - first[3], first, last


class LongTrain(NamedTuple):
    """A train whose conducting span is not shorter than a reversing zone on its route."""

    train: str
    span_m: float
    first: tuple          # (vehicle index, vehicle name, axle index, m from the front)
    last: tuple
    reverser: str
    zone: tuple           # the zone's sections, in route order
    zone_m: float

    @property
    def short_m(self) -> float:
        """How much longer the span is than the zone (m)."""
        return self.span_m - self.zone_m


def long_trains(scn: Scenario, layout) -> list[LongTrain]:
    """Every train against every reversing zone on its route: those it does not fit."""
    out: list[LongTrain] = []
    secs = scn.track.sections
    for tname, tr in scn.trains.items():
        span_m, first, last = conducting_span_m(scn, tr.consist)
        if first is None:
            continue
        zones: list[tuple[str, list[str]]] = []
        prev_rv = None
        for leg in layout.route_path(tr):
            rv = reverser_of(scn, layout, leg.section)
            if rv is not None and rv == prev_rv:
                if leg.section not in zones[-1][1]:
                    zones[-1][1].append(leg.section)
            elif rv is not None:
                zones.append((rv, [leg.section]))
            prev_rv = rv
        seen = set()
        for rv, zone in zones:
            key = frozenset(zone)
            if key in seen:
                continue
            seen.add(key)
            zone_m = sum(secs[s].length_m for s in zone)
            if span_m >= zone_m:
                out.append(LongTrain(tname, span_m, first, last, rv, tuple(zone), zone_m))
    return out


def check_train_length(scn: Scenario, layout) -> list[Finding]:
    """Every train against every reversing zone on its route (RF-LEN-001)."""
    findings: list[Finding] = []
    for lt in long_trains(scn, layout):
        tname, span_m, first, last, rv = lt.train, lt.span_m, lt.first, lt.last, lt.reverser
        zone_m = lt.zone_m
        short_mm = lt.short_m * 1e3
        name = " + ".join(lt.zone)
        findings.append(Finding(
            "error", "RF-LEN-001", scn.where("trains", tname, "consist"),
            f"train {tname} spans {span_m * 1e3:.0f} mm between its outermost "
            f"conducting axles ({first[1]} axle {first[2] + 1} at {first[3] * 1e3:.0f} mm "
            f"to {last[1]} axle {last[2] + 1} at {last[3] * 1e3:.0f} mm from the front), "
            f"but reversing section {name} (fed by {rv}) is {zone_m * 1e3:.0f} mm long: "
            f"{short_mm:.0f} mm short, so the train bridges both its ends at once",
            f"lengthen {name} by more than {short_mm:.0f} mm, or shorten the train"))
    return findings
