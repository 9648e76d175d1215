"""Drawing of a time-current chart (:mod:`sim.report.tcc` holds the numbers).

Log-log axes, current across and time up. Each device has its own colour *and*
line style; within a device the kind of curve is told by the line style too
(trip solid, trip after a swap dotted, thermal from cold dashed, hot dash-dot,
time to clear thick with round marks). A sampled-sensing band is hatched
between the earliest and latest trip. Verticals are labelled with words;
coordination intervals are double arrows with their margin written beside.
"""
from __future__ import annotations

import math

import numpy as np

from sim.report.figures import render
from sim.report.style import (GREY, a_label, colour, figure, log_axis, marker, spread,
                              t_label)
from sim.report.tables import Column, Table, ms_text, t_text
from sim.report.tcc import T_CEIL_S, T_FLOOR_S

KIND_STYLE = {"trip": ("-", 1.6), "trip-after-swap": (":", 1.2), "thermal-cold": ("--", 1.4),
              "thermal-hot": ("-.", 1.4), "clear": ("-", 2.6), "supply-off": ("-", 1.0)}
VERTICAL_STYLE = {"fault-min": ("--", "#000000"), "fault-max": ("--", "#000000"),
                  "limit": ("-", GREY), "full-scale": (":", GREY),
                  "draw": (":", "#009E73"), "draw-inrush": ("-.", "#009E73")}


def _clip(t: np.ndarray) -> np.ndarray:
    t = np.asarray(t, dtype=float)
    out = np.where(np.isfinite(t), np.clip(t, T_FLOOR_S, T_CEIL_S), np.nan)
    return out


def chart_table(chart) -> Table:
    """The chart's numbers: every curve at every sampled current, the verticals and
    the intervals (long format: one row per point)."""
    rows = []
    for c in chart.curves:
        for i, t, lo, hi in zip(c.i_a, c.t_s, c.t_lo_s, c.t_hi_s):
            if math.isfinite(t):
                rows.append({"what": c.kind, "device": c.device, "i_a": float(i),
                             "t_s": float(t), "t_earliest_s": float(lo),
                             "t_latest_s": float(hi)})
    for v in chart.verticals:
        rows.append({"what": f"vertical: {v.kind}", "device": v.label, "i_a": v.i_a})
    for iv in chart.intervals:
        rows.append({"what": "interval", "device": f"{iv.down} / {iv.up}", "i_a": iv.i_a,
                     "t_earliest_s": iv.t_from_s, "t_latest_s": iv.t_to_s,
                     "t_s": iv.margin_s})
    return Table(f"{chart.key}", "Time-current chart data", [
        Column("what", "what"), Column("device", "device"),
        Column("i_a", "current", lambda v: f"{v:.4g} A", True),
        Column("t_s", "time (interval: margin)", t_text, True),
        Column("t_earliest_s", "earliest (interval: from)", t_text, True),
        Column("t_latest_s", "latest (interval: to)", t_text, True)], rows)


def intervals_table(chart) -> Table:
    rows = [{"down": iv.down, "up": iv.up, "i_a": iv.i_a, "t_from_s": iv.t_from_s,
             "t_to_s": iv.t_to_s, "margin_s": iv.margin_s} for iv in chart.intervals]
    return Table(f"{chart.key}-intervals", "Coordination intervals on the chart", [
        Column("down", "device"), Column("up", "must beat"),
        Column("i_a", "at", lambda v: f"{v:.2f} A", True),
        Column("t_from_s", "acts by", t_text, True),
        Column("t_to_s", "earliest trip", t_text, True),
        Column("margin_s", "interval", lambda v: ms_text(v, True), True)], rows)


