"""Shorts grouped by place: one finding with a count, first and last time and worst figure.

The episodes here are written out by hand (the results contract's fields), so each
check value is the one put in: 23 shorts at one gap 1.002 s apart (a booster that
retries 1 s after a 2 ms trip, the retry meeting the same short), margins from
-1.0 ms down to -3.5 ms.
"""
from pathlib import Path

import pytest

from sim.diagnose import diagnose_facts, verdict_findings
from sim.diagnose.facts import RunFacts
from sim.diagnose.groups import EpisodeGroup, symptom_groups
from sim.layout import build_layout
from sim.scenario import load
from sim.trace import DeviceSummary, Episode

HERE = Path(__file__).parent / "scenarios" / "diagnose"
GAP = "main.b~rev-sec.a"


def _races(n=23, t0=0.75, step=1.002):
    """``n`` lost races at one reverser gap: the booster trips 3 ms after each onset;
    the margins run from -1.0 ms to -3.5 ms (the worst is the 12th)."""
    eps = []
    for k in range(n):
        t = t0 + k * step
        m = -3.5e-3 if k == 11 else -1.0e-3 - 1e-4 * (k % 5)
        eps.append(Episode(start_s=t, end_s=t + 3e-3, kind="gap", where=GAP, train="t1",
                           peak_a=48.0 + (k == 4), outcome="tripped", acted="east",
                           acted_s=t + 3e-3, margins={"east": m}, margin_s=m))
    return eps


def test_group_figures():
    g = EpisodeGroup(GAP, "gap", _races())
    assert g.count == 23
    assert g.first_s == pytest.approx(0.75)                          # the first onset
    assert g.last_s == pytest.approx(0.75 + 22 * 1.002)             # 22 retries later
    assert g.worst_margin_s == pytest.approx(-3.5e-3)
    assert g.peak_a == pytest.approx(49.0)
    assert g.outcome_text() == "every one tripped east first"
    assert "worst margin -3.500 ms" in g.describe() and "peak 49.00 A" in g.describe()


def test_23_shorts_at_one_gap_are_one_symptom_finding():
    eps = _races()
    per_episode = verdict_findings(eps, 0.0)
    assert len(per_episode) == 46                   # RF-RUN-001 and -003 for each short
    groups = symptom_groups(eps, 0.0)
    assert [sg.code for sg in groups] == ["RF-RUN-001"]   # -003 folded into -001
    f = groups[0].finding()
    assert (f.count, f.where) == (23, GAP)
    assert f.first_s == pytest.approx(0.75) and f.last_s == pytest.approx(22.794)
    assert f.message.startswith(f"gap {GAP}: 23 shorts of train t1, every one tripped east first")
    assert "worst margin -3.500 ms" in f.message


def _facts(name, episodes, devices=None, t_end_s=30.0, engine=()):
    scn = load(HERE / name)
    return RunFacts(scn=scn, layout=build_layout(scn), episodes=episodes,
                    devices=devices or {}, summary=None, engine_findings=list(engine),
                    static=[], t_end_s=t_end_s)


def test_23_lost_races_are_one_cause_and_one_grouped_symptom():
    # Scenario inrush-lockout.yaml: rev clears 0.5 ms + 4 ms = 4.5 ms after the onset;
    # the races lost by 3.5 ms at worst mean east tripped 1.0 ms after the onset
    # (4.5 - 3.5): rev must clear within 1.0 ms, 3.5 ms faster.
    d = diagnose_facts(_facts("inrush-lockout.yaml", _races(), t_end_s=30.0))
    causes = [f for f in d.findings if not f.because]
    assert [f.code for f in causes] == ["RF-RUN-036"]
    (c,) = causes
    assert c.count == 23
    assert "make rev clear within 1.000 ms of the onset, 3.500 ms faster" in c.fix
    assert "faster" not in "".join(f.fix for f in d.findings if f is not c)
    (follows,) = [f for f in d.findings if f.because]
    assert (follows.code, follows.count, follows.because) == ("RF-RUN-001", 23,
                                                              "RF-RUN-036 reversers.rev (line 39)")
    assert follows.first_s == pytest.approx(0.75) and follows.last_s == pytest.approx(22.794)
    assert len(d.headline) == 1 and d.headline[0].startswith("reversing controller rev is too slow")


def test_a_symptom_is_no_more_severe_than_its_cause():
    # A short fed back through a train and cleared by the neighbour is a warning
    # (RF-RUN-035); the neighbour's trip at the gap (RF-RUN-001, an error on its own)
    # follows from it as a warning, and the run passes when nothing is dark for long.
    fault = Episode(start_s=1.0, end_s=1.012, kind="fault", where="e1@2 m", peak_a=14.7,
                    outcome="tripped", acted="east", acted_s=1.002)
    gap = Episode(start_s=1.002, end_s=1.012, kind="gap", where="e1.b~w1.a", train="parked",
                  peak_a=12.38, outcome="tripped", acted="west", acted_s=1.012)
    devices = {n: DeviceSummary("booster", dark_s=0.5) for n in ("east", "west")}
    d = diagnose_facts(_facts("backfed-short.yaml", [fault, gap], devices, t_end_s=5.0))
    by_code = {f.code: f for f in d.findings}
    assert by_code["RF-RUN-035"].severity == "warning"
    assert by_code["RF-RUN-001"].severity == "warning"
    assert by_code["RF-RUN-001"].because == "RF-RUN-035 e1.b~w1.a"
    assert by_code["RF-RUN-010"].severity == "info" and not by_code["RF-RUN-010"].because


def test_engine_findings_of_one_place_are_one_line():
    from sim.diagnose.reported import group_reported
    from sim.model import Finding

    fs = [Finding("warning", "RF-RUN-007", "yard", f"yard tripped again at {t} s")
          for t in (1.501, 2.0015, 2.502)]
    (g,) = group_reported(fs)
    assert g.count == 3 and g.message.endswith("(3 times in all)")
