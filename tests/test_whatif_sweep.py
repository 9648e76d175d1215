"""railfault sweep: Monte Carlo against theory, determinism across workers, the store.

The theory (tests/scenarios/whatif/race-uniform.yaml, derived there by hand): a
reverser whose time to clear T is uniform on [a, b] = [1 ms, 5 ms] races a booster
that trips d = 4 ms after the onset; the race is lost when T > d, with probability
(b - d) / (b - a) = 0.25, and each sample's margin is d - T.
"""
from __future__ import annotations

import json
import os
import signal
import sqlite3
import subprocess
import sys
import time

import pytest

from sim.errors import ScenarioError
from sim.scenario import load, loads
from sim.whatif import sweep

FILE = "tests/scenarios/whatif/race-uniform.yaml"
GAP = "main.b~rev-sec.a"
D_S = 0.004
P_LOST = (0.005 - 0.004) / (0.005 - 0.001)


def cli(capsys, *args):
    from sim.cli import main

    capsys.readouterr()
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


@pytest.mark.parametrize("design", ["monte-carlo", "latin-hypercube"])
def test_monte_carlo_against_theory(design):
    res = sweep(load(FILE), samples=200, design=design)
    for r in res.records:
        t_clear = r["inputs"]["reversers.rev.swap_time"]
        # each sample: margin = d - T (1 ns time grid of the engine)
        assert r["gaps"][GAP]["margin_s"] == pytest.approx(D_S - t_clear, abs=2e-9)
        assert r["gaps"][GAP]["lost"] == (t_clear > D_S)
    g = res.summary["gaps"][0]
    assert g["gap"] == GAP and g["section"] == "rev-sec" and g["reached"] == 200
    lo, hi = g["lost"]["ci95"]
    assert lo <= P_LOST <= hi
    assert g["margin_s"]["min"] >= D_S - 0.005 - 2e-9 and g["margin_s"]["max"] <= D_S - 0.001
    # the only varied quantity drives the margin exactly (margin = d - T, decreasing)
    (drv,) = g["drivers"]
    assert drv["spearman"] == pytest.approx(-1.0)
    worst = g["worst"]
    assert worst["margin_s"] == g["margin_s"]["min"]
    assert worst["inputs"]["reversers.rev.swap_time"] == pytest.approx(D_S - worst["margin_s"],
                                                                       abs=2e-9)


def test_grid_sweep_gives_each_value():
    text = open(FILE).read().replace("{uniform: [1 ms, 5 ms]}", "[1 ms, 2 ms, 3 ms, 5 ms]")
    res = sweep(loads(text, FILE))
    margins = [r["gaps"][GAP]["margin_s"] for r in res.records]
    # margin = 4 ms - T for T = 1, 2, 3, 5 ms
    assert margins == pytest.approx([0.003, 0.002, 0.001, -0.001], abs=2e-9)
    g = res.summary["gaps"][0]
    assert g["lost"]["count"] == 1 and g["lost"]["of"] == 4


def test_no_lost_race_reports_the_upper_bound_not_zero(capsys):
    text = open(FILE).read().replace("{uniform: [1 ms, 5 ms]}", "{uniform: [1 ms, 3 ms]}")
    res = sweep(loads(text, FILE), samples=50)
    g = res.summary["gaps"][0]
    assert g["lost"]["count"] == 0
    # Wilson upper bound for 0 of 50: z^2 / (50 + z^2) = 3.8415 / 53.8415 = 0.0713
    assert g["lost"]["ci95"][1] == pytest.approx(0.0713, abs=1e-4)
    text_out = res.text()
    assert "lost race: none of 50 (below 7.1 % with 95 % confidence)" in text_out
    assert " 0 %" not in text_out


def test_jobs_1_and_2_give_byte_identical_summaries(capsys):
    c1, out1, _ = cli(capsys, "sweep", FILE, "--samples", "120", "--jobs", "1", "--json")
    c2, out2, _ = cli(capsys, "sweep", FILE, "--samples", "120", "--jobs", "2", "--json")
    assert c1 == c2 == 1                           # some races are lost: exit 1
    assert out1 == out2
    c3, text1, err = cli(capsys, "sweep", FILE, "--samples", "120", "--jobs", "1")
    c4, text2, _ = cli(capsys, "sweep", FILE, "--samples", "120", "--jobs", "2")
    assert text1 == text2 and "lost race:" in text1
    assert "does not replace a physical short test" in text1


