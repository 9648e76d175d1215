"""Tables of the report: raw values for the CSV, words with units for people.

A :class:`Table` holds its rows as raw values (SI floats, names, ``None``); each
:class:`Column` says how a value reads on the page and in the Markdown (with its
unit) and names its CSV column (the unit in the name: ``margin_s``,
``peak_a``). The CSV keeps every float at full precision (``repr``), so that it
holds the very numbers of the JSON result.
"""
from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass, field
from typing import Any, Callable, Optional


def _finite(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def t_text(t_s: Optional[float]) -> str:
    """An instant or duration: µs below 1 ms, ms below 1 s, else s."""
    if not _finite(t_s):
        return "-"
    a = abs(t_s)
    if a == 0.0:
        return "0 s"
    if a < 1e-3:
        return f"{t_s * 1e6:.1f} µs"
    if a < 1.0:
        return f"{t_s * 1e3:.3f} ms"
    return f"{t_s:.6f} s"


def dur_text(t_s: Optional[float]) -> str:
    """A duration to three significant decimals: µs, ms or s."""
    if not _finite(t_s):
        return "-"
    a = abs(t_s)
    if a == 0.0:
        return "0 s"
    if a < 1e-3:
        return f"{t_s * 1e6:.1f} µs"
    if a < 1.0:
        return f"{t_s * 1e3:.3f} ms"
    return f"{t_s:.3f} s"


def instant_text(t_s: Optional[float]) -> str:
    """An instant of the run, to the microsecond, in s."""
    return f"{t_s:.6f} s" if _finite(t_s) else "-"


def ms_text(t_s: Optional[float], signed: bool = False) -> str:
    """A time in ms, three decimals (a margin: ``signed``)."""
    if not _finite(t_s):
        return "-"
    return f"{t_s * 1e3:+.3f} ms" if signed else f"{t_s * 1e3:.3f} ms"


def a_text(i_a: Optional[float]) -> str:
    return f"{i_a:.2f} A" if _finite(i_a) else "-"


def v_text(v_v: Optional[float]) -> str:
    return f"{v_v:.2f} V" if _finite(v_v) else "-"


def ohm_text(r: Optional[float]) -> str:
    return f"{r:.4g} ohm" if _finite(r) else "-"


def m_text(x_m: Optional[float]) -> str:
    return f"{x_m:.2f} m" if _finite(x_m) else "-"


def a2s_text(x: Optional[float]) -> str:
    return f"{x:.4g} A²s" if _finite(x) else "-"


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


@dataclass
class Table:
    """A table of the report (see the module doc). ``key`` names its CSV file."""

    key: str
    caption: str
    columns: list
    rows: list = field(default_factory=list)
    note: str = ""

    def text_rows(self) -> list[list[str]]:
        """Every row as the page shows it (strings with units)."""
        return [[c.fmt(r.get(c.key)) for c in self.columns] for r in self.rows]

    def csv_text(self) -> str:
        """The rows as CSV: the column keys as header, floats at full precision."""
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow([c.key for c in self.columns])
        for r in self.rows:
            w.writerow([csv_value(r.get(c.key)) for c in self.columns])
        return buf.getvalue()

    @property
    def filename(self) -> str:
        return f"{self.key}.csv"


def csv_value(v: Any) -> str:
    """A raw value for the CSV: floats by ``repr`` (exact), ``None`` and non-finite empty."""
    if v is None:
        return ""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return repr(v) if math.isfinite(v) else ""
    if isinstance(v, (list, tuple)):
        return " ".join(csv_value(x) for x in v)
    return str(v)
