"""The timing-margin report: one self-contained HTML page, Markdown, CSV tables and PNGs.

Library first: :func:`build` checks, maps and runs a scenario and returns the
page model (:class:`Report`); :func:`write` writes it to a folder atomically
(complete or absent). ``railfault report`` is a thin layer over the two.

>>> import sim, sim.report                                  # doctest: +SKIP
>>> rep = sim.report.build(sim.load("scenarios/cinder-ridge.yaml"))
>>> sim.report.write(rep, "reports/cinder-ridge")

Modules: :mod:`~sim.report.builder` (the page model), :mod:`~sim.report.tcc`
(time-current characteristics from the device models), :mod:`~sim.report.sequence`
(sequence of operation and dark time), :mod:`~sim.report.pairs` (coordination
pairs), :mod:`~sim.report.sheets` (settings, wiring, gaps, assumptions),
:mod:`~sim.report.findings` (verdict, headline, findings by cause),
:mod:`~sim.report.runtables` (the other tables), ``plot_*`` (the drawings),
:mod:`~sim.report.style` (palette, deterministic SVG), :mod:`~sim.report.page`
(HTML and Markdown from Jinja2 templates), :mod:`~sim.report.output` (the folder).
"""
from sim.report.builder import DETAIL, Report, build
from sim.report.output import write

__all__ = ["DETAIL", "Report", "build", "write"]