def test_store_gives_the_same_summary_and_refuses_other_sweeps(tmp_path, capsys):
    store = str(tmp_path / "s.sqlite")
    mem = sweep(load(FILE), samples=60)
    kept = sweep(load(FILE), samples=60, store=store)
    assert json.dumps(kept.summary) == json.dumps(mem.summary)
    with sqlite3.connect(store) as con:
        assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert con.execute("SELECT COUNT(*), COUNT(DISTINCT idx) FROM samples").fetchone() \
            == (60, 60)
        meta = dict(con.execute("SELECT key, value FROM meta"))
    assert meta["scenario_text"] == open(FILE, encoding="utf-8").read()
    assert meta["scenario_sha256"] == load(FILE).sha256
    # the same store again without --resume: refused
    code, out, err = cli(capsys, "sweep", FILE, "--samples", "60", "--store", store)
    assert code == 2 and out == "" and "add --resume" in err
    # with --resume: nothing left to run, the same summary
    code, out, err = cli(capsys, "sweep", FILE, "--samples", "60", "--store", store, "--resume",
                         "--json")
    assert code == 1 and json.loads(out) == mem.summary
    # other settings
    code, out, err = cli(capsys, "sweep", FILE, "--samples", "61", "--store", store, "--resume")
    assert code == 2 and "other sweep settings" in err and "n" in err
    # another scenario text
    other = tmp_path / "other.yaml"
    other.write_text(open(FILE).read().replace("seed: 11", "seed: 11\n# changed"))
    code, out, err = cli(capsys, "sweep", str(other), "--samples", "60", "--store", store,
                         "--resume")
    assert code == 2 and out == "" and "made from another scenario text" in err
    assert "Traceback" not in err
    # not a store
    junk = tmp_path / "junk.sqlite"
    junk.write_text("not a database")
    code, out, err = cli(capsys, "sweep", FILE, "--samples", "5", "--store", str(junk))
    assert code == 2 and "not a railfault sweep store" in err


def _count(store: str) -> int:
    try:
        con = sqlite3.connect(f"file:{store}?mode=ro", uri=True, timeout=5)
        try:
            return int(con.execute("SELECT COUNT(*) FROM samples").fetchone()[0])
        finally:
            con.close()
    except sqlite3.Error:
        return 0


def test_sigkill_at_several_points_then_resume(tmp_path):
    """SIGKILL the sweep (a subprocess) at several points, resume; every index once, the
    summary equal to an uninterrupted run's, and SQLite's integrity check ok."""
    store = str(tmp_path / "k.sqlite")
    n = 800
    base = [sys.executable, "-m", "sim.cli", "sweep", FILE, "--samples", str(n), "--store",
            store, "--json"]
    killed_mid_run = 0
    for k, target in enumerate((None, 100, 350, 600)):
        proc = subprocess.Popen(base + (["--resume"] if k else []), stdout=subprocess.DEVNULL,
                                stderr=subprocess.PIPE)
        deadline = time.monotonic() + 240
        if target is None:
            time.sleep(0.8)               # while it starts: imports, the store, 1st batch
        else:
            while _count(store) < target and proc.poll() is None \
                    and time.monotonic() < deadline:
                time.sleep(0.02)
        if proc.poll() is None:
            os.kill(proc.pid, signal.SIGKILL)
            killed_mid_run += 1
        proc.wait(timeout=60)
        assert proc.returncode in (-signal.SIGKILL, 0, 1), proc.stderr.read()
    assert killed_mid_run >= 3
    done = subprocess.run(base + ["--resume"], capture_output=True, text=True, timeout=600)
    assert done.returncode == 1, done.stderr
    with sqlite3.connect(store) as con:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        idx = [r[0] for r in con.execute("SELECT idx FROM samples ORDER BY idx")]
    assert idx == list(range(n))
    whole = sweep(load(FILE), samples=n)
    assert json.loads(done.stdout) == json.loads(json.dumps(whole.summary))


def test_dask_local_cluster_gives_the_same_summary():
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as cluster:
        res = sweep(load(FILE), samples=80, cluster=cluster.scheduler_address)
    inline = sweep(load(FILE), samples=80)
    assert json.dumps(res.summary) == json.dumps(inline.summary)


