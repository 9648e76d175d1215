"""The summary of a sweep: per reversing section and gap, what the samples say.

Made from the sample records alone (sorted by index), so it is the same
whatever ran them and in which order. For each gap (:mod:`sim.whatif.outcome`):

- ``reached``: samples in which a train bridged it with a short at least once;
  ``crossed_in_phase``: samples in which a train crossed it with no short there
  (:func:`sim.whatif.outcome.crossed_gaps`);
- ``lost``: samples in which a race there was lost, with the Wilson 95 %
  interval of the probability (:func:`sim.whatif.stats.wilson`) over the
  samples that *reached* the gap (``of`` is ``reached``: a sample in which no
  train got there says nothing about the race); ``failing`` likewise (lost, or
  a margin below ``require.margin``). A gap no sample reached has ``of`` 0 and
  no interval: the text says "not reached in any sample: no conclusion";
- ``margin_s``: the distribution of the gap's least margin per sample (min,
  quantiles, mean, max, a histogram of 20 equal bins);
- ``worst``: the sample with the least margin (the lowest index among equals),
  its margin and its settings;
- ``drivers``: per varied quantity, Spearman's rank correlation with the margin
  and, with two or more varied quantities, the partial rank correlation.

Devices: in how many samples each device tripped (with its Wilson interval),
the most trips and the longest dark time of a sample. The run verdict: how
many samples passed.
"""
from __future__ import annotations

import math
from typing import Optional

import numpy as np

from sim.whatif.stats import Z95, prcc, quantiles, spearman, wilson

__all__ = ["SWEEP_FORMAT", "summarize", "render_summary", "percent", "interval_text"]

SWEEP_FORMAT = "railfault-sweep/1"

#: Bins of the margin histograms.
HIST_BINS = 20


def _proportion(k: int, n: int, over: str = "valid") -> dict:
    """``{count, of, p, ci95, over}``: ``over`` names what ``of`` counts (``valid``
    samples, or those that ``reached`` a gap)."""
    lo, hi = wilson(k, n)
    return {"count": k, "of": n, "p": (k / n) if n else None, "ci95": [lo, hi], "over": over}


def _histogram(values: list[float]) -> dict:
    v = np.asarray(values, dtype=float)
    lo, hi = float(v.min()), float(v.max())
    if hi == lo:
        return {"edges_s": [lo, hi], "counts": [len(v)]}
    counts, edges = np.histogram(v, bins=HIST_BINS, range=(lo, hi))
    return {"edges_s": [float(e) for e in edges], "counts": [int(c) for c in counts]}


def _drivers(keys: list[str], rows: list[dict], margins: list[float]) -> list[dict]:
    """Spearman and partial rank correlation of each numeric input with the margin."""
    usable = [k for k in keys if all(isinstance(r["inputs"].get(k), (int, float))
                                     and not isinstance(r["inputs"].get(k), bool)
                                     for r in rows)]
    if not rows or not usable:
        return []
    xs = np.array([[float(r["inputs"][k]) for k in usable] for r in rows])
    y = np.asarray(margins, dtype=float)
    partial = prcc(xs, y) if len(usable) >= 2 else [None] * len(usable)
    out = []
    for j, key in enumerate(usable):
        out.append({"key": key, "spearman": spearman(xs[:, j], y), "prcc": partial[j]})
    out.sort(key=lambda d: (-abs(d["prcc"] if d["prcc"] is not None else
                                 (d["spearman"] if d["spearman"] is not None else 0.0)),
                            d["key"]))
    return out


