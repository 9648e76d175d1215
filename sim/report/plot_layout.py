"""The layout diagram: sections and joints from the track graph.

Sections are the nodes of :class:`sim.layout.Layout`'s graph, placed by a
networkx layout (Kamada-Kawai for up to :data:`KK_MAX` sections, a seeded
spring layout beyond: both deterministic). A section's fill is the colour of
its district's feeding device; a reversing section has a heavy outline and a
hatch. A joint is a line; an insulated gap is one bar across it (one rail) or
two (both); a crossed joint (rails meet ``a`` to ``a`` or ``b`` to ``b``) is
dashed. Devices stand near their sections with a line to each section they feed
and to the device feeding them; supplies above their boosters. Each place where
the run had an episode carries a mark whose shape and word give its outcome.
"""
from __future__ import annotations

import networkx as nx
import numpy as np

from sim.report.figures import render
from sim.report.style import GREY, LIGHT, OUTCOME_MARKS, colour, figure
from sim.report.tables import Column, Table, plain

#: Sections up to which Kamada-Kawai places the graph (spring layout beyond).
KK_MAX = 80
#: Sections up to which every section is named on the diagram.
LABEL_MAX = 60
LABEL_BOX = {"boxstyle": "round,pad=0.15", "fc": "#FFFFFF", "ec": "none", "alpha": 0.85}
DEVICE_MARKERS = {"supply": "H", "booster": "s", "breaker": "D", "reverser": "^"}


def positions(layout) -> dict:
    """Deterministic positions of the sections, scaled to [-1, 1]."""
    g = nx.Graph()
    g.add_nodes_from(layout.graph.nodes)
    g.add_edges_from((u, v) for u, v in layout.graph.edges() if u != v)
    if g.number_of_nodes() == 1:
        return {n: np.array([0.0, 0.0]) for n in g.nodes}
    if g.number_of_nodes() <= KK_MAX:
        pos = {}
        comps = sorted((sorted(c) for c in nx.connected_components(g)), key=lambda c: c[0])
        x0 = 0.0
        for comp in comps:
            sub = g.subgraph(comp)
            p = nx.kamada_kawai_layout(sub) if len(comp) > 1 else {comp[0]: np.zeros(2)}
            xs = np.array([v[0] for v in p.values()])
            for n, v in p.items():
                pos[n] = np.array([v[0] - xs.min() + x0, v[1]])
            x0 += (xs.max() - xs.min()) + 0.6
    else:
        pos = nx.spring_layout(g, seed=1, iterations=200)
    arr = np.array(list(pos.values()))
    lo, hi = arr.min(axis=0), arr.max(axis=0)
    span = np.where(hi - lo > 0, hi - lo, 1.0)
    return {n: 2.0 * (np.asarray(v) - lo) / span.max() - 1.0 for n, v in pos.items()}


def _place_of(where: str, pos: dict, mids: dict):
    """The diagram point of an episode's place: a joint's midpoint or a section."""
    if where in mids:
        return mids[where]
    if "~" in where:
        ends = [e.rsplit(".", 1)[0] for e in where.split("~")]
        if all(e in pos for e in ends):
            return (pos[ends[0]] + pos[ends[1]]) / 2.0
    sec = where.split("@")[0]
    if sec in pos:
        return pos[sec]
    return None


