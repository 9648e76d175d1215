"""The sweep section of the report: what a ``railfault sweep`` store says, drawn.

Every number comes from the sweep's summary (:func:`sim.whatif.summary.summarize`,
the ``railfault-sweep/1`` object of ``railfault sweep --json``) or, for the
scatter of margins, from the store's sample records themselves. Per reversing
section's gap:

* a histogram of the least margin per sample (the summary's 20 bins), with the
  zero line (below it the race is lost) and the required margin;
* the probability of a lost race, and of a lost race or a margin below the
  required one, with the Wilson score 95 % interval (E. B. Wilson, JASA 22
  (1927) 209-212; :func:`sim.whatif.stats.wilson`): where no sample lost, the
  upper bound is drawn and written ("below 14 %"), never "0 %";
* the margin of every sample against the varied quantity that drives it most
  (the first of the summary's ``drivers``), lost races drawn with another shape;
* the sensitivity: Spearman's rank correlation and the partial rank correlation
  of every varied quantity with the margin, as bars.

Each figure has its data as a table (CSV beside the page). Pass and fail are
told by shape, hatch and words as well as colour (:mod:`sim.report.style`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

from sim.report.figures import render
from sim.report.style import GREY, colour, figure
from sim.report.tables import Column, Table, a_text, dur_text, ms_text, plain

__all__ = ["SweepSection", "sweep_section", "MAX_PANELS", "MAX_POINTS", "value_text"]

#: Gaps drawn in the histogram, scatter and sensitivity figures (the worst first);
#: every gap is in the tables.
MAX_PANELS = 6
#: Samples drawn per scatter panel at most (every lost race, then an even stride of
#: the rest); the CSV has every sample.
MAX_POINTS = 2000


@dataclass
class SweepSection:
    """The sweep section's text, tables and figures."""

    data: object
    lines: list = field(default_factory=list)
    inputs: object = None
    gaps: object = None
    races: object = None
    margins: object = None
    devices: object = None
    histogram: object = None
    lost: object = None
    scatter: object = None
    sensitivity: object = None

    @property
    def summary(self) -> dict:
        return self.data.summary

    @property
    def figures(self) -> list:
        return [f for f in (self.histogram, self.lost, self.scatter, self.sensitivity)
                if f is not None]

    @property
    def tables(self) -> list:
        return [t for t in (self.inputs, self.gaps, self.devices) if t is not None]


# --------------------------------------------------------------------- text
def value_text(v, unit: str) -> str:
    """A varied value with its unit: times in ms below 1 s, currents in A."""
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        return str(v)
    if unit == "s":
        return dur_text(float(v))
    if unit == "A":
        return a_text(float(v))
    if isinstance(v, int):
        return f"{v} {unit}".rstrip()
    return f"{v:.4g} {unit}".rstrip()


def _unit_axis(unit: str) -> tuple[float, str]:
    """Scale and unit of an axis showing a varied quantity in SI ``unit``."""
    return (1e3, "ms") if unit == "s" else (1.0, unit)


def _sampler_text(spec: dict) -> str:
    unit = spec["unit"]
    vals = [value_text(v, unit) for v in spec["values"]]
    s = spec["sampler"]
    if s == "grid":
        return "grid: " + ", ".join(vals)
    if s == "normal":
        return f"normal: mean {vals[0]}, standard deviation {vals[1]}"
    if s == "uniform":
        return f"uniform from {vals[0]} to {vals[1]}"
    if s == "triangular":
        return f"triangular from {vals[0]} to {vals[2]}, most likely {vals[1]}"
    return f"{s}: " + ", ".join(vals)


def _lines(data) -> list[str]:
    from sim.whatif.summary import interval_text

    s = data.summary
    st = data.settings
    out = [f"{s['samples']} samples from the store {data.path} ({st['design']} design, seed "
           f"{st['seed']}), {s['valid']} run" + (f", {s['invalid']} could not be run with their "
                                                 f"values" if s["invalid"] else "") + "."]
    if not data.complete:
        out.append(f"The sweep did not finish: the store holds {len(data.records)} of the "
                   f"{data.expected} samples it was to run (railfault sweep --store "
                   f"{data.path} --resume runs the rest). The figures use what is there.")
    out.append(f"Samples whose run failed: {interval_text(s['verdict_fail'])}.")
    out.append(f"Required margin: {ms_text(s['t_margin_required_s'])}. A race is lost when "
               f"its margin is negative or a device trips, drops out or the short stays; it "
               f"fails when lost or below the required margin.")
    for e in s["invalid_examples"][:2]:
        out.append(f"Sample {e['sample']} could not be run: {e['why']}")
    return out