def summarize(scn, settings: dict, records: list[dict]) -> dict:
    """The ``railfault-sweep/1`` summary of ``records`` (see the module docstring).

    Parameters
    ----------
    scn : sim.model.Scenario
        The base scenario (its gaps, devices and required margin).
    settings
        :meth:`sim.whatif.samplers.Design.settings`.
    records
        Every sample's record (:meth:`sim.whatif.runner.Runner.record`), any order.
    """
    from sim.whatif.outcome import reversing_gaps

    records = sorted(records, key=lambda r: r["i"])
    valid = [r for r in records if "invalid" not in r]
    invalid = [r for r in records if "invalid" in r]
    n = len(valid)
    keys = list(settings.get("vary", {}))
    gaps = dict(reversing_gaps(scn))
    for r in valid:
        for g in r["gaps"]:
            gaps.setdefault(g, "")
    gap_rows = []
    for g, section in gaps.items():
        with_m = [(r, r["gaps"][g]["margin_s"]) for r in valid
                  if g in r["gaps"] and r["gaps"][g]["margin_s"] is not None]
        margins = [m for _, m in with_m]
        reached = sum(1 for r in valid if g in r["gaps"])
        row = {
            "gap": g, "section": section or None,
            "reached": reached,
            "crossed_in_phase": sum(1 for r in valid if g not in r["gaps"]
                                    and g in r.get("crossed", ())),
            # over the samples that reached the gap (module docstring)
            "lost": _proportion(sum(1 for r in valid if r["gaps"].get(g, {}).get("lost")),
                                reached, "reached"),
            "failing": _proportion(sum(1 for r in valid if r["gaps"].get(g, {}).get("fail")),
                                   reached, "reached"),
            "margin_s": None, "worst": None, "drivers": [],
        }
        if margins:
            row["margin_s"] = {"n": len(margins), "min": min(margins), **quantiles(margins),
                               "mean": float(np.mean(margins)), "max": max(margins),
                               "histogram": _histogram(margins)}
            worst_r, worst_m = min(with_m, key=lambda t: (t[1], t[0]["i"]))
            row["worst"] = {"sample": worst_r["i"], "margin_s": worst_m,
                            "inputs": worst_r["inputs"]}
            row["drivers"] = _drivers(keys, [r for r, _ in with_m], margins)
        gap_rows.append(row)
    devices = []
    names = sorted({d for r in valid for d in r["trips"]} | {d for r in valid for d in r["dark_s"]})
    for d in names:
        devices.append({"device": d,
                        "tripped": _proportion(sum(1 for r in valid if r["trips"].get(d)), n),
                        "most_trips": max((r["trips"].get(d, 0) for r in valid), default=0),
                        "most_dark_s": max((r["dark_s"].get(d, 0.0) for r in valid),
                                           default=0.0)})
    return {
        "format": SWEEP_FORMAT,
        "scenario": {"title": scn.title, "path": scn.path, "sha256": scn.sha256},
        "settings": settings,
        "t_margin_required_s": scn.t_margin_required_s,
        "samples": len(records), "valid": n, "invalid": len(invalid),
        "invalid_examples": [{"sample": r["i"], "inputs": r["inputs"], "why": r["invalid"]}
                             for r in invalid[:5]],
        "verdict_fail": _proportion(sum(1 for r in valid if r["verdict"] != "pass"), n),
        "gaps": gap_rows,
        "devices": devices,
        "confidence": {"level": 0.95, "z": Z95, "method": "Wilson score interval"},
    }


# ------------------------------------------------------------------ text
def percent(p: Optional[float]) -> str:
    """A probability as a percentage with 2 significant digits (``"1.2 %"``)."""
    if p is None:
        return "-"
    x = 100.0 * p
    if x == 0.0:
        return "0 %"
    digits = max(0, 1 - int(math.floor(math.log10(abs(x)))))
    return f"{x:.{digits}f} %"


def interval_text(prop: dict) -> str:
    """``"12 of 1000 (1.2 %, 95 % CI 0.69 % to 2.1 %)"``; never "0 %" alone: with no
    sample, the upper bound."""
    k, n = prop["count"], prop["of"]
    lo, hi = prop["ci95"]
    if n == 0:
        return ("not reached in any sample: no conclusion" if prop.get("over") == "reached"
                else "no valid sample")
    if k == 0:
        return f"none of {n} (below {percent(hi)} with 95 % confidence)"
    return f"{k} of {n} ({percent(prop['p'])}, 95 % CI {percent(lo)} to {percent(hi)})"


