"""Build the page model of a report: check, fault map and run, then every table and figure.

:func:`build` is the library entry point (``sim.report.build``); the command
``railfault report`` only writes what it returns (:mod:`sim.report.output`).
Nothing is simulated twice: one check (static and circuit), one fault map, one
run with the bounded trace recorder attached (:mod:`sim.world.traces`).
"""
from __future__ import annotations

import datetime as _dt
import os
import time
from dataclasses import dataclass, field
from typing import Optional

from sim.report import findings as F

#: Episodes drawn in detail (sequence of operation and current traces), the worst first.
DETAIL = 6


@dataclass
class Report:
    """Everything the page shows, top to bottom (see ``sim/report/templates``)."""

    title: str
    path: str
    sha256: str
    seed: int
    version: str
    date: str
    duration_s: float
    verdict: str
    check_verdict: str
    run_verdict: str
    headline: list
    caution: str
    check: dict
    result: object
    check_findings: tuple = ()
    check_headline: list = field(default_factory=list)
    run_blocks: list = field(default_factory=list)
    check_causes: list = field(default_factory=list)
    check_followers: list = field(default_factory=list)
    coin_test: Optional[dict] = None
    layout_fig: object = None
    pairs: list = field(default_factory=list)
    pairs_table: object = None
    charts: list = field(default_factory=list)
    chart_intervals: list = field(default_factory=list)
    sequences: list = field(default_factory=list)
    traces: list = field(default_factory=list)
    dark: object = None
    dark_spans: object = None
    faultmap: object = None
    weakest: object = None
    windows: object = None
    findings_table: object = None
    settings: list = field(default_factory=list)
    wiring: object = None
    gaps: object = None
    assumptions: object = None
    episodes: object = None
    episode_paths: object = None
    margins: object = None
    devices: object = None
    bounds: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    key_lines: list = field(default_factory=list)
    timings: dict = field(default_factory=dict)
    sweep: object = None

    @property
    def figures(self) -> list:
        """Every figure of the page, in page order."""
        out = [self.layout_fig] + list(self.charts) + list(self.sequences) + [self.dark] + \
            list(self.traces) + [self.faultmap]
        if self.sweep is not None:
            out += list(self.sweep.figures)
        return [f for f in out if f is not None]

    @property
    def tables(self) -> list:
        """Every table written as CSV (figures' data included)."""
        out = [self.pairs_table, self.episodes, self.margins, self.devices, self.dark_spans,
               self.weakest, self.windows, self.findings_table, self.wiring, self.gaps,
               self.assumptions] + list(self.settings) + list(self.chart_intervals)
        if self.sweep is not None:
            out += list(self.sweep.tables)
        out += [f.data for f in self.figures if f.data is not None]
        return [t for t in out if t is not None]