def _inputs_table(data) -> Table:
    rows = [{"key": k, "sampler": spec["sampler"], "unit": spec["unit"],
             "values": list(spec["values"]), "text": _sampler_text(spec)}
            for k, spec in data.settings["vary"].items()]
    return Table("sweep-inputs", "What the sweep varied", [
        Column("key", "varied key"), Column("text", "how it was drawn", csv=False),
        Column("sampler", "sampler", page=False), Column("values", "values (SI)", page=False),
        Column("unit", "SI unit", page=False)], rows)


def _worst_text(units: dict):
    def fmt(w) -> str:
        if not w:
            return "-"
        vals = ", ".join(f"{k} = {value_text(v, units.get(k, ''))}"
                         for k, v in w["inputs"].items())
        return f"sample {w['sample']} ({ms_text(w['margin_s'], True)}): {vals}"
    return fmt


def _gaps_table(data) -> Table:
    from sim.whatif.summary import interval_text

    s = data.summary
    units = {k: v["unit"] for k, v in data.settings["vary"].items()}
    rows = []
    for g in s["gaps"]:
        m = g["margin_s"] or {}
        lost, fail = g["lost"], g["failing"]
        rows.append({
            "gap": g["gap"], "section": g["section"], "reached": g["reached"],
            "of": s["valid"],
            "lost": lost["count"], "lost_p": lost["p"], "lost_low": lost["ci95"][0],
            "lost_high": lost["ci95"][1], "lost_text": interval_text(lost),
            "failing": fail["count"], "failing_p": fail["p"], "failing_low": fail["ci95"][0],
            "failing_high": fail["ci95"][1], "failing_text": interval_text(fail),
            "min_s": m.get("min"), "p05_s": m.get("p05"), "p50_s": m.get("p50"),
            "p95_s": m.get("p95"), "max_s": m.get("max"), "mean_s": m.get("mean"),
            "worst_sample": (g["worst"] or {}).get("sample"), "worst": g["worst"]})
    signed = lambda v: ms_text(v, True)  # noqa: E731
    return Table("sweep-gaps", "Races per reversing section's gap", [
        Column("gap", "gap"), Column("section", "reversing section", plain),
        Column("reached", "samples with a short there", plain, True),
        Column("of", "of samples", plain, True),
        Column("lost_text", "lost race (Wilson 95 %)", csv=False),
        Column("lost", "lost", page=False), Column("lost_p", "lost share", page=False),
        Column("lost_low", "lost low", page=False), Column("lost_high", "lost high", page=False),
        Column("failing_text", "lost or below the required margin (Wilson 95 %)", csv=False),
        Column("failing", "failing", page=False),
        Column("failing_p", "failing share", page=False),
        Column("failing_low", "failing low", page=False),
        Column("failing_high", "failing high", page=False),
        Column("min_s", "least margin", signed, True), Column("p05_s", "5 %", signed, True),
        Column("p50_s", "median", signed, True), Column("p95_s", "95 %", signed, True),
        Column("max_s", "greatest", signed, True), Column("mean_s", "mean", signed, True),
        Column("worst_sample", "worst sample", page=False),
        Column("worst", "worst sample and its settings", _worst_text(units), csv=False)],
        rows)


#: The two page views of the gap table (its CSV has every column).
RACE_COLUMNS = ("gap", "section", "reached", "of", "lost_text", "failing_text")
MARGIN_COLUMNS = ("gap", "min_s", "p05_s", "p50_s", "p95_s", "max_s", "mean_s", "worst")


def _devices_table(data) -> Table | None:
    from sim.whatif.summary import interval_text

    rows = [{"device": d["device"], "tripped": d["tripped"]["count"],
             "of": d["tripped"]["of"], "tripped_low": d["tripped"]["ci95"][0],
             "tripped_high": d["tripped"]["ci95"][1], "text": interval_text(d["tripped"]),
             "most_trips": d["most_trips"], "most_dark_s": d["most_dark_s"]}
            for d in data.summary["devices"]]
    if not rows:
        return None
    return Table("sweep-devices", "Devices over the samples", [
        Column("device", "device"), Column("text", "tripped in (Wilson 95 %)", csv=False),
        Column("tripped", "tripped", page=False), Column("of", "of", page=False),
        Column("tripped_low", "low", page=False), Column("tripped_high", "high", page=False),
        Column("most_trips", "most trips in a sample", plain, True),
        Column("most_dark_s", "longest dark in a sample", dur_text, True)], rows)


