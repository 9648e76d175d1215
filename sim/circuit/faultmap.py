"""The coin test everywhere at once: prospective short-circuit current map.

For every section, at points no more than ``step_m`` apart and at every feeder
and end, a coin of ``r_coin_ohm`` (default 0.01 ohm, common practice for a
coin or screwdriver blade across the rails) is laid across the rails. By
Thevenin's theorem its current is

    I = V_oc / (R_th + R_coin),   R_th = (e_L - e_R)^T G^-1 (e_L - e_R),

with ``V_oc`` the open-circuit rail-to-rail voltage at the point and ``R_th``
the driving-point resistance between the two rail nodes of the base network
``G`` (every device closed, no train). By superposition the same solution
gives the current the coin drives through every device on its path
(``g (z_out - z_in)`` per lead), so a device in a mis-wired network is judged
by the current it really carries.

Method: sparse, and linear in the number of points
--------------------------------------------------
The circuit has rail nodes only at the section ends and feeders (the
*junctions*); between two neighbouring junctions ``a`` and ``b`` (``dx``
apart) each rail is a plain resistor chain. A coin at the fraction ``t`` of
the span splits each rail into ``r t dx`` and ``r (1 - t) dx``; eliminating its
two rail nodes (Kron reduction) gives the span back as one resistor and turns
the unit coin injection into ``(1 - t) c_a + t c_b`` on the junctions, with
``c_k = e_Lk - e_Rk`` the coin vector of junction ``k``. So, with
``z_k = G^-1 c_k`` (one sparse solve per junction, :class:`~sim.circuit.incremental.BlockLU`
part by part, batched) and ``Q_ij = c_i^T z_j``:

    R_th(t) = 2 r dx t (1 - t) + (1 - t)^2 Q_aa + 2 t (1 - t) Q_ab + t^2 Q_bb
    V_oc(t) = (1 - t) V_oc(a) + t V_oc(b)          (no current flows along the span)
    I_lead(t) / I_coin = (1 - t) g (z_a[o] - z_a[i]) + t g (z_b[o] - z_b[i])

Each point then costs a few floating-point operations, whatever the track's
length or the step; the solves grow with the number of junctions (ends and
feeders), not with the length. Memory is bounded by one batch of solutions of
one connected part at a time. The points themselves are bounded too: at most
:data:`MAX_POINTS` (the step is widened to keep to it, and RF-FAULT-005 says so).

Whether a device trips: the current it can actually see is capped by its
supply's current limit, and what it reads is clamped at its sensing full
scale; it trips when ``min(I_device, I_limit, full_scale) > i_above``.

Finding codes
-------------
RF-FAULT-001 (error)   a coin in a section trips no device on its path: a short
                       there would not be cleared and can overheat the track.
RF-FAULT-002 (warning) the nearest device does not trip on a coin but one
                       upstream does: a short there takes down the larger district.
RF-FAULT-003 (error)   a device's trip threshold is at or above its supply's
                       current limit: unreachable, it can never trip on a short.
RF-FAULT-004           retired: a sensing full scale at or below a threshold is
                       the one rule RF-COORD-007 (:func:`sim.checks.coordination.full_scale_findings`),
                       which the fault map reports too. The number is not reused.
RF-FAULT-005 (info)    the points were bounded: the step was widened to keep to
                       :data:`MAX_POINTS` points.
RF-FAULT-006 (error)   a coin in a section draws more than its supply's current
                       limit, and the supply switches off at its limit (hiccup or
                       latch) before the nearest device that trips there can trip:
                       every district on the supply goes dark. The timing is the
                       trip-order rule of :func:`sim.checks.coordination.nested_times`
                       (RF-COORD-010/-011 are its static findings); the current
                       through the supply is that of the booster at the top of the
                       point's chain.

A supply that switches off at its limit is a protective device too: where a
coin's prospective current exceeds its limit it acts ``limit_after`` after the
onset (:mod:`sim.devices.supply`). Where no device trips, RF-FAULT-001 says that
only the supply stops the short, taking every district on it down.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from sim.circuit.build import build_topology, rail_positions
from sim.circuit.conductors import rail_r_per_m_ohm
from sim.circuit.incremental import SingularUpdate, Woodbury
from sim.circuit.network import Circuit
from sim.model import Finding, Scenario

#: Coin resistance of the coin test (ohm): common practice.
R_COIN_OHM = 0.01

#: Right-hand sides solved together (SuperLU's multi-column solve slows down sharply
#: beyond a few columns: 8 a batch was the fastest measured, tests/bench/bench_faultmap.py).
BATCH = 8

#: Most coin-test points of one map; the step is widened beyond it (RF-FAULT-005).
MAX_POINTS = 50_000


@dataclass
class FaultPoint:
    """One coin position: its Thevenin equivalent and the current per chain device."""

    section: str
    at_m: float
    v_oc_v: float
    r_th_ohm: float
    i_coin_a: float
    chain: tuple
    device_i_a: tuple      # prospective (unlimited) current per chain device
    effective_i_a: tuple   # capped by the supply limit
    trips: tuple


@dataclass
class FaultMap:
    """Rows of the ``fault_current`` list, findings and the points behind them.

    ``step_m`` is the step the points were laid at (wider than the one asked for,
    ``step_asked_m``, when the points were bounded to ``max_points``).
    """

    rows: list
    findings: list
    points: list = field(default_factory=list)
    district_of: dict = field(default_factory=dict)
    step_m: float = 0.5
    r_coin_ohm: float = R_COIN_OHM
    step_asked_m: float = 0.5
    max_points: int = MAX_POINTS
    devices: tuple = ()
    #: ``{section: (device, supply)}``: where the supply switches off before the nearest
    #: device that trips (RF-FAULT-006), and that device.
    supply_first: dict = field(default_factory=dict)

    @property
    def bounded(self) -> bool:
        """Whether the step was widened to keep to ``max_points``."""
        return self.step_m > self.step_asked_m

    def describe(self) -> str:
        """One line for people: how many points, how far apart, and the bound."""
        text = (f"{len(self.points)} coin-test points, at most {self.step_m:.3g} m apart, at "
                f"every end and feeder; bounded to {self.max_points} points")
        if self.bounded:
            text += f" (a step of {self.step_asked_m:.3g} m would need more)"
        return text


def device_trip(scn: Scenario, name: str):
    """``(i_above_a, full_scale_a)`` of a booster, breaker or reverser."""
    dev = scn.device(name)
    return dev.trip.i_above_a, dev.sense.full_scale_a


def supply_of(scn: Scenario, device: str) -> Optional[str]:
    b = scn.booster_of(device)
    return scn.boosters[b].supply if b is not None else None


def section_districts(scn: Scenario, layout=None) -> dict:
    """The feeding device of every section (``None`` if unfed), :meth:`sim.layout.Layout.district`."""
    if layout is None:
        from sim.layout import build_layout
        layout = build_layout(scn, check_routes=False)
    return {s: layout.district(s) for s in scn.track.sections}


def chain_of(scn: Scenario, device: str) -> tuple:
    """The protection devices a short fed by ``device`` passes through, nearest first."""
    return tuple(d for d in (device,) + scn.upstream(device)
                 if scn.device_kind(d) in ("booster", "breaker", "reverser"))


def limit_subjects(scn: Scenario, devices) -> list:
    """``[(RF-FAULT-003 finding, device)]``: trip thresholds the supply cannot reach."""
    out = []
    for name in devices:
        i_above, _ = device_trip(scn, name)
        kind = scn.device_kind(name)
        table = {"booster": "boosters", "breaker": "breakers", "reverser": "reversers"}[kind]
        sup = supply_of(scn, name)
        lim = scn.supplies[sup].i_limit_a if sup in scn.supplies else math.inf
        if lim <= i_above:
            out.append((Finding(
                "error", "RF-FAULT-003", scn.where(table, name, "trip", "above"),
                f"{kind} {name} trips above {i_above:g} A but its supply {sup} is limited at "
                f"{lim:g} A: the trip threshold is unreachable and a short will not trip it",
                f"set {name}'s trip below {lim:g} A or use a supply that can deliver more"),
                name))
    return out


def coin_points(scn: Scenario, sections, step_m: float,
                max_points: int = MAX_POINTS) -> tuple[dict, float]:
    """``({section: positions}, step used)``: every end and feeder and a grid of
    ``step_m``, the step widened (doubled until it fits) when the points would be
    more than ``max_points``."""
    r_m = rail_r_per_m_ohm(scn.track.rail)
    secs = scn.track.sections
    total_m = sum(secs[s].length_m for s in sections)
    fixed = sum(len(secs[s].feeders) + 3 for s in sections)
    step = float(step_m)
    room = max_points - fixed
    if room <= 0:
        step = max(step, total_m + 1.0)          # ends and feeders only
    elif total_m / step > room:
        while total_m / step > room:
            step *= 2.0
    pts = {s: rail_positions(secs[s], r_m, step) for s in sections}
    return pts, step


def fault_map(scn: Scenario, layout=None, step_m: float = 0.5,
              r_coin_ohm: float = R_COIN_OHM, circuit: Optional[Circuit] = None,
              max_points: int = MAX_POINTS) -> FaultMap:
    """Prospective coin current at every point of every district (module docstring)."""
    from sim.checks.coordination import full_scale_findings, nested_advice, supply_dark

    if layout is None:
        from sim.layout import build_layout
        layout = build_layout(scn, check_routes=False)
    c = circuit or Circuit(build_topology(scn, layout=layout))
    topo = c.topo
    findings: list[Finding] = [f for f in topo.findings]
    wb = c._orig.wb or Woodbury(c._a0, c._inj, c.q_nodes)
    c._orig.wb = wb
    j = np.where(c._sup_on, c._sup_v * c._sg, 0.0)
    x0 = wb.u @ j
    districts = section_districts(scn, layout)
    devices = topo.devices

    # device-level findings ------------------------------------------------
    findings += [f for f, _ in limit_subjects(scn, devices)]
    findings += full_scale_findings(scn)

    # points ------------------------------------------------------------------
    chains = {name: chain_of(scn, districts[name]) for name, snet in topo.sections.items()
              if districts.get(name) in devices and chain_of(scn, districts[name])}
    pts_m, step_used = coin_points(scn, list(chains), step_m, max_points)
    if step_used > step_m:
        n_pts = sum(len(v) for v in pts_m.values())
        findings.append(Finding(
            "info", "RF-FAULT-005", "track",
            f"the coin test is bounded to {max_points} points: at a step of {step_m:g} m "
            f"the track would need more, so it was laid {step_used:.3g} m apart "
            f"({n_pts} points, every end and feeder among them)",
            "ask for a coarser step, or check a part of the layout at a time"))
    thev = thevenin_points(c, x0, chains, pts_m)
    points: list[FaultPoint] = []
    rows = []
    limits = {d: (scn.supplies[supply_of(scn, d)].i_limit_a
                  if supply_of(scn, d) in scn.supplies else math.inf) for d in devices}
    for section, at_m, v_oc, r_th, transfers in thev:
        chain = chains[section]
        i_s = v_oc / (r_th + r_coin_ohm)
        dev_i, eff_i, trips = [], [], []
        for d, t in zip(chain, transfers):
            i_dev = float(abs(i_s) * t)
            i_eff = min(i_dev, limits[d])
            i_above, full_scale = device_trip(scn, d)
            trip = min(i_eff, full_scale) > i_above
            dev_i.append(i_dev)
            eff_i.append(i_eff)
            trips.append(bool(trip))
            rows.append({"section": section, "at_m": round(at_m, 6),
                         "current_a": round(i_eff, 6), "device": d,
                         "trip_a": i_above, "ok": bool(trip),
                         "prospective_a": round(i_dev, 6)})
        points.append(FaultPoint(section, at_m, float(abs(v_oc)), float(r_th),
                                 float(abs(i_s)), chain, tuple(dev_i), tuple(eff_i),
                                 tuple(trips)))

    # section-level findings ----------------------------------------------------
    by_section: dict = {}
    for p in points:
        by_section.setdefault(p.section, []).append(p)
    supply_first: dict = {}
    for section, plist in by_section.items():
        where = scn.where("track", "sections", section)
        dead = [p for p in plist if not any(p.trips)]
        if dead:
            worst = min(dead, key=lambda p: p.effective_i_a[0])
            d0 = worst.chain[0]
            sup = supply_of(scn, d0)
            only = ""
            if _over_limit(scn, worst, sup):
                only = (f"; only supply {sup}, over its {limits[d0]:g} A limit, stops it "
                        f"({scn.supplies[sup].on_limit}, {scn.supplies[sup].t_limit_s * 1e3:.3g} "
                        f"ms after the onset), taking down every district on it "
                        f"({', '.join(supply_dark(scn, sup))})")
            findings.append(Finding(
                "error", "RF-FAULT-001", where,
                f"a {r_coin_ohm:g} ohm coin across the rails of {section} at "
                f"{_span(dead)} trips no device: at {worst.at_m:.2f} m it draws "
                f"{worst.effective_i_a[0]:.2f} A through {d0} (trips above "
                f"{device_trip(scn, d0)[0]:g} A){only}; a short there will not be cleared "
                f"by its own protection and can overheat the track",
                f"add a feeder near {worst.at_m:.1f} m, use heavier feeder wire, or lower "
                f"{d0}'s trip threshold"))
        first = _supply_first_points(scn, plist)
        if first:
            late = min(first, key=lambda x: x[1])   # the least margin
            p, margin, d, sup, tl = late
            supply_first[section] = (d, sup)
            i_max = max(x[0].device_i_a[-1] for x in first)
            lim = scn.supplies[sup]
            advice = "; or ".join(a.text for a in nested_advice(scn, d, sup))
            findings.append(Finding(
                "error", "RF-FAULT-006", where,
                f"a {r_coin_ohm:g} ohm coin across {section} at {_span([x[0] for x in first])} "
                f"draws up to {i_max:.2f} A through supply {sup}, above its "
                f"{lim.i_limit_a:g} A limit: {sup} switches off ({lim.on_limit}) "
                f"{tl['e_u_s'] * 1e3:.3g} ms after the onset, and {d}, the nearest device "
                f"that trips there, may trip as late as {tl['latest_s'] * 1e3:.3g} ms: "
                f"every district on {sup} goes dark ({', '.join(supply_dark(scn, sup))})",
                (f"any one of: {advice}; or " if advice else "")
                + f"give {sup} a current limit above {i_max:.2f} A"))
        partial = [p for p in plist if any(p.trips) and not p.trips[0] and len(p.chain) > 1]
        if partial:
            p = partial[0]
            up = next(d for d, t in zip(p.chain, p.trips) if t)
            findings.append(Finding(
                "warning", "RF-FAULT-002", where,
                f"a coin across {section} at {_span(partial)} does not trip {p.chain[0]} "
                f"({p.effective_i_a[0]:.2f} A against {device_trip(scn, p.chain[0])[0]:g} A) "
                f"but trips {up}: the whole of {up}'s district goes dark",
                f"lower {p.chain[0]}'s trip threshold or add feeders"))
    return FaultMap(rows, findings, points, districts, step_used, r_coin_ohm, float(step_m),
                    max_points, tuple(devices), supply_first)


def _over_limit(scn: Scenario, p: FaultPoint, sup: Optional[str]) -> bool:
    """Whether a point's coin draws more than its supply's limit, and that supply switches
    off at its limit (the current through the supply is the chain's booster's)."""
    from sim.checks.coordination import switches_off

    return (sup is not None and switches_off(scn, sup)
            and p.device_i_a[-1] > scn.supplies[sup].i_limit_a)


def _supply_first_points(scn: Scenario, plist) -> list:
    """``[(point, margin s, device, supply, timeline)]``: the points of one section where
    the supply may switch off before the nearest device that trips there (RF-FAULT-006)."""
    from sim.checks.coordination import nested_times

    out = []
    for p in plist:
        sup = supply_of(scn, p.chain[0])
        if not _over_limit(scn, p, sup):
            continue
        d = next((d for d, t in zip(p.chain, p.trips) if t), None)
        if d is None:
            continue                      # nothing trips: RF-FAULT-001 says it
        tl = nested_times(scn, d, sup)
        if tl["latest_s"] >= tl["e_u_s"]:
            out.append((p, tl["e_u_s"] - tl["latest_s"], d, sup, tl))
    return out


def _lead_vectors(c: Circuit, chain_devices):
    """Per device: its two lead functionals ``[(node_out, node_in, g), ...]``."""
    out = {}
    for d in chain_devices:
        dn = c.topo.devices[d]
        out[d] = ((dn.o_l, dn.a, dn.g_lead_s), (dn.o_r, dn.b, dn.g_lead_s))
    return out


def _junction_terms(c: Circuit, chains: dict, leads: dict) -> dict:
    """Per section: ``(Q_self, Q_next, T)`` at its junctions (module docstring).

    ``Q_self[k] = c_k^T z_k``, ``Q_next[k] = c_{k+1}^T z_k``, ``T[k, 2 i + l]`` the
    signed current through lead ``l`` of the ``i``-th device of the section's
    chain per ampere of coin current at junction ``k``. The coin vectors of all
    junctions are solved part by part, :data:`BATCH` at a time, each batch's
    Kirchhoff residual checked (at most ``1e-9`` of the injection).
    """
    lu = c._orig.wb.lu
    topo = c.topo
    out = {}
    jobs: dict = {}                     # part -> [(section, k)]
    for name, chain in chains.items():
        s = topo.sections[name]
        m = len(s.xs_m)
        out[name] = (np.zeros(m), np.zeros(m), np.zeros((m, 2 * len(chain))))
        for k in range(m):
            part_l, part_r = lu.lab[s.left[k]], lu.lab[s.right[k]]
            if part_l != part_r:
                out[name][0][k] = math.inf      # the rails are in two separate parts
                continue
            jobs.setdefault(int(part_l), []).append((name, k))
    for part, items in jobs.items():
        ix, loc, sub = lu.idx[part], lu.loc, lu.subs[part]
        in_part = np.zeros(lu.n, dtype=bool)
        in_part[ix] = True
        for start in range(0, len(items), BATCH):
            chunk = items[start:start + BATCH]
            rhs = np.zeros((len(ix), len(chunk)))
            cols = np.arange(len(chunk))
            li = np.array([loc[topo.sections[n].left[k]] for n, k in chunk])
            ri = np.array([loc[topo.sections[n].right[k]] for n, k in chunk])
            rhs[li, cols] += 1.0
            rhs[ri, cols] -= 1.0
            z = lu.lus[part].solve(rhs)
            res = sub @ z - rhs
            if res.size and float(np.max(np.abs(res))) > 1e-9:
                raise SingularUpdate("a coin-test solve does not meet Kirchhoff's current law")
            for col, (n, k) in enumerate(chunk):
                s = topo.sections[n]
                q_self, q_next, t = out[n]
                q_self[k] = z[li[col], col] - z[ri[col], col]
                if k + 1 < len(s.xs_m) and in_part[s.left[k + 1]] and in_part[s.right[k + 1]]:
                    q_next[k] = (z[loc[s.left[k + 1]], col] - z[loc[s.right[k + 1]], col])
                for di, d in enumerate(chains[n]):
                    for li_, (o, i, g) in enumerate(leads[d]):
                        if in_part[o] and in_part[i]:
                            t[k, 2 * di + li_] = g * (z[loc[o], col] - z[loc[i], col])
    return out


def thevenin_points(c: Circuit, x0: np.ndarray, chains: dict, points_m: dict):
    """Thevenin equivalent of a coin at every point of ``points_m`` (module docstring).

    Parameters
    ----------
    c
        The circuit (its base state: every device closed, no train).
    x0
        The base node voltages.
    chains
        ``{section: chain of devices}`` of the sections to test.
    points_m
        ``{section: positions}``, each sorted, within the section.

    Yields
    ------
    (section, at_m, v_oc_v, r_th_ohm, transfers)
        ``transfers`` holds, per device of the section's chain, the larger lead
        current per ampere of coin current.
    """
    topo = c.topo
    leads = _lead_vectors(c, {d for ch in chains.values() for d in ch})
    terms = _junction_terms(c, chains, leads)
    for name, chain in chains.items():
        s = topo.sections[name]
        xs = np.asarray(s.xs_m, dtype=float)
        at = np.asarray(points_m.get(name, xs), dtype=float)
        if len(at) == 0:
            continue
        q_self, q_next, t = terms[name]
        v_j = x0[s.left] - x0[s.right]
        if len(xs) == 1:
            k = np.zeros(len(at), dtype=int)
            frac = np.zeros(len(at))
            dx = np.zeros(len(at))
            k1 = k
        else:
            k = np.clip(np.searchsorted(xs, at, side="right") - 1, 0, len(xs) - 2)
            dx = xs[k + 1] - xs[k]
            frac = np.clip((at - xs[k]) / dx, 0.0, 1.0)
            k1 = k + 1
        a, b = 1.0 - frac, frac
        r_th = (2.0 * s.r_per_m_ohm * dx * a * b + a * a * q_self[k]
                + 2.0 * a * b * q_next[k] + b * b * q_self[k1])
        r_th = np.where(np.isnan(r_th), np.inf, r_th)     # rails in two separate parts
        v_oc = a * v_j[k] + b * v_j[k1]
        lead_i = np.abs(a[:, None] * t[k] + b[:, None] * t[k1])
        per_dev = lead_i.reshape(len(at), len(chain), 2).max(axis=2)
        for p in range(len(at)):
            yield (name, float(at[p]), float(v_oc[p]), float(r_th[p]),
                   tuple(float(x) for x in per_dev[p]))


def _span(plist) -> str:
    xs = sorted(p.at_m for p in plist)
    if len(xs) == 1:
        return f"{xs[0]:.2f} m"
    return f"{xs[0]:.2f}-{xs[-1]:.2f} m ({len(xs)} points)"
