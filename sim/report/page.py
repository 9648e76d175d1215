"""The page and the Markdown, from Jinja2 templates (``sim/report/templates``).

HTML is autoescaped: every string that comes from the scenario (its title, the
names of its sections, devices and trains, the findings that quote them) is
text, never markup. The only markup passed through is the report's own inline
SVG, made by :func:`sim.report.style.svg_text` (whose text matplotlib escapes
and whose title and description are escaped there). No script, no external
resource: a Content-Security-Policy in the page forbids both, so a browser
would refuse (and log) anything else.

The Markdown escapes ``<``, ``>`` and ``&`` in scenario strings too (a Markdown
viewer passes raw HTML through) and ``|`` in table cells.
"""
from __future__ import annotations

import os
import re

import jinja2
from markupsafe import Markup

from sim.report.findings import SYMBOL, WORD, times_text
from sim.report.runtables import episode_main_view

_HERE = os.path.join(os.path.dirname(__file__), "templates")
#: Devices per column block of a transposed settings table (so that it prints).
SETTINGS_BLOCK = 6
#: Rows up to which a chart's data table is also shown on the page (else: the CSV only).
PAGE_ROWS = 150


def _env(html: bool) -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(_HERE),
        autoescape=html, trim_blocks=True, lstrip_blocks=True,
        undefined=jinja2.StrictUndefined, keep_trailing_newline=True)
    env.filters["md"] = md_text
    env.filters["mdcell"] = md_cell
    env.filters["glue"] = glue_units
    env.globals.update(SYMBOL=SYMBOL, WORD=WORD, transpose=transpose, PAGE_ROWS=PAGE_ROWS,
                       times=times_text, episode_main=episode_main_view)
    return env


#: A number and its unit (``7.43 A``, ``-2.191 ms``, ``0.883 A²s``, ``50 %``).
_NUMBER_UNIT = re.compile(r"(\d) (µs|ms|s|A²s|A|V|mm|m|ohm|%)(?=[\s,;:).\]]|$)")


def glue_units(value) -> str:
    """Page text with a no-break space between each number and its unit, so that a
    table cell never wraps a unit away from its number (escaped later as usual)."""
    return _NUMBER_UNIT.sub("\\1\u00a0\\2", "" if value is None else str(value))


def md_text(value) -> str:
    """Scenario text for Markdown: HTML's special characters as entities."""
    s = "" if value is None else str(value)
    return s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def md_cell(value) -> str:
    """:func:`md_text` for a table cell: ``|`` escaped, no line breaks."""
    return md_text(value).replace("|", "\\|").replace("\r", " ").replace("\n", " ")


def transpose(table, block: int = SETTINGS_BLOCK) -> list[dict]:
    """A settings table turned so that each device is a column, in blocks of
    ``block`` devices: ``[{"head": [...], "rows": [[label, v1, ...], ...]}, ...]``."""
    cols = table.page_columns
    text = table.text_rows()
    out = []
    for start in range(0, len(text), block):
        part = text[start:start + block]
        head = [cols[0].heading] + [r[0] for r in part]
        rows = []
        for k, c in enumerate(cols[1:], start=1):
            vals = [r[k] for r in part]
            if all(v in ("-", "") for v in vals):
                continue
            rows.append([c.heading] + vals)
        out.append({"head": head, "rows": rows})
    return out


def render_html(rep) -> str:
    """The self-contained page (one string: CSS and SVG inline)."""
    env = _env(True)
    with open(os.path.join(_HERE, "report.css"), encoding="utf-8") as fh:
        css = fh.read()
    return env.get_template("report.html.j2").render(
        rep=rep, css=Markup(css), svg=lambda f: Markup(f.svg))


def render_markdown(rep) -> str:
    """The same report as Markdown (figures as the PNGs beside it)."""
    return _env(False).get_template("report.md.j2").render(rep=rep)