# ------------------------------------------------------------------ figures
def _shown_gaps(summary: dict) -> list[dict]:
    """The gaps reached by some sample, the most often lost and the least margin first."""
    reached = [g for g in summary["gaps"] if g["margin_s"]]
    reached.sort(key=lambda g: (-g["failing"]["count"], g["margin_s"]["min"], g["gap"]))
    return reached[:MAX_PANELS]


def _ms(x) -> float:
    return x * 1e3


def _zero_and_required(ax, need_s: float, vertical: bool = True) -> None:
    line = ax.axvline if vertical else ax.axhline
    line(0.0, color="#000000", lw=1.2, ls="-", label="0 ms: below it the race is lost")
    if need_s > 0:
        line(_ms(need_s), color=GREY, lw=1.2, ls="--",
             label=f"required margin {ms_text(need_s)}")


def _draw_histogram(data, gaps: list[dict]):
    from matplotlib.patches import Patch
    from matplotlib.ticker import MaxNLocator

    s = data.summary
    need = s["t_margin_required_s"]
    rows = []
    n = len(gaps)
    with figure(9.0, 1.2 + 2.1 * n) as fig:
        axes = fig.subplots(n, 1, squeeze=False)[:, 0]
        fig.subplots_adjust(left=0.09, right=0.66, top=1 - 0.6 / (1.2 + 2.1 * n),
                            bottom=0.75 / (1.2 + 2.1 * n), hspace=0.9)
        descs = []
        for ax, g in zip(axes, gaps):
            h = g["margin_s"]["histogram"]
            edges, counts = h["edges_s"], h["counts"]
            same = len(counts) == 1 and edges[0] == edges[1]
            for k, c in enumerate(counts):
                lo, hi = edges[k], edges[k + 1]
                lost = hi <= 0.0
                if same:            # every sample the same margin: one bar, said in words
                    ax.text(0.02, 0.92, f"all {c} samples at {ms_text(lo, True)}",
                            transform=ax.transAxes, fontsize=7, va="top")
                ax.bar(_ms(lo) - (0.05 if same else 0.0), c,
                       width=0.1 if same else max(_ms(hi - lo), 1e-6), align="edge",
                       color="#D55E00" if lost else "#0072B2", edgecolor="#000000",
                       lw=0.5, hatch="xx" if lost else None)
                rows.append({"gap": g["gap"], "from_s": lo, "to_s": hi, "samples": c})
            _zero_and_required(ax, need)
            ax.yaxis.set_major_locator(MaxNLocator(integer=True))
            ax.set_ylabel("samples")
            ax.set_xlabel("least margin at the gap in a sample (ms)")
            ax.set_title(f"Gap {g['gap']}" + (f" (reversing section {g['section']})"
                                              if g["section"] else ""),
                         loc="left", fontsize=8.5)
            handles, _ = ax.get_legend_handles_labels()
            handles = [Patch(facecolor="#D55E00", edgecolor="#000000", hatch="xx",
                             label="bins wholly below 0 ms (lost)"),
                       Patch(facecolor="#0072B2", edgecolor="#000000",
                             label="other bins")] + handles
            ax.legend(handles=handles, loc="center left", bbox_to_anchor=(1.01, 0.5),
                      frameon=False, fontsize=6.5)
            m = g["margin_s"]
            descs.append(f"gap {g['gap']}: {m['n']} samples from {ms_text(m['min'], True)} "
                         f"to {ms_text(m['max'], True)}, median {ms_text(m['p50'], True)}")
        title = "Sweep: least margin per sample at each reversing section's gap"
        fig.suptitle(title, x=0.02, ha="left", fontsize=9.5)
        desc = ("Histograms of the least timing margin per sample, 20 bins each, with the "
                "zero line (a lost race) and the required margin: " + "; ".join(descs) + ".")
        table = Table("sweep-histogram", "Margin histogram", [
            Column("gap", "gap"), Column("from_s", "from", lambda v: ms_text(v, True), True),
            Column("to_s", "to", lambda v: ms_text(v, True), True),
            Column("samples", "samples", plain, True)], rows)
        return render(fig, "sweep-histogram", title, desc, table)


