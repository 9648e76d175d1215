"""Drawings of the run: sequence of operation, current traces, dark time per district.

Kinds of span differ by hatch and words as well as by colour; a margin arrow is
solid when it meets the required margin and dashed when not, and its label
says ``meets`` or ``SHORT`` in words.
"""
from __future__ import annotations

import math

from sim.diagnose.text import plural
from sim.report.figures import render
from sim.report.sequence import Sequence
from sim.report.style import GREY, colour, figure, linestyle, spread
from sim.report.tables import Column, Table, a_text, dur_text, instant_text, ms_text, t_text

SPAN_STYLE = {  # kind: (face, hatch, edge, words)
    "short": ("#444444", None, "#000000", "short current flows"),
    "sensing": ("#FFFFFF", "....", "#0072B2", "sensing the short"),
    "swapping": ("#0072B2", None, "#000000", "swapping"),
    "dead": ("#FFFFFF", "\\\\\\\\", "#56B4E9", "dead time (output open)"),
    "timing": ("#FFFFFF", None, "#D55E00", "timing towards a trip (would trip at the end)"),
    "dark": ("#000000", "xxxx", "#000000", "dark (tripped, off or dropped out)"),
    "limit": ("#E69F00", "////", "#000000", "supply at its current limit"),
}
MARK_STYLE = {"trip": ("X", "#D55E00"), "swapped": ("o", "#009E73"), "restart": ("^", "#000000"),
              "detect": ("|", "#0072B2"), "give_up": ("*", "#000000")}


def _ms(t: float, t0: float) -> float:
    return (t - t0) * 1e3


def sequence_table(seq: Sequence) -> Table:
    rows = []
    for sp in seq.spans:
        rows.append({"lane": sp.lane, "what": sp.kind, "from_s": sp.t0_s, "to_s": sp.t1_s})
    for mk in seq.marks:
        rows.append({"lane": mk.lane, "what": mk.label, "from_s": mk.t_s, "to_s": None})
    for ar in seq.arrows:
        rows.append({"lane": ar.lane, "what": "margin", "from_s": ar.t_from_s,
                     "to_s": ar.t_to_s, "margin_s": ar.margin_s})
    return Table(f"sequence-{seq.index + 1}", "Sequence of operation", [
        Column("lane", "device"), Column("what", "what"),
        Column("from_s", "from", instant_text, True), Column("to_s", "to", instant_text, True),
        Column("margin_s", "margin", lambda v: ms_text(v, True), True)], rows)


