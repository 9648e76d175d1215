"""Incremental solving: low-rank updates of one factorization of the base network.

Method
------
The base network (every device closed and straight, every feeder closed, no
bridge, load or short, one reference "anchor" per connected part) has the
nodal conductance matrix ``A0``, factored once by sparse LU (SuperLU,
:func:`scipy.sparse.linalg.splu`). Every change the engine makes touches a
few *port* nodes ``P``: a bridge joins two rail-end nodes, a device switching
(open, swapped) changes the conductances among its four terminal nodes, a
feeder opening removes two conductors, a constant-current supply drops its
internal conductance, and the anchors move when parts split or join. The sum
of all active changes is ``A = A0 + E_P D E_P^T`` with ``D`` a small dense
symmetric ``k x k`` matrix. By the Woodbury identity (Sherman-Morrison-Woodbury,
in the form that does not need ``D`` to be invertible)

    x = x0 - Z M,    (I + D Z_PP) M = D x0_P,    Z = A0^-1 E_P,

where ``x0 = sum_s J_s A0^-1 b_s`` is the base solution for the supplies'
source currents ``J_s`` (kept as one precomputed vector per supply, so an EMF
change costs nothing). ``Z``'s columns are cached per port node (solved once,
the first time a node becomes a port). Because ``A0`` is symmetric,
``A0^-1[Q, P] = Z[Q, :]``: the voltages at the fixed output nodes ``Q``
(device terminals, supply nodes) come from the cached columns too. An update
therefore costs ``O(k^3 + k |Q|)``: it does not grow with the size of the
layout, only with the number of simultaneous changes and of devices reported.
When ``k`` exceeds :data:`K_MAX` the circuit falls back to a full sparse solve.

Re-factoring
------------
A low-rank update is exact in exact arithmetic but loses digits when it
cancels a large base current (a device opening on a short, a district left
floating). :meth:`sim.circuit.network.Circuit.update` therefore re-factors,
with the present *switching* state (open and swapped devices, open feeders,
constant-current supplies) as the new base, when a part floats, when the
update's port currents exceed its result's largest current by ``1e4``, or when
the Kirchhoff check fails; the last few bases are kept. Bridges, loads and
shorts always stay low-rank changes.

Kirchhoff's current law
-----------------------
For the updated network, ``A x - b = E_P (D x_P - M)`` exactly when the base
solves are exact, so the KCL residual of every node is the port residual
``D x_P - M`` (in amperes), plus the residual of the cached base solves, which
is checked when each column is computed.

Loads and shorts
----------------
A load or short at ``at_m`` inside a rail segment is handled exactly (no
snapping): the segment's two rails with the loads' midpoint nodes are reduced
onto the segment's four end nodes (a Schur complement, :func:`segment_star`),
and ``D`` takes the difference from the plain segment. Positions within
``1e-6`` of a segment's length from a node are placed at that node.
"""
from __future__ import annotations

from collections import OrderedDict
from typing import Iterable

import numpy as np
from scipy.sparse.linalg import splu

#: Above this many port nodes an update is done as a full sparse solve instead.
K_MAX = 400

#: Largest number of cached base columns (each one n floats).
CACHE_MAX = 20000

#: A load this close (as a fraction of its segment) to a node is placed at the node.
SNAP_FRACTION = 1.0e-6


class SingularUpdate(ArithmeticError):
    """The updated system is singular (an ill-posed combination of changes)."""


def segment_star(g_left_s: float, g_right_s: float, items: list[tuple[float, float]]):
    """Reduce a segment with rail-to-rail loads onto its four end nodes.

    Parameters
    ----------
    g_left_s, g_right_s
        Conductances of the whole segment of each rail.
    items
        ``(t, y_s)``: a load of conductance ``y_s`` across the rails at fraction
        ``0 < t < 1`` of the segment, in any order.

    Returns
    -------
    D : ndarray (4, 4)
        Conductance change on the end nodes ``[left_0, left_1, right_0, right_1]``
        (the reduced segment minus the plain segment).
    Rv : ndarray (len(items), 4)
        ``Rv[i] @ v_ends`` is the rail-to-rail voltage (left minus right) at item ``i``.
    """
    ts = sorted({t for t, _ in items})
    m = len(ts)
    y_at = np.zeros(m)
    pos = {t: i for i, t in enumerate(ts)}
    for t, y in items:
        y_at[pos[t]] += y
    size = 4 + 2 * m
    K = np.zeros((size, size))

    def add(i, j, g):
        K[i, i] += g
        K[j, j] += g
        K[i, j] -= g
        K[j, i] -= g

    for base, g, start, stop in ((4, g_left_s, 0, 1), (4 + m, g_right_s, 2, 3)):
        chain = [start] + [base + i for i in range(m)] + [stop]
        fr = [0.0] + ts + [1.0]
        for i in range(len(chain) - 1):
            add(chain[i], chain[i + 1], g / (fr[i + 1] - fr[i]))
    for i in range(m):
        if y_at[i] > 0.0:
            add(4 + i, 4 + m + i, y_at[i])
    kbb, kbi, kii = K[:4, :4], K[:4, 4:], K[4:, 4:]
    sol = np.linalg.solve(kii, kbi.T)          # K_II^-1 K_IB
    S = kbb - kbi @ sol
    plain = np.zeros((4, 4))
    plain[[0, 1], [0, 1]] = g_left_s
    plain[[0, 1], [1, 0]] = -g_left_s
    plain[[2, 3], [2, 3]] = g_right_s
    plain[[2, 3], [3, 2]] = -g_right_s
    vi = -sol                                   # internal voltages per end voltage
    diff = vi[:m] - vi[m:]
    Rv = np.array([diff[pos[t]] for t, _ in items]).reshape(len(items), 4)
    D = S - plain
    return 0.5 * (D + D.T), Rv


