"""The fault-current map drawn along every district, against its devices' thresholds.

For each district (the sections fed through one device), the coin-test current
through the district's feeding device at every point of the map
(:mod:`sim.circuit.faultmap`), without and with its supply's current limit,
along the sections in file order; the trip threshold of every device in the
feed chain and the sensing full scale as horizontal lines; the weakest point
marked and named. At most :data:`MAX_PANELS` districts are drawn, the weakest
(least current per trip threshold) first; every row is in the CSV.
"""
from __future__ import annotations

import math

from sim.report.figures import render
from sim.report.runtables import faultmap_table
from sim.report.style import GREY, a_label, colour, figure, linestyle, log_axis

MAX_PANELS = 8


def district_rows(check: dict, layout, scn) -> dict:
    """``{device: [rows through it of its own district's sections, in order]}``."""
    order = {s: k for k, s in enumerate(scn.track.sections)}
    out: dict = {}
    for r in check["fault_current"]:
        if layout.district(r["section"]) == r["device"]:
            out.setdefault(r["device"], []).append(r)
    for rows in out.values():
        rows.sort(key=lambda r: (order[r["section"]], r["at_m"]))
    return out


def draw_faultmap(scn, layout, check: dict):
    rows_by = district_rows(check, layout, scn)

    def weakness(dev):
        rows = rows_by[dev]
        return min(r["current_a"] / r["trip_a"] for r in rows)

    devs = sorted(rows_by, key=lambda d: (weakness(d), d))
    shown = devs[:MAX_PANELS]
    n = max(1, len(shown))
    with figure(10.0, 1.2 + 2.3 * n) as fig:
        axes = fig.subplots(n, 1, squeeze=False)[:, 0]
        fig.subplots_adjust(left=0.09, right=0.66, top=1 - 0.45 / (1.2 + 2.3 * n),
                            bottom=0.5 / (1.2 + 2.3 * n), hspace=0.75)
        descs = []
        for ax, dev in zip(axes, shown):
            rows = rows_by[dev]
            xs, pro, eff, ticks = [], [], [], []
            x0 = 0.0
            last = None
            for r in rows:
                if r["section"] != last:
                    if last is not None:
                        x0 = xs[-1]
                    ticks.append((x0, r["section"]))
                    last = r["section"]
                    base = x0 - r["at_m"]
                xs.append(base + r["at_m"])
                pro.append(r["prospective_a"])
                eff.append(r["current_a"])
            ax.plot(xs, pro, color="#000000", lw=1.4, label="prospective (no supply limit)")
            ax.plot(xs, eff, color="#0072B2", lw=1.6, ls="--", label="with the supply limit")
            chain = [d for d in (dev,) + scn.upstream(dev)
                     if scn.device_kind(d) in ("booster", "breaker", "reverser")]
            for k, d in enumerate(chain):
                thr = scn.device(d).trip.i_above_a
                ax.axhline(thr, color=colour(k + 1), ls=linestyle(k + 1), lw=1.1,
                           label=f"{d} trips above {thr:g} A")
                fs = scn.device(d).sense.full_scale_a
                if math.isfinite(fs):
                    ax.axhline(fs, color=colour(k + 1), ls=":", lw=0.8,
                               label=f"{d} reads at most {fs:g} A (full scale)")
            for x, name in ticks:
                ax.axvline(x, color=GREY, lw=0.5)
                ax.annotate(name, (x, 1.0), xycoords=("data", "axes fraction"),
                            xytext=(2, 2), textcoords="offset points", fontsize=6.5)
            k_min = min(range(len(rows)), key=lambda k: (eff[k], pro[k]))
            r = rows[k_min]
            word = "trips" if r["ok"] else "DOES NOT TRIP"
            ax.plot([xs[k_min]], [eff[k_min]], marker="v", color="#D55E00", markersize=9,
                    markeredgecolor="#000000", lw=0, label="weakest point")
            ax.annotate(f"weakest: {eff[k_min]:.2f} A at {r['section']} {r['at_m']:.2f} m "
                        f"({word})", (xs[k_min], eff[k_min]), xytext=(6, -12),
                        textcoords="offset points", fontsize=7, fontweight="bold")
            ax.set_yscale("log")
            log_axis(ax.yaxis, a_label)
            ax.set_ylabel("current")
            ax.set_xlabel(f"distance along the district of {dev} (m, sections in file order)")
            ax.legend(loc="center left", bbox_to_anchor=(1.01, 0.5), frameon=False, fontsize=6.5)
            descs.append(f"district of {dev}: {min(pro):.2f} to {max(pro):.2f} A prospective, "
                         f"weakest {eff[k_min]:.2f} A with the limit at {r['section']} "
                         f"{r['at_m']:.2f} m, which {word.lower()}")
        title = "Fault-current map: a coin across the rails at every point"
        if len(devs) > len(shown):
            title += f" (the {len(shown)} weakest of {len(devs)} districts)"
        fig.suptitle(title, x=0.02, ha="left", fontsize=9.5)
        desc = ("Prospective short-circuit current along each district against its devices' "
                "trip thresholds: " + "; ".join(descs) + ".")
        return render(fig, "faultmap", title, desc, faultmap_table(check), model=rows_by)