def draw_sequence(scn, seq: Sequence, required_s: float):
    """One episode's sequence of operation: lanes per device, margin arrows."""
    ep = seq.episode
    t0 = seq.t0_s
    pad = max(0.1, 0.08 * _ms(seq.t1_s, t0))
    x_lo, x_hi = -pad, _ms(seq.t1_s, t0) + 4 * pad
    lanes = seq.lanes
    y = {ln: len(lanes) - 1 - k for k, ln in enumerate(lanes)}
    with figure(9.0, 1.6 + 0.55 * len(lanes)) as fig:
        left = min(0.4, 0.05 + 0.0075 * max(len(ln) for ln in lanes))
        ax = fig.add_axes((left, 0.26 if len(lanes) < 4 else 0.18, 0.96 - left, 0.62))
        seen = set()
        for sp in seq.spans:
            face, hatch, edge, words = SPAN_STYLE[sp.kind]
            h = 0.5 if sp.kind != "timing" else 0.3
            x0, x1 = _ms(sp.t0_s, t0), _ms(sp.t1_s, t0)
            ax.broken_barh([(x0, max(x1 - x0, 1e-3))], (y[sp.lane] - h / 2, h), facecolors=face,
                           edgecolors=edge, hatch=hatch, lw=1.2 if sp.kind == "timing" else 0.6,
                           linestyle="--" if sp.kind == "timing" else "-",
                           label=None if sp.kind in seen else words, zorder=2)
            seen.add(sp.kind)
        for mk in seq.marks:
            m, c = MARK_STYLE.get(mk.kind, ("o", GREY))
            ax.plot([_ms(mk.t_s, t0)], [y[mk.lane]], marker=m, color=c, markersize=8,
                    markeredgecolor="#000000", lw=0, zorder=4)
            ax.annotate(mk.label, (_ms(mk.t_s, t0), y[mk.lane]), xytext=(0, 9),
                        textcoords="offset points", ha="center", fontsize=6.5, zorder=5)
        t_clear = None
        for ar in seq.arrows:
            t_clear = ar.t_from_s
            yy = y[ar.lane] + 0.36
            ax.annotate("", (_ms(ar.t_to_s, t0), yy), (_ms(ar.t_from_s, t0), yy),
                        arrowprops={"arrowstyle": "->", "lw": 1.3, "color": "#000000",
                                    "ls": "-" if ar.ok else "--", "shrinkA": 0, "shrinkB": 0},
                        zorder=6)
            word = "meets the required" if ar.ok else "SHORT of the required"
            # the label runs away from the nearer edge of the axes, so it stays inside
            lo, hi = sorted((_ms(ar.t_from_s, t0), _ms(ar.t_to_s, t0)))
            right_half = (lo + hi) / 2.0 > (x_lo + x_hi) / 2.0
            ax.annotate(f"margin {ms_text(ar.margin_s, True)} ({word} {ms_text(required_s)})",
                        (hi if right_half else lo, yy), xytext=(-2 if right_half else 2, 3),
                        textcoords="offset points", va="bottom",
                        ha="right" if right_half else "left", fontsize=7,
                        fontweight="bold", zorder=6)
        if t_clear is not None:
            ax.axvline(_ms(t_clear, t0), color="#000000", lw=0.8, ls=":")
            ax.annotate("short cleared", (_ms(t_clear, t0), len(lanes) - 0.45), xytext=(3, 0),
                        textcoords="offset points", fontsize=6.5, va="top")
            if required_s > 0:
                ax.axvline(_ms(t_clear + required_s, t0), color=GREY, lw=0.8, ls="-.")
                ax.annotate("required margin", (_ms(t_clear + required_s, t0), -0.45),
                            xytext=(3, 0), textcoords="offset points", fontsize=6.5,
                            va="bottom", color=GREY)
        ax.set_yticks(range(len(lanes)))
        ax.set_yticklabels(list(reversed(lanes)))
        ax.set_ylim(-0.7, len(lanes) - 0.3)
        ax.set_xlim(x_lo, x_hi)
        ax.set_xlabel(f"time since the onset at {ep.start_s:.6f} s (ms)")
        ax.grid(axis="y", visible=False)
        ax.legend(loc="upper left", bbox_to_anchor=((0.01 - left) / (0.96 - left),
                                                    -0.2 if len(lanes) < 4 else -0.14),
                  ncol=3, frameon=False, fontsize=7)
        title = (f"Episode {seq.index + 1}: {ep.kind} at {ep.where}"
                 + (f" (train {ep.train})" if ep.train else "") + f", {ep.outcome}")
        ax.set_title(title, loc="left", fontsize=9.5)
        desc = (f"Sequence of operation of episode {seq.index + 1}, {ep.kind} short at "
                f"{ep.where} from {ep.start_s:.6f} s, outcome {ep.outcome}"
                + (f", {ep.acted} acted at {ep.acted_s:.6f} s" if ep.acted else "")
                + ". Lanes: " + ", ".join(lanes) + "."
                + "".join(f" Margin of {a.lane}: {ms_text(a.margin_s, True)}."
                          for a in seq.arrows))
        return render(fig, f"sequence-{seq.index + 1}", title, desc, sequence_table(seq),
                      model=seq)


def _thresholds(scn, d: str) -> list[tuple[str, float]]:
    dev = scn.device(d)
    kind = scn.device_kind(d)
    if kind == "supply":
        return [("limit", dev.i_limit_a)] if math.isfinite(dev.i_limit_a) else []
    out = [("trips above", dev.trip.i_above_a)]
    if kind == "reverser":
        out.append(("senses above", dev.sense_above_a))
    return out


def traces_table(key: str, window, names, t0: float) -> Table:
    rows = []
    for name in names:
        for t, i in window.series.get(name, ()):
            rows.append({"series": name, "t_s": t, "i_a": i})
    return Table(key, "Current traces (exact: constant between the points)", [
        Column("series", "current of"), Column("t_s", "from", instant_text, True),
        Column("i_a", "current", a_text, True)], rows)