def draw_tcc(scn, chart):
    """Render one chart; its data table goes beside it (CSV)."""
    path = chart.path
    dev_k = {d: k for k, d in enumerate(path)}
    n_leg = sum(1 for c in chart.curves if np.isfinite(c.t_s).any())
    h_axes, h_top, h_bottom = 4.4, 0.35, 0.75 + 0.16 * n_leg
    height = h_axes + h_top + h_bottom
    with figure(9.0, height) as fig:
        ax = fig.add_axes((0.1, h_bottom / height, 0.87, h_axes / height))
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_xlim(*chart.i_lim)
        ax.set_ylim(T_FLOOR_S, T_CEIL_S)
        log_axis(ax.xaxis, a_label)
        log_axis(ax.yaxis, t_label)
        ax.set_xlabel("current")
        ax.set_ylabel("time after the onset")
        handles = []
        for c in chart.curves:
            k = dev_k.get(c.device, len(path))
            col = colour(k) if c.device in dev_k else GREY
            ls, lw = KIND_STYLE.get(c.kind, ("-", 1.2))
            t = _clip(c.t_s)
            ok = ~np.isnan(t)
            if not ok.any():
                continue
            # the device by its marker as well as its colour; the kind by the line style
            kw = {"marker": marker(k), "markevery": (k % 5, 7), "markersize": 4.5,
                  "markerfacecolor": "#FFFFFF" if c.kind != "clear" else col}
            (h,) = ax.plot(c.i_a[ok], t[ok], color=col, ls=ls, lw=lw, label=c.label, **kw)
            handles.append(h)
            first = int(np.argmax(ok))
            if c.kind in ("trip", "trip-after-swap", "clear", "supply-off"):
                ax.plot([c.i_a[first], c.i_a[first]], [t[first], T_CEIL_S], color=col, ls=ls,
                        lw=lw)
            if c.sampled:
                lo, hi = _clip(c.t_lo_s), _clip(c.t_hi_s)
                band = ok & ~np.isnan(lo) & ~np.isnan(hi)
                ax.fill_between(c.i_a[band], lo[band], hi[band], facecolor=col, alpha=0.18,
                                hatch="///", edgecolor=col, lw=0.0)
        for v in chart.verticals:
            ls, col = VERTICAL_STYLE.get(v.kind, (":", GREY))
            ax.axvline(v.i_a, color=col, ls=ls, lw=1.0)
            ax.annotate(v.label, (v.i_a, T_CEIL_S), xytext=(2, -4), textcoords="offset points",
                        rotation=90, va="top", ha="left", fontsize=6.5, color=col)
        mids = [math.log10(math.sqrt(max(iv.t_from_s, T_FLOOR_S) * max(iv.t_to_s, T_FLOOR_S)))
                for iv in chart.intervals]
        # labels at least a third of a decade apart (about 11 points at this height)
        at = spread(mids, math.log10(T_CEIL_S / T_FLOOR_S) / 27.0)
        lo_i, hi_i = chart.i_lim
        for n, iv in enumerate(chart.intervals):
            x = iv.i_a * (1.12 ** n)
            y0, y1 = max(iv.t_from_s, T_FLOOR_S), max(iv.t_to_s, T_FLOOR_S)
            ok = iv.margin_s > 0
            ax.annotate("", (x, y1), (x, y0),
                        arrowprops={"arrowstyle": "<->", "color": "#000000", "lw": 1.1,
                                    "ls": "-" if ok else "--", "shrinkA": 0, "shrinkB": 0})
            word = "" if ok else " (NOT COORDINATED)"
            # written away from the nearer side of the chart, so it stays inside, on a
            # white ground, with a leader to its arrow when moved off it
            right = math.log(x) > (math.log(lo_i) + math.log(hi_i)) / 2.0
            x_text = x / 1.6 if right else x * 1.6
            ax.annotate(f"{ms_text(iv.margin_s, True)} {iv.down} / {iv.up}{word}",
                        (x, 10 ** mids[n]), xytext=(x_text, 10 ** at[n]),
                        textcoords="data", fontsize=6.8, va="center",
                        ha="right" if right else "left", fontweight="bold",
                        bbox={"boxstyle": "round,pad=0.15", "fc": "#FFFFFF", "ec": "none",
                              "alpha": 0.9},
                        arrowprops={"arrowstyle": "-", "color": GREY, "lw": 0.6,
                                    "shrinkA": 0, "shrinkB": 2})
        ax.legend(handles=handles, loc="upper left",
                  bbox_to_anchor=(-0.08, -0.55 / h_axes), frameon=False, fontsize=7, ncol=1)
        names = " / ".join(path)
        title = f"Time-current chart: {names}"
        if chart.also:
            title += f" (and {len(chart.also)} more paths with the same settings)"
        ax.set_title(title, loc="left", fontsize=9.5)
        parts = [c.label for c in chart.curves]
        desc = (f"Log-log chart of time against current for the protection path {names}: "
                + "; ".join(parts) + ". Marked currents: "
                + "; ".join(v.label for v in chart.verticals)
                + (". Coordination intervals: " + "; ".join(
                    f"{iv.down} before {iv.up} by {ms_text(iv.margin_s, True)} at "
                    f"{iv.i_a:.2f} A" for iv in chart.intervals) if chart.intervals else "")
                + ".")
        return render(fig, chart.key, title, desc, chart_table(chart), model=chart)
