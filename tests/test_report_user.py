"""The page read as a club electrician reads it: units, one cause per finding with its fix,
figures that agree with ``railfault run --json`` and ``railfault check --json``.

Layouts: the bundled demo and failing demo (scenarios/cinder-ridge.yaml,
scenarios/balloon-relay.yaml) and tests/scenarios/report/larkspur.yaml (an invented
wye, reversing loop, lighted coaches and a current-limited supply). Check values: the
JSON of the two commands for the same file (scenarios/README.md, "Results") and hand
derivations from larkspur.yaml's header written beside them.
"""
from __future__ import annotations

import math
import re
from pathlib import Path

import pytest

from sim import api
from sim.report.output import files_of
from sim.scenario import load
from tests.report_helpers import report_of

ROOT = Path(__file__).resolve().parent.parent
LARKSPUR = ROOT / "tests" / "scenarios" / "report" / "larkspur.yaml"
FILES = [ROOT / "scenarios" / "cinder-ridge.yaml", ROOT / "scenarios" / "balloon-relay.yaml",
         LARKSPUR]

#: A number with its unit somewhere in a cell.
WITH_UNIT = re.compile(r"[-+]?\d[\d,.]*\s(µs|ms|s|A²s|A|V|ohm|ohm/m|mm|m|m/s|%)(?![A-Za-z])")
#: Columns whose numbers have no unit by nature: the time multiplier of an inverse-time
#: curve, thermal levels (1 = steady state at the rated current), a phase of a sample
#: grid (a fraction of a period), rank correlations.
UNITLESS = {"trip_tms", "thermal_trip_at", "thermal_resume_at", "sense_phase", "spearman",
            "prcc"}


@pytest.fixture(scope="module", params=FILES, ids=[p.stem for p in FILES])
def page(request):
    path = request.param
    rep = report_of(str(path))
    return rep, api.check(load(path)).as_dict(), rep.result.as_dict()


def _tables(rep) -> list:
    return list(rep.tables) + [rep.episode_paths]


def _numbers_with_units(tables) -> int:
    """Assert that every finite float a page table shows has its unit in its cell; how
    many were checked."""
    seen = 0
    for t in tables:
        for raw, text in zip(t.rows, t.text_rows()):
            for c, cell in zip(t.page_columns, text):
                v = raw.get(c.key)
                if c.key in UNITLESS or isinstance(v, bool) or not isinstance(v, float) \
                        or not math.isfinite(v):
                    continue
                seen += 1
                assert WITH_UNIT.search(cell), (t.key, c.key, cell)
    return seen


def test_every_number_on_the_page_has_its_unit(page):
    rep, _, _ = page
    assert _numbers_with_units(_tables(rep)) > 50


def test_each_error_or_warning_is_one_cause_with_its_fix(page):
    rep, check, run = page
    html = files_of(rep)["index.html"]
    section = html[html.index('id="h-findings"'):html.index('id="h-settings"')]
    for b in rep.run_blocks:
        f = b.finding
        if f.severity in ("error", "warning") and not f.because:
            assert f.fix and section.count(f"<code>{f.code}</code> {f.where}") >= 1
    for f in rep.check_causes:
        if f.severity == "error":
            assert f.fix
    # one block per cause: no finding of the run is shown twice as a cause
    heads = [(b.finding.code, b.finding.where) for b in rep.run_blocks]
    assert len(heads) == len(set(heads))


def test_the_figures_agree_with_run_and_check_json(page):
    rep, check, run = page
    # the run the page shows is railfault run's (same seed, same episodes, same findings)
    assert run == api.run(load(rep.path)).as_dict()
    assert rep.check == check
    # the least margin in the header's figures is the least gap margin of the run
    gaps = [e for e in run["episodes"] if e["kind"] == "gap" and e["margin_s"] is not None]
    if gaps:
        least = min(e["margin_s"] for e in gaps)
        assert f"least margin {least * 1e3:+.3f} ms" in " ".join(rep.key_lines)
    # the fault map's rows are the check's coin test, the wiring sheet its wiring rows
    assert [dict(r) for r in rep.check["fault_current"]] == check["fault_current"]
    assert len(rep.wiring.rows) == len(check["wiring"])
    # each device's dark time and peak in the devices table are the run's
    for row in rep.devices.rows:
        d = run["devices"][row["device"]]
        assert row["dark_s"] == d["dark_s"] and row["peak_a"] == d["peak_a"]


def test_larkspur_figures_derived_by_hand():
    # larkspur.yaml (header): the short on leg-b from 100 s to 101.5 s trips west-bst,
    # which retries every 1 s: it trips again on the same short at about 101.005 s and
    # is back at about 102.01 s, when the short is gone: 2 trips, dark 2 x 1 s = 2 s.
    # The supply limits every short to 6 A (current_limit), over the 4 A trip level.
    rep = report_of(str(LARKSPUR))
    run = rep.result.as_dict()
    west = run["devices"]["west-bst"]
    assert west["trips"] == 2 and west["dark_s"] == pytest.approx(2.0, abs=1e-6)
    faults = [e for e in run["episodes"] if e["kind"] == "fault"]
    assert [e["outcome"] for e in faults] == ["tripped", "tripped"]
    assert all(e["peak_a"] <= 6.0 + 1e-9 for e in run["episodes"])
    assert "district of west-bst 2.000 s in 2 spans" in " ".join(rep.key_lines)
    # both reversing sections' gaps swapped in time. Static margins by hand (DEVELOPERS.md,
    # Coordination): the boosters' earliest trip is (n - 1) Ts with n = ceil(5 ms / 0.1 ms)
    # = 50, 4.9 ms; tail-rev clears in 0.2 ms + 1.5 ms = 1.7 ms (margin 3.2 ms), loop-rev
    # in 0.2 ms + 0.3 ms = 0.5 ms (margin 4.4 ms).
    gaps = [e for e in run["episodes"] if e["kind"] == "gap"]
    assert {e["outcome"] for e in gaps} == {"swapped"} and len(gaps) == 2
    pairs = {(p.device, p.upstream): p for p in rep.pairs if p.kind == "race"}
    assert pairs[("tail-rev", "west-bst")].static_margin_s == pytest.approx(3.2e-3, abs=1e-9)
    assert pairs[("loop-rev", "east-bst")].static_margin_s == pytest.approx(4.4e-3, abs=1e-9)


def test_the_sweep_section_has_its_units_too(tmp_path):
    from sim.report import build
    from sim.report.sweep import read_store
    from sim.whatif import sweep

    scn = load(LARKSPUR)
    store = tmp_path / "s.sqlite"
    sweep(scn, samples=8, store=str(store))
    rep = build(scn, png=False, detail=0, sweep=read_store(str(store), scn))
    tables = list(rep.sweep.tables) + [rep.sweep.races, rep.sweep.margins] + \
        [f.data for f in rep.sweep.figures]
    assert _numbers_with_units(tables) > 20
    # the worst sample's settings are written with their units
    worst = [ln for ln in rep.sweep.margins.text_rows() if ln[-1] != "-"]
    assert worst and all(re.search(r"swap_time = \d+\.\d{3} ms", w[-1]) for w in worst)
