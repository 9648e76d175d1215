"""Text for people: the one escaping of untrusted characters, and plain-text tables.

A scenario is shared between people, and every name, key, title and value of it
can reach a terminal: in an error message, a table cell, a report header. A
terminal obeys control characters (``ESC [ 2 J`` clears the screen, ``ESC [ 1 A``
moves the cursor up, a carriage return rewrites a line), so a file could erase
its own error lines and print a forged verdict. :func:`escape` is the one place
that makes such text inert; the error printer, the table writer and every
human-readable output go through it (JSON output needs no escaping: the JSON
encoder writes every control character as ``\\u00XX`` and keeps the text exact).

Escaped are the C0 and C1 control characters (Unicode category Cc: U+0000 to
U+001F, U+007F to U+009F), the line and paragraph separators U+2028 and U+2029,
and the bidirectional embedding, override and isolate controls (U+202A to U+202E,
U+2066 to U+2069, and the marks U+200E, U+200F, U+061C), which reorder what a
terminal shows (Unicode Standard Annex #9). Each becomes the Python-style
escape of its code point: ``\\n``, ``\\r``, ``\\t``, ``\\x1b``, ``\\u202e``.
"""
from __future__ import annotations

import re
import textwrap
from typing import Sequence

__all__ = ["escape", "escape_lines", "table"]

_BIDI = "\u061c\u200e\u200f\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069"
_UNSAFE = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029" + _BIDI + "]")
_UNSAFE_BUT_NEWLINE = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\u2028\u2029" + _BIDI + "]")
_NAMED = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def _one(m: re.Match) -> str:
    ch = m.group(0)
    if ch in _NAMED:
        return _NAMED[ch]
    code = ord(ch)
    return f"\\x{code:02x}" if code <= 0xFF else f"\\u{code:04x}"


def escape(text: object) -> str:
    """``text`` with every control character shown as its escape (module docstring).

    >>> escape("east\\x1b[2J")
    'east\\\\x1b[2J'
    >>> escape("two\\nlines")
    'two\\\\nlines'
    """
    s = text if isinstance(text, str) else str(text)
    return _UNSAFE.sub(_one, s)


def escape_lines(text: str) -> str:
    """Like :func:`escape`, but line breaks (``\\n``) are kept: for a whole report."""
    return _UNSAFE_BUT_NEWLINE.sub(_one, text)


def table(headers: Sequence[str], rows: Sequence[Sequence[str]], wrap: int = 60) -> str:
    """A fixed-width text table; a cell longer than ``wrap`` characters wraps onto more lines.

    Every cell is escaped first (:func:`escape`), so a line break or a terminal
    control sequence in a name cannot break the table or reach the terminal.

    >>> print(table(["a", "b"], [["1", "22"]]))
    a  b
    -  --
    1  22
    """
    cells = [[textwrap.wrap(escape(c), wrap) or [""] for c in row] for row in rows]
    headers = [escape(h) for h in headers]
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
