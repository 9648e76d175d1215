"""Episodes grouped by place: one line for 23 shorts at one gap, not 23.

:class:`EpisodeGroup` holds the episodes of one place (a joint, a fault, a
device) and says what they have in common: how many, the first and last start,
the worst margin, the peak current, who acted. :func:`symptom_groups` applies
the per-episode rules of :mod:`sim.diagnose.symptoms` and gathers the
episodes by ``(code, where)``: each group becomes one finding with
``count``, ``first_s``, ``last_s`` and the worst figure. A negative margin
(RF-RUN-003) at a place where the same episodes tripped a device (RF-RUN-001)
is the same fact seen twice: its worst margin goes into the RF-RUN-001 line.
"""
from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from typing import Iterable, Optional

from sim.diagnose.facts import ep_get
from sim.diagnose.symptoms import episode_findings
from sim.diagnose.text import (a2s_text, a_text, dur_text, ms_text, plural, signed_ms_text,
                               t_text)
from sim.model import Finding

__all__ = ["EpisodeGroup", "SymptomGroup", "symptom_groups", "place_word"]


def place_word(kind: str) -> str:
    """How a place of an episode kind is named: ``gap``, ``fault``, ``device``."""
    return {"gap": "gap", "fault": "fault", "overload": "overload of"}.get(kind, kind)


def _delay(t_s: float) -> str:
    """A delay after an onset: in ms below 1 s, else in s."""
    return ms_text(t_s) if t_s < 1.0 else dur_text(t_s)


@dataclass
class EpisodeGroup:
    """Episodes of one place (see the module docstring)."""

    where: str
    kind: str
    episodes: list = field(default_factory=list)

    @property
    def count(self) -> int:
        return len(self.episodes)

    @property
    def first_s(self) -> float:
        return min(e.start_s for e in self.episodes)

    @property
    def last_s(self) -> float:
        return max(e.start_s for e in self.episodes)

    @property
    def peak_a(self) -> float:
        return max((e.peak_a or 0.0) for e in self.episodes)

    @property
    def worst_margin_s(self) -> Optional[float]:
        ms = [e.margin_s for e in self.episodes if e.margin_s is not None]
        return min(ms) if ms else None

    @property
    def trains(self) -> list[str]:
        return sorted({e.train for e in self.episodes if e.train})

    @property
    def i2t_max_a2s(self) -> Optional[float]:
        vals = [ep_get(e, "i2t_a2s") for e in self.episodes]
        vals = [v for v in vals if v]
        return max(vals) if vals else None

    @property
    def longest_s(self) -> Optional[float]:
        ds = [e.end_s - e.start_s for e in self.episodes if e.end_s is not None]
        return max(ds) if ds else None

    def acted(self) -> Counter:
        """How often each device acted first."""
        return Counter(e.acted for e in self.episodes if e.acted)

    def noun(self) -> str:
        return plural(self.count, "overload" if self.kind == "overload" else "short")

    def outcome_text(self) -> str:
        """What happened to the episodes: ``every one tripped east-bst first``."""
        by = Counter(_outcome_phrase(e) for e in self.episodes)
        if len(by) == 1:
            (phrase, _), = by.items()
            return ("every one " if self.count > 1 else "") + phrase
        return "; ".join(f"{n} {p}" for p, n in sorted(by.items(), key=lambda kv: -kv[1]))

    def span_text(self) -> str:
        """``from 2.650000 s to 24.694000 s`` (or ``at 2.650000 s`` for one), and when
        the first device acted after the onset: ``at 30.000000 s, north acted at 30.003913 s,
        3.913 ms after the onset`` (a short's start is its onset, not the trip)."""
        if self.count == 1:
            span = f"at {t_text(self.first_s)}"
        else:
            span = f"from {t_text(self.first_s)} to {t_text(self.last_s)}"
        return span + self.acted_text()

    def acted_text(self) -> str:
        """``, north acted at 30.003913 s, 3.913 ms after the onset`` for one episode
        (``, north acted 3.900 ms to 3.913 ms after each onset`` for several): when the
        first device acted (a trip, a supply switching off or browning out, a swap) -
        a short's start is its onset, not the trip."""
        rows = [(e.acted, e.acted_s, e.acted_s - e.start_s) for e in self.episodes
                if e.acted and e.acted_s is not None
                and e.outcome in ("tripped", "dropout", "swapped")]
        if not rows:
            return ""
        devs = list(dict.fromkeys(d for d, _, _ in rows))
        lo, hi = min(dt for _, _, dt in rows), max(dt for _, _, dt in rows)
        who = devs[0] if len(devs) == 1 else "the first device"
        if hi < 5e-10:
            return f", {who} acted at once"
        if len(rows) == 1:
            return f", {who} acted at {t_text(rows[0][1])}, {_delay(lo)} after the onset"
        when = _delay(lo) if hi - lo < 5e-10 else f"{_delay(lo)} to {_delay(hi)}"
        return f", {who} acted {when} after each onset"

    def figures_text(self) -> str:
        """Worst margin, peak current and let-through, with their units."""
        parts = []
        wm = self.worst_margin_s
        if wm is not None:
            parts.append(f"worst margin {signed_ms_text(wm)}")
        parts.append(f"peak {a_text(self.peak_a)}")
        i2t = self.i2t_max_a2s
        if i2t is not None:
            parts.append(f"let-through up to {a2s_text(i2t)}")
        notes = sorted({ep_get(e, "note", "") for e in self.episodes} - {""})
        parts += notes
        return "; ".join(parts)

    def describe(self) -> str:
        """``23 shorts, every one tripped east-bst first (from ... to ..., east-bst acted
        3.000 ms after each onset; worst margin -3.500 ms; peak 52.92 A)``."""
        trains = self.trains
        n_of = sum(1 for e in self.episodes if e.train)
        if trains and n_of == self.count:
            who = f" of train {', '.join(trains)}"
        elif trains:
            who = f" ({n_of} of train {', '.join(trains)})"
        else:
            who = ""
        return (f"{self.noun()}{who}, {self.outcome_text()} ({self.span_text()}; "
                f"{self.figures_text()})")


