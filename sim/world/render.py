"""Human-readable text of a run: the verdict and headline first, then one finding per
cause with its fix, then the tables.

Order: the verdict in words and the headline (the worst problems first, one line
per cause; a long let-through is one of them, beside the verdict); the findings, each cause with its fix
and, under it, what only follows from it (``because``); the short episodes
(grouped by place; every one of them with ``--events``), the device summary and,
with ``--events``, every event. Every number printed carries its unit (ms, s,
A, A²s); the verdict is spelled out in words, never carried by colour alone.
"""
from __future__ import annotations

import re
import textwrap
from collections import Counter
from typing import Optional

from sim.diagnose.groups import EpisodeGroup
from sim.diagnose.text import a_text as _a
from sim.diagnose.text import dur_text as _dur
from sim.diagnose.text import signed_ms_text as _dt
from sim.diagnose.text import plural
from sim.diagnose.text import t_text as _t
from sim.textfmt import table as _table
from sim.trace import Result

OUTCOME_WORDS = {
    "clean": "clean (ended by itself)",
    "swapped": "swapped (reverser cleared it)",
    "tripped": "TRIPPED",
    "dropout": "DROPOUT (supply at its limit)",
    "unresolved": "UNRESOLVED",
}

#: How a grouped symptom's message begins (it names its place itself).
_PLACE_WORDS = ("gap ", "fault ", "overload of ", "static check", "train ")

_UNITS = (("_ohm", "ohm", 4), ("_a", "A", 3), ("_v", "V", 3), ("_m", "m", 3))
_WIDTH = 100


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


#: A number and its unit stay on one line when text is wrapped.
_NUMBER_UNIT = re.compile(r"(\d) (ms|s|A|A²s|V|mm|m|ohm|%)(?=[\s,;:).\]]|$)")


def _wrap(text: str, first: str, rest: str) -> list[str]:
    glued = _NUMBER_UNIT.sub("\\1\u00a0\\2", text)
    lines = textwrap.wrap(glued, _WIDTH, initial_indent=first, subsequent_indent=rest,
                          break_on_hyphens=False) or [first.rstrip()]
    return [line.replace("\u00a0", " ") for line in lines]


def _ref(f) -> str:
    return f"{f.code} {f.where}"


def _times(f) -> str:
    if f.first_s is None:
        return ""
    if f.count > 1 and f.last_s is not None and f.last_s != f.first_s:
        return f" [{f.count} times, {_t(f.first_s)} to {_t(f.last_s)}]"
    return f" [{_t(f.first_s)}]"


def _verdict_lines(result: Result) -> list[str]:
    errors = [f for f in result.findings if f.severity == "error"]
    warnings = [f for f in result.findings if f.severity == "warning"]
    causes = [f for f in result.findings if not f.because and f.severity != "info"]
    if result.verdict == "pass":
        head = ("Verdict: PASS - every gap short was cleared by a swap or ended by itself, "
                "with the required margin")
        head += f" ({plural(len(warnings), 'warning')}, see below)." if warnings else "."
    else:
        # count what is printed: one headline line per cause (the static errors no run
        # cause restates share a line)
        n = len(result.headline) or len([f for f in causes if f.severity == "error"]) \
            or len(errors)
        head = f"Verdict: FAIL - {plural(n, 'cause')} of trouble; the worst first:"
    out = [head]
    for i, line in enumerate(result.headline, 1):
        out += _wrap(line, f"  {i}. ", "     ")
    if result.t_margin_required_s:
        out.append(f"Required timing margin: {result.t_margin_required_s * 1e3:.3f} ms")
    return out