def test_input_errors_are_located(tmp_path, capsys):
    text = open(FILE).read()
    f = tmp_path / "no-samples.yaml"
    f.write_text(text.replace("samples: 200", ""))
    code, out, err = cli(capsys, "sweep", str(f))
    assert code == 2 and "give the number of samples" in err
    f = tmp_path / "thermal.yaml"
    f.write_text(text.replace("reversers.rev.swap_time: {uniform: [1 ms, 5 ms]}",
                              "boosters.east.thermal.tau: {uniform: [1 s, 2 s]}"))
    code, out, err = cli(capsys, "sweep", str(f))
    assert code == 2 and "vary.boosters.east.thermal.tau" in err and "not given" in err
    line = text.splitlines().index("vary:") + 2
    assert f"thermal.yaml:{line}:" in err
    f = tmp_path / "novary.yaml"
    f.write_text(text.split("vary:")[0])
    code, out, err = cli(capsys, "sweep", str(f))
    assert code == 2 and "nothing to sweep" in err


def test_progress_bar_is_quiet_under_json_or_without_a_terminal(monkeypatch):
    from argparse import Namespace

    from sim.commands.sweep import _quiet

    monkeypatch.setattr(sys.stdout, "isatty", lambda: True, raising=False)
    monkeypatch.setattr(sys.stderr, "isatty", lambda: True, raising=False)
    assert not _quiet(Namespace(json=False))
    assert _quiet(Namespace(json=True))
    monkeypatch.setattr(sys.stderr, "isatty", lambda: False, raising=False)
    assert _quiet(Namespace(json=False))


def test_triangular_sampler_is_read_and_checked():
    text = open(FILE).read()
    scn = loads(text.replace("{uniform: [1 ms, 5 ms]}", "{triangular: [1 ms, 2 ms, 5 ms]}"))
    assert scn.vary["reversers.rev.swap_time"]["sampler"] == "triangular"
    assert scn.vary["reversers.rev.swap_time"]["values"] == pytest.approx((0.001, 0.002, 0.005))
    with pytest.raises(ScenarioError, match="mode between low and high"):
        loads(text.replace("{uniform: [1 ms, 5 ms]}", "{triangular: [1 ms, 6 ms, 5 ms]}"))


def test_a_gap_no_sample_reached_gives_no_conclusion():
    """Speeds 0.1 and 0.2 m/s: the pickup bridges the gap at 0.375 m / v = 3.75 s and
    1.875 s, both after the 1 s run (race-uniform.yaml's geometry: 2 m - 1.75 m +
    0.125 m = 0.375 m to go): no sample reaches the gap, so nothing can be said."""
    text = open(FILE).read().replace(
        "reversers.rev.swap_time: {uniform: [1 ms, 5 ms]}", "trains.t1.speed: [0.1 m/s, 0.2 m/s]")
    res = sweep(loads(text, FILE))
    g = res.summary["gaps"][0]
    assert g["gap"] == GAP and g["reached"] == 0
    assert g["lost"]["of"] == 0 and g["failing"]["of"] == 0 and g["lost"]["p"] is None
    out = res.text()
    assert "not reached in any sample: no conclusion" in out
    assert "confidence" not in out.split("Gap " + GAP)[1].split("\n\n")[0]


def test_probabilities_are_over_the_samples_that_reached_the_gap():
    """Speeds 0.1, 0.2, 0.5 m/s with a 5 ms swap: only 0.5 m/s reaches the gap (0.375 m /
    0.5 m/s = 0.75 s < 1 s; 3.75 s and 1.875 s are after the run), and there the race is
    lost (margin 4 ms - 5 ms = -1 ms): lost 1 of the 1 sample that reached it, not 1 of
    3. Wilson 95 % for 1 of 1 (hand, z = 1.96): centre (1 + z^2/2) / (1 + z^2) less the
    half width (z^2/2) / (1 + z^2) = 1 / (1 + z^2) = 1 / 4.8416 = 0.2065."""
    text = open(FILE).read().replace("swap_time: 2 ms", "swap_time: 5 ms").replace(
        "reversers.rev.swap_time: {uniform: [1 ms, 5 ms]}",
        "trains.t1.speed: [0.1 m/s, 0.2 m/s, 0.5 m/s]")
    res = sweep(loads(text, FILE))
    g = res.summary["gaps"][0]
    assert g["reached"] == 1
    assert (g["lost"]["count"], g["lost"]["of"]) == (1, 1)
    assert g["lost"]["ci95"][0] == pytest.approx(0.2065, abs=1e-3)
    assert g["worst"]["margin_s"] == pytest.approx(-0.001, abs=2e-9)
    out = res.text()
    assert "reached in 1 of 3 samples; of those 1:" in out
    assert "lost race: 1 of 1 (" in out
    # the worst sample's value with its unit: 0.5 m/s
    assert "trains.t1.speed = 0.5 m/s" in out


