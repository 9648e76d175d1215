"""``railfault report --sweep STORE``: the sweep section holds the sweep's own numbers.

A small sweep is written to a store in a temporary folder by ``railfault sweep
--store``; the report of the same file with ``--sweep`` must show the section,
and its tables (CSV) must hold the numbers of ``railfault sweep --json`` on that
store (the ``railfault-sweep/1`` contract of scenarios/README.md). Beside them,
check values from outside the code under test:

* the Wilson score interval's upper bound with no lost sample, ``z^2 / (n + z^2)``
  with ``z = 1.959963984540054`` (E. B. Wilson, JASA 22 (1927) 209-212; derived by
  hand from the interval's formula at ``k = 0``);
* the race of tests/scenarios/whatif/race-uniform.yaml, derived by hand in its
  header: each sample's margin is ``d - T`` (trip delay 4 ms minus the sampled swap
  time T), so the scatter's points lie on that line and a race is lost when T > d.
"""
from __future__ import annotations

import csv
import json
import os
import sqlite3
from pathlib import Path

import pytest

from sim.cli import main

ROOT = Path(__file__).resolve().parent.parent
BALLOON = ROOT / "scenarios" / "balloon-relay.yaml"
UNIFORM = ROOT / "tests" / "scenarios" / "whatif" / "race-uniform.yaml"
DEMO = ROOT / "scenarios" / "cinder-ridge.yaml"
Z95 = 1.959963984540054        # Phi^-1(0.975)
N = 16


def _csv(path) -> list[dict]:
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def _f(text):
    return None if text == "" else float(text)


@pytest.fixture(scope="module")
def swept(tmp_path_factory):
    """A 16-sample sweep of balloon-relay in a store, its JSON, and the report with it."""
    tmp = tmp_path_factory.mktemp("sweep")
    store, js, out = tmp / "s.sqlite", tmp / "s.json", tmp / "rep"
    # balloon-relay loses some races (a relay swap time drawn up to 6 ms): exit 1
    assert main(["sweep", str(BALLOON), "--samples", str(N), "--store", str(store),
                 "--json", "-o", str(js)]) == 1
    assert main(["report", str(BALLOON), "-o", str(out), "--detail", "1", "--sweep",
                 str(store)]) == 1
    return store, json.loads(js.read_text(encoding="utf-8")), out


def test_the_page_has_the_sweep_section_and_the_summary_beside_it(swept):
    _, summary, out = swept
    page = (out / "index.html").read_text(encoding="utf-8")
    assert '<h2 id="h-sweep">' in page and 'href="#sweep"' in page
    assert json.loads((out / "sweep.json").read_text(encoding="utf-8")) == summary
    for key in ("sweep-histogram", "sweep-lost", "sweep-scatter", "sweep-sensitivity"):
        assert f'id="{key}-title"' in page and f'id="{key}-desc"' in page   # accessible
        assert (out / f"{key}.png").is_file() and (out / f"{key}.csv").is_file()
    md = (out / "report.md").read_text(encoding="utf-8")
    assert "## Sweep" in md and "sweep-histogram.png" in md


def test_the_gap_table_holds_the_summarys_numbers(swept):
    _, summary, out = swept
    rows = {r["gap"]: r for r in _csv(out / "sweep-gaps.csv")}
    assert set(rows) == {g["gap"] for g in summary["gaps"]}
    for g in summary["gaps"]:
        r = rows[g["gap"]]
        assert int(r["reached"]) == g["reached"] and int(r["of"]) == summary["valid"] == N
        for what in ("lost", "failing"):
            p = g[what]
            assert int(r[what]) == p["count"]
            assert _f(r[f"{what}_p"]) == p["p"]
            assert [_f(r[f"{what}_low"]), _f(r[f"{what}_high"])] == p["ci95"]
        m = g["margin_s"] or {}
        for key in ("min", "p05", "p50", "p95", "max", "mean"):
            assert _f(r[f"{key}_s"]) == m.get(key)
        assert (_f(r["worst_sample"]) if r["worst_sample"] else None) == \
            (g["worst"] or {}).get("sample")


def test_no_lost_sample_gives_the_upper_bound_never_zero(swept):
    _, summary, out = swept
    # the balloon's a-end gap is never bridged by the route (main -> balloon -> main
    # enters and leaves by the b-end gap): no sample reached it, so nothing is known
    # there (probabilities are over the samples that reached a gap: no "none of 16")
    page = (out / "index.html").read_text(encoding="utf-8").replace("\u00a0", " ")
    unreached = [g for g in summary["gaps"] if not g["reached"]]
    assert unreached
    for g in unreached:
        assert (g["lost"]["count"], g["lost"]["of"], g["lost"]["p"]) == (0, 0, None)
    assert "not reached in any sample: no conclusion" in page
    # the one gap reached (main.b~balloon.b, all 16 samples) loses some races: its
    # interval is over those 16 (the upper bound at k = 0 over the samples that reached
    # a gap is checked in tests/test_whatif_sweep.py, 0 of 50: 7.1 %)
    (b_end,) = [g for g in summary["gaps"] if g["reached"]]
    assert b_end["lost"]["of"] == b_end["reached"] == N and b_end["lost"]["count"] > 0
    text = page[page.index('<h2 id="h-sweep">'):page.index('id="h-assumptions"')]
    assert "(0 %" not in text and " 0 %," not in text
    lost = {(r["gap"], r["what"]): r for r in _csv(out / "sweep-lost.csv")}
    for g in summary["gaps"]:
        if not g["reached"]:
            continue
        r = lost[(g["gap"], "lost race")]
        assert (int(r["count"]), int(r["of"])) == (g["lost"]["count"], g["lost"]["of"])
        assert [_f(r["low"]), _f(r["high"])] == g["lost"]["ci95"]


