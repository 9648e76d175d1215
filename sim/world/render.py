"""Human-readable text of a run: episode timeline, device summary, verdict.

Every number printed carries its unit (ms, s, A); the verdict is spelled out
in words, never carried by colour alone.
"""
from __future__ import annotations

import math
from typing import Optional, Sequence

from sim.textfmt import table as _table
from sim.trace import Result

OUTCOME_WORDS = {
    "clean": "clean (ended by itself)",
    "swapped": "swapped (reverser cleared it)",
    "tripped": "TRIPPED",
    "unresolved": "UNRESOLVED",
}


def _t(t_s: Optional[float]) -> str:
    """A time with its unit, to the microsecond: ms below 1 s, else s."""
    if t_s is None or (isinstance(t_s, float) and not math.isfinite(t_s)):
        return "-"
    if abs(t_s) < 1.0:
        return f"{t_s * 1e3:.3f} ms"
    return f"{t_s:.6f} s"


def _dur(dt_s: Optional[float]) -> str:
    """A duration: ms below 1 s, else s, three decimals."""
    if dt_s is None or not math.isfinite(dt_s):
        return "-"
    return f"{dt_s * 1e3:.3f} ms" if abs(dt_s) < 1.0 else f"{dt_s:.3f} s"


def _dt(dt_s: Optional[float]) -> str:
    """A duration or margin, signed, in ms."""
    if dt_s is None or not math.isfinite(dt_s):
        return "-"
    return f"{dt_s * 1e3:+.3f} ms"


def _a(i_a: Optional[float]) -> str:
    if i_a is None or not math.isfinite(i_a):
        return "-"
    return f"{i_a:.2f} A"


_UNITS = (("_ohm", "ohm", 4), ("_a", "A", 3), ("_v", "V", 3), ("_m", "m", 3))


def _data_text(data) -> str:
    """An event's details as ``name value unit`` pairs (the unit read off the key's suffix)."""
    out = []
    for k, v in data.items():
        if isinstance(v, float):
            if k.endswith("_s"):
                out.append(f"{k[:-2]} {_t(v)}")
                continue
            for suffix, unit, digits in _UNITS:
                if k.endswith(suffix):
                    out.append(f"{k[:-len(suffix)]} {v:.{digits}f} {unit}")
                    break
            else:
                out.append(f"{k} {v:g}")
        else:
            out.append(f"{k} {v}")
    return ", ".join(out)


def render_text(result: Result) -> str:
    """The report of one run for people (the CLI adds the cautions).

    Parameters
    ----------
    result:
        What :func:`sim.world.run` returned.

    Returns
    -------
    str
        A title line, the episode timeline (start, end, kind, place, train,
        peak current, outcome, acting device and instant, least margin), the
        device summary (trips, swaps, restarts, dark time, peak current,
        thermal level) and the verdict in words.
    """
    parts = [f"railfault run: {result.title}",
             f"scenario {result.path}  seed {result.seed}  simulated "
             f"{result.t_end_s:.3f} s of {result.duration_s:.3f} s", ""]
    eps = result.episodes
    if eps:
        rows = []
        for e in eps:
            margin = _dt(e.margin_s)
            if e.margins and len(e.margins) > 1:
                margin += " (" + ", ".join(f"{d} {_dt(m)}" for d, m in
                                           sorted(e.margins.items())) + ")"
            elif e.margins:
                (d, m), = e.margins.items()
                margin += f" ({d})"
            rows.append([_t(e.start_s), _t(e.end_s) if e.end_s is not None else "still on",
                         e.kind, e.where, e.train or "-", _a(e.peak_a),
                         OUTCOME_WORDS.get(e.outcome, e.outcome)
                         + (f" ({e.swaps} swaps)" if e.swaps > 1 else ""),
                         f"{e.acted} at {_t(e.acted_s)}" if e.acted else "-", margin])
        parts += [f"Short episodes ({len(eps)})",
                  _table(["start", "end", "kind", "where", "train", "peak",
                          "outcome", "acted", "margin"], rows), ""]
    else:
        parts += ["Short episodes: none", ""]
    if result.devices:
        rows = []
        for name, d in sorted(result.devices.items()):
            rows.append([name, d.kind, str(d.trips), str(d.swaps), str(d.restarts),
                         _dur(d.dark_s), _a(d.peak_a),
                         "-" if d.max_thermal is None
                         else f"{d.max_thermal * 100:.1f} % of rated heat"])
        parts += ["Devices", _table(["device", "kind", "trips", "swaps", "restarts", "dark",
                                     "peak", "max thermal"], rows), ""]
    if result.events is not None:
        rows = [[_t(e.t_s), e.device, e.event, _data_text(e.data)] for e in result.events]
        parts += [f"Events ({len(rows)})", _table(["time", "device / place", "event", "details"],
                                                  rows), ""]
    errors = [f for f in result.findings if f.severity == "error"]
    others = [f for f in result.findings if f.severity != "error"]
    if result.findings:
        parts += ["Findings"]
        parts += [f"  {f.severity.upper():7s} {f.code}  {f.where}: {f.message}"
                  for f in errors + others]
        parts.append("")
    if result.t_margin_required_s:
        parts.append(f"Required timing margin: {result.t_margin_required_s * 1e3:.3f} ms")
    if result.verdict == "pass":
        parts.append("Verdict: PASS - every gap short was cleared by a swap or ended by itself, "
                     "with the required margin.")
    else:
        parts.append(f"Verdict: FAIL - {len(errors)} problem(s) found (see Findings above).")
    return "\n".join(parts)