def test_worst_sample_times_are_printed_in_ms():
    """The worst sample of the uniform race has T = 4 ms - margin; printed in ms with 3
    decimals (not in raw seconds)."""
    res = sweep(load(FILE), samples=40)
    w = res.summary["gaps"][0]["worst"]
    t_ms = w["inputs"]["reversers.rev.swap_time"] * 1e3
    assert f"reversers.rev.swap_time = {t_ms:.3f} ms" in res.text()


def _children(pid: int) -> set[int]:
    """The live child processes of ``pid`` (Linux /proc)."""
    out: set[int] = set()
    try:
        for task in os.listdir(f"/proc/{pid}/task"):
            with open(f"/proc/{pid}/task/{task}/children") as fh:
                out.update(int(x) for x in fh.read().split())
    except OSError:
        pass
    return out


def _alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return fh.read().split(")")[-1].split()[0] != "Z"    # a zombie is dead
    except OSError:
        return False


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")
@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGKILL], ids=["TERM", "KILL"])
def test_workers_die_with_the_sweep(tmp_path, sig):
    """Kill a --jobs 2 sweep while its workers run: both workers end too (within the
    watch period of 0.5 s plus slack; the kernel's parent-death signal ends them at once
    on Linux), and --resume goes on from the store."""
    store = str(tmp_path / "w.sqlite")
    base = [sys.executable, "-m", "sim.cli", "sweep", FILE, "--samples", "3000", "--jobs", "2",
            "--store", store, "--json"]
    proc = subprocess.Popen(base, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 120
    workers: set[int] = set()
    while time.monotonic() < deadline and proc.poll() is None:
        workers = _children(proc.pid)
        if len(workers) >= 2 and _count(store) > 0:
            break
        time.sleep(0.05)
    assert proc.poll() is None and len(workers) >= 2, "the sweep did not start its workers"
    os.kill(proc.pid, sig)
    proc.wait(timeout=60)
    deadline = time.monotonic() + 10
    while time.monotonic() < deadline and any(_alive(w) for w in workers):
        time.sleep(0.05)
    left = [w for w in workers if _alive(w)]
    for w in left:                                 # clean up before failing
        os.kill(w, signal.SIGKILL)
    assert not left, f"workers {left} outlived the sweep killed by {sig.name}"


def test_a_gap_crossed_in_phase_says_so():
    """rev-sec wired normal (in phase with main): the pickup crosses main.b~rev-sec.a
    with no short. At 0.5 m/s it gets there at 0.375 m / 0.5 m/s = 0.75 s, inside the 1 s
    run; at 0.1 m/s only at 3.75 s, after it: crossed in phase in 1 of 2 samples."""
    text = open(FILE).read().replace("leads: swapped", "leads: normal").replace(
        "reversers.rev.swap_time: {uniform: [1 ms, 5 ms]}", "trains.t1.speed: [0.1 m/s, 0.5 m/s]")
    res = sweep(loads(text, FILE))
    g = res.summary["gaps"][0]
    assert (g["reached"], g["crossed_in_phase"]) == (0, 1)
    assert [r["crossed"] for r in res.records] == [[], [GAP]]
    assert "crossed in phase (no short) in 1 of 2 samples, never with a short: no race to " \
           "judge" in res.text()


def test_store_keeps_the_crossed_gaps(tmp_path):
    """The store gives back each sample's crossed gaps: the summary from it equals the
    one made in memory (the speeds of test_a_gap_crossed_in_phase_says_so)."""
    text = open(FILE).read().replace("leads: swapped", "leads: normal").replace(
        "reversers.rev.swap_time: {uniform: [1 ms, 5 ms]}", "trains.t1.speed: [0.1 m/s, 0.5 m/s]")
    f = tmp_path / "crossed.yaml"
    f.write_text(text, encoding="utf-8")
    mem = sweep(load(str(f)))
    kept = sweep(load(str(f)), store=str(tmp_path / "c.sqlite"))
    assert json.dumps(kept.summary) == json.dumps(mem.summary)
    assert kept.summary["gaps"][0]["crossed_in_phase"] == 1