def _ms(x: Optional[float]) -> str:
    return "-" if x is None else f"{x * 1e3:+.3f} ms"


def _value(key: str, v, unit: str) -> str:
    """A varied value with its unit: times in ms (``0.293 ms``, not ``0.000292656 s``), a
    sense phase as the share of a sample period it is (scenarios/README.md, ``sense``)."""
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        return f"{v} {unit}".rstrip()
    if unit == "s":
        return f"{v * 1e3:.3f} ms"
    if key.endswith(".phase"):
        return f"{v:.3f} of a sample period"
    if not unit:
        return f"{v:.6g} (a number, no unit)"
    return f"{v:.6g} {unit}"


def render_summary(summary: dict) -> str:
    """The summary for people (every number with its unit)."""
    from sim.textfmt import table

    s = summary
    st = s["settings"]
    units = {k: v["unit"] for k, v in st["vary"].items()}
    lines = [f"Sweep of {s['scenario']['title'] or s['scenario']['path']}",
             f"{s['samples']} samples ({st['design']}, seed {st['seed']}; "
             f"{len(st['vary'])} varied: {', '.join(st['vary'])})"]
    if s["invalid"]:
        lines.append(f"{s['invalid']} samples could not be run with their values, e.g. "
                     + "; ".join(f"sample {e['sample']}: {e['why']}"
                                 for e in s["invalid_examples"][:2]))
    lines.append(f"Run verdict fail: {interval_text(s['verdict_fail'])}")
    lines.append("")
    need = s["t_margin_required_s"]
    for g in s["gaps"]:
        head = f"Gap {g['gap']}" + (f" (reversing section {g['section']})" if g["section"]
                                     else "")
        lines.append(head)
        crossed = g.get("crossed_in_phase", 0)
        if not g["reached"]:
            if crossed:
                lines.append(f"  crossed in phase (no short) in {crossed} of {s['valid']} "
                             f"samples, never with a short: no race to judge")
            else:
                lines.append(f"  not reached in any sample: no conclusion (no train bridged "
                             f"it in any of {s['valid']} samples)")
            lines.append("")
            continue
        more = f", crossed in phase (no short) in {crossed} more" if crossed else ""
        lines.append(f"  reached in {g['reached']} of {s['valid']} samples{more}; of those "
                     f"{g['reached']}:")
        lines.append(f"  lost race: {interval_text(g['lost'])}")
        if need > 0:
            lines.append(f"  lost or margin below the required {need * 1e3:.3f} ms: "
                         f"{interval_text(g['failing'])}")
        m = g["margin_s"]
        if m:
            lines.append(f"  margin: min {_ms(m['min'])}, 5 % {_ms(m['p05'])}, median "
                         f"{_ms(m['p50'])}, 95 % {_ms(m['p95'])}, max {_ms(m['max'])}")
            w = g["worst"]
            lines.append(f"  worst: sample {w['sample']}, margin {_ms(w['margin_s'])}, with "
                         + ", ".join(f"{k} = {_value(k, v, units.get(k, ''))}"
                                     for k, v in w["inputs"].items()))
            if g["drivers"]:
                rows = [[d["key"], "-" if d["spearman"] is None else f"{d['spearman']:+.3f}",
                         "-" if d["prcc"] is None else f"{d['prcc']:+.3f}"]
                        for d in g["drivers"]]
                lines.append("  what drives the margin (rank correlation, no unit):")
                lines.extend("    " + x for x in table(["varied key", "Spearman", "partial"],
                                                       rows).splitlines())
        lines.append("")
    if s["devices"]:
        rows = [[d["device"], interval_text(d["tripped"]), str(d["most_trips"]),
                 f"{d['most_dark_s']:.3f} s"] for d in s["devices"]]
        lines.append("Devices")
        lines.extend("  " + x for x in table(["device", "tripped in", "most trips",
                                              "longest dark"], rows).splitlines())
    return "\n".join(lines).rstrip()
