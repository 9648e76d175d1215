"""Sequence of operation: the margin arrows are the result's margins; dark time per district.

Check values: the run's own ``Episode.margins`` (the arrows must equal them), and
hand derivations from the scenarios' settings written beside each value.
"""
from __future__ import annotations

import math
from pathlib import Path

import pytest

from sim.layout import build_layout
from sim.report.sequence import dark_lanes, sequence_of, worst_episodes
from sim.scenario import load
from sim.world import run
from sim.world.traces import TraceRecorder
from tests.report_helpers import demo_report

ROOT = Path(__file__).resolve().parent.parent


def test_margin_arrows_equal_the_results_margins():
    rep = demo_report()
    assert rep.sequences, "the demo has episodes drawn in detail"
    n_arrows = 0
    for fig in rep.sequences:
        seq = fig.model
        ep = rep.result.episodes[seq.index]
        finite = {d: m for d, m in ep.margins.items() if m is not None and math.isfinite(m)}
        assert {a.lane for a in seq.arrows} == set(finite)
        for a in seq.arrows:
            assert a.margin_s == finite[a.lane]
            assert a.t_to_s - a.t_from_s == pytest.approx(finite[a.lane], abs=1e-12)
            assert a.t_from_s == ep.t_cleared_s
            n_arrows += 1
        # and the figure's data table carries the same margins
        rows = [r for r in fig.data.rows if r["what"] == "margin"]
        assert sorted(r["margin_s"] for r in rows) == sorted(finite.values())
    # demo: wye-tail-ctl against west, balloon-ctl against loop-cb and east
    assert n_arrows == 3


def test_a_lost_race_draws_a_backward_arrow_to_the_trip():
    # race-minus (tests/scenarios/run): onset 0.75 s, rev would clear at 0.75 + 0.5 ms
    # + 4 ms = 0.7545 s, east trips 3 ms after the onset at 0.753 s: margin -1.5 ms.
    scn = load(ROOT / "tests" / "scenarios" / "run" / "race-minus.yaml")
    rec = TraceRecorder()
    res = run(scn, traces=rec)
    (k,) = worst_episodes(res, 5)
    ep = res.episodes[k]
    seq = sequence_of(scn, k, ep, rec.window_for(ep.start_s, ep.end_s, ep.where),
                      scn.t_margin_required_s)
    (a,) = seq.arrows
    assert a.lane == "east" and not a.ok
    assert a.t_from_s == pytest.approx(0.7545, abs=1e-9)
    assert a.t_to_s == pytest.approx(0.753, abs=1e-9)
    assert a.margin_s == pytest.approx(-1.5e-3, abs=1e-9) == ep.margins["east"]
    trips = [m for m in seq.marks if m.lane == "east" and m.kind == "trip"]
    assert trips and trips[0].t_s == pytest.approx(0.753, abs=1e-9)
    # east stays dark to the end of the window (manual restart)
    assert any(s.lane == "east" and s.kind == "dark" for s in seq.spans)


def test_dark_time_per_district_is_the_union_up_the_chain():
    # demo: west trips three times on the fault and restarts after 0.5 s, 1 s and 2 s
    # (back-off from 0.5 s, factor 2): 3.5 s dark. The wye tail is fed through west:
    # dark whenever west is, plus its own 0.2 ms dead time after its swap.
    scn = load(ROOT / "scenarios" / "cinder-ridge.yaml")
    rec = TraceRecorder()
    run(scn, traces=rec)
    lanes = {ln.district: ln for ln in dark_lanes(scn, build_layout(scn), rec)}
    assert lanes["west"].total_s == pytest.approx(3.5, abs=1e-9)
    assert lanes["wye-tail-ctl"].total_s == pytest.approx(3.5 + 0.2e-3, abs=1e-9)
    assert lanes["east"].total_s == 0.0
    assert lanes["balloon-ctl"].total_s == pytest.approx(0.2e-3, abs=1e-9)


def test_the_worst_episodes_come_first():
    # race-minus's tripped gap is worse than any swap; demo: the least margin first
    rep = demo_report()
    order = worst_episodes(rep.result, 5)
    eps = rep.result.episodes
    assert eps[order[0]].margin_s == pytest.approx(1.4e-3, abs=1e-9)   # balloon-ctl vs loop-cb
    assert [eps[k].kind for k in order[:2]] == ["gap", "gap"]
