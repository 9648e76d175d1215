"""Plain-text tables for the human-readable reports (no colour: words carry the meaning)."""
from __future__ import annotations

import textwrap
from typing import Sequence


def table(headers: Sequence[str], rows: Sequence[Sequence[str]], wrap: int = 60) -> str:
    """A fixed-width text table; a cell longer than ``wrap`` characters wraps onto more lines.

    >>> print(table(["a", "b"], [["1", "22"]]))
    a  b
    -  --
    1  22
    """
    cells = [[textwrap.wrap(c, wrap) or [""] for c in row] for row in rows]
    widths = [len(h) for h in headers]
    for row in cells:
        for i, lines in enumerate(row):
            widths[i] = max(widths[i], *(len(x) for x in lines))
    out = ["  ".join(h.ljust(w) for h, w in zip(headers, widths)).rstrip(),
           "  ".join("-" * w for w in widths)]
    for row in cells:
        for k in range(max(len(lines) for lines in row)):
            out.append("  ".join((lines[k] if k < len(lines) else "").ljust(w)
                                 for lines, w in zip(row, widths)).rstrip())
    return "\n".join(out)
