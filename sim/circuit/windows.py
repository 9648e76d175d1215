"""Trip windows: where a device's trip threshold must lie.

For each booster, breaker and reverser, over every section downstream of it:

bottom
    the most the trains draw in those sections at one instant by their
    schedules (:func:`sim.checks.draw.peak_draw`) together with the power-up
    inrush of the keep-alive capacitors of the locomotives there, which all
    charge together when the district is switched on after a trip
    (:func:`sim.circuit.inrush.inrush`: peak ``V/R``, time constant ``RC``):
    the instant where draw plus inrush peak is largest.
top
    the weakest prospective coin current through the device anywhere in the
    district (:mod:`sim.circuit.faultmap`), capped by the supply's limit.

The threshold must lie above the bottom and below the top. The inrush decays:
``I(t) = I_steady + sum_k I_k exp(-t/tau_k)`` (each keep-alive charging with its
own time constant) stays above the threshold until it crosses it
(:func:`sim.circuit.inrush.time_above_sum_s`; one term: ``tau ln(I_peak /
(I_trip - I_steady))``); if that is shorter than the trip delay the device rides
through it.

Finding codes
-------------
RF-WIN-001 (error)   the trip threshold is at or above the weakest short in
                     the district: a short there does not trip it.
RF-WIN-002           retired: the steady draw against the trip threshold is the
                     one rule RF-COORD-008 (:mod:`sim.checks.draw`); the number is
                     not reused.
RF-WIN-003 (warning) the power-up inrush stays above the threshold for at
                     least the trip delay: it may trip on every restart.
RF-WIN-004 (warning) the continuous rating (thermal rated current, else the
                     trip threshold) is more than 70 % of the weakest short
                     current (common practice: keep it at 70 % or less). When
                     every prospective coin current in the district is above the
                     supply's limit, that limit (not the wiring) sets the weakest
                     short, and the fix is the supply's limit or the rating.
RF-WIN-005 (info)    the inrush crosses the threshold but for less than the trip delay.
"""
from __future__ import annotations

from dataclasses import dataclass

from sim.checks.draw import peak_draw
from sim.circuit.faultmap import FaultMap, chain_of, supply_of
from sim.circuit.inrush import inrush, time_above_s, time_above_sum_s
from sim.model import Finding, Scenario

#: Continuous rating as a share of the weakest short current (common practice).
RATING_SHARE = 0.70


@dataclass(frozen=True)
class TripWindow:
    """The window of one device (currents in A, times in s).

    ``trains`` are the trains in the district at ``t_s``, the instant of the
    largest draw plus inrush (``None`` when no train draws there).
    """

    device: str
    kind: str
    sections: tuple
    trains: tuple
    i_steady_a: float
    i_inrush_peak_a: float
    tau_inrush_s: float
    bottom_a: float
    top_a: float
    i_trip_a: float
    t_after_s: float
    i_rating_a: float
    top_at: tuple
    t_s: object = None
    #: the weakest prospective (unlimited) coin current through the device (A)
    top_prospective_a: float = float("nan")
    #: the supply whose limit caps every short in the district, else ``None``
    limited_by: object = None
    #: ``(i_peak_a, tau_s)`` of each locomotive's keep-alive inrush
    inrush_terms: tuple = ()


def power_up_load(scn: Scenario, layout, sections, v_track_v: float, terms: bool = False):
    """``(steady_a, inrush_peak_a, tau_s, trains, t_s)`` at the instant the locomotives
    in ``sections`` draw most with their keep-alive inrush (by the schedules); ``tau_s``
    is the longest time constant. With ``terms`` a sixth item: ``[(i_peak_a, tau_s)]``,
    one per locomotive, for :func:`sim.circuit.inrush.time_above_sum_s`."""
    stock = scn.rolling_stock

    def rush(iv):
        return inrush(stock[iv.name], v_track_v) if iv.name in stock else (0.0, 0.0)

    pk = peak_draw(scn, layout, sections, weight=lambda iv: iv.draw_a + rush(iv)[0])
    steady = sum(iv.draw_a for iv in pk.on)
    peak = sum(rush(iv)[0] for iv in pk.on)
    tau = max((rush(iv)[1] for iv in pk.on), default=0.0)
    if terms:
        return steady, peak, tau, pk.trains, pk.t_s, tuple(rush(iv) for iv in pk.on)
    return steady, peak, tau, pk.trains, pk.t_s