def draw_layout(scn, layout, result, key: str = "layout"):
    """The layout diagram as a rendered figure, with its data table."""
    from sim.report.tcc import is_reversing

    pos = positions(layout)
    n = len(pos)
    devices = sorted({layout.district(s) for s in scn.track.sections} - {None},
                     key=lambda d: list(scn.boosters).index(d) if d in scn.boosters else 999)
    order = list(scn.boosters) + list(scn.breakers) + list(scn.reversers)
    col = {d: colour(order.index(d)) for d in order}
    size = 9.0 if n <= LABEL_MAX else 10.0
    with figure(size, 6.2) as fig:
        ax = fig.add_axes((0.01, 0.02, 0.70, 0.96))
        ax.set_axis_off()
        ax.set_aspect("equal", adjustable="datalim")
        # joints (parallel joints between two sections bow apart); gap bars scale with
        # the drawing's typical joint length
        lengths = [np.hypot(*(pos[u] - pos[v])) for u, v in layout.graph.edges() if u != v]
        bar = min(0.035, 0.3 * float(np.median(lengths))) if lengths else 0.035
        big = n > LABEL_MAX
        mids: dict = {}
        count: dict = {}
        for u, v, data in layout.graph.edges(data=True):
            count[frozenset((u, v))] = count.get(frozenset((u, v)), 0) + 1
        seen: dict = {}
        for u, v, data in layout.graph.edges(data=True):
            j = data["joint"]
            if u == v:
                continue
            pair = frozenset((u, v))
            k = seen.get(pair, 0)
            seen[pair] = k + 1
            a, b = pos[u], pos[v]
            d = b - a
            nrm = np.array([-d[1], d[0]]) / (np.hypot(*d) or 1.0)
            bow = (k - (count[pair] - 1) / 2.0) * 0.16
            mid = (a + b) / 2.0 + nrm * bow
            mids[j.name] = mid
            ax.plot([a[0], mid[0], b[0]], [a[1], mid[1], b[1]], color=GREY, lw=1.6,
                    ls="--" if j.sign < 0 else "-", zorder=1)
            if j.gaps != "none":
                seg = b - mid if bow else d
                nrm2 = np.array([-seg[1], seg[0]]) / (np.hypot(*seg) or 1.0)
                along = seg / (np.hypot(*seg) or 1.0)
                offs = (0.0,) if j.gaps == "one" else (-bar / 3, bar / 3)
                for o in offs:
                    c = mid + along * o
                    p0, p1 = c - nrm2 * bar, c + nrm2 * bar
                    ax.plot([p0[0], p1[0]], [p0[1], p1[1]], color="#000000",
                            lw=0.8 if big else 1.8, zorder=3)
        # sections: one collection for the plain ones, one for the reversing ones
        groups: dict = {False: [], True: []}
        for s, p in pos.items():
            d = layout.district(s)
            groups[d is not None and is_reversing(scn, d)].append((p, col.get(d, "#FFFFFF")))
            if n <= LABEL_MAX:
                ax.annotate(s, p, xytext=(0, -11), textcoords="offset points", ha="center",
                            va="top", fontsize=7.5, zorder=6, bbox=LABEL_BOX)
        for rev, items in groups.items():
            if items:
                ax.scatter([p[0] for p, _ in items], [p[1] for p, _ in items],
                           s=260 if n <= LABEL_MAX else 60, c=[c for _, c in items],
                           edgecolors="#000000", linewidths=2.4 if rev else 0.8,
                           hatch="////" if rev else None, zorder=4)
        # devices at their feed points: beside the first section each one feeds,
        # pushed outwards from the middle of the drawing; supplies beside their booster
        centre = np.mean(list(pos.values()), axis=0)
        dpos: dict = {}
        taken: dict = {}

        def outward(anchor, dist):
            d = anchor - centre
            norm = np.hypot(*d)
            d = d / norm if norm > 1e-9 else np.array([0.0, 1.0])
            k = taken.get(tuple(np.round(anchor, 6)), 0)
            taken[tuple(np.round(anchor, 6))] = k + 1
            side = np.array([-d[1], d[0]])
            return anchor + d * dist + side * 0.14 * k

        for d in order:
            secs = [s for s in scn.track.sections if scn.track.sections[s].feed == d] or \
                [s for s in scn.track.sections if d in layout.device_chain(s)]
            if secs:
                dpos[d] = outward(pos[secs[0]], 0.16)
        for sup in scn.supplies:
            bs = [dpos[b] for b, bo in scn.boosters.items() if bo.supply == sup and b in dpos]
            if bs:
                dpos[sup] = outward(bs[0], 0.12)
        for name, p in dpos.items():
            kind = scn.device_kind(name)
            for s in scn.track.sections:
                if scn.track.sections[s].feed == name:
                    ax.plot([p[0], pos[s][0]], [p[1], pos[s][1]], color=col.get(name, GREY),
                            lw=0.7, ls=":", zorder=2)
            up = scn.upstream(name)
            if up and up[0] in dpos:
                q = dpos[up[0]]
                ax.plot([p[0], q[0]], [p[1], q[1]], color=LIGHT, lw=0.9, ls="-.", zorder=2)
            ax.scatter([p[0]], [p[1]], marker=DEVICE_MARKERS.get(kind, "o"), s=50 if big else 110,
                       c="#FFFFFF" if kind == "supply" else col.get(name, "#FFFFFF"),
                       edgecolors="#000000", linewidths=1.0, zorder=5)
            ax.annotate(name if big else f"{name} ({kind})", p, xytext=(6, 2),
                        textcoords="offset points", fontsize=6 if big else 7, zorder=6,
                        bbox=LABEL_BOX)
        # episodes by place and outcome
        places: dict = {}
        for ep in result.episodes:
            places.setdefault((ep.where, ep.outcome), []).append(ep)
        rows = []
        marks: dict = {}
        lift = 0.02 if big else 0.07
        for (where, outcome), eps in sorted(places.items()):
            p = _place_of(where, pos, mids)
            rows.append({"where": where, "outcome": outcome, "episodes": len(eps),
                         "first_s": eps[0].start_s})
            if p is None:
                continue
            marks.setdefault(outcome, []).append(p)
            if not big:     # a large layout: the shape and the legend say it, words crowd
                word = OUTCOME_MARKS.get(outcome, ("o", GREY, outcome))[2]
                ax.annotate(f"{word}" + (f" x{len(eps)}" if len(eps) > 1 else ""),
                            (p[0], p[1] + lift), xytext=(7, 4), textcoords="offset points",
                            fontsize=7, fontweight="bold", zorder=8)
        for outcome, pts in marks.items():
            m, c, _ = OUTCOME_MARKS.get(outcome, ("o", GREY, outcome))
            ax.scatter([p[0] for p in pts], [p[1] + lift for p in pts], marker=m,
                       s=30 if big else 90, c=c, edgecolors="#000000", linewidths=0.6,
                       zorder=7)
        # legend
        from matplotlib.lines import Line2D
        from matplotlib.patches import Patch
        handles = [Patch(facecolor=col[d], edgecolor="#000000", label=f"district of {d}")
                   for d in devices[:12]]
        handles += [Patch(facecolor="#FFFFFF", edgecolor="#000000", hatch="////", lw=2.0,
                          label="reversing section"),
                    Line2D([], [], color=GREY, lw=1.6, label="joint, rails straight"),
                    Line2D([], [], color=GREY, lw=1.6, ls="--", label="joint, rails crossed"),
                    Line2D([], [], color=GREY, lw=0.7, ls=":", label="feeders of a device"),
                    Line2D([], [], color=LIGHT, lw=0.9, ls="-.", label="fed from (device above)"),
                    Line2D([], [], color="#000000", lw=0, marker="|", markersize=10,
                           markeredgewidth=2, label="insulated gap (| one rail, || both)")]
        for kind in ("supply", "booster", "breaker", "reverser"):
            handles.append(Line2D([], [], lw=0, marker=DEVICE_MARKERS[kind], color="#FFFFFF",
                                  markeredgecolor="#000000", markersize=8, label=kind))
        for outcome, (m, c, word) in OUTCOME_MARKS.items():
            if any(o == outcome for _, o in places):
                handles.append(Line2D([], [], lw=0, marker=m, color=c, markeredgecolor="#000000",
                                      markersize=8, label=f"episode: {word}"))
        fig.legend(handles=handles, loc="center left", bbox_to_anchor=(0.72, 0.5),
                   frameon=False, fontsize=7.5)
        title = f"Layout diagram: {len(pos)} sections, {len(scn.track.joints)} joints"
        desc = (f"Sections of the track drawn as circles coloured by the device feeding their "
                f"district ({', '.join(devices)}); reversing sections hatched with a heavy "
                f"outline; insulated gaps as bars across the joints; devices near the "
                f"sections they feed; {len(result.episodes)} short episodes marked at their "
                f"places by outcome.")
        data = Table(f"{key}-episodes", "Episode places on the diagram", [
            Column("where", "place"), Column("outcome", "outcome"),
            Column("episodes", "episodes", plain, True),
            Column("first_s", "first at", lambda v: f"{v:.6f} s", True)], rows)
        return render(fig, key, title, desc, data, model=pos)