def _draw_lost(data):
    from sim.whatif.summary import interval_text, percent

    s = data.summary
    gaps = [g for g in s["gaps"] if g["reached"]] or list(s["gaps"])
    gaps = gaps[:3 * MAX_PANELS]
    rows = []
    n = len(gaps)
    height = 2.0 + 0.55 * n
    top = max(max(g["failing"]["ci95"][1], g["lost"]["ci95"][1]) for g in gaps)
    x_hi = min(100.0, max(5.0, 100.0 * top * 1.15))
    with figure(9.0, height) as fig:
        ax = fig.add_axes((0.3, 1.25 / height, 0.45, (height - 1.7) / height))
        labels = []
        for k, g in enumerate(gaps):
            y = n - 1 - k
            labels.append((y, g["gap"]))
            for j, (what, prop, mk, ls) in enumerate((
                    ("lost race", g["lost"], "o", "-"),
                    ("lost or below the required margin", g["failing"], "s", "--"))):
                yy = y + (0.15 if j == 0 else -0.15)
                lo, hi = prop["ci95"]
                cnt, of = prop["count"], prop["of"]
                col = colour(j)
                if cnt == 0:
                    ax.plot([0.0, 100.0 * hi], [yy, yy], color=col, lw=1.6, ls=ls,
                            label=f"{what}: none lost, 95 % upper bound" if k == 0 else None)
                    ax.plot([100.0 * hi], [yy], marker="<", color=col, markersize=7,
                            markeredgecolor="#000000", lw=0)
                else:
                    ax.plot([100.0 * lo, 100.0 * hi], [yy, yy], color=col, lw=1.6, ls=ls,
                            label=f"{what}: 95 % interval" if k == 0 else None)
                    ax.plot([100.0 * prop["p"]], [yy], marker=mk, color=col, markersize=7,
                            markeredgecolor="#000000", lw=0,
                            label=f"{what}: share of samples" if k == 0 else None)
                ax.annotate(interval_text(prop), (1.0, yy), xycoords=("axes fraction", "data"),
                            xytext=(6, 0), textcoords="offset points", va="center",
                            fontsize=6.5)
                rows.append({"gap": g["gap"], "what": what, "count": cnt, "of": of,
                             "p": prop["p"], "low": lo, "high": hi,
                             "text": interval_text(prop)})
        ax.set_yticks([y for y, _ in labels])
        ax.set_yticklabels([f"gap {name}" for _, name in labels])
        ax.set_ylim(-0.7, n - 0.3)
        ax.set_xlim(0.0, x_hi)
        ax.set_xlabel("probability over the samples (%)")
        ax.grid(axis="y", visible=False)
        fig.legend(loc="lower left", bbox_to_anchor=(0.02, 0.02), ncol=2, frameon=False,
                   fontsize=6.5)
        title = "Sweep: probability of a lost race, with its 95 % interval (Wilson)"
        fig.suptitle(title, x=0.02, ha="left", fontsize=9.5)
        desc = ("Per gap, the share of samples in which a race was lost, and lost or below the "
                "required margin, with the Wilson score 95 % interval; where none lost, a bar "
                "to the upper bound: " + "; ".join(
                    f"gap {r['gap']} {r['what']}: {r['text']}" for r in rows) + ".")
        table = Table("sweep-lost", "Lost-race probability", [
            Column("gap", "gap"), Column("what", "what"),
            Column("text", "samples (Wilson 95 %)", csv=False),
            Column("count", "count", page=False), Column("of", "of", page=False),
            Column("p", "share", lambda v: percent(v), page=False),
            Column("low", "low", page=False), Column("high", "high", page=False)], rows)
        return render(fig, "sweep-lost", title, desc, table)


def _drivers(g: dict) -> list[dict]:
    """A gap's drivers when any has a rank correlation (none: its margin did not vary)."""
    ds = g["drivers"]
    return ds if any(d["spearman"] is not None or d["prcc"] is not None for d in ds) else []


def _points(data, g: dict, key: str) -> list[dict]:
    """Every valid sample that reached the gap with a margin: its value of ``key``, its
    margin and whether it lost."""
    unit = data.settings["vary"][key]["unit"]
    out = []
    for r in data.records:
        if "invalid" in r:
            continue
        rec = r["gaps"].get(g["gap"])
        if rec is None or rec["margin_s"] is None:
            continue
        v = r["inputs"].get(key)
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            continue
        out.append({"gap": g["gap"], "sample": r["i"], "key": key, "value": v,
                    "value_text": value_text(v, unit), "margin_s": rec["margin_s"],
                    "lost": bool(rec["lost"])})
    return out


