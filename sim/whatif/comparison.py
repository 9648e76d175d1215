"""Cases side by side: the base and every case of ``cases:``, run and compared.

:func:`compare` runs the base scenario and each case (a whole scenario of its
own, :mod:`sim.whatif.cases`) in the event engine and lines up:

- the run verdict of each;
- per reversing section's gap (:mod:`sim.whatif.outcome`): the least margin,
  and whether a race there was lost;
- per device: trips and dark time;
- the episodes that differ from the base's: matched by kind, place, train and
  their order among the episodes of that kind, place and train; an episode is
  ``added`` (only in the case), ``removed`` (only in the base) or ``changed``
  (another outcome, device acting, or a start, margin or acting instant more
  than 1 us away).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Optional

from sim.whatif.outcome import gap_record, reversing_gaps

__all__ = ["compare", "CompareResult", "COMPARE_FORMAT", "T_SAME_S"]

COMPARE_FORMAT = "railfault-compare/1"

#: Instants and margins closer than this are the same (1 us, the loader's time base).
T_SAME_S = 1e-6


def _key(ep) -> tuple:
    return (ep.kind, ep.where, ep.train)


def _near(a: Optional[float], b: Optional[float]) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return abs(a - b) <= T_SAME_S


def _episode(ep) -> dict:
    return {k: v for k, v in ep.as_dict().items()
            if k in ("start_s", "end_s", "kind", "where", "train", "peak_a", "outcome", "acted",
                     "acted_s", "margin_s", "tripped", "devices")}


def episode_differences(base_eps: list, case_eps: list) -> list[dict]:
    """The episodes of a case that differ from the base's (module docstring)."""
    def numbered(eps):
        seen: dict = {}
        out = {}
        for ep in eps:
            k = _key(ep)
            seen[k] = seen.get(k, 0) + 1
            out[k + (seen[k],)] = ep
        return out

    a, b = numbered(base_eps), numbered(case_eps)
    out = []
    for k in sorted(set(a) | set(b), key=lambda k: (
            (b.get(k) or a.get(k)).start_s, str(k))):
        ea, eb = a.get(k), b.get(k)
        if ea is None:
            out.append({"change": "added", "case": _episode(eb)})
        elif eb is None:
            out.append({"change": "removed", "base": _episode(ea)})
        else:
            what = []
            if ea.outcome != eb.outcome:
                what.append("outcome")
            if ea.acted != eb.acted:
                what.append("acted")
            if not _near(ea.start_s, eb.start_s):
                what.append("start_s")
            if not _near(ea.margin_s, eb.margin_s):
                what.append("margin_s")
            if not _near(ea.acted_s, eb.acted_s):
                what.append("acted_s")
            if what:
                out.append({"change": "changed", "fields": what, "base": _episode(ea),
                            "case": _episode(eb)})
    return out


@dataclass
class CompareResult:
    """The base and its cases, run (:func:`compare`).

    ``results`` maps ``"base"`` and each case name to its :class:`sim.trace.Result`,
    in the file's order; ``scenarios`` the same names to their scenarios.
    """

    scenario: object
    results: dict = field(default_factory=dict)
    scenarios: dict = field(default_factory=dict)

    @property
    def names(self) -> list[str]:
        return list(self.results)

    @property
    def passed(self) -> bool:
        return all(r.verdict == "pass" for r in self.results.values())

    def gaps(self) -> list[dict]:
        """Per gap: section, and per name its least margin (s) and whether it lost."""
        gaps: dict = {}
        for name in self.results:
            for g, sec in reversing_gaps(self.scenarios[name]).items():
                gaps.setdefault(g, sec)
        recs = {name: gap_record(r.episodes, r.t_margin_required_s)
                for name, r in self.results.items()}
        for rec in recs.values():
            for g in rec:
                gaps.setdefault(g, "")
        out = []
        for g, sec in gaps.items():
            out.append({"gap": g, "section": sec or None,
                        "margin_s": {n: recs[n].get(g, {}).get("margin_s") for n in recs},
                        "lost": {n: bool(recs[n].get(g, {}).get("lost")) for n in recs},
                        "episodes": {n: recs[n].get(g, {}).get("n", 0) for n in recs}})
        return out

    def devices(self) -> list[dict]:
        names: dict = {}
        for r in self.results.values():
            for d, s in r.devices.items():
                names.setdefault(d, s.kind)
        return [{"device": d, "kind": k,
                 "trips": {n: (r.devices[d].trips if d in r.devices else None)
                           for n, r in self.results.items()},
                 "dark_s": {n: (r.devices[d].dark_s if d in r.devices else None)
                            for n, r in self.results.items()}}
                for d, k in names.items()]

    def differences(self) -> dict:
        base = self.results["base"].episodes
        return {n: episode_differences(base, r.episodes)
                for n, r in self.results.items() if n != "base"}

    def as_dict(self) -> dict:
        """The ``railfault-compare/1`` JSON object (no infinities: ``null`` instead)."""
        scn = self.scenario
        return _finite({
            "format": COMPARE_FORMAT,
            "scenario": {"title": scn.title, "path": scn.path, "sha256": scn.sha256},
            "cases": self.names,
            "verdict": {n: r.verdict for n, r in self.results.items()},
            "gaps": self.gaps(),
            "devices": self.devices(),
            "differences": self.differences(),
            "findings": {n: [f.as_dict() for f in r.findings if f.severity == "error"]
                         for n, r in self.results.items()},
        })

    def text(self) -> str:
        return render_compare(self)


