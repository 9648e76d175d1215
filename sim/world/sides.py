"""Which side of which source a rail is joined to, for the present device outputs.

A short is current driven from one side of a source to the other through
wheels or a fault. To tell it from the current that only balances two
districts in phase, or that a train feeds back into a dark district's loads,
the episode rules (:func:`sim.world.episodes.short_currents`) need the *side*
of every rail a short path touches:

* ``("+", supply)`` or ``("0", supply)``: the rail is joined to that side of
  the supply through feeders and closed device outputs (a booster's phase and
  every swap on the way decide which side);
* ``("dark", device, k)``: the rail hangs on output terminal ``k`` (0: ``out
  1``, 1: ``out 2``) of a device whose output is open (tripped, dropped out, in
  a swap's dead time): its district is dark, joined to a source only through
  whatever wheels or loads stand on it;
* ``("dark", "rail", n)``: a rail with no closed feeder at all.

How
---
Rails, rail joiners and supply and feed wires are permanent conductors: their
connected parts (the *static components*) are found once from the circuit's
topology (:class:`sim.circuit.build.Topology`). Feeders join a rail's
component to a device's output terminal; a closed device joins its output
terminals to its inputs (straight or exchanged by a swap), and a device's
inputs lie in the component of its source's output terminals, or, for a
booster, of its supply's ``+`` and ``0`` nodes. A rail's side is found by
walking up that chain from its feeders with the device outputs of the moment
(a few steps; the engine asks once per circuit state). A rail component fed
from several devices (districts bonded to each other) takes the first that
leads to a live side.
"""
from __future__ import annotations

from typing import Callable, Hashable, Mapping, Optional

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

__all__ = ["Sides", "is_live", "output_reader"]

#: Output of a device not yet applied: closed, not swapped (as the engine's).
_CLOSED = (True, False)


def is_live(side: Hashable) -> bool:
    """Whether a side is joined to a source (``"+"`` or ``"0"`` of a supply)."""
    return side[0] != "dark"


class Sides:
    """Sides of rail nodes (module notes) for one built circuit.

    Parameters
    ----------
    topo : sim.circuit.build.Topology
        The circuit's network.
    """

    def __init__(self, topo):
        self.topo = topo
        n = topo.n_nodes
        a = np.asarray(topo.perm_a, dtype=np.int64)
        b = np.asarray(topo.perm_b, dtype=np.int64)
        g = coo_matrix((np.ones(len(a)), (a, b)), shape=(n, n))
        _, comp = connected_components(g, directed=False)
        self._comp = comp
        self._supply_side: dict[int, tuple] = {}
        for s in topo.supplies.values():
            self._supply_side[int(comp[s.p])] = ("+", s.name)
            self._supply_side[int(comp[s.n])] = ("0", s.name)
        self._output_of: dict[int, tuple] = {}
        for d in topo.devices.values():
            self._output_of.setdefault(int(comp[d.o_l]), (d.name, 0))
            self._output_of.setdefault(int(comp[d.o_r]), (d.name, 1))
        self._feeders: dict[int, list] = {}
        for key, f in topo.feeders.items():
            for k, (_term, rail) in enumerate(f.pairs):
                self._feeders.setdefault(int(comp[rail]), []).append((key, f.device, k))
        self._depth = len(topo.devices) + 1

    def comp(self, node: int) -> int:
        """The static component of a node."""
        return int(self._comp[node])

    def section_rails(self, section: str) -> tuple[int, int]:
        """The static components of a section's left and right rail."""
        s = self.topo.sections[section]
        return int(self._comp[s.left[0]]), int(self._comp[s.right[0]])

    def joint_rails(self, joint_index: int, rails: tuple) -> tuple:
        """Per rail of a joint (``"left"``/``"right"`` as seen from its ``ends[0]``),
        the static components of its two rail ends."""
        pairs = self.topo.joints[joint_index].pairs
        return tuple((int(self._comp[pairs[r][0]]), int(self._comp[pairs[r][1]]))
                     for r in rails)

    def side(self, comp: int, output: Callable[[str], tuple],
             feeders_open=(), memo: Optional[dict] = None) -> tuple:
        """The side of a static rail component (module notes).

        ``output(device) -> (closed, swapped)`` gives each device's output of the
        moment; ``feeders_open`` holds the ``(section, index)`` of open feeders;
        ``memo`` keeps the answers of one circuit state.
        """
        if memo is not None:
            got = memo.get(comp)
            if got is not None:
                return got
        out = None
        for key, dev, k in self._feeders.get(comp, ()):
            if key in feeders_open:
                continue
            s = self._up(dev, k, output)
            if is_live(s):
                out = s
                break
            if out is None:
                out = s                     # the first dark one, unless a live one follows
        if out is None:
            out = ("dark", "rail", comp)
        if memo is not None:
            memo[comp] = out
        return out

    def _up(self, dev: str, k: int, output: Callable[[str], tuple]) -> tuple:
        """The side output terminal ``k`` of ``dev`` is joined to."""
        devices = self.topo.devices
        for _ in range(self._depth):
            closed, swapped = output(dev)
            if not closed:
                return ("dark", dev, k)
            d = devices[dev]
            node = d.a if (k == 0) != bool(swapped) else d.b
            c = int(self._comp[node])
            s = self._supply_side.get(c)
            if s is not None:
                return s
            nxt = self._output_of.get(c)
            if nxt is None:                 # an unfed device (RF-CKT-002)
                return ("dark", dev, k)
            dev, k = nxt
        return ("dark", dev, k)             # (feed cycles are refused by the loader)


def output_reader(outputs: Mapping[str, tuple]) -> Callable[[str], tuple]:
    """``output(device) -> (closed, swapped)`` from the engine's table of applied
    outputs (a device not yet in it is closed and straight)."""
    get = outputs.get

    def output(dev: str) -> tuple:
        return get(dev, _CLOSED)
    return output