def _thin(points: list[dict]) -> list[dict]:
    """At most :data:`MAX_POINTS`: every lost race, then an even stride of the rest."""
    if len(points) <= MAX_POINTS:
        return points
    lost = [p for p in points if p["lost"]][:MAX_POINTS]
    rest = [p for p in points if not p["lost"]]
    room = MAX_POINTS - len(lost)
    step = max(1, math.ceil(len(rest) / room)) if room > 0 else len(rest) + 1
    return lost + rest[::step][:max(room, 0)]


def _draw_scatter(data, gaps: list[dict]):
    s = data.summary
    need = s["t_margin_required_s"]
    units = {k: v["unit"] for k, v in data.settings["vary"].items()}
    panels = [(g, _drivers(g)[0]["key"]) for g in gaps if _drivers(g)]
    if not panels:
        return None
    rows = []
    n = len(panels)
    thinned = False
    with figure(9.0, 1.3 + 2.6 * n) as fig:
        axes = fig.subplots(n, 1, squeeze=False)[:, 0]
        fig.subplots_adjust(left=0.09, right=0.7, top=1 - 0.6 / (1.3 + 2.6 * n),
                            bottom=0.6 / (1.3 + 2.6 * n), hspace=0.8)
        descs = []
        for ax, (g, key) in zip(axes, panels):
            pts = _points(data, g, key)
            rows.extend(pts)
            shown = _thin(pts)
            thinned = thinned or len(shown) < len(pts)
            scale, unit = _unit_axis(units.get(key, ""))
            for lost, mk, col, word in ((False, "o", "#0072B2", "race won"),
                                        (True, "X", "#D55E00", "race LOST")):
                sel = [p for p in shown if p["lost"] == lost]
                if sel:
                    ax.scatter([p["value"] * scale for p in sel],
                               [_ms(p["margin_s"]) for p in sel], marker=mk, s=18,
                               c=col, edgecolors="#000000", linewidths=0.3,
                               label=f"{word} ({len([p for p in pts if p['lost'] == lost])} "
                                     f"samples)", zorder=3)
            _zero_and_required(ax, need, vertical=False)
            ax.set_xlabel(f"{key}" + (f" ({unit})" if unit else " (no unit)"))
            ax.set_ylabel("least margin (ms)")
            d = _drivers(g)[0]
            rho = "-" if d["spearman"] is None else f"{d['spearman']:+.3f}"
            ax.set_title(f"Gap {g['gap']}: margin against {key} (Spearman {rho})",
                         loc="left", fontsize=8.5)
            ax.legend(loc="center left", bbox_to_anchor=(1.01, 0.5), frameon=False,
                      fontsize=6.5)
            descs.append(f"gap {g['gap']}: {len(pts)} samples against {key}, Spearman "
                         f"{rho}, {sum(p['lost'] for p in pts)} lost")
        title = "Sweep: margin against the quantity that drives it most"
        fig.suptitle(title, x=0.02, ha="left", fontsize=9.5)
        desc = ("Scatter of each sample's least margin at a gap against the varied quantity "
                "with the strongest rank correlation; lost races as crosses, won as circles; "
                "lines at 0 ms and the required margin: " + "; ".join(descs) + "."
                + (f" At most {MAX_POINTS} samples are drawn per panel (every lost one); "
                   f"the CSV has them all." if thinned else ""))
        table = Table("sweep-scatter", "Margin against the driving quantity", [
            Column("gap", "gap"), Column("sample", "sample", plain, True),
            Column("key", "varied key"),
            Column("value", "value (SI)", plain, True, page=False),
            Column("value_text", "value", plain, True, csv=False),
            Column("margin_s", "least margin", lambda v: ms_text(v, True), True),
            Column("lost", "race", lambda v: "LOST" if v else "won")], rows)
        return render(fig, "sweep-scatter", title, desc, table)


