"""Export a circuit's present state as a SPICE netlist and run it in ngspice.

The netlist is the physical circuit, built independently of the solver's
formulation: supplies as a voltage source behind a resistor (Thevenin form, a
current source in constant-current mode), every branch as a resistor, a load
or short inside a rail segment as the split segment with its midpoint nodes,
and a 0 V source in series with every element whose current is compared
(ngspice reports a voltage source's branch current). Each connected part is
tied to the datum by one resistor, which carries no current. ``ngspice -b``
runs ``.op`` and prints the branch currents with 15 digits.
"""
from __future__ import annotations

import math
import re
import shutil
import subprocess
import tempfile
from pathlib import Path

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from sim.circuit.network import Circuit


def to_netlist(c: Circuit, title: str = "railfault circuit") -> tuple[str, dict]:
    """``(netlist_text, probes)``; ``probes`` maps a key to the ammeter's name.

    Keys: ``("lead", device, 0|1)`` (current from the output terminal into the
    lead), ``("supply", name)`` (current out of the ``+`` node), ``("bridge",
    key, i)``, ``("load", key)``, ``("short", key)`` (current left rail to right).
    """
    topo = c.topo
    lines = [f"* {title}"]
    edges: list[tuple[str, str]] = []
    probes: dict = {}
    count = [0]

    def nn(i):
        return f"n{int(i)}"

    def fresh(prefix):
        count[0] += 1
        return f"{prefix}{count[0]}"

    def res(a, b, r):
        lines.append(f"R{fresh('')} {a} {b} {float(r):.17g}")
        edges.append((a, b))

    def meter(key, a, b, r):
        mid = fresh("m")
        name = fresh("vam")
        lines.append(f"{name} {a} {mid} 0")
        edges.append((a, mid))
        res(mid, b, r)
        probes[key] = name

    # segments split by interior loads/shorts
    interior: dict = {}
    for kind, table in (("load", c.loads), ("short", c.shorts)):
        for key, a in table.items():
            if len(a.nodes) == 4:
                interior.setdefault((a.section, a.k), []).append((a.t, kind, key, a))
    skip = set()
    for (section, k) in interior:
        s = topo.sections[section]
        skip.add((int(s.left[k]), int(s.left[k + 1])))
        skip.add((int(s.right[k]), int(s.right[k + 1])))
    for u, v, r in zip(topo.perm_a, topo.perm_b, topo.perm_r_ohm):
        if (int(u), int(v)) in skip or (int(v), int(u)) in skip:
            continue
        res(nn(u), nn(v), float(r))
    for si, ((section, k), members) in enumerate(interior.items()):
        s = topo.sections[section]
        r_seg = 1.0 / s.seg_g_s(k)
        ts = sorted({m[0] for m in members})
        for rail, arr in (("l", s.left), ("r", s.right)):
            chain = [nn(arr[k])] + [f"x{si}_{rail}{i}"
                                    for i in range(len(ts))] + [nn(arr[k + 1])]
            fr = [0.0] + ts + [1.0]
            for i in range(len(chain) - 1):
                res(chain[i], chain[i + 1], r_seg * (fr[i + 1] - fr[i]))
        for t, kind, key, a in members:
            i = ts.index(t)
            meter((kind, key), f"x{si}_l{i}", f"x{si}_r{i}", 1.0 / a.y_s)
    # supplies
    for name, s in topo.supplies.items():
        on, v_emf_v, i_cc_a = c.supply_state(name)
        if math.isfinite(i_cc_a):
            cs = fresh("isrc")
            lines.append(f"I{cs} {nn(s.n)} {nn(s.p)} DC {i_cc_a:.17g}")
            edges.append((nn(s.n), nn(s.p)))
            probes[("supply", name)] = None
            probes[("supply_cc", name)] = i_cc_a
        else:
            emf = v_emf_v if on else 0.0
            internal = fresh("e")
            lines.append(f"V{fresh('src')} {internal} {nn(s.n)} DC {emf:.17g}")
            edges.append((internal, nn(s.n)))
            meter(("supply", name), internal, nn(s.p), float(s.r_ohm))
    # device leads
    for name, d in topo.devices.items():
        closed, swapped = c.device_state(name)
        if not closed:
            continue
        ta, tb = (d.b, d.a) if swapped else (d.a, d.b)
        meter(("lead", name, 0), nn(d.o_l), nn(ta), 1.0 / d.g_lead_s)
        meter(("lead", name, 1), nn(d.o_r), nn(tb), 1.0 / d.g_lead_s)
    for key, f in topo.feeders.items():
        if key in c.feeders_open:
            continue
        for u, v in f.pairs:
            res(nn(u), nn(v), 1.0 / f.g_s)
    for key, (_, _, g, pairs, _) in c.bridges.items():
        for i, (u, v) in enumerate(pairs):
            if u != v:
                meter(("bridge", key, i), nn(u), nn(v), 1.0 / g)
    for kind, table in (("load", c.loads), ("short", c.shorts)):
        for key, a in table.items():
            if len(a.nodes) == 2:
                meter((kind, key), nn(a.nodes[0]), nn(a.nodes[1]), 1.0 / a.y_s)
    # one datum tie per connected part
    names = sorted({x for e in edges for x in e})
    idx = {x: i for i, x in enumerate(names)}
    if names:
        g = coo_matrix((np.ones(len(edges)), ([idx[a] for a, _ in edges], [idx[b] for _, b in edges])),
                       shape=(len(names), len(names)))
        n_c, lab = connected_components(g, directed=False)
        for comp in range(n_c):
            first = names[int(np.nonzero(lab == comp)[0][0])]
            lines.append(f"Rdatum{comp} {first} 0 1.0")
    meters = [v for k, v in probes.items() if isinstance(v, str)]
    lines.append(".options gmin=1e-30")
    lines.append(".control")
    lines.append("set numdgt=15")
    lines.append("op")
    for i in range(0, len(meters), 8):
        lines.append("print " + " ".join(f"i({m})" for m in meters[i:i + 8]))
    lines.append(".endc")
    lines.append(".end")
    return "\n".join(lines) + "\n", probes


def run_ngspice(text: str, ngspice: str | None = None) -> dict[str, float]:
    """Run a netlist in ``ngspice -b``; the printed currents by ammeter name."""
    exe = ngspice or shutil.which("ngspice")
    if exe is None:
        raise FileNotFoundError("ngspice is not installed")
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "circuit.cir"
        path.write_text(text)
        out = subprocess.run([exe, "-b", str(path)], capture_output=True, text=True,
                             timeout=120, cwd=tmp)
    values = {}
    for m in re.finditer(r"^i\((\w+)\)\s*=\s*([-+0-9.eE]+)", out.stdout, re.M):
        values[m.group(1)] = float(m.group(2))
    if not values and out.returncode != 0:
        raise RuntimeError(f"ngspice failed: {out.stderr[-2000:]}")
    return values


def spice_currents(c: Circuit, ngspice: str | None = None) -> dict:
    """Currents of the circuit's present state computed by ngspice, keyed like
    :func:`to_netlist`'s probes (supply in constant-current mode: its set current)."""
    text, probes = to_netlist(c)
    raw = run_ngspice(text, ngspice)
    out = {}
    for key, name in probes.items():
        if key[0] == "supply_cc":
            out[("supply", key[1])] = name
        elif isinstance(name, str):
            out[key] = raw[name.lower()]
    return out
