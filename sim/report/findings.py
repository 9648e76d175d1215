"""The report's verdict, headline and findings: the check's and the run's own, presented.

Nothing is decided here. The verdict is :func:`sim.verdict.decide` (any error
fails, the one rule of every command) over the findings of ``railfault check``
and ``railfault run`` together, so the page fails exactly when either command
would. The headline is the run's own (``Result.headline``: its worst problems
first, one line per cause, :mod:`sim.diagnose.headline`), beside the errors and
warnings that ``railfault check`` finds before any train runs.

The findings are shown as the two commands print them:

* the run's in the diagnosis' order (:mod:`sim.diagnose.diagnosis`): each cause
  with its fix, directly followed by what only follows from it (``because``);
  :func:`run_blocks` only folds each follower into the block of the cause just
  above it;
* the check's causes (no ``because``) with their fixes, then, apart, the
  findings that only follow from one of them, as ``railfault check`` lists them.
"""
from __future__ import annotations

from collections import Counter
from dataclasses import dataclass

from sim.diagnose.cause import ref
from sim.diagnose.text import dur_text, plural, signed_ms_text, t_text
from sim.model import Finding
from sim.verdict import decide

__all__ = ["SYMBOL", "WORD", "Block", "verdict", "run_blocks", "check_causes",
           "check_followers", "check_headline", "times_text", "key_figures"]

SYMBOL = {"pass": "✓", "fail": "✗"}
WORD = {"pass": "PASS", "fail": "FAIL"}


@dataclass(frozen=True)
class Block:
    """One finding of the run and the findings right below it that follow from it."""

    finding: Finding
    followers: tuple = ()


def verdict(check_findings, run_findings) -> str:
    """The report's verdict: :func:`sim.verdict.decide` over both lists of findings."""
    return decide(list(check_findings) + list(run_findings))


def run_blocks(findings) -> list[Block]:
    """The run's findings in their own order, each follower (``because`` naming the
    finding that heads the block above it) folded into that block."""
    blocks: list[Block] = []
    for f in findings:
        if f.because and blocks and f.because == ref(blocks[-1].finding):
            last = blocks[-1]
            blocks[-1] = Block(last.finding, last.followers + (f,))
        else:
            blocks.append(Block(f))
    return blocks


def check_causes(findings) -> list[Finding]:
    """The check's findings that name no root cause (``railfault check``'s first table)."""
    return [f for f in findings if not f.because]


def check_followers(findings) -> list[Finding]:
    """The check's findings that only follow from another (its second table)."""
    return [f for f in findings if f.because]


def check_headline(findings) -> list[Finding]:
    """The check's errors and warnings that are causes of their own, worst first (the
    check's order)."""
    return [f for f in check_causes(findings) if f.severity in ("error", "warning")]


def times_text(f: Finding) -> str:
    """How often and when a run finding happened: ``3 times, 75.000000 s to
    76.507863 s``, ``at 29.120000 s``; ``""`` for a static finding."""
    if f.first_s is None:
        return ""
    if f.count > 1 and f.last_s is not None and f.last_s != f.first_s:
        return f"{f.count} times, {t_text(f.first_s)} to {t_text(f.last_s)}"
    return f"at {t_text(f.first_s)}"


def _ended(outcome: str, acted: str, n: int) -> str:
    """How shorts ended, in words (``acted``: the device that acted first)."""
    by = f" by {acted}" if acted else ""
    if outcome == "dropout":
        return "ended in a dropout" + (f" (supply {acted} at its limit)" if acted else "")
    if outcome == "clean":
        return "ended by " + ("itself" if n == 1 else "themselves")
    if outcome == "unresolved":
        return "UNRESOLVED"
    return outcome + by


def share_text(p: float) -> str:
    """A share as a percentage, one decimal: ``3.9 %``; ``under 0.1 %`` when it rounds
    to nothing."""
    return f"{100.0 * p:.1f} %" if p >= 0.0005 or p == 0.0 else "under 0.1 %"


def key_figures(result, pairs, lanes) -> list[str]:
    """The run in a few figures: gap shorts and their least margin, other shorts and
    who cleared them, the least static margin, the longest dark time."""
    out = []
    gaps = [e for e in result.episodes if e.kind == "gap"]
    if gaps:
        outcomes = Counter(e.outcome for e in gaps)
        text = ", ".join(f"{n} {o}" for o, n in sorted(outcomes.items()))
        line = f"{plural(len(gaps), 'gap short')} ({text})"
        with_m = [e for e in gaps if e.margin_s is not None]
        if with_m:
            e = min(with_m, key=lambda x: x.margin_s)
            dev = min(e.margins, key=e.margins.get)
            line += (f"; least margin {signed_ms_text(e.margin_s)} (against {dev} at "
                     f"{e.where}), required {result.t_margin_required_s * 1e3:.3f} ms")
        out.append(line + ".")
    others = [e for e in result.episodes if e.kind != "gap"]
    if others:
        acted = Counter((e.kind, e.outcome, e.acted or "") for e in others)
        out.append("; ".join(f"{plural(n, k + ' short')} {_ended(o, a, n)}"
                             for (k, o, a), n in sorted(acted.items())) + ".")
    if not result.episodes:
        out.append("No short episode in the run.")
    race = [p for p in pairs if p.kind == "race"]
    if race:
        p = min(race, key=lambda p: p.static_margin_s)
        out.append(f"Least static margin: {p.device} against {p.upstream} "
                   f"{signed_ms_text(p.static_margin_s)}.")
    dark = sorted((ln for ln in lanes if ln.total_s > 0), key=lambda ln: -ln.total_s)
    if dark:
        t_end = result.t_end_s
        parts = [f"district of {ln.district} {dur_text(ln.total_s)} in "
                 f"{plural(len(ln.spans), 'span')}"
                 + (f" ({share_text(ln.total_s / t_end)} of the run)" if t_end else "")
                 for ln in dark[:3]]
        more = f"; {plural(len(dark) - 3, 'more district')} in the chart" if len(dark) > 3 \
            else ""
        out.append("Dark time, the longest first: " + "; ".join(parts) + more + ".")
    else:
        out.append("No district went dark.")
    return out
