"""The coin test everywhere at once: prospective short-circuit current map.

For every section, at rail nodes no more than ``step_m`` apart and at every
feeder and end, a coin of ``r_coin_ohm`` (default 0.01 ohm, common practice
for a coin or screwdriver blade across the rails) is laid across the rails.
By Thevenin's theorem its current is

    I = V_oc / (R_th + R_coin),   R_th = (e_L - e_R)^T G^-1 (e_L - e_R),

with ``V_oc`` the open-circuit rail-to-rail voltage at the point and ``R_th``
the driving-point resistance between the two rail nodes of the base network
``G`` (every device closed, no train). All points come from one LU
factorization of ``G``, with the right-hand sides ``e_L - e_R`` solved in
batches; the same columns give, by superposition, the current the coin drives
through every device on its path (``g (z_out - z_in)`` per lead), so a device
in a mis-wired network is judged by the current it really carries.

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
RF-FAULT-004 (error)   a device's sensing full scale is at or below its trip
                       threshold: the clamped reading never trips.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from sim.circuit.build import build_topology
from sim.circuit.network import Circuit
from sim.circuit.incremental import Woodbury
from sim.model import Finding, Scenario

#: Coin resistance of the coin test (ohm): common practice.
R_COIN_OHM = 0.01

#: Right-hand sides solved together.
BATCH = 256

#: Largest boundary (nodes) for which the reduced inverse is formed densely.
DENSE_MAX = 5000


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
    """Rows of the ``fault_current`` list, findings and the points behind them."""

    rows: list
    findings: list
    points: list = field(default_factory=list)
    district_of: dict = field(default_factory=dict)
    step_m: float = 0.5
    r_coin_ohm: float = R_COIN_OHM


def device_trip(scn: Scenario, name: str):
    """``(i_above_a, full_scale_a)`` of a booster, breaker or reverser."""
    dev = scn.device(name)
    return dev.trip.i_above_a, dev.sense.full_scale_a


def supply_of(scn: Scenario, device: str) -> Optional[str]:
    b = scn.booster_of(device)
    return scn.boosters[b].supply if b is not None else None


def section_districts(scn: Scenario, layout=None) -> dict:
    """The feeding device of every section (``None`` if unfed).

    A section with ``feed`` ``None`` takes the device of the first fed section
    it is bonded to (breadth first over joints with ``gaps: none``), the rule of
    :mod:`sim.layout`; ``layout.district`` is used when a layout is given.
    """
    if layout is not None and hasattr(layout, "district"):
        return {s: layout.district(s) for s in scn.track.sections}
    adj: dict = {s: [] for s in scn.track.sections}
    for j in scn.track.joints:
        if j.gaps == "none":
            a, b = j.ends[0].section, j.ends[1].section
            if a in adj and b in adj:
                adj[a].append(b)
                adj[b].append(a)
    out = {}
    for s, sec in scn.track.sections.items():
        if sec.feed is not None:
            out[s] = sec.feed
            continue
        seen, queue, found = {s}, [s], None
        while queue and found is None:
            nxt = []
            for u in queue:
                for w in adj[u]:
                    if w in seen:
                        continue
                    seen.add(w)
                    if scn.track.sections[w].feed is not None:
                        found = scn.track.sections[w].feed
                        break
                    nxt.append(w)
                if found is not None:
                    break
            queue = nxt
        out[s] = found
    return out


def chain_of(scn: Scenario, device: str) -> tuple:
    """The protection devices a short fed by ``device`` passes through, nearest first."""
    return tuple(d for d in (device,) + scn.upstream(device)
                 if scn.device_kind(d) in ("booster", "breaker", "reverser"))


def fault_map(scn: Scenario, layout=None, step_m: float = 0.5,
              r_coin_ohm: float = R_COIN_OHM, circuit: Optional[Circuit] = None) -> FaultMap:
    """Prospective coin current at every point of every district (module docstring)."""
    c = circuit or Circuit(build_topology(scn, grid_m=step_m))
    topo = c.topo
    findings: list[Finding] = [f for f in topo.findings]
    wb = c._orig.wb or Woodbury(c._a0, c._inj, c.q_nodes)
    c._orig.wb = wb
    j = np.where(c._sup_on, c._sup_v * c._sg, 0.0)
    x0 = wb.u @ j
    districts = section_districts(scn, layout)
    devices = topo.devices

    # device-level findings ------------------------------------------------
    for name in devices:
        i_above, full_scale = device_trip(scn, name)
        kind = scn.device_kind(name)
        table = {"booster": "boosters", "breaker": "breakers", "reverser": "reversers"}[kind]
        sup = supply_of(scn, name)
        lim = scn.supplies[sup].i_limit_a if sup in scn.supplies else math.inf
        if lim <= i_above:
            findings.append(Finding(
                "error", "RF-FAULT-003", scn.where(table, name, "trip", "above"),
                f"{kind} {name} trips above {i_above:g} A but its supply {sup} is limited at "
                f"{lim:g} A: the trip threshold is unreachable and a short will not trip it",
                f"set {name}'s trip below {lim:g} A or use a supply that can deliver more"))
        if full_scale <= i_above:
            findings.append(Finding(
                "error", "RF-FAULT-004", scn.where(table, name, "sense", "full_scale"),
                f"{kind} {name} reads at most {full_scale:g} A (sensing full scale) but trips "
                f"above {i_above:g} A: the clamped reading never trips",
                f"raise {name}'s sensing full scale above {i_above:g} A"))

    # points ------------------------------------------------------------------
    chains = {name: chain_of(scn, districts[name]) for name, snet in topo.sections.items()
              if districts.get(name) in devices and chain_of(scn, districts[name])}
    thev = thevenin_points(c, x0, chains)
    points: list[FaultPoint] = []
    rows = []
    for section, at_m, v_oc, r_th, transfers in thev:
        chain = chains[section]
        i_s = v_oc / (r_th + r_coin_ohm)
        dev_i, eff_i, trips = [], [], []
        for d, t in zip(chain, transfers):
            i_dev = float(abs(i_s) * t)
            sup = supply_of(scn, d)
            lim = scn.supplies[sup].i_limit_a if sup in scn.supplies else math.inf
            i_eff = min(i_dev, lim)
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
    for section, plist in by_section.items():
        where = scn.where("track", "sections", section)
        dead = [p for p in plist if not any(p.trips)]
        if dead:
            worst = min(dead, key=lambda p: p.effective_i_a[0])
            d0 = worst.chain[0]
            findings.append(Finding(
                "error", "RF-FAULT-001", where,
                f"a {r_coin_ohm:g} ohm coin across the rails of {section} at "
                f"{_span(dead)} trips no device: at {worst.at_m:.2f} m it draws "
                f"{worst.effective_i_a[0]:.2f} A through {d0} (trips above "
                f"{device_trip(scn, d0)[0]:g} A); a short there will not be cleared and can "
                f"overheat the track",
                f"add a feeder near {worst.at_m:.1f} m, use heavier feeder wire, or lower "
                f"{d0}'s trip threshold"))
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
    return FaultMap(rows, findings, points, districts, step_m, r_coin_ohm)


def _lead_vectors(c: Circuit, chain_devices):
    """Per device: its two lead functionals ``[(node_out, node_in, g), ...]``."""
    out = {}
    for d in chain_devices:
        dn = c.topo.devices[d]
        out[d] = ((dn.o_l, dn.a, dn.g_lead_s), (dn.o_r, dn.b, dn.g_lead_s))
    return out


def thevenin_points(c: Circuit, x0: np.ndarray, chains: dict, direct: bool = False):
    """Thevenin equivalent of every rail node pair of the sections in ``chains``.

    Yields ``(section, at_m, v_oc_v, r_th_ohm, transfers)`` where ``transfers``
    holds, per device of the section's chain, the larger lead current per
    ampere of coin current.

    Method: every interior rail node of a section (not an end) connects only to
    its own section's rail and feeders, so the interior blocks ``G_II`` are
    small and independent. The network is reduced onto the remaining
    *boundary* nodes (section ends, device and supply nodes):
    ``G_red = G_BB - G_BI G_II^-1 G_IB`` (Kron reduction), whose inverse ``W`` is
    the full inverse on the boundary. For a coin at interior nodes with
    ``h = G_II^-1 e`` and ``f = G_BI h``, ``R_th = e^T h + f^T W f``; a lead
    functional ``w`` on boundary nodes transfers ``-f^T W w``. ``W`` is dense
    when the boundary is at most :data:`DENSE_MAX` nodes; otherwise (or with
    ``direct=True``) each point is solved on the full factorization in batches.
    """
    topo = c.topo
    leads = _lead_vectors(c, {d for ch in chains.values() for d in ch})
    g_full = c._a0.tocsr()
    n = g_full.shape[0]
    interior = np.zeros(n, dtype=np.int64)
    for name in chains:
        s = topo.sections[name]
        interior[s.left[1:-1]] += 1
        interior[s.right[1:-1]] += 1
    for name, s in topo.sections.items():
        if name not in chains:
            interior[s.left] += 2
            interior[s.right] += 2
    is_int = interior == 1
    bnodes = np.nonzero(~is_int)[0]
    if direct or len(bnodes) > DENSE_MAX:
        yield from _thevenin_direct(c, x0, chains, leads)
        return
    bpos = -np.ones(n, dtype=np.int64)
    bpos[bnodes] = np.arange(len(bnodes))
    g_red = g_full[bnodes][:, bnodes].toarray()
    local = {}
    for name in chains:
        s = topo.sections[name]
        inodes = np.concatenate([s.left[1:-1], s.right[1:-1]])
        if len(inodes) == 0:
            continue
        rows = g_full[inodes]
        g_ii = rows[:, inodes].toarray()
        nb = np.unique(rows.indices[~is_int[rows.indices]])
        g_ib = rows[:, nb].toarray()
        inv_ii = np.linalg.inv(g_ii)
        sol = inv_ii @ g_ib
        ix = bpos[nb]
        g_red[np.ix_(ix, ix)] -= g_ib.T @ sol
        local[name] = (inodes, inv_ii, g_ib, ix)
    w = np.linalg.inv(0.5 * (g_red + g_red.T))

    def wcol_lead(d):
        return [g * (w[:, bpos[o]] - w[:, bpos[i]]) for o, i, g in leads[d]]

    lead_cols = {d: wcol_lead(d) for d in leads}
    for name, chain in chains.items():
        s = topo.sections[name]
        m = len(s.xs_m)
        lv = x0[s.left] - x0[s.right]
        out_rth = np.zeros(m)
        out_t = np.zeros((len(chain), m))
        # end nodes (boundary)
        for k in (0, m - 1):
            bl, br = bpos[s.left[k]], bpos[s.right[k]]
            out_rth[k] = w[bl, bl] + w[br, br] - 2.0 * w[bl, br]
            for di, d in enumerate(chain):
                out_t[di, k] = max(abs(col[bl] - col[br]) for col in lead_cols[d])
        if name in local:
            inodes, inv_ii, g_ib, ix = local[name]
            p = m - 2
            e = np.zeros((len(inodes), p))
            e[np.arange(p), np.arange(p)] = 1.0
            e[p + np.arange(p), np.arange(p)] = -1.0
            h = inv_ii @ e
            f = g_ib.T @ h
            ws = w[np.ix_(ix, ix)]
            out_rth[1:-1] = np.einsum("ij,ij->j", e, h) + np.einsum("ij,ij->j", f, ws @ f)
            for di, d in enumerate(chain):
                vals = [np.abs(f.T @ col[ix]) for col in lead_cols[d]]
                out_t[di, 1:-1] = np.maximum.reduce(vals)
        for k in range(m):
            yield name, float(s.xs_m[k]), float(lv[k]), float(out_rth[k]), tuple(out_t[:, k])


def _thevenin_direct(c: Circuit, x0: np.ndarray, chains: dict, leads: dict):
    """The same as :func:`thevenin_points`, one full solve per point (batched)."""
    topo = c.topo
    wb = c._orig.wb
    pts = []
    for name in chains:
        s = topo.sections[name]
        for k, x in enumerate(s.xs_m):
            pts.append((name, float(x), int(s.left[k]), int(s.right[k])))
    n = c.n_nodes
    for start in range(0, len(pts), BATCH):
        chunk = pts[start:start + BATCH]
        cols = np.arange(len(chunk))
        li = np.array([p[2] for p in chunk])
        ri = np.array([p[3] for p in chunk])
        rhs = np.zeros((n, len(chunk)))
        rhs[li, cols] += 1.0
        rhs[ri, cols] -= 1.0
        z = wb.lu.solve(rhs)
        r_th = z[li, cols] - z[ri, cols]
        for col, (name, x, l_node, r_node) in enumerate(chunk):
            t = tuple(max(abs(g * (z[o, col] - z[i, col])) for o, i, g in leads[d])
                      for d in chains[name])
            yield name, x, float(x0[l_node] - x0[r_node]), float(r_th[col]), t


def _span(plist) -> str:
    xs = sorted(p.at_m for p in plist)
    if len(xs) == 1:
        return f"{xs[0]:.2f} m"
    return f"{xs[0]:.2f}-{xs[-1]:.2f} m ({len(xs)} points)"