def _outcome_phrase(e) -> str:
    if e.outcome == "tripped":
        return f"tripped {e.acted} first" if e.acted else "tripped a device"
    if e.outcome == "dropout":
        return f"browned out by {e.acted} at its limit" if e.acted else "dropped out"
    if e.outcome == "swapped":
        return f"cleared by a swap of {e.acted}" if e.acted else "cleared by a swap"
    if e.outcome == "clean":
        return "ended by itself"
    if e.end_s is None:
        return "still flowing at the end of the run"
    how = f"not cleared by {plural(e.swaps, 'swap')}"
    return how + (f", until {e.acted} tripped" if e.acted else "")


@dataclass
class SymptomGroup:
    """The episodes of one place that show one symptom (one code)."""

    code: str
    severity: str
    group: EpisodeGroup

    @property
    def where(self) -> str:
        return self.group.where

    def message(self, t_margin_required_s: float = 0.0) -> str:
        g = self.group
        head = f"{place_word(g.kind)} {g.where}: {g.describe()}"
        if self.code == "RF-RUN-004":
            return (head + f": the margin is below the required "
                    f"{t_margin_required_s * 1e3:.3f} ms")
        return head

    def finding(self, because: str = "", fix: str = "", t_margin_required_s: float = 0.0,
                severity: Optional[str] = None) -> Finding:
        g = self.group
        return Finding(severity or self.severity, self.code, g.where,
                       self.message(t_margin_required_s), fix, count=g.count,
                       first_s=g.first_s, last_s=g.last_s, because=because)


def symptom_groups(episodes: Iterable, t_margin_required_s: float) -> list[SymptomGroup]:
    """Every symptom of every episode, gathered by ``(code, where)`` (module docstring).

    Groups come in the order of their first episode; an RF-RUN-003 whose episodes
    all show RF-RUN-001 at the same place is folded into it.
    """
    groups: dict[tuple[str, str], SymptomGroup] = {}
    ep_codes: dict[int, set] = {}
    for ep in episodes:
        for f in episode_findings(ep, t_margin_required_s):
            key = (f.code, f.where)
            sg = groups.get(key)
            if sg is None:
                sg = groups[key] = SymptomGroup(f.code, f.severity, EpisodeGroup(f.where, ep.kind))
            sg.group.episodes.append(ep)
            ep_codes.setdefault(id(ep), set()).add(f.code)
    out = []
    for (code, where), sg in groups.items():
        if code == "RF-RUN-003" and all("RF-RUN-001" in ep_codes[id(e)]
                                        for e in sg.group.episodes):
            continue
        out.append(sg)
    return out