def draw_traces(scn, seq: Sequence):
    """The exact currents of an episode's devices around it, with their thresholds."""
    ep = seq.episode
    w = seq.window
    t0 = ep.start_s
    from sim.world.traces import short_key

    skey = short_key(ep.kind, ep.where, ep.train)
    devices = [d for d in seq.lanes[1:] if d in w.series]
    sups = sorted({scn.boosters[b].supply for d in devices
                   for b in [scn.booster_of(d)] if b is not None})
    names = ([skey] if skey in w.series else []) + devices + [
        s for s in sups if s in w.series and s not in devices]
    t_hi = max(w.t1_s, seq.t1_s)
    with figure(9.0, 4.4) as fig:
        ax = fig.add_axes((0.08, 0.30, 0.9, 0.6))
        labels = []
        for k, name in enumerate(names):
            pts = w.series[name]
            xs = [_ms(t, t0) for t, _ in pts] + [_ms(t_hi, t0)]
            ys = [i for _, i in pts] + [pts[-1][1]]
            is_short = name == skey
            col = "#000000" if is_short else colour(k)
            label = f"short current at {ep.where}" if is_short else f"{name}"
            ax.step(xs, ys, where="post", color=col, lw=2.2 if is_short else 1.3,
                    ls="-" if is_short else linestyle(k), label=label)
            if not is_short:
                for words, thr in _thresholds(scn, name):
                    ax.axhline(thr, color=col, lw=0.8, ls=":")
                    labels.append((thr, f"{name} {words} {thr:g} A", col))
        ax.set_xlim(_ms(w.t0_s, t0), _ms(t_hi, t0))
        ax.set_ylim(bottom=0)
        y_top = ax.get_ylim()[1]
        # threshold labels at the right-hand end, at least 5 % of the axis apart
        at = spread([y for y, _, _ in labels], 0.05 * y_top, hi=0.95 * y_top)
        for (thr, text, col), y in zip(labels, at):
            ax.annotate(text, (_ms(t_hi, t0), thr), xytext=(_ms(t_hi, t0), y),
                        textcoords="data", ha="right", va="bottom", fontsize=6.5, color=col,
                        bbox={"boxstyle": "round,pad=0.1", "fc": "#FFFFFF", "ec": "none",
                              "alpha": 0.85})
        ax.set_xlabel(f"time since the onset at {ep.start_s:.6f} s (ms)")
        ax.set_ylabel("current (A)")
        ax.legend(loc="upper left", bbox_to_anchor=(0.0, -0.16), ncol=3, frameon=False,
                  fontsize=7)
        title = f"Episode {seq.index + 1}: currents around the {ep.kind} at {ep.where}"
        ax.set_title(title, loc="left", fontsize=9.5)
        peak = {n: max(i for _, i in w.series[n]) for n in names}
        desc = (f"Step plot of the exact currents from {w.t0_s:.6f} s to {t_hi:.6f} s: "
                + "; ".join(f"{n} up to {peak[n]:.2f} A" for n in names)
                + ", with each device's trip and sense thresholds as dotted lines.")
        key = f"traces-{seq.index + 1}"
        return render(fig, key, title, desc, traces_table(key, w, names, t0), model=seq)


def draw_dark(lanes, t_end_s: float):
    """Dark time of every district over the whole run."""
    from sim.report.runtables import dark_table

    n = len(lanes)
    max_bars = 2000
    height = 1.2 + 0.3 * max(n, 1)
    with figure(9.0, height) as fig:
        ax = fig.add_axes((0.2, 0.65 / height, 0.6, (height - 1.05) / height))
        for k, ln in enumerate(lanes):
            yy = n - 1 - k
            spans = ln.spans
            if len(spans) > max_bars:       # merge for drawing only (the CSV has them all)
                gap = t_end_s / max_bars
                merged = []
                for a, b in spans:
                    if merged and a - merged[-1][1] < gap:
                        merged[-1] = (merged[-1][0], b)
                    else:
                        merged.append((a, b))
                spans = merged
            ax.broken_barh([(a, max(b - a, t_end_s * 2e-4)) for a, b in spans], (yy - 0.3, 0.6),
                           facecolors="#000000", edgecolors="#000000", hatch="xxxx", lw=0.4)
            ax.annotate(f"dark {dur_text(ln.total_s)}" + (f" ({plural(len(ln.spans), 'span')})"
                                                        if ln.spans else ""),
                        (1.0, yy), xycoords=("axes fraction", "data"), xytext=(6, 0),
                        textcoords="offset points", ha="left", va="center", fontsize=7)
        ax.set_yticks(range(n))
        ax.set_yticklabels([f"district of {ln.district}" for ln in reversed(lanes)])
        ax.set_xlim(0, t_end_s)
        ax.set_ylim(-0.7, n - 0.2)
        ax.set_xlabel("time of the run (s)")
        ax.grid(axis="y", visible=False)
        title = "Dark time per district over the whole run"
        ax.set_title(title, loc="left", fontsize=9.5)
        desc = ("Time line of the run with one lane per power district; black hatched bars "
                "where the district had no power (its device or one above it tripped, was "
                "off or dropped out): " + "; ".join(
                    f"{ln.district} dark {dur_text(ln.total_s)} in {len(ln.spans)} spans"
                    for ln in lanes) + ".")
        return render(fig, "dark", title, desc, dark_table(lanes), model=lanes)


def dark_spans_table(lanes) -> Table:
    rows = [{"district": ln.district, "from_s": a, "to_s": b, "dark_s": b - a}
            for ln in lanes for a, b in ln.spans]
    return Table("dark-spans", "Dark spans per district", [
        Column("district", "district"), Column("from_s", "from", instant_text, True),
        Column("to_s", "to", instant_text, True), Column("dark_s", "for", t_text, True)], rows)
