"""Incremental solving: low-rank updates of a part-by-part factorization of a base network.

Method
------
The base network (every device closed and straight, every feeder closed, no
bridge, load or short, one reference "anchor" per connected part) has the
nodal conductance matrix ``A0``, factored by sparse LU (SuperLU,
:func:`scipy.sparse.linalg.splu`) *part by part*: ``A0`` is block diagonal
over the connected components of its graph (one per supply with its boosters,
districts and wiring), and :class:`BlockLU` keeps one factor per component.
Every change the engine makes touches a
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
the first time a node becomes a port, on that node's part only). Because
``A0`` is symmetric, ``A0^-1[Q, P] = Z[Q, :]``: the voltages at the fixed
output nodes ``Q`` (device terminals, supply nodes) come from the cached
columns too, and so do the voltages at the nodes of every active load, short
and bridge (:meth:`Woodbury.voltages`). When ``k`` exceeds :data:`K_MAX` the
circuit falls back to a full sparse solve (a guard: folding keeps
``k <= K_FOLD``).

Re-factoring and folding
------------------------
The base is not fixed: it is the *present base state*, a switching state
(open and swapped devices, open feeders, constant-current supplies) together
with the bridges, loads and shorts *folded* into it. The Woodbury change ``D``
is the difference between the present state and the base: the devices whose
state differs, and the additions that differ from the folded ones (an
addition that is unchanged since it was folded costs nothing).
:meth:`sim.circuit.network.Circuit.update` folds the whole present state into
a new base (``A_new = A_base + E_P D E_P^T``, one sparse sum) when

* the change against the base exceeds :data:`K_FOLD` port nodes (many trains
  have moved since the last fold),
* the switching state leaves a part floating,
* the update's port currents exceed its result's largest current by ``1e2``
  (it has cancelled two digits: a device opening on a short, a folded short
  cleared), or
* the Kirchhoff check fails.

Only the connected parts of ``A_new`` that hold a port are re-factored; the
other parts keep their factors, their rows of the base solution and their
cached columns (``Woodbury(..., prev=, touched=)``). The last few bases are
kept per switching state, so toggling back is cheap.

Notes: complexity
-----------------
With ``n_p`` the nodes of one part, ``k`` the port nodes changed since the
last fold (at most :data:`K_FOLD`), ``m`` the active additions and ``|Q|`` the
output nodes:

* an update costs ``O(k^3 + k (|Q| + m))`` dense work, ``O(k_new n_p)`` for
  the columns of the ``k_new`` nodes that became ports in this update
  (triangular solves on their parts only), and ``O(m)`` bookkeeping for the
  output of every load (the additions are kept up to date from the changed
  keys only, so one load moving costs work for that load and its segment);
* a fold costs one sparse sum and a component labelling (``O(nnz(A))``,
  vectorised), a factorization of each touched part (``O(nnz(L_p))`` per
  part) and ``O(k)`` column reuse bookkeeping; it happens at most once per
  ``K_FOLD / 8`` load moves (a load moving across segments touches 8 ports),
  so its cost per update is that divided by the same number.

The dense ``k x k`` solve is re-done from scratch on every update: with
``k <= K_FOLD = 64`` it costs well under a millisecond, less than keeping
an incrementally bordered factor of the capacitance matrix up to date when
one change leaves it (a change leaving needs a rank-one downdate of every
later row).

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
from scipy.sparse import csc_matrix
from scipy.sparse.csgraph import connected_components
from scipy.sparse.linalg import splu

#: Above this many port nodes an update is done as a full sparse solve instead.
K_MAX = 400

#: Largest number of cached base columns (each one n floats).
CACHE_MAX = 20000

#: Memory budget of the column cache, in floats (128 MB).
CACHE_FLOATS = 16_000_000

#: Above this many port nodes against the base, every active change is folded
#: into a new base (the parts they touch re-factored).
K_FOLD = 64

#: A load this close (as a fraction of its segment) to a node is placed at the node.
SNAP_FRACTION = 1.0e-6


#: Backward error allowed of a base solve: the residual of ``A z = b`` against
#: ``|A|_max |z|_max + |b|_max`` (a relative measure; an absolute bound would
#: refuse healthy solves of stiff networks, whose conductances reach 1e5 S).
SOLVE_RTOL = 1e-12


class SingularUpdate(ArithmeticError):
    """The updated system is singular (an ill-posed combination of changes)."""


def _check_solve(sub, z: np.ndarray, rhs: np.ndarray) -> None:
    """Raise :class:`SingularUpdate` unless ``sub @ z`` meets ``rhs`` (Kirchhoff's law).

    The test is on the normwise backward error (N. J. Higham, *Accuracy and
    Stability of Numerical Algorithms*, 2nd ed., SIAM 2002, section 7.1, the
    Rigal-Gaches residual bound): ``max|sub z - rhs| <= SOLVE_RTOL (max|sub|
    max|z| + max|rhs|)``, so the tolerance scales with the problem instead of
    being a fixed number of amperes. A solve that is not finite fails.
    """
    if not z.size:
        return
    z_max = float(np.max(np.abs(z)))
    if not np.isfinite(z_max):
        raise SingularUpdate("a base solve is not finite: the part is singular")
    res = float(np.max(np.abs(sub @ z - rhs)))
    a_max = float(np.max(np.abs(sub.data))) if sub.nnz else 0.0
    b_max = float(np.max(np.abs(rhs))) if rhs.size else 0.0
    if not res <= SOLVE_RTOL * (a_max * z_max + b_max):
        raise SingularUpdate("a base solve does not meet Kirchhoff's current law "
                             f"(residual {res:.3e} A)")


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


class BlockLU:
    """Sparse LU of a block-diagonal matrix, one factor per connected part.

    Parameters
    ----------
    a : scipy.sparse matrix (n, n)
        Symmetric, non-singular on every connected component of its graph.
    prev : BlockLU, optional
        The factorization of a matrix that differs from ``a`` only in entries
        among the nodes ``touched``: every component of ``a`` holding no
        touched node is a component of ``prev`` with the same entries, and
        its factor is reused (module docstring, Notes: complexity).
    touched : array of int
        Nodes whose rows and columns changed against ``prev``.
    """

    def __init__(self, a, prev: "BlockLU" = None, touched=()):
        a = a.tocsr()
        n = a.shape[0]
        self.n = n
        n_c, lab = connected_components(a, directed=False)
        self.lab = lab
        order = np.argsort(lab, kind="stable")
        bounds = np.searchsorted(lab[order], np.arange(n_c + 1))
        self.idx = [order[bounds[c]:bounds[c + 1]] for c in range(n_c)]
        self.loc = np.empty(n, dtype=np.int64)       # a node's index within its part
        self.loc[order] = np.arange(n) - bounds[lab[order]]
        hot = np.zeros(n_c, dtype=bool)
        touched = np.asarray(touched, dtype=np.int64)
        if touched.size:
            hot[lab[touched]] = True
        self.reused = np.zeros(n_c, dtype=bool)
        self.subs: list = [None] * n_c
        self.lus: list = [None] * n_c
        for c in range(n_c):
            ix = self.idx[c]
            if prev is not None and not hot[c]:
                pc = int(prev.lab[ix[0]])
                if len(prev.idx[pc]) == len(ix):
                    self.subs[c], self.lus[c] = prev.subs[pc], prev.lus[pc]
                    self.reused[c] = True
                    continue
            sub = self._sub(a, c)
            try:
                self.lus[c] = splu(sub)
            except RuntimeError as exc:
                raise SingularUpdate("an ill-posed part: the base system is singular") from exc
            self.subs[c] = sub
        self.n_factored = int(n_c - self.reused.sum())

    def _sub(self, a, c: int):
        """The part ``c`` of the CSR matrix ``a`` (its rows hold only its own columns)."""
        ix = self.idx[c]
        start, stop = a.indptr[ix], a.indptr[ix + 1]
        cnt = stop - start
        offs = np.cumsum(cnt) - cnt
        sel = np.repeat(start - offs, cnt) + np.arange(int(cnt.sum()))
        rows = np.repeat(np.arange(len(ix)), cnt)
        return csc_matrix((a.data[sel], (rows, self.loc[a.indices[sel]])),
                          shape=(len(ix), len(ix)))

    def unit_columns(self, nodes: list[int]) -> list[np.ndarray]:
        """``A^-1 e_p`` for every node ``p`` of ``nodes`` (full length, zero outside
        its part), one batched solve per part; each solve's Kirchhoff residual is
        checked (:func:`_check_solve`, raises :class:`SingularUpdate`)."""
        nodes = np.asarray(nodes, dtype=np.int64)
        comps = self.lab[nodes]
        out: list = [None] * len(nodes)
        for c in np.unique(comps):
            which = np.nonzero(comps == c)[0]
            ix = self.idx[c]
            rhs = np.zeros((len(ix), len(which)))
            rhs[self.loc[nodes[which]], np.arange(len(which))] = 1.0
            z = self.lus[c].solve(rhs)
            _check_solve(self.subs[c], z, rhs)
            for i, w in enumerate(which):
                col = np.zeros(self.n)
                col[ix] = z[:, i]
                out[w] = col
        return out

    def solve(self, rhs: np.ndarray, check: bool = False) -> np.ndarray:
        """``A^-1 rhs`` part by part (only the parts where ``rhs`` is non-zero).

        With ``check`` the Kirchhoff residual of every part's solve is checked
        (:func:`_check_solve`, raises :class:`SingularUpdate`).
        """
        rhs = np.asarray(rhs, dtype=float)
        out = np.zeros_like(rhs)
        nz = rhs != 0.0 if rhs.ndim == 1 else np.any(rhs != 0.0, axis=1)
        for c in np.unique(self.lab[nz]):
            ix = self.idx[c]
            part = np.ascontiguousarray(rhs[ix])
            z = self.lus[c].solve(part)
            if check:
                _check_solve(self.subs[c], z, part)
            out[ix] = z
        return out


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
    prev : Woodbury, optional
        A solver whose base differs from ``a0`` only among the nodes
        ``touched``: the factors, base solutions and cached columns of the
        parts that hold no touched node are taken over (re-factoring only the
        parts touched).
    touched : array of int
        See ``prev``.
    """

    def __init__(self, a0, inj: np.ndarray, q_nodes: np.ndarray, prev: "Woodbury" = None,
                 touched=()):
        self.a0 = a0
        self.n = a0.shape[0]
        self.lu = BlockLU(a0, prev.lu if prev is not None else None, touched)
        self.q = np.asarray(q_nodes, dtype=np.int64)
        inj = np.asarray(inj, dtype=float)
        self._cols: OrderedDict[int, np.ndarray] = OrderedDict()
        self._colq: dict[int, np.ndarray] = {}
        self._cache_max = max(64, min(CACHE_MAX, int(CACHE_FLOATS // max(self.n, 1))))
        if prev is None:
            self.u = self.lu.solve(inj, check=True) if inj.shape[1] else np.zeros((self.n, 0))
        else:
            self.u = prev.u.copy()
            fresh = np.nonzero(~self.lu.reused)[0]
            if fresh.size:
                rows = np.concatenate([self.lu.idx[c] for c in fresh])
                part = np.zeros_like(inj)
                part[rows] = inj[rows]
                self.u[rows] = self.lu.solve(part, check=True)[rows]
            keep = self.lu.reused[self.lu.lab[np.fromiter(prev._cols, dtype=np.int64,
                                                          count=len(prev._cols))]] \
                if prev._cols else np.zeros(0, dtype=bool)
            for p, ok in zip(list(prev._cols), keep):
                if ok:
                    self._cols[p] = prev._cols[p]
                    self._colq[p] = prev._colq[p]
        self.uq = self.u[self.q]
        self._last = (np.zeros(0, dtype=np.int64), np.zeros(0))

    def columns(self, nodes: Iterable[int]) -> None:
        """Make sure the base columns of ``nodes`` are cached (one batched solve per part)."""
        nodes = [int(p) for p in nodes]
        missing = [p for p in nodes if p not in self._cols]
        for p in nodes:
            if p in self._cols:
                self._cols.move_to_end(p)
        if not missing:
            return
        for p, col in zip(missing, self.lu.unit_columns(missing)):
            self._cols[p] = col
            self._colq[p] = col[self.q]
        while len(self._cols) > self._cache_max:
            old, _ = self._cols.popitem(last=False)
            self._colq.pop(old, None)

    def base_column(self, node: int) -> np.ndarray:
        self.columns([node])
        return self._cols[int(node)]

    def voltages(self, nodes: np.ndarray, j: np.ndarray) -> np.ndarray:
        """Node voltages of the last :meth:`solve` at any ``nodes`` (``O(k |nodes|)``)."""
        nodes = np.asarray(nodes, dtype=np.int64)
        v = self.u[nodes] @ j if self.u.shape[1] else np.zeros(len(nodes))
        ports, mvec = self._last
        if len(ports):
            z = np.empty((len(ports), len(nodes)))
            for i, p in enumerate(ports):
                z[i] = self._cols[int(p)][nodes]
            v = v - z.T @ mvec
        return v

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
        self._last = (np.zeros(0, dtype=np.int64), np.zeros(0))
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
        self._last = (np.asarray(ports, dtype=np.int64), mvec)
        return v_q, v_p, d @ v_p - mvec, mvec
