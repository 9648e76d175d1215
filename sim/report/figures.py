"""A rendered figure of the report: its SVG, PNG, accessible text and data table."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

from sim.report.style import png_bytes, svg_text
from sim.report.tables import Table


@dataclass
class Figure:
    """One chart: ``svg`` is inline markup (deterministic), ``png`` for slides,
    ``data`` the chart's numbers (its CSV beside the page), ``model`` what it
    was drawn from (a :class:`sim.report.tcc.Chart`, a
    :class:`sim.report.sequence.Sequence`, ...)."""

    key: str
    title: str
    desc: str
    svg: str
    png: bytes
    data: Optional[Table] = None
    model: object = None
    extra: dict = field(default_factory=dict)

    @property
    def png_name(self) -> str:
        return f"{self.key}.png"


def render(fig, key: str, title: str, desc: str, data: Optional[Table] = None,
           model=None, png: bool = True) -> Figure:
    """Turn a matplotlib figure into a :class:`Figure` (SVG ids prefixed by ``key``)."""
    svg = svg_text(fig, f"{key}-", title, desc)
    return Figure(key, title, desc, svg, png_bytes(fig) if png else b"", data, model)
