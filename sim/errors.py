"""Errors a user can act on.

A :class:`ScenarioError` carries every :class:`Problem` found in one file, so
that a file with ten mistakes reports all ten. The CLI prints them and exits
with status 2; nothing else is written. Every :class:`RailfaultError` is
something the user can act on (exit 2); any other exception is a defect of
railfault (exit 3).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Optional, Sequence


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input file.

    ``path`` is the key path as a dotted string (``boosters.east.trip.after``),
    ``line``/``column`` are 1-based (``None`` when not known), ``expected`` and
    ``found`` say what was wanted and what was there.
    """

    file: str
    path: str
    message: str
    line: Optional[int] = None
    column: Optional[int] = None

    def __str__(self) -> str:
        loc = self.file
        if self.line is not None:
            loc += f":{self.line}"
            if self.column is not None:
                loc += f":{self.column}"
        where = f" {self.path}" if self.path else ""
        return f"{loc}:{where}: {self.message}" if where else f"{loc}: {self.message}"


class RailfaultError(Exception):
    """Base of the errors railfault raises on purpose."""


class ScenarioError(RailfaultError):
    """A scenario file that cannot be read or used; holds every problem found."""

    def __init__(self, problems: Sequence[Problem]):
        self.problems = tuple(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


class TopologyError(RailfaultError):
    """The layout cannot be built into a graph or circuit (a user-fixable cause)."""


class OutputError(RailfaultError):
    """A report cannot be written where the user asked (``-o``): a directory, a path
    under a file, a place without write permission, or the scenario file itself.
    Like a bad input file, the user can act on it (exit 2); nothing is written."""