def today(now: Optional[float] = None) -> str:
    """The date printed on the report: ``SOURCE_DATE_EPOCH`` when set (a reproducible
    build), else today (UTC), ISO 8601."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    t = float(epoch) if epoch else (now if now is not None else time.time())
    return _dt.datetime.fromtimestamp(t, _dt.timezone.utc).date().isoformat()


def build(scn, step_m: float = 0.5, detail: int = DETAIL, recorder=None,
          date: Optional[str] = None, png: bool = True, sweep=None) -> Report:
    """Check, map and run a scenario, and build the report's page model.

    Parameters
    ----------
    scn : sim.model.Scenario
        A loaded scenario (:func:`sim.load`).
    step_m : float
        Largest distance between coin-test points of the fault map (m).
    detail : int
        Episodes drawn in detail (sequence of operation and traces), worst first;
        every episode is in the episodes table.
    recorder : sim.world.traces.TraceRecorder, optional
        The trace recorder (its bounds); a default one when ``None``.
    date : str, optional
        The date printed (default: :func:`today`).
    png : bool
        Also render each figure as PNG.
    sweep : sim.report.sweep.SweepData, optional
        A sweep store read for this scenario (:func:`sim.report.sweep.read_store`):
        adds the sweep section.

    Returns
    -------
    Report
    """
    from sim import __version__
    from sim.circuit.faultmap import fault_map
    from sim.circuit.windows import trip_windows
    from sim import api
    from sim.commands.common import CAUTION
    from sim.layout import build_layout
    from sim.report import pairs as P, runtables as RT, sheets as S, tcc as TC
    from sim.report.plot_faultmap import draw_faultmap
    from sim.report.plot_layout import draw_layout
    from sim.report.plot_run import dark_spans_table, draw_dark, draw_sequence, draw_traces
    from sim.report.plot_tcc import draw_tcc, intervals_table
    from sim.report.sequence import dark_lanes, sequence_of, worst_episodes
    from sim.world import run
    from sim.world.traces import TraceRecorder

    timings = {}
    t0 = time.perf_counter()
    layout = build_layout(scn)
    check_res = api.check(scn, step_m=step_m)
    check = check_res.as_dict()
    timings["check_s"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    notes = []
    if check_res.coin_test is None:     # the circuit cannot be solved: RF-CKT-006 says why
        fm, windows = None, []
        notes.append("The fault-current map could not be computed (see RF-CKT-006 under "
                     "Findings); the charts have no fault-current marks.")
    else:
        fm = fault_map(scn, layout, step_m=step_m)
        windows = trip_windows(scn, fm)
    timings["faultmap_s"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    rec = recorder if recorder is not None else TraceRecorder()
    result = run(scn, traces=rec, static=list(check_res.findings))
    timings["run_s"] = time.perf_counter() - t0
    t0 = time.perf_counter()

    cf, rf = check_res.findings, result.findings
    rep = Report(
        title=scn.title or os.path.basename(scn.path), path=scn.path, sha256=scn.sha256,
        seed=scn.seed, version=__version__, date=date or today(), duration_s=scn.duration_s,
        verdict=F.verdict(cf, rf), check_verdict=check_res.verdict,
        run_verdict=result.verdict, headline=list(result.headline), caution=CAUTION,
        check=check, result=result, check_findings=tuple(cf),
        check_headline=F.check_headline(cf), run_blocks=F.run_blocks(rf),
        check_causes=F.check_causes(cf), check_followers=F.check_followers(cf),
        coin_test=check_res.coin_test, notes=notes)
    req = scn.t_margin_required_s

    rep.layout_fig = draw_layout(scn, layout, result)
    rep.pairs = P.coordination_pairs(scn, layout, result)
    rep.pairs_table = RT.pairs_table(rep.pairs)
    if fm is not None:
        charts = TC.build_charts(scn, layout, fm, windows)
        rep.charts = [draw_tcc(scn, c) for c in charts]
        rep.chart_intervals = [intervals_table(c) for c in charts]
    worst = worst_episodes(result, max(0, int(detail)))
    seqs = []
    for k in worst:
        ep = result.episodes[k]
        w = rec.window_for(ep.start_s, ep.end_s, ep.where)
        seqs.append(sequence_of(scn, k, ep, w, req))
    seqs.sort(key=lambda s: s.index)
    rep.sequences = [draw_sequence(scn, s, req) for s in seqs]
    rep.traces = [draw_traces(scn, s) for s in seqs if s.window is not None]
    lanes = dark_lanes(scn, layout, rec)
    rep.key_lines = F.key_figures(result, rep.pairs, lanes)
    rep.dark = draw_dark(lanes, result.t_end_s)
    rep.dark_spans = dark_spans_table(lanes)
    if check["fault_current"]:
        rep.faultmap = draw_faultmap(scn, layout, check)
    rep.weakest = RT.weakest_table(check)
    rep.windows = RT.windows_table(windows)
    rep.findings_table = RT.findings_table(cf, rf)
    rep.settings = S.settings_tables(scn, layout)
    rep.wiring = S.wiring_table(scn, check["wiring"])
    rep.gaps = S.gap_table(scn, layout)
    rep.assumptions = S.assumptions_table(scn)
    rep.episodes = RT.episodes_table(result, set(worst))
    rep.episode_paths = RT.episode_paths_view(rep.episodes)
    rep.margins = RT.margins_csv_table(result)
    rep.devices = RT.devices_table(result)
    if sweep is not None:
        from sim.report.plot_sweep import sweep_section

        rep.sweep = sweep_section(sweep)
    rep.bounds = _bounds(rep, rec, len(result.episodes), len(worst))
    if not png:
        for f in rep.figures:
            f.png = b""
    timings["figures_s"] = time.perf_counter() - t0
    rep.timings = timings
    return rep


def _bounds(rep: Report, rec, n_episodes: int, n_detail: int) -> list[str]:
    from sim.report.tcc import MAX_CHARTS

    out = [f"{n_detail} of {n_episodes} episodes are drawn in detail (the worst first); "
           f"every episode is in the table.",
           f"Current traces are exact (the engine's currents are constant between events) "
           f"and kept in at most {rec.max_windows} windows of at most {rec.max_points} points "
           f"and {rec.max_events} events each, from {rec.pre_s * 1e3:g} ms before an episode "
           f"to {rec.post_s * 1e3:g} ms after it."
           + (f" {rec.dropped} less severe windows were not kept." if rec.dropped else ""),
           f"At most {MAX_CHARTS} time-current charts; paths with the same settings share one."]
    over = {d: n for d, n in rec.dark_dropped.items() if n}
    if over:
        out.append("Dark spans beyond %d per device are counted, not drawn: %s." % (
            rec.max_spans, ", ".join(f"{d} {n}" for d, n in sorted(over.items()))))
    missing = [s.title for s in rep.sequences if s.model.window is None]
    if missing:
        out.append("No trace window was kept for: " + "; ".join(missing) + ".")
    return out