def _finding_lines(result: Result) -> list[str]:
    if not result.findings:
        return []
    causes = [f for f in result.findings if not f.because]
    refs = {_ref(f) for f in causes}
    under: dict[str, list] = {}
    for f in result.findings:
        if f.because:
            under.setdefault(f.because if f.because in refs else "", []).append(f)
    out = ["Findings: one per cause, worst first, each with its fix"]
    for f in causes + under.get("", []):
        out.append(f"  {f.severity.upper():7s} {f.code}  {f.where}{_times(f)}")
        out += _wrap(f.message, "          ", "          ")
        if f.fix:
            out += _wrap(f.fix, "          fix: ", "               ")
        if getattr(f, "same_as", ""):
            out += _wrap(f"{f.same_as} (railfault check's finding of the same cause: one "
                         f"cause, listed once)", "          same as: ", "            ")
        for g in under.get(_ref(f), []) if f in causes else []:
            text = g.message if g.message.startswith(_PLACE_WORDS) else f"{g.where}: {g.message}"
            out += _wrap(f"{g.code} ({g.severity}) {text}",
                         "          follows from it: ", "            ")
    out.append("")
    return out


def _episode_rows_grouped(eps) -> list[list[str]]:
    groups: dict[tuple, EpisodeGroup] = {}
    for e in eps:
        groups.setdefault((e.kind, e.where), EpisodeGroup(e.where, e.kind)).episodes.append(e)
    rows = []
    for g in groups.values():
        outcomes = Counter(e.outcome for e in g.episodes)
        acted = g.acted()
        rows.append([g.where, g.kind, ", ".join(g.trains) or "-", str(g.count), _t(g.first_s),
                     _t(g.last_s), _a(g.peak_a),
                     ", ".join(f"{n} {OUTCOME_WORDS.get(o, o)}" for o, n in outcomes.items()),
                     ", ".join(f"{d} ({n})" for d, n in acted.items()) or "-",
                     _dt(g.worst_margin_s)])
    return rows


def _episode_rows(eps) -> list[list[str]]:
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
    return rows


def render_text(result: Result, detail: Optional[bool] = None) -> str:
    """The report of one run for people (the CLI adds the cautions).

    Parameters
    ----------
    result:
        What :func:`sim.world.run` returned.
    detail:
        List every episode (``True``) or one row per place (``False``); by default
        every episode when the run kept its events (``--events``).

    Returns
    -------
    str
        A title line; the verdict and the headline (long let-throughs among it);
        the findings, each cause with its fix and what follows from it; the
        short episodes; the device summary (trips, swaps, restarts, dark time,
        peak current, thermal level); with ``--events`` every event.
    """
    if detail is None:
        detail = result.events is not None
    parts = [f"railfault run: {result.title}",
             f"scenario {result.path}  seed {result.seed}  simulated "
             f"{_dur(result.t_end_s)} of {_dur(result.duration_s)}", ""]
    parts += _verdict_lines(result) + [""]
    parts += _finding_lines(result)
    eps = result.episodes
    if eps and detail:
        parts += [f"Short episodes ({len(eps)})",
                  _table(["start", "end", "kind", "where", "train", "peak",
                          "outcome", "acted", "margin"], _episode_rows(eps)), ""]
    elif eps:
        parts += [f"Short episodes ({len(eps)}, one row per place; railfault run --events "
                  "lists each one)",
                  _table(["where", "kind", "train", "count", "first", "last", "peak",
                          "outcomes", "acted first", "worst margin"],
                         _episode_rows_grouped(eps)), ""]
    else:
        parts += ["Short episodes: none", ""]
    if result.devices:
        rows = []
        for name, d in sorted(result.devices.items()):
            district = getattr(d, "district_dark_s", None)
            rows.append([name, d.kind, str(d.trips), str(d.swaps), str(d.restarts),
                         _dur(d.dark_s), _dur(district if district is not None else d.dark_s),
                         _a(d.peak_a),
                         "-" if d.max_thermal is None
                         else f"{d.max_thermal * 100:.1f} % of rated heat"])
        parts += ["Devices (dark: its own output off; district dark: it or a device above it "
                  "off)",
                  _table(["device", "kind", "trips", "swaps", "restarts", "dark", "district dark",
                          "peak", "max thermal"], rows), ""]
    if result.events is not None:
        rows = [[_t(e.t_s), e.device, e.event, _data_text(e.data)] for e in result.events]
        parts += [f"Events ({len(rows)})", _table(["time", "device / place", "event", "details"],
                                                  rows), ""]
    return "\n".join(parts).rstrip("\n")