def trip_windows(scn: Scenario, fm: FaultMap, layout=None) -> list:
    """The :class:`TripWindow` of every device that has sections downstream."""
    if layout is None:
        from sim.layout import build_layout
        layout = build_layout(scn)
    out = []
    for kind, table in (("booster", scn.boosters), ("breaker", scn.breakers),
                        ("reverser", scn.reversers)):
        for name, dev in table.items():
            secs = tuple(s for s, d in fm.district_of.items()
                         if d is not None and scn.device_kind(d) not in (None, "supply")
                         and name in chain_of(scn, d))
            if not secs:
                continue
            pts = [(p.effective_i_a[p.chain.index(name)], p.section, p.at_m)
                   for p in fm.points if p.section in secs and name in p.chain]
            if not pts:
                continue
            top, top_sec, top_at = min(pts)
            top_pro = min(p.device_i_a[p.chain.index(name)] for p in fm.points
                          if p.section in secs and name in p.chain)
            sup = supply_of(scn, name)
            capped = sup if sup in scn.supplies and top_pro > top + 1e-9 else None
            v = scn.supplies[sup].v_emf_v if sup in scn.supplies else 0.0
            steady, peak, tau, trains, t_s, terms = power_up_load(scn, layout, secs, v,
                                                                  terms=True)
            thermal = getattr(dev, "thermal", None)
            rating = thermal.i_rated_a if thermal is not None else dev.trip.i_above_a
            out.append(TripWindow(name, kind, secs, trains, steady, peak, tau, steady + peak,
                                  top, dev.trip.i_above_a, dev.trip.t_after_s, rating,
                                  (top_sec, top_at), t_s, top_pro, capped, terms))
    return out


def window_findings(scn: Scenario, fm: FaultMap, layout=None) -> list:
    """Findings RF-WIN-001, -003, -004, -005 (module docstring)."""
    findings = []
    for w in trip_windows(scn, fm, layout):
        table = w.kind + "s"
        where = scn.where(table, w.device, "trip", "above")
        when = (f" of {', '.join(w.trains)} at {w.t_s:.2f} s" if w.trains else "")
        window = (f"window {w.bottom_a:.2f} A (draw {w.i_steady_a:.2f} A + inrush "
                  f"{w.i_inrush_peak_a:.2f} A{when}) to {w.top_a:.2f} A (weakest short, "
                  f"{w.top_at[0]} at {w.top_at[1]:.2f} m)")
        if w.i_trip_a >= w.top_a:
            findings.append(Finding(
                "error", "RF-WIN-001", where,
                f"{w.kind} {w.device} trips above {w.i_trip_a:g} A, at or above the weakest "
                f"short in its district: {window}",
                f"lower {w.device}'s trip below {w.top_a:.2f} A or strengthen the feeders"))
        if w.i_steady_a < w.i_trip_a < w.bottom_a:
            t_over = time_above_sum_s(w.i_steady_a, w.inrush_terms, w.i_trip_a) \
                if w.inrush_terms else \
                time_above_s(w.i_steady_a, w.i_inrush_peak_a, w.tau_inrush_s, w.i_trip_a)
            if t_over >= w.t_after_s:
                findings.append(Finding(
                    "warning", "RF-WIN-003", where,
                    f"power-up inrush keeps {w.device} above its {w.i_trip_a:g} A trip for "
                    f"{t_over * 1e3:.2f} ms, longer than its {w.t_after_s * 1e3:.2f} ms delay: "
                    f"it may trip on every restart; {window}",
                    f"raise {w.device}'s trip delay above {t_over * 1e3:.2f} ms or limit the "
                    f"keep-alives' charging current"))
            else:
                findings.append(Finding(
                    "info", "RF-WIN-005", where,
                    f"power-up inrush crosses {w.device}'s {w.i_trip_a:g} A trip for "
                    f"{t_over * 1e3:.2f} ms, less than its {w.t_after_s * 1e3:.2f} ms delay"))
        if w.i_rating_a > RATING_SHARE * w.top_a and w.i_trip_a < w.top_a:
            text = (f"{w.device}'s continuous rating {w.i_rating_a:g} A is "
                    f"{100 * w.i_rating_a / w.top_a:.0f} % of the weakest short current "
                    f"{w.top_a:.2f} A (common practice: 70 % or less)")
            fix = "add feeders or heavier wire so far-end shorts draw more"
            if w.limited_by is not None:
                sup = w.limited_by
                text += (f"; that current is supply {sup}'s limit: every short in the "
                         f"district would draw {w.top_prospective_a:.2f} A or more "
                         f"without it")
                fix = (f"give {sup} a current limit of {w.i_rating_a / RATING_SHARE:.2f} A "
                       f"or more, or set {w.device}'s continuous rating to "
                       f"{RATING_SHARE * w.top_a:.2f} A or less (feeders and wire do not "
                       f"help: {sup}'s limit, not the wiring, caps the short)")
            findings.append(Finding("warning", "RF-WIN-004", where, text, fix))
    return findings