def _finite(value):
    """``value`` with every non-finite float (an infinity, NaN) as ``None``, for JSON."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite(v) for v in value]
    return value


def compare(scn, until_s: Optional[float] = None) -> CompareResult:
    """Run the base scenario and every case of ``scn.cases``.

    Parameters
    ----------
    scn : sim.model.Scenario
        Loaded with its cases (``sim.scenario.load``).
    until_s : float, optional
        Stop every run here instead of at its duration.

    Returns
    -------
    CompareResult
    """
    from sim.world import run

    scenarios = {"base": scn, **dict(scn.cases)}
    results = {n: run(s, until_s=until_s) for n, s in scenarios.items()}
    return CompareResult(scenario=scn, results=results, scenarios=scenarios)


# ------------------------------------------------------------------ text
def _ms(x: Optional[float]) -> str:
    return "-" if x is None else f"{x * 1e3:+.3f} ms"


def _short(ep: dict) -> str:
    t = ep.get("start_s")
    who = f", train {ep['train']}" if ep.get("train") else ""
    acted = f" by {ep['acted']}" if ep.get("acted") else ""
    return (f"{ep['kind']} at {ep['where']}{who}, {t:.6f} s: {ep['outcome']}{acted}, margin "
            f"{_ms(ep.get('margin_s'))}")


def render_compare(res: CompareResult) -> str:
    """The comparison for people: one column per case (every number with its unit)."""
    from sim.textfmt import table

    names = res.names
    lines = [f"Cases of {res.scenario.title or res.scenario.path}: {', '.join(names)}", ""]
    rows = [["verdict"] + [res.results[n].verdict for n in names]]
    for g in res.gaps():
        label = f"least margin at {g['gap']}"
        rows.append([label] + [_ms(g["margin_s"][n]) + (" LOST" if g["lost"][n] else "")
                               if g["episodes"][n] else "not reached" for n in names])
    for d in res.devices():
        rows.append([f"{d['device']} trips"] + [
            "-" if d["trips"][n] is None else str(d["trips"][n]) for n in names])
        rows.append([f"{d['device']} dark"] + [
            "-" if d["dark_s"][n] is None else f"{d['dark_s'][n]:.3f} s" for n in names])
    lines.extend(table([""] + names, rows).splitlines())
    for name, diffs in res.differences().items():
        lines.append("")
        if not diffs:
            lines.append(f"{name}: the same episodes as the base")
            continue
        lines.append(f"{name}: {len(diffs)} episode{' differs' if len(diffs) == 1 else 's differ'}"
                     f" from the base")
        for d in diffs:
            if d["change"] == "added":
                lines.append(f"  only in {name}: {_short(d['case'])}")
            elif d["change"] == "removed":
                lines.append(f"  only in base: {_short(d['base'])}")
            else:
                lines.append(f"  base:  {_short(d['base'])}")
                lines.append(f"  {name}: {_short(d['case'])}")
    return "\n".join(lines)
