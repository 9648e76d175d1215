"""The wiring sheet and the orientation the tool chooses for sections without leads.

Rule (domain.md, "Polarity, as a signed graph"): phase(X) = booster phase x leads(X);
across a joint of sign s the rails agree when phase(X) == s phase(Y). The expected
orientations of tests/scenarios/checks/wiring-loop.yaml are derived by hand in its
header. The property test of the free leads against brute force is in
tests/test_checks_phasing.py.
"""
from __future__ import annotations

from pathlib import Path

from sim.checks.phasing import check_phasing
from sim.checks.polarity import is_balanced
from sim.checks.wiring import section_leads
from sim.circuit import build_circuit
from sim.commands.check import check_result, render_check
from sim.layout import build_layout
from sim.scenario import load
from tests.builders import ScenarioBuilder

HERE = Path(__file__).resolve().parent / "scenarios" / "checks"


def test_wiring_sheet_of_a_loop_and_crossed_joints_by_hand():
    res = check_result(str(HERE / "wiring-loop.yaml"))
    assert res["wiring"] == [
        {"section": "west", "device": "main", "at_m": 2.0, "leads": "normal", "chosen": True},
        {"section": "east", "device": "main", "at_m": 2.0, "leads": "swapped", "chosen": True},
        {"section": "throat", "device": "main", "at_m": 1.0, "leads": "normal",
         "chosen": False},
        {"section": "loop", "device": "loop-ctl", "at_m": 3.0, "leads": "normal",
         "chosen": True}]
    # wired so, every bonded joint meets in phase: no phasing error, no dead short
    assert res["verdict"] == "pass"
    assert not [f for f in res["findings"] if f["code"] in ("RF-PHS-001", "RF-FAULT-001")]
    text = render_check(res)
    rows = [ln.split() for ln in text.splitlines() if ln.startswith(("east ", "throat "))]
    assert ["east", "1", "main", "2.00", "m", "from", "a", "out", "1", "->", "right", "rail",
            "out", "2", "->", "left", "rail", "swapped", "(chosen)"] in rows
    assert ["throat", "1", "main", "1.00", "m", "from", "a", "out", "1", "->", "left",
            "rail", "out", "2", "->", "right", "rail", "normal", "(as", "built)"] in rows


def test_the_circuit_is_built_with_the_chosen_leads():
    # east swapped: its feeder ties out 1 (o_l) to its right rail
    scn = load(HERE / "wiring-loop.yaml")
    lay = build_layout(scn)
    topo = build_circuit(scn, lay).topo
    f = topo.feeders[("east", 0)]
    east = topo.sections["east"]
    (o1, rail1), (o2, rail2) = f.pairs
    assert o1 == topo.devices["main"].o_l and rail1 == int(east.right[0 if len(east.xs_m) == 1
                                                                        else 1])
    # and no booster current flows with nothing on the track (no dead short)
    sol = build_circuit(scn, lay).solve()
    assert sol.device_i_a["main"] < 1e-9


def test_a_section_without_leads_is_never_mis_phased():
    # the same crossed joint with east's leads given as normal is an error; without
    # leads the tool wires it swapped and nothing is out of phase
    b = ScenarioBuilder()
    b.booster("A")
    b.section("west", 2.0, "A")
    b.section("east", 2.0, "A", leads=None)
    b.joint("west.b", "east.b")
    scn = b.build()
    lay = build_layout(scn)
    assert check_phasing(scn, lay) == []
    assert section_leads(scn, lay) == {"west": (1, False), "east": (-1, True)}
    b2 = ScenarioBuilder()
    b2.booster("A")
    b2.section("west", 2.0, "A")
    b2.section("east", 2.0, "A")
    b2.joint("west.b", "east.b")
    scn2 = b2.build()
    (f,) = check_phasing(scn2, build_layout(scn2))
    assert f.fix == "change 1 setting: section east: leads normal -> swapped"


def test_an_unbalanced_loop_keeps_its_bonded_joints_in_phase():
    # a loop of three sections, one crossed joint (odd: no wiring puts all three in
    # phase, RF-POL-001's matter) and one gap: the tool wires the bonded joints in
    # phase and leaves the gapped one out of phase (a short only while a wheel bridges
    # it), so nothing shorts at all times
    b = ScenarioBuilder()
    b.booster("A")
    for n in ("p", "q", "r"):
        b.section(n, 2.0, "A", leads=None)
    b.joint("p.b", "q.a")              # straight, bonded
    b.joint("q.b", "r.b")              # crossed, bonded
    b.joint("r.a", "p.b", "both")      # straight, gapped
    scn = b.build()
    lay = build_layout(scn)
    assert not is_balanced(lay.graph)
    leads = {s: v for s, (v, _) in section_leads(scn, lay).items()}
    # by hand: p +1 (the fewest swapped), q = +1 x p = +1, r = -1 x q = -1; the gapped
    # straight joint r.a~p.b then meets -1 against +1
    assert leads == {"p": 1, "q": 1, "r": -1}
    from sim.checks.rootcause import dead_short_joints
    assert dead_short_joints(scn, lay) == []
