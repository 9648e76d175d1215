"""Numbers with their units, as every run finding and the run's text print them.

One place for the formats, so a figure reads the same in a finding, the headline
and the tables: times to the microsecond (ms below 1 s, else s), margins signed
in ms, currents in A, let-through in A²s, shares in %.
"""
from __future__ import annotations

import math
from typing import Optional

__all__ = ["t_text", "dur_text", "ms_text", "signed_ms_text", "a_text", "a2s_text",
           "share_text", "mm_text", "plural"]


def _finite(x: Optional[float]) -> bool:
    return x is not None and isinstance(x, (int, float)) and math.isfinite(x)


def t_text(t_s: Optional[float]) -> str:
    """An instant: ``753.000 ms`` below 1 s, else ``29.123909 s``; ``-`` for none."""
    if not _finite(t_s):
        return "-"
    return f"{t_s * 1e3:.3f} ms" if abs(t_s) < 1.0 else f"{t_s:.6f} s"


def dur_text(dt_s: Optional[float]) -> str:
    """A duration: ``1.500 ms`` below 1 s, else ``27.304 s``; ``-`` for none."""
    if not _finite(dt_s):
        return "-"
    return f"{dt_s * 1e3:.3f} ms" if abs(dt_s) < 1.0 else f"{dt_s:.3f} s"


def ms_text(dt_s: Optional[float]) -> str:
    """A short duration in ms, three decimals: ``4.500 ms``."""
    return f"{dt_s * 1e3:.3f} ms" if _finite(dt_s) else "-"


def signed_ms_text(dt_s: Optional[float]) -> str:
    """A margin, signed, in ms: ``-1.500 ms``."""
    return f"{dt_s * 1e3:+.3f} ms" if _finite(dt_s) else "-"


def a_text(i_a: Optional[float]) -> str:
    """A current: ``52.92 A``."""
    return f"{i_a:.2f} A" if _finite(i_a) else "-"


def a2s_text(i2t_a2s: Optional[float]) -> str:
    """A let-through I²t: ``5.76 A²s`` (three significant figures below 10)."""
    if not _finite(i2t_a2s):
        return "-"
    return f"{i2t_a2s:.3g} A²s" if i2t_a2s < 10 else f"{i2t_a2s:.1f} A²s"


def share_text(part: float, whole: float) -> str:
    """``part`` as a percentage of ``whole``: ``91 %``."""
    return f"{100.0 * part / whole:.0f} %" if whole > 0 else "-"


def mm_text(x_m: float) -> str:
    """A length in mm, whole: ``1400 mm``."""
    return f"{x_m * 1e3:.0f} mm"


def plural(n: int, word: str, many: Optional[str] = None) -> str:
    """``1 short``, ``23 shorts``."""
    return f"{n} {word}" if n == 1 else f"{n} {many or word + 's'}"