def test_histogram_and_sensitivity_are_the_summarys(swept):
    _, summary, out = swept
    hist = _csv(out / "sweep-histogram.csv")
    sens = _csv(out / "sweep-sensitivity.csv")
    for g in summary["gaps"]:
        if not g["margin_s"]:
            assert not [r for r in hist if r["gap"] == g["gap"]]
            continue
        h = g["margin_s"]["histogram"]
        rows = [r for r in hist if r["gap"] == g["gap"]]
        assert [int(r["samples"]) for r in rows] == h["counts"]
        assert [_f(r["from_s"]) for r in rows] == h["edges_s"][:-1]
        assert [_f(r["to_s"]) for r in rows] == h["edges_s"][1:]
        assert sum(h["counts"]) == g["margin_s"]["n"] == g["reached"]
        got = [(r["key"], _f(r["spearman"]), _f(r["prcc"])) for r in sens
               if r["gap"] == g["gap"]]
        assert got == [(d["key"], d["spearman"], d["prcc"]) for d in g["drivers"]]
        # the relay's swap time drives the margin (a slower swap, a smaller margin)
        assert g["drivers"][0]["key"] == "reversers.loop-ctl.swap_time"
        assert g["drivers"][0]["spearman"] < -0.9


def test_scatter_of_the_uniform_race_lies_on_d_minus_t(tmp_path):
    # race-uniform.yaml (header, derived by hand): margin = d - T with d = 4 ms; the
    # race is lost exactly when T > d.
    store, out = tmp_path / "u.sqlite", tmp_path / "rep"
    main(["sweep", str(UNIFORM), "--samples", "24", "--store", str(store), "--json",
          "-o", str(tmp_path / "u.json")])
    main(["report", str(UNIFORM), "-o", str(out), "--detail", "0", "--sweep", str(store)])
    pts = _csv(out / "sweep-scatter.csv")
    assert len(pts) == 24 and {p["key"] for p in pts} == {"reversers.rev.swap_time"}
    for p in pts:
        t = float(p["value"])
        assert float(p["margin_s"]) == pytest.approx(0.004 - t, abs=2e-9)   # 1 ns grid
        assert (p["lost"] == "true") == (t > 0.004)


def test_a_store_of_another_scenario_is_refused_and_nothing_is_written(swept, tmp_path,
                                                                       capsys):
    store, _, _ = swept
    out = tmp_path / "demo"
    capsys.readouterr()
    assert main(["report", str(DEMO), "-o", str(out), "--sweep", str(store)]) == 2
    err = capsys.readouterr().err
    assert "made from another scenario text" in err and "balloon-relay.yaml" in err
    assert "Traceback" not in err
    assert not out.exists() and os.listdir(tmp_path) == []
    (tmp_path / "not.sqlite").write_text("not a database\n")
    assert main(["report", str(DEMO), "-o", str(out), "--sweep",
                 str(tmp_path / "not.sqlite")]) == 2
    assert "not a railfault sweep store" in capsys.readouterr().err
    assert main(["report", str(DEMO), "-o", str(out), "--sweep",
                 str(tmp_path / "none.sqlite")]) == 2
    assert "no such sweep store" in capsys.readouterr().err
    assert not out.exists() and not (tmp_path / "none.sqlite").exists()


def test_an_unfinished_sweep_says_so(swept, tmp_path):
    # a sweep killed after its first batches: drop the last rows of a copy of the store
    store, _, _ = swept
    copy = tmp_path / "part.sqlite"
    src = sqlite3.connect(store)
    dst = sqlite3.connect(copy)
    src.backup(dst)
    src.close()
    with dst:
        dst.execute("DELETE FROM samples WHERE idx >= 10")
    dst.close()
    out = tmp_path / "rep"
    assert main(["report", str(BALLOON), "-o", str(out), "--detail", "0", "--sweep",
                 str(copy)]) == 1
    page = (out / "index.html").read_text(encoding="utf-8")
    assert f"holds 10 of the {N} samples" in page and "--resume" in page
    assert json.loads((out / "sweep.json").read_text(encoding="utf-8"))["samples"] == 10


def test_the_sweep_page_opens_in_a_browser_with_every_figure_labelled(swept, tmp_path):
    from tests.test_report_page import SECTIONS, _Dom, _run

    _, _, out = swept
    r = _run((out / "index.html").as_uri(), tmp_path, "--dump-dom")
    assert r.returncode == 0, r.stderr[-2000:]
    assert "CONSOLE" not in r.stderr
    dom = _Dom()
    dom.feed(r.stdout)
    k = SECTIONS.index("Assumptions and defaults")
    assert dom.h2 == SECTIONS[:k] + ["Sweep"] + SECTIONS[k:]
    assert dom.svg_labelled == 2 * dom.svgs and dom.svgs >= 4
