"""The report folder: the CSV and Markdown hold the JSON result's numbers; written
atomically; scenario text escaped; deterministic SVG (a golden file).

Check values: the ``railfault-result/1`` and ``railfault-check/1`` JSON written
beside the page (the contract of scenarios/README.md) and the static margins of
``sim.checks.coordination``; the golden SVG is our own stored output (see
tests/make_report_golden.py), checked for determinism too.
"""
from __future__ import annotations

import csv
import json
import os
import re
from pathlib import Path

import pytest

from sim.checks.coordination import reversing_margins
from sim.errors import ScenarioError
from sim.layout import build_layout
from sim.report import write
from sim.report.output import MARKER, OutputError
from sim.scenario import load, loads
from tests.report_helpers import REPORT_SCENARIOS, demo_report, report_of

ROOT = Path(__file__).resolve().parent.parent
GOLDEN = ROOT / "tests" / "golden" / "report-tcc-slow.svg"
#: The matplotlib release the golden SVG was drawn with: another release lays text and
#: ticks out differently, so the byte comparison holds only for this one (determinism and
#: accessibility are checked with any release).
GOLDEN_MATPLOTLIB = ROOT / "tests" / "golden" / "report-tcc-slow.matplotlib"


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    out = tmp_path_factory.mktemp("rep") / "cinder-ridge"
    names = write(demo_report(), str(out))
    return out, names


def _csv(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def _f(text):
    return None if text == "" else float(text)


def test_the_folder_holds_the_page_and_its_files(folder):
    out, names = folder
    for name in ("index.html", "report.md", "result.json", "check.json", "episodes.csv",
                 "devices.csv", "coordination.csv", "faultmap.csv", "settings-boosters.csv",
                 "wiring.csv", "gaps.csv", "assumptions.csv", MARKER):
        assert name in names and (out / name).is_file()
    assert not [n for n in os.listdir(out.parent) if n.startswith(".")]   # no temp left


def test_csv_holds_the_json_results_numbers(folder):
    out, _ = folder
    res = json.loads((out / "result.json").read_text(encoding="utf-8"))
    rows = _csv(out / "episodes.csv")
    assert len(rows) == len(res["episodes"]) == 5
    for row, ep in zip(rows, res["episodes"]):
        for key in ("start_s", "end_s", "peak_a", "acted_s", "margin_s"):
            assert _f(row[key]) == ep[key], key          # exact: repr round trip
        assert row["where"] == ep["where"] and row["outcome"] == ep["outcome"]
    margins = _csv(out / "margins.csv")
    flat = sorted((int(r["n"]), r["device"], float(r["margin_s"])) for r in margins)
    assert flat == sorted((k + 1, d, m) for k, ep in enumerate(res["episodes"])
                          for d, m in ep["margins"].items())
    for row in _csv(out / "devices.csv"):
        d = res["devices"][row["device"]]
        assert _f(row["dark_s"]) == d["dark_s"] and _f(row["peak_a"]) == d["peak_a"]
        assert int(row["trips"]) == d["trips"] and int(row["swaps"]) == d["swaps"]
    chk = json.loads((out / "check.json").read_text(encoding="utf-8"))
    fc = _csv(out / "faultmap.csv")
    assert len(fc) == len(chk["fault_current"])
    for row, r in zip(fc, chk["fault_current"]):
        assert _f(row["current_a"]) == r["current_a"] and _f(row["at_m"]) == r["at_m"]


def test_coordination_csv_holds_checks_static_margins(folder):
    out, _ = folder
    scn = load(ROOT / "scenarios" / "cinder-ridge.yaml")
    static = reversing_margins(scn, build_layout(scn))
    race = [r for r in _csv(out / "coordination.csv") if r["kind"] == "race"]
    assert {(r["device"], r["upstream"]) for r in race} == {
        (k, d) for k, v in static.items() for d in v}
    for r in race:
        assert float(r["static_margin_s"]) == static[r["device"]][r["upstream"]]
        assert r["result"] == "pass"
    # the run's least margin: balloon-ctl against loop-cb, +1.4 ms (the result's margin)
    res = json.loads((out / "result.json").read_text(encoding="utf-8"))
    (row,) = [r for r in race if (r["device"], r["upstream"]) == ("balloon-ctl", "loop-cb")]
    assert float(row["run_margin_s"]) == res["episodes"][1]["margins"]["loop-cb"]


def _md_table(md: str, heading: str) -> list[list[str]]:
    part = md.split(heading, 1)[1]
    lines = [ln for ln in part.splitlines() if ln.startswith("|")]
    rows, started = [], False
    for ln in part.splitlines():
        if ln.startswith("|"):
            started = True
            rows.append([c.strip() for c in ln.strip("|").split(" |")])
        elif started:
            break
    assert lines
    return rows[2:]


def _num(text: str) -> float:
    m = re.match(r"^([+-]?[0-9.]+) (s|ms|A|µs)$", text)
    assert m, text
    v = float(m.group(1))
    return v * {"s": 1.0, "ms": 1e-3, "µs": 1e-6, "A": 1.0}[m.group(2)]


def test_markdown_holds_the_same_numbers_as_the_json(folder):
    out, _ = folder
    md = (out / "report.md").read_text(encoding="utf-8")
    res = json.loads((out / "result.json").read_text(encoding="utf-8"))
    rows = _md_table(md, "### Every short episode")
    assert len(rows) == len(res["episodes"])
    for row, ep in zip(rows, res["episodes"]):
        # columns: #, start, end, kind, where, train, peak, outcome, acted, acted at, margin
        assert _num(row[1]) == pytest.approx(ep["start_s"], abs=0.5e-6)
        assert _num(row[2]) == pytest.approx(ep["end_s"], abs=0.5e-6)
        assert row[4] == ep["where"]
        assert _num(row[6]) == pytest.approx(ep["peak_a"], abs=0.005)
        assert _num(row[9]) == pytest.approx(ep["acted_s"], abs=0.5e-6)
        if ep["margin_s"] is not None:
            assert _num(row[10]) == pytest.approx(ep["margin_s"], abs=0.5e-6)
    devs = _md_table(md, "### What each device did")
    for row in devs:
        d = res["devices"][row[0]]
        assert _num(row[5]) == pytest.approx(d["dark_s"], abs=0.5e-3 if d["dark_s"] >= 1
                                             else 0.5e-6)
        assert _num(row[6]) == pytest.approx(d["peak_a"], abs=0.005)
    # the cautions are on the Markdown too
    assert "does not replace a physical short test" in md


def test_scenario_text_is_escaped_in_the_page_and_the_markdown(tmp_path):
    rep = report_of(str(REPORT_SCENARIOS / "hostile.yaml"))
    out = tmp_path / "hostile"
    write(rep, str(out))
    page = (out / "index.html").read_text(encoding="utf-8")
    assert "<script" not in page.lower()
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page
    assert "<b>bold</b>" not in page
    md = (out / "report.md").read_text(encoding="utf-8")
    assert "<script" not in md.lower() and "&lt;script&gt;" in md
    # names cannot hold markup at all: the loader refuses them
    bad = (ROOT / "tests" / "scenarios" / "report" / "hostile.yaml").read_text(
        encoding="utf-8").replace("east", "'<script>x</script>'")
    with pytest.raises(ScenarioError):
        loads(bad)


def test_writing_is_atomic(tmp_path, monkeypatch):
    import sim.report.output as W

    rep = demo_report()
    target = tmp_path / "r"

    def boom(_rep):
        raise RuntimeError("disk full")

    monkeypatch.setattr(W, "render_markdown", boom)
    with pytest.raises(RuntimeError):
        write(rep, str(target))
    assert os.listdir(tmp_path) == []                       # nothing half written
    monkeypatch.undo()
    write(rep, str(target))
    first = (target / "index.html").stat().st_ino
    write(rep, str(target))                                  # a report folder is replaced
    assert (target / "index.html").stat().st_ino != first
    assert sorted(os.listdir(tmp_path)) == ["r"]
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "notes.txt").write_text("keep me")
    with pytest.raises(OutputError):
        write(rep, str(mine))                                # never a folder of the user's
    assert (mine / "notes.txt").read_text() == "keep me"
    (tmp_path / "file").write_text("x")
    with pytest.raises(OutputError):
        write(rep, str(tmp_path / "file"))


