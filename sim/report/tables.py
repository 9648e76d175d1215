"""Tables of the report: raw values for the CSV, words with units for people.

Numbers read as the run's text prints them (:mod:`sim.diagnose.text`: currents
in A, durations in ms below 1 s, margins signed in ms, let-through in A²s).
A :class:`Table` holds its rows as raw values (SI floats, names, ``None``); each
:class:`Column` says how a value reads on the page and in the Markdown (with its
unit) and names its CSV column (the unit in the name: ``margin_s``,
``peak_a``). The CSV keeps every float at full precision (``repr``), so that it
holds the very numbers of the JSON result.
"""
from __future__ import annotations

import csv
import io
import json
import math
from dataclasses import dataclass, field
from typing import Any, Callable, Optional

from sim.diagnose.text import a2s_text, a_text, dur_text, signed_ms_text
from sim.diagnose.text import ms_text as _ms_text

__all__ = ["Column", "Table", "a2s_text", "a_text", "csv_value", "dur_text", "instant_text",
           "m_text", "ms_text", "ohm_text", "plain", "t_text", "v_text"]


def _finite(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


#: A duration or a setting in time: ms below 1 s, else s, three decimals (the run's own
#: format, :func:`sim.diagnose.text.dur_text`).
t_text = dur_text


def instant_text(t_s: Optional[float]) -> str:
    """An instant of the run, to the microsecond, in s."""
    return f"{t_s:.6f} s" if _finite(t_s) else "-"


def ms_text(t_s: Optional[float], signed: bool = False) -> str:
    """A time in ms, three decimals (a margin: ``signed``)."""
    return signed_ms_text(t_s) if signed else _ms_text(t_s)


def v_text(v_v: Optional[float]) -> str:
    return f"{v_v:.2f} V" if _finite(v_v) else "-"


def ohm_text(r: Optional[float]) -> str:
    return f"{r:.4g} ohm" if _finite(r) else "-"


def m_text(x_m: Optional[float]) -> str:
    return f"{x_m:.2f} m" if _finite(x_m) else "-"


def plain(value: Any) -> str:
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:g}"
    if isinstance(value, (list, tuple)):
        return ", ".join(plain(v) for v in value)
    return str(value)


@dataclass
class Column:
    """One column: its CSV name (with the unit), heading, and how a value reads."""

    key: str
    heading: str
    fmt: Callable[[Any], str] = plain
    numeric: bool = False
    #: shown on the page and in the Markdown / written to the CSV
    page: bool = True
    csv: bool = True


@dataclass
class Table:
    """A table of the report (see the module doc). ``key`` names its CSV file."""

    key: str
    caption: str
    columns: list
    rows: list = field(default_factory=list)
    note: str = ""

    @property
    def page_columns(self) -> list:
        """The columns shown on the page and in the Markdown."""
        return [c for c in self.columns if c.page]

    def text_rows(self) -> list[list[str]]:
        """Every row as the page shows it (strings with units), :attr:`page_columns`."""
        cols = self.page_columns
        return [[c.fmt(r.get(c.key)) for c in cols] for r in self.rows]

    def csv_text(self) -> str:
        """The rows as CSV: the column keys as header, floats at full precision."""
        cols = [c for c in self.columns if c.csv]
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow([c.key for c in cols])
        for r in self.rows:
            w.writerow([csv_value(r.get(c.key)) for c in cols])
        return buf.getvalue()

    def view(self, keys, caption: str, note: Optional[str] = None) -> "Table":
        """The same rows with only the columns ``keys`` (in that order) for a page table
        (its own ``note`` when given); the CSV is written from the whole table."""
        by_key = {c.key: c for c in self.columns}
        return Table(self.key, caption, [by_key[k] for k in keys], self.rows,
                     self.note if note is None else note)

    @property
    def filename(self) -> str:
        return f"{self.key}.csv"


def csv_value(v: Any) -> str:
    """A raw value for the CSV: floats by ``repr`` (exact), ``None`` and non-finite empty,
    a mapping as JSON (its floats exact too)."""
    if isinstance(v, dict):
        return json.dumps({str(k): (x if not isinstance(x, float) or math.isfinite(x)
                                    else None) for k, x in sorted(v.items())},
                          ensure_ascii=False) if v else ""
    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return repr(v) if math.isfinite(v) else ""
    if isinstance(v, (list, tuple)):
        return " ".join(csv_value(x) for x in v)
    return str(v)
