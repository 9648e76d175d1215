"""The report's verdict, headline and findings grouped by cause.

The verdict is the worse of the verdicts of ``check`` (static and circuit
checks) and ``run`` (the simulation): each is decided by its own rule, this
module only puts them side by side. The headline is the run's own
(``Result.headline``: the worst problems first, one line per cause) when the
result carries one; otherwise one line per error finding, the run's first.

Findings are grouped by cause: a finding that names its root cause
(``because``: ``"CODE where"``) is listed under that finding, and findings of
one code at one place are shown once with their count. Within a severity the
run's findings come first, then the checks' by family, causes before
consequences (:data:`FAMILIES`: the track's polarity and gaps before the
settings, the settings before what the circuit shows).
"""
from __future__ import annotations

from dataclasses import dataclass, field

SEVERITIES = ("error", "warning", "info")
#: Families of check codes, causes before consequences: the track's polarity, gaps and
#: wiring first, then the settings, then what the circuit shows (which often follows).
FAMILIES = ("RF-RUN", "RF-POL", "RF-COV", "RF-GAP", "RF-PHS", "RF-WIRE", "RF-LEN", "RF-COORD",
            "RF-CKT", "RF-FAULT", "RF-WIN", "RF-VOLT")
SYMBOL = {"pass": "✓", "fail": "✗"}
WORD = {"pass": "PASS", "fail": "FAIL"}


@dataclass
class Group:
    """A cause and the findings that only follow from it."""

    source: str                # check | run
    finding: dict              # the finding's JSON object
    count: int = 1
    followers: list = field(default_factory=list)

    @property
    def severity(self) -> str:
        return self.finding["severity"]


def _as_dict(f) -> dict:
    return f if isinstance(f, dict) else f.as_dict()


def group_findings(check_findings, run_findings) -> list[Group]:
    """Findings of check and run grouped by cause, errors first."""
    items = [("run", _as_dict(f)) for f in run_findings] + \
        [("check", _as_dict(f)) for f in check_findings]
    groups: list[Group] = []
    by_key: dict = {}
    by_ref: dict = {}
    for source, f in items:
        if f.get("because"):
            continue
        key = (source, f["severity"], f["code"], f["where"])
        g = by_key.get(key)
        if g is None:
            g = by_key[key] = Group(source, f, int(f.get("count", 1)))
            groups.append(g)
            by_ref.setdefault(f"{f['code']} {f['where']}", g)
        else:
            g.count += int(f.get("count", 1))
    for source, f in items:
        ref = f.get("because")
        if not ref:
            continue
        g = by_ref.get(ref)
        if g is None:
            g = Group(source, f, int(f.get("count", 1)))
            groups.append(g)
        else:
            g.followers.append(f)
    order = {s: k for k, s in enumerate(SEVERITIES)}
    src = {"run": 0, "check": 1}
    def family(code: str) -> int:
        fam = code.rsplit("-", 1)[0]
        return FAMILIES.index(fam) if fam in FAMILIES else len(FAMILIES)

    return sorted(groups, key=lambda g: (order.get(g.severity, 9), src[g.source],
                                         family(g.finding["code"]), g.finding["code"],
                                         g.finding["where"]))


def verdict_of(check: dict, result) -> str:
    """``"fail"`` when check or run failed, else ``"pass"``."""
    return "fail" if "fail" in (check.get("verdict"), result.verdict) else "pass"


def headline_of(check: dict, result, groups: list[Group]) -> list[str]:
    """The worst problems first, one line per cause (see the module doc)."""
    lines = list(getattr(result, "headline", None) or [])
    if not lines:
        for g in groups:
            if g.severity != "error":
                continue
            f = g.finding
            times = f" ({g.count} times)" if g.count > 1 else ""
            lines.append(f"{g.source}: {f['code']} {f['where']}: {f['message']}{times}")
    if not lines:
        lines.append("No errors: neither the checks nor the simulation found one.")
    return lines


def key_figures(result, pairs, lanes) -> list[str]:
    """The run in a few figures: gap shorts and their least margin, other shorts and
    who cleared them, the darkest district."""
    from collections import Counter

    out = []
    gaps = [e for e in result.episodes if e.kind == "gap"]
    if gaps:
        outcomes = Counter(e.outcome for e in gaps)
        text = ", ".join(f"{n} {o}" for o, n in sorted(outcomes.items()))
        line = f"{len(gaps)} gap short{'s' if len(gaps) != 1 else ''} ({text})"
        with_m = [e for e in gaps if e.margin_s is not None]
        if with_m:
            e = min(with_m, key=lambda x: x.margin_s)
            dev = min(e.margins, key=e.margins.get)
            line += (f"; least margin {e.margin_s * 1e3:+.3f} ms ({e.acted or 'the swap'} "
                     f"against {dev} at {e.where}), required "
                     f"{result.t_margin_required_s * 1e3:.3f} ms")
        out.append(line + ".")
    others = [e for e in result.episodes if e.kind != "gap"]
    if others:
        acted = Counter((e.kind, e.outcome, e.acted or "-") for e in others)
        out.append("; ".join(f"{n} {k} short{'s' if n != 1 else ''} {o}"
                             + (f" by {a}" if a != "-" else "")
                             for (k, o, a), n in sorted(acted.items())) + ".")
    if not result.episodes:
        out.append("No short episode in the run.")
    race = [p for p in pairs if p.kind == "race"]
    if race:
        p = min(race, key=lambda p: p.static_margin_s)
        out.append(f"Least static margin: {p.device} against {p.upstream} "
                   f"{p.static_margin_s * 1e3:+.3f} ms.")
    dark = [ln for ln in lanes if ln.total_s > 0]
    if dark:
        ln = max(dark, key=lambda x: x.total_s)
        share = ln.total_s / result.t_end_s if result.t_end_s else 0.0
        out.append(f"Darkest district: {ln.district}, dark {ln.total_s:.3f} s in "
                   f"{len(ln.spans)} span{'s' if len(ln.spans) != 1 else ''} "
                   f"({share:.1%} of the run).")
    else:
        out.append("No district went dark.")
    return out