def _golden_svg() -> str:
    from sim.circuit.faultmap import fault_map
    from sim.circuit.windows import trip_windows
    from sim.report.plot_tcc import draw_tcc
    from sim.report.tcc import build_charts

    scn = load(REPORT_SCENARIOS / "curves.yaml")
    layout = build_layout(scn)
    fm = fault_map(scn, layout)
    (chart,) = [c for c in build_charts(scn, layout, fm, trip_windows(scn, fm))
                if c.path[0] == "slow"]
    return draw_tcc(scn, chart).svg


def test_svg_is_deterministic_and_matches_the_golden_file():
    a, b = _golden_svg(), _golden_svg()
    assert a == b
    assert "<title id=" in a and "<desc id=" in a and 'role="img"' in a
    assert "Date" not in a and "Matplotlib v" not in a
    import matplotlib

    drawn_with = GOLDEN_MATPLOTLIB.read_text(encoding="utf-8").strip()
    if matplotlib.__version__ != drawn_with:
        pytest.skip(f"the golden SVG was drawn with matplotlib {drawn_with}, this is "
                    f"{matplotlib.__version__}: regenerate it with python -m "
                    "tests.make_report_golden after reviewing the chart")
    assert GOLDEN.read_text(encoding="utf-8") == a, (
        "the time-current chart's SVG changed: review it, then regenerate with "
        "python -m tests.make_report_golden")