def _draw_sensitivity(data, gaps: list[dict]):
    panels = [g for g in gaps if _drivers(g)]
    if not panels:
        return None
    rows = []
    n_rows = sum(len(g["drivers"]) for g in panels)
    height = 1.3 + 0.5 * n_rows + 0.5 * len(panels)
    with figure(9.0, height) as fig:
        axes = fig.subplots(len(panels), 1, squeeze=False,
                            gridspec_kw={"height_ratios": [len(g["drivers"]) for g in panels]}
                            )[:, 0]
        fig.subplots_adjust(left=0.33, right=0.8, top=1 - 0.65 / height,
                            bottom=0.6 / height, hspace=0.6 + 0.2 * len(panels))
        descs = []
        for ax, g in zip(axes, panels):
            ds = g["drivers"]
            m = len(ds)
            for k, d in enumerate(ds):
                y = m - 1 - k
                for j, (what, v, hatch) in enumerate((("Spearman", d["spearman"], None),
                                                      ("partial", d["prcc"], "///"))):
                    yy = y + (0.18 if j == 0 else -0.18)
                    if v is None:
                        ax.annotate(f"{what}: -", (0.0, yy), xytext=(3, 0),
                                    textcoords="offset points", va="center", fontsize=6.5)
                        continue
                    ax.barh(yy, v, height=0.34, color=colour(j), edgecolor="#000000",
                            lw=0.5, hatch=hatch,
                            label=(f"{what} rank correlation" if k == 0 else None))
                    ax.annotate(f"{v:+.3f}", (v, yy), xytext=(3 if v >= 0 else -3, 0),
                                textcoords="offset points", va="center",
                                ha="left" if v >= 0 else "right", fontsize=6.5)
                rows.append({"gap": g["gap"], "key": d["key"], "spearman": d["spearman"],
                             "prcc": d["prcc"]})
            ax.set_yticks([m - 1 - k for k in range(m)])
            ax.set_yticklabels([d["key"] for d in ds], fontsize=7)
            ax.set_xlim(-1.15, 1.15)
            ax.axvline(0.0, color="#000000", lw=0.8)
            ax.set_title(f"Gap {g['gap']}", loc="left", fontsize=8.5)
            ax.grid(axis="y", visible=False)
            ax.legend(loc="center left", bbox_to_anchor=(1.01, 0.5), frameon=False,
                      fontsize=6.5)
            descs.append(f"gap {g['gap']}: " + ", ".join(
                f"{d['key']} Spearman {d['spearman'] if d['spearman'] is None else format(d['spearman'], '+.3f')}"
                f" partial {d['prcc'] if d['prcc'] is None else format(d['prcc'], '+.3f')}"
                for d in ds))
        axes[-1].set_xlabel("rank correlation with the margin (no unit; +1: a larger value, "
                            "a larger margin)")
        title = "Sweep: what drives the margin (rank correlations)"
        fig.suptitle(title, x=0.02, ha="left", fontsize=9.5)
        desc = ("Bars of Spearman's rank correlation (solid) and the partial rank correlation "
                "(hatched) of each varied quantity with the least margin: "
                + "; ".join(descs) + ".")
        fmt = lambda v: "-" if v is None else f"{v:+.3f}"  # noqa: E731
        table = Table("sweep-sensitivity", "Sensitivity", [
            Column("gap", "gap"), Column("key", "varied key"),
            Column("spearman", "Spearman", fmt, True),
            Column("prcc", "partial rank correlation", fmt, True)], rows)
        return render(fig, "sweep-sensitivity", title, desc, table)


def sweep_section(data) -> SweepSection:
    """The sweep section of a report from a store read for its scenario
    (:func:`sim.report.sweep.read_store`)."""
    sec = SweepSection(data)
    sec.lines = _lines(data)
    sec.inputs = _inputs_table(data)
    sec.gaps = _gaps_table(data)
    sec.races = sec.gaps.view(RACE_COLUMNS, "Races per reversing section's gap",
                              "Shares of the samples with the Wilson score 95 % interval; "
                              "where no sample lost, its upper bound, never 0 %.")
    sec.margins = sec.gaps.view(MARGIN_COLUMNS, "Least margin per sample at each gap",
                                "Percentiles over the samples whose train reached the gap; "
                                "the worst sample with the settings it drew.")
    sec.devices = _devices_table(data)
    s = data.summary
    if s["gaps"]:
        sec.lost = _draw_lost(data)
    shown = _shown_gaps(s)
    if shown:
        sec.histogram = _draw_histogram(data, shown)
        sec.scatter = _draw_scatter(data, shown)
        sec.sensitivity = _draw_sensitivity(data, shown)
    return sec