class Woodbury:
    """Low-rank update solver on a factored symmetric base matrix (module docstring).

    Parameters
    ----------
    a0 : scipy.sparse matrix (n, n)
        The base conductance matrix, symmetric and non-singular.
    inj : ndarray (n, S)
        Unit source-current injections, one column per supply.
    q_nodes : ndarray of int
        Output nodes whose voltages every solve returns.
    """

    def __init__(self, a0, inj: np.ndarray, q_nodes: np.ndarray):
        self.a0 = a0.tocsc()
        self.n = a0.shape[0]
        self.lu = splu(self.a0)
        self.q = np.asarray(q_nodes, dtype=np.int64)
        self.u = self.lu.solve(np.asarray(inj, dtype=float)) if inj.shape[1] else np.zeros((self.n, 0))
        if inj.shape[1]:
            self._check_base(self.u, inj)
        self.uq = self.u[self.q]
        self._cols: OrderedDict[int, np.ndarray] = OrderedDict()
        self._colq: dict[int, np.ndarray] = {}

    def _check_base(self, z: np.ndarray, rhs: np.ndarray) -> None:
        res = self.a0 @ z - rhs
        scale = max(1.0, float(np.max(np.abs(rhs))))
        if res.size and float(np.max(np.abs(res))) > 1e-9 * scale:
            raise SingularUpdate("a base solve does not meet Kirchhoff's current law")

    def columns(self, nodes: Iterable[int]) -> None:
        """Make sure the base columns of ``nodes`` are cached (one batched solve)."""
        missing = [int(p) for p in nodes if int(p) not in self._cols]
        if not missing:
            for p in nodes:
                self._cols.move_to_end(int(p))
            return
        rhs = np.zeros((self.n, len(missing)))
        rhs[missing, np.arange(len(missing))] = 1.0
        z = self.lu.solve(rhs)
        self._check_base(z, rhs)
        for i, p in enumerate(missing):
            col = np.ascontiguousarray(z[:, i])
            self._cols[p] = col
            self._colq[p] = col[self.q]
        while len(self._cols) > CACHE_MAX:
            old, _ = self._cols.popitem(last=False)
            self._colq.pop(old, None)

    def base_column(self, node: int) -> np.ndarray:
        self.columns([node])
        return self._cols[int(node)]

    def solve(self, ports: np.ndarray, d: np.ndarray, j: np.ndarray):
        """Voltages at ``Q`` and at ``ports`` with the change ``D`` on ``ports``.

        Returns
        -------
        (v_q, v_p, residual_a, m_a)
            ``residual_a`` is the KCL residual at the ports (amperes), ``m_a`` the
            port currents ``M`` of the update (their size against the solution's
            currents measures the cancellation).
        """
        x0q = self.uq @ j
        k = len(ports)
        if k == 0:
            return x0q, np.zeros(0), np.zeros(0), np.zeros(0)
        self.columns(ports)
        zpp = np.empty((k, k))
        zpq = np.empty((k, len(self.q)))
        for i, p in enumerate(ports):
            zpp[i] = self._cols[int(p)][ports]
            zpq[i] = self._colq[int(p)]
        x0p = self.u[ports] @ j
        mat = np.eye(k) + d @ zpp
        try:
            mvec = np.linalg.solve(mat, d @ x0p)
        except np.linalg.LinAlgError as exc:
            raise SingularUpdate("the updated network is singular") from exc
        if not np.all(np.isfinite(mvec)):
            raise SingularUpdate("the updated network is ill-conditioned")
        v_p = x0p - zpp @ mvec
        v_q = x0q - zpq.T @ mvec
        return v_q, v_p, d @ v_p - mvec, mvec
