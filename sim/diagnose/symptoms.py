"""What each short episode shows by itself: the per-episode symptoms of a run.

One rule per outcome, applied to one episode at a time (no scenario, no
layout): these are the facts the grouping (:mod:`sim.diagnose.groups`) counts
per place and the causes (:mod:`sim.diagnose.causes`) explain.

Codes (their meaning is fixed; the texts are this module's)
-----------------------------------------------------------
RF-RUN-001 (error)    a gap short tripped a device (or dropped out the boosters of
                      a supply at its limit).
RF-RUN-002 (error)    a gap short was not cleared: still flowing at the end of
                      the run, or swapped two or more times without clearing.
RF-RUN-003 (error)    a negative timing margin: an upstream device tripped before
                      the swap cleared the short.
RF-RUN-004 (error)    a timing margin below ``require.margin``.
RF-RUN-005 (error)    a fault or overload short was not cleared: a short that does
                      not trip can overheat wiring.
RF-RUN-010 (info)     a fault or overload tripped a device, or dropped out the
                      boosters of its supply (the protection at work, or a
                      supply at its limit: RF-RUN-033 says which).
"""
from __future__ import annotations

from typing import Iterable

from sim.diagnose.text import signed_ms_text, t_text
from sim.model import Finding

__all__ = ["episode_findings", "verdict_findings", "SYMPTOM_CODES"]

#: Every code this module emits (a run's findings with these codes are rebuilt by
#: the diagnosis; the engine never emits them itself).
SYMPTOM_CODES = frozenset({"RF-RUN-001", "RF-RUN-002", "RF-RUN-003", "RF-RUN-004",
                           "RF-RUN-005", "RF-RUN-010"})


def episode_findings(ep, t_margin_required_s: float) -> list[Finding]:
    """The symptom findings of one episode (module docstring), each at ``ep.where``
    with ``first_s`` = ``last_s`` = the episode's start."""
    out: list[Finding] = []
    at = f"{ep.where} at {t_text(ep.start_s)}"
    who = f" (train {ep.train})" if ep.train else ""

    def add(sev, code, message):
        out.append(Finding(sev, code, ep.where, message, first_s=ep.start_s,
                           last_s=ep.start_s))

    acted = (f"dropped out the boosters of {ep.acted}" if ep.outcome == "dropout"
             else f"tripped {ep.acted}")
    if ep.kind == "gap" and ep.outcome in ("tripped", "dropout"):
        add("error", "RF-RUN-001", f"gap short at {at}{who} {acted} at {t_text(ep.acted_s)}")
    elif ep.outcome == "unresolved":
        code, what = ("RF-RUN-002", "gap short") if ep.kind == "gap" else \
            ("RF-RUN-005", f"{ep.kind} short")
        if ep.end_s is None:
            how = "was still flowing at the end of the run"
        else:
            how = (f"was swapped {ep.swaps} times without clearing"
                   + (f", until {ep.acted} tripped at {t_text(ep.acted_s)}"
                      if ep.acted and ep.acted_s is not None else ""))
        add("error", code, f"{what} at {at}{who} {how}")
    elif ep.outcome in ("tripped", "dropout"):
        add("info", "RF-RUN-010", f"{ep.kind} at {at} {acted} at {t_text(ep.acted_s)}")
    if ep.margin_s is not None:
        if ep.margin_s < 0:
            add("error", "RF-RUN-003",
                f"negative timing margin {signed_ms_text(ep.margin_s)} at {at}: an upstream "
                "device trips before the swap clears")
        elif ep.margin_s < t_margin_required_s:
            add("error", "RF-RUN-004",
                f"timing margin {signed_ms_text(ep.margin_s)} at {at} is below the required "
                f"{t_margin_required_s * 1e3:.3f} ms")
    return out


def verdict_findings(episodes: Iterable, t_margin_required_s: float) -> list[Finding]:
    """The symptom findings of every episode, in episode order (one or two per
    failing episode, ungrouped). :func:`sim.diagnose.diagnose` groups them by place
    and ties them to their causes; this list is what a run shows before that."""
    out: list[Finding] = []
    for ep in episodes:
        out.extend(episode_findings(ep, t_margin_required_s))
    return out
