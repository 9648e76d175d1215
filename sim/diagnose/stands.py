"""RF-RUN-042: trains that stood still without power for a long time.

A train that loses its power runs on its keep-alive, stops, and goes on when
power returns (the run's ``stop`` and ``go`` events; where it stood and why are
kept by :class:`sim.diagnose.runlog.RunLog`). A train standing for
:data:`STAND_LONG_S` or more - to the end of the run, often - is something a
club needs to know: a session stalls, a train stands across a gap. Each such
stand is tied to its cause when the run knows it:

1. the cause of the train's own shorts at a gap it stood across (the gap's
   short took its power: a gap out of phase, a train longer than its
   reversing section, ...);
2. else the cause that keeps dark a device of its feed chain that was open
   while it stood (open at the end for a train that stood to the end, open
   when it stopped otherwise), the device nearest the track first; a cause
   that is the protection at work comes after one that is not, errors before
   warnings.

Stands are grouped per train and cause: one finding with the count, the time
they add up to and the longest one (where it stood, from when to when). A
group tied to a cause follows from it (``because``, no more severe than it);
one without a cause is a warning of its own, with the devices to look at.

The engine reports a train standing across a gap for a second or more itself
(RF-RUN-027, :func:`sim.world.trains.stand_findings`): such a stand is not
reported again here; the engine's finding is tied to the stand's cause instead
(:func:`engine_stand_owner`).

RF-RUN-042 (warning)
    A train stood without power for :data:`STAND_LONG_S` or more.
"""
from __future__ import annotations

from typing import Optional

from sim.diagnose.cause import Cause
from sim.diagnose.facts import RunFacts
from sim.diagnose.text import dur_text, plural, t_text
from sim.model import Finding
from sim.verdict import severity_rank

__all__ = ["find_stands", "engine_stand_owner", "STAND_LONG_S", "CODE", "ENGINE_CODE"]

#: A stand this long is reported (s): our choice, longer than any keep-alive and any
#: restart back-off of the trade's devices (a few seconds at most), far shorter
#: than a session; not a published limit.
STAND_LONG_S = 10.0

CODE = "RF-RUN-042"
#: The engine's own finding of a stand across a gap.
ENGINE_CODE = "RF-RUN-027"
#: Two records of one stop agree to this (s).
_SAME_S = 1e-6


def _place(st) -> str:
    where = []
    if st.gaps:
        where.append(f"across gap {', '.join(st.gaps)}")
    if st.sections:
        where.append(f"in {', '.join(st.sections)}")
    return " ".join(where) or "where it was"


def _span(st) -> str:
    if st.to_end:
        return (f"from {t_text(st.t_stop_s)} to the end of the run "
                f"({dur_text(st.duration_s)})")
    return f"from {t_text(st.t_stop_s)} to {t_text(st.t_go_s)} ({dur_text(st.duration_s)})"


def _dark_of(st) -> tuple:
    """The devices of its chain that were open while it stood, nearest first."""
    dark = set(st.dark_end if st.to_end else ()) | set(st.dark)
    return tuple(d for d in st.chain if d in dark) or tuple(sorted(dark))


def _owner(facts: RunFacts, st, causes: list[Cause]) -> Optional[Cause]:
    """The cause of a stand (module docstring), or ``None``."""
    for c in causes:
        for e in c.episodes:
            if e.kind == "gap" and e.train == st.train and e.where in st.gaps:
                return c
    for d in _dark_of(st):
        cands = [c for c in causes if d in c.dark or d in c.darkened]
        if cands:
            return min(cands, key=lambda c: (c.protection, severity_rank(c.finding.severity)))
    return None


def _engine_stands(facts: RunFacts) -> list[Finding]:
    return [f for f in facts.engine_findings if f.code == ENGINE_CODE]


def _stand_at(facts: RunFacts, train: str, t_s: Optional[float]):
    if facts.log is None or t_s is None:
        return None
    for st in facts.log.stands:
        if st.train == train and abs(st.t_stop_s - t_s) <= _SAME_S:
            return st
    return None


def engine_stand_owner(facts: RunFacts, f: Finding, causes: list[Cause]) -> Optional[Cause]:
    """The cause of the stand an engine RF-RUN-027 finding reports (``None``: unknown)."""
    st = _stand_at(facts, f.where, f.first_s)
    return _owner(facts, st, causes) if st is not None else None


def find_stands(facts: RunFacts, causes: list[Cause]) -> list[tuple[Finding, Optional[Cause]]]:
    """``[(finding, the cause it follows from or None)]`` of every long stand, grouped
    per train and cause (module docstring); stands the engine reports itself
    (RF-RUN-027) are left out."""
    if facts.log is None:
        return []
    engine = [(f.where, f.first_s) for f in _engine_stands(facts)]
    groups: dict = {}
    for st in facts.log.stands:
        if st.duration_s < STAND_LONG_S:
            continue
        if any(tr == st.train and t is not None and abs(t - st.t_stop_s) <= _SAME_S
               for tr, t in engine):
            continue
        owner = _owner(facts, st, causes)
        groups.setdefault((st.train, id(owner)), (owner, []))[1].append(st)
    out = []
    for (train, _), (owner, stands) in groups.items():
        stands.sort(key=lambda s: s.t_stop_s)
        longest = max(stands, key=lambda s: (s.duration_s, -s.t_stop_s))
        total = sum(s.duration_s for s in stands)
        dark = _dark_of(longest)
        msg = f"train {train} stood without power {_place(longest)} {_span(longest)}"
        if len(stands) > 1:
            msg += (f", the longest of {plural(len(stands), 'stand')} of "
                    f"{dur_text(STAND_LONG_S)} or more ({dur_text(total)} in all, from "
                    f"{t_text(stands[0].t_stop_s)})")
        if dark:
            msg += (f": {', '.join(facts.named(d) for d in dark)} "
                    + ("was" if len(dark) == 1 else "were") + " open, its district dark")
        if owner is not None:
            msg += f" ({owner.ref})"
            fix = ""
        else:
            look = ", ".join(dark or longest.chain) or "the devices feeding it"
            fix = (f"find why {train} had no power at {t_text(longest.t_stop_s)}: the events of "
                   f"{look} then (railfault run --events)")
        out.append((Finding("warning", CODE, facts.scn.where("trains", train), msg, fix,
                            count=len(stands), first_s=stands[0].t_stop_s,
                            last_s=stands[-1].t_stop_s), owner))
    return out
