"""Figures of the report: palette, deterministic SVG and PNG output.

Colours are the Okabe-Ito set (M. Okabe and K. Ito, *Color Universal Design*,
2002; B. Wong, "Points of view: Color blindness", Nature Methods 8 (2011) 441),
distinguishable with the common colour-vision deficiencies. Yellow (#F0E442)
is left out: its contrast on white is too low for lines and text. No chart says
pass or fail by colour alone: every mark that does also differs in shape,
line style or words (:data:`OUTCOME_MARKS`).

Deterministic SVG: text stays text (``svg.fonttype: none``), element ids come
from a fixed hash salt (``svg.hashsalt``), no date or software metadata, and
mathtext is off (a name with ``$`` in it is printed as written). Each SVG is
then made fit for inline use in one page: the XML prologue goes, every id gets
the figure's own prefix (several SVGs share one document), and a ``<title>``
and ``<desc>`` are added for screen readers (``role="img"``).
"""
from __future__ import annotations

import html
import io
import math
import re
from contextlib import contextmanager

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402

#: Okabe-Ito colours, darkest first, without yellow (low contrast on white).
PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000")
#: Line styles cycled together with the colours, so that series differ without colour.
LINESTYLES = ("-", "--", "-.", ":", (0, (5, 1, 1, 1)), (0, (3, 1, 1, 1, 1, 1)), (0, (8, 2)))
#: Markers cycled with the colours.
MARKERS = ("o", "s", "^", "D", "v", "P", "X")
GREY = "#555555"
LIGHT = "#BBBBBB"

#: How an outcome is drawn: (marker, colour, word). Shape and word carry the
#: meaning; colour only repeats it.
OUTCOME_MARKS = {
    "swapped": ("o", "#009E73", "swapped"),
    "clean": ("s", "#56B4E9", "clean"),
    "tripped": ("X", "#D55E00", "TRIPPED"),
    "dropout": ("v", "#CC79A7", "DROPOUT"),
    "unresolved": ("^", "#000000", "UNRESOLVED"),
}

#: The fixed matplotlib settings of every report figure.
RC = {
    "svg.fonttype": "none",
    "svg.hashsalt": "railfault-report",
    "svg.image_inline": True,
    "text.parse_math": False,
    "font.family": "DejaVu Sans",
    "font.size": 9.0,
    "axes.titlesize": 10.0,
    "axes.labelsize": 9.0,
    "legend.fontsize": 8.0,
    "xtick.labelsize": 8.0,
    "ytick.labelsize": 8.0,
    "axes.prop_cycle": matplotlib.cycler(color=list(PALETTE)),
    "axes.grid": True,
    "grid.color": "#DDDDDD",
    "grid.linewidth": 0.6,
    "axes.edgecolor": "#333333",
    "figure.dpi": 100,
    "path.simplify": False,
}

_XML_HEAD = re.compile(r"^.*?(<svg\b)", re.S)
_METADATA = re.compile(r"<metadata>.*?</metadata>\s*", re.S)
_ID = re.compile(r'\bid="([^"]+)"')


def _g(v: float) -> str:
    """Up to 3 significant digits, never in exponent form (``1000``, not ``1e+03``)."""
    return f"{v:,.0f}" if v >= 1000 else f"{v:.3g}"


def t_label(v: float) -> str:
    """A tick label of a time axis with its unit (µs, ms, s)."""
    if v <= 0:
        return "0"
    if v < 1e-3:
        return f"{v * 1e6:.3g} µs"
    if v < 1.0:
        return f"{v * 1e3:.3g} ms"
    return f"{_g(v)} s"


def a_label(v: float) -> str:
    """A tick label of a current axis with its unit."""
    return f"{_g(v)} A"


def log_axis(axis, label) -> None:
    """Plain tick labels with units on a log axis (1, 2 and 5 per decade when a
    range is short; no minor labels)."""
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    lo, hi = sorted(axis.get_view_interval())
    subs = (1.0,) if hi / max(lo, 1e-300) > 1e3 else (1.0, 2.0, 5.0)
    axis.set_major_locator(LogLocator(base=10.0, subs=subs))
    axis.set_major_formatter(FuncFormatter(lambda v, _: label(v)))
    axis.set_minor_formatter(NullFormatter())


def spread(values, min_gap: float, hi=None) -> list[float]:
    """Label positions for ``values``, at least ``min_gap`` apart and each as near its
    value as the ones below it allow; none above ``hi`` when given (then the top ones
    are pushed down instead). Same scale as the values: pass logarithms for a log axis.
    """
    order = sorted(range(len(values)), key=lambda k: values[k])
    out = [float(v) for v in values]
    prev = -math.inf
    for k in order:
        out[k] = prev = max(out[k], prev + min_gap)
    if hi is not None and order and out[order[-1]] > hi:
        nxt = hi + min_gap
        for k in reversed(order):
            out[k] = nxt = min(out[k], nxt - min_gap)
    return out


def colour(k: int) -> str:
    """The ``k``-th palette colour (cycled)."""
    return PALETTE[k % len(PALETTE)]


def linestyle(k: int):
    return LINESTYLES[k % len(LINESTYLES)]


def marker(k: int) -> str:
    return MARKERS[k % len(MARKERS)]


@contextmanager
def figure(width_in: float, height_in: float, **kw):
    """A matplotlib figure with the report's settings, closed afterwards."""
    with matplotlib.rc_context(RC):
        fig = plt.figure(figsize=(width_in, height_in), **kw)
        try:
            yield fig
        finally:
            plt.close(fig)


def svg_text(fig, prefix: str, title: str, desc: str) -> str:
    """The figure as inline SVG markup: deterministic, ids prefixed, titled.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    prefix : str
        Prefix of every element id (unique per figure on a page), e.g. ``"f3-"``.
    title, desc : str
        The accessible name and description (escaped here).
    """
    buf = io.StringIO()
    with matplotlib.rc_context(RC):
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None,
                                                 "Format": None, "Type": None})
    text = _XML_HEAD.sub(r"\1", buf.getvalue(), count=1)
    text = _METADATA.sub("", text)
    ids = set(_ID.findall(text))

    def fix_id(m):
        return f'id="{prefix}{m.group(1)}"'

    text = _ID.sub(fix_id, text)
    for ident in sorted(ids, key=len, reverse=True):
        text = text.replace(f"#{ident})", f"#{prefix}{ident})")
        text = text.replace(f'"#{ident}"', f'"#{prefix}{ident}"')
    head = (f'<svg role="img" aria-labelledby="{prefix}title {prefix}desc" '
            f'class="chart"')
    text = text.replace("<svg", head, 1)
    close = text.index(">", text.index("<svg")) + 1
    label = (f'\n <title id="{prefix}title">{html.escape(title)}</title>'
             f'\n <desc id="{prefix}desc">{html.escape(desc)}</desc>')
    return text[:close] + label + text[close:].rstrip() + "\n"


def png_bytes(fig, dpi: int = 150) -> bytes:
    """The figure as PNG (for slides), without software metadata."""
    buf = io.BytesIO()
    with matplotlib.rc_context(RC):
        fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": None})
    return buf.getvalue()
