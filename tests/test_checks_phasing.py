"""Phasing across joints and its minimal fix, on hand-built layouts.

Rule (domain.md, "Polarity, as a signed graph"): phase(X) = booster phase x
leads(X); across a joint of sign s the rails agree when phase(X) == s phase(Y).
Every expected fix below is counted by hand from that rule: the number of
settings (booster phases, section leads) that must change; a property test
compares the count with an exhaustive search over every setting.
"""
import itertools
import re

from hypothesis import assume, given, settings
from hypothesis import strategies as st

from sim.checks.phasing import check_phasing, section_phases
from sim.checks.polarity import is_balanced
from sim.layout import build_layout
from tests.builders import ScenarioBuilder


def three_boosters(b_phase=+1, b2_leads=+1, b2_feed="B"):
    """a1 (A) || b1 - b2 - b3 (B, bonded) || c1 (C); all joints straight."""
    b = ScenarioBuilder()
    b.booster("A")
    b.booster("B", phase=b_phase)
    b.booster("C")
    b.section("a1", 2.0, "A")
    b.section("b1", 2.0, "B")
    b.section("b2", 2.0, b2_feed, leads=b2_leads)
    b.section("b3", 2.0, "B")
    b.section("c1", 2.0, "C")
    b.joint("a1.b", "b1.a", "both")
    b.joint("b1.b", "b2.a")
    b.joint("b2.b", "b3.a")
    b.joint("b3.b", "c1.a", "both")
    return b


def test_all_in_phase_passes():
    scn = three_boosters().build()
    assert check_phasing(scn, build_layout(scn)) == []


def test_swapped_leads_in_the_middle_are_fixed_by_one_lead_swap():
    # b2 swapped: b1~b2 and b2~b3 (both bonded) disagree. By hand: restoring b2 is one
    # change; leaving b2 as it is needs b1 and b3 swapped too, which then breaks a1~b1
    # and b3~c1 (A and C inverted: 4 changes). The minimum is 1.
    scn = three_boosters(b2_leads=-1).build()
    (f,) = check_phasing(scn, build_layout(scn))
    assert (f.severity, f.code) == ("error", "RF-PHS-001")
    assert "out of phase at 2 joints" in f.message
    assert "b1.b~b2.a (bonded: a short at all times)" in f.message
    assert f.where.startswith("b1.b~b2.a (line ")
    assert f.fix == "change 1 setting: section b2: leads swapped -> normal"


def test_inverted_booster_is_fixed_by_one_booster_change_not_three_lead_swaps():
    # B inverted: a1~b1 and b3~c1 disagree. Candidates by hand: B normal (1); swap
    # b1, b2, b3 (3); invert A and C (2). Minimum 1.
    scn = three_boosters(b_phase=-1).build()
    (f,) = check_phasing(scn, build_layout(scn))
    assert "out of phase at 2 joints" in f.message
    assert "a1.b~b1.a (gapped: a wheel bridging it is a short)" in f.message
    assert f.fix == "change 1 setting: booster B: phase inverted -> normal"


def test_crossed_joint_into_a_reversed_district_inverts_its_booster():
    # C's three sections are laid b-to-a: b3.b meets c1.b (crossed, -1). With every
    # phase +1 the rails disagree there. By hand: invert C (1); swap c1, c2, c3 (3);
    # invert A and B (2). Minimum 1, and it moves C away from normal (no tie).
    b = ScenarioBuilder()
    b.booster("A")
    b.booster("B")
    b.booster("C")
    b.section("a1", 2.0, "A")
    b.section("b3", 2.0, "B")
    for n in ("c1", "c2", "c3"):
        b.section(n, 2.0, "C")
    b.joint("a1.b", "b3.a", "both")
    b.joint("b3.b", "c1.b", "both")
    b.joint("c1.a", "c2.b")
    b.joint("c2.a", "c3.b")
    scn = b.build()
    (f,) = check_phasing(scn, build_layout(scn))
    assert "out of phase at 1 joint: b3.b~c1.b" in f.message
    assert f.fix == "change 1 setting: booster C: phase normal -> inverted"


def test_tie_prefers_restoring_normal():
    # C inverted feeding one section c1: fix by C -> normal (restores) or c1 leads ->
    # swapped (moves away from normal): both 1 change; the restoring one is chosen.
    b = ScenarioBuilder()
    b.booster("B")
    b.booster("C", phase=-1)
    b.section("b1", 2.0, "B")
    b.section("c1", 2.0, "C")
    b.joint("b1.b", "c1.a", "both")
    scn = b.build()
    (f,) = check_phasing(scn, build_layout(scn))
    assert f.fix == "change 1 setting: booster C: phase inverted -> normal"


def test_section_with_no_feed_takes_the_phase_across_its_bond():
    # b2 has feed None: its phase comes from b1 across the bonded joint (+1), and it
    # agrees with b3 -- no finding; section_phases shows the inherited phase.
    scn = three_boosters(b2_feed=None).build()
    lay = build_layout(scn)
    assert check_phasing(scn, lay) == []
    assert section_phases(scn, lay)["b2"] == +1


def test_unbalanced_part_is_left_to_the_polarity_check():
    b = ScenarioBuilder()
    b.booster("east")
    b.line(["main", "throat"], feed="east")
    b.section("loop", 5.0, "east")
    b.joint("throat.b", "loop.a", "both")
    b.joint("throat.b", "loop.b", "both")
    scn = b.build()
    assert check_phasing(scn, build_layout(scn)) == []


def test_reverser_fed_sections_are_not_fixed_phase():
    b = ScenarioBuilder()
    b.booster("east")
    b.reverser("loop-ctl", feed="east")
    b.line(["main", "throat"], feed="east")
    b.section("loop", 5.0, "loop-ctl", leads=-1)
    b.joint("throat.b", "loop.a", "both")
    b.joint("throat.b", "loop.b", "both")
    scn = b.build()
    assert check_phasing(scn, build_layout(scn)) == []


def test_far_booster_fix_comes_after_the_local_lead_fix():
    # The supply-junction layout with its three yard sections (fed by yard-ecb under
    # north) wired with swapped leads: the gap yard-lead.b~west-main.a is out of phase.
    # By hand: swapping those 3 leads back mends it (3 settings); so does swapping
    # west-main (1) and then, since west-main meets the wye (south) across gaps, inverting
    # south (1): 2 settings, but south feeds neither side of the joint. The local fix
    # (no booster changed) comes first, the fewest-settings one after it.
    from pathlib import Path

    from sim.scenario import loads

    path = Path(__file__).resolve().parent / "scenarios" / "checks" / "supply-junction.yaml"
    text = path.read_text()
    for sec in ("yard-1", "yard-2", "yard-lead"):
        text = text.replace(f"    {sec}: {{length", f"    {sec}: {{leads: swapped, length")
    text = text.replace("      feed: north\n", "      feed: north\n      leads: normal\n")
    text = text.replace("feed: south, feeders", "feed: south, leads: normal, feeders")
    scn = loads(text, str(path))
    (f,) = check_phasing(scn, build_layout(scn))
    assert f.where.startswith("yard-lead.b~west-main.a")
    assert f.fix == ("change 3 settings: section yard-1: leads swapped -> normal; section "
                     "yard-2: leads swapped -> normal; section yard-lead: leads swapped -> "
                     "normal; or instead change 2 settings: booster south: phase normal -> "
                     "inverted; section west-main: leads normal -> swapped")


# ------------------------------------------------------------ property test


@st.composite
def small_layouts(draw, leads=(1, -1)):
    n_b = draw(st.integers(1, 3))
    n_s = draw(st.integers(2, 6))
    b = ScenarioBuilder()
    for i in range(n_b):
        b.booster(f"B{i}", phase=draw(st.sampled_from((1, -1))))
    for i in range(n_s):
        b.section(f"s{i}", 1.0, f"B{draw(st.integers(0, n_b - 1))}",
                  leads=draw(st.sampled_from(leads)))
    for _ in range(draw(st.integers(1, 7))):
        x = draw(st.integers(0, n_s - 1))
        y = draw(st.integers(0, n_s - 1))
        if x == y:
            continue
        b.joint(f"s{x}.{draw(st.sampled_from('ab'))}", f"s{y}.{draw(st.sampled_from('ab'))}",
                draw(st.sampled_from(("none", "both"))))
    return b.build()


def fewest_offered(fix: str) -> int:
    """The fewest settings among the fixes a finding offers (the local fix may come first
    and change more settings than the other one)."""
    return min(int(n) for n in re.findall(r"change (\d+) setting", fix))


def brute_force_min_changes(scn):
    """Fewest settings to change so that every joint is in phase, by enumeration of
    every booster phase and section leads assignment (independent of the check). A
    section whose leads are not given (None) takes any orientation at no cost."""
    boosters = sorted(scn.boosters)
    secs = sorted(scn.track.sections)
    best = None
    for ph in itertools.product((1, -1), repeat=len(boosters)):
        bp = dict(zip(boosters, ph))
        for ld in itertools.product((1, -1), repeat=len(secs)):
            leads = dict(zip(secs, ld))
            phase = {s: bp[scn.track.sections[s].feed] * leads[s] for s in secs}
            if all(phase[j.ends[0].section] == j.sign * phase[j.ends[1].section]
                   for j in scn.track.joints):
                chg = sum(bp[x] != scn.boosters[x].phase for x in boosters) + \
                    sum(scn.track.sections[s].leads is not None
                        and leads[s] != scn.track.sections[s].leads for s in secs)
                best = chg if best is None else min(best, chg)
    return best


@settings(max_examples=150, deadline=None)
@given(small_layouts())
def test_minimal_fix_matches_brute_force(scn):
    lay = build_layout(scn)
    assume(is_balanced(lay.graph))            # unbalanced: the polarity check's finding
    found = check_phasing(scn, lay)
    total = sum(fewest_offered(f.fix) for f in found)
    assert total == brute_force_min_changes(scn)


@settings(max_examples=150, deadline=None)
@given(small_layouts(leads=(1, -1, None)))
def test_free_leads_fewest_changes_match_brute_force(scn):
    # sections without leads are free: never named in a fix, and when nothing is to be
    # fixed the orientation the tool chooses puts every joint in phase
    from sim.checks.phasing import solve_phases
    from sim.checks.wiring import wiring_rows

    lay = build_layout(scn)
    assume(is_balanced(lay.graph))
    found = check_phasing(scn, lay)
    total = sum(fewest_offered(f.fix) for f in found)
    assert total == brute_force_min_changes(scn)
    free = {s for s, sec in scn.track.sections.items() if sec.leads is None}
    for f in found:
        assert not any(f"section {s}:" in f.fix for s in free)
    if not found:
        sol = solve_phases(scn, lay)
        phase = {s: scn.boosters[scn.track.sections[s].feed].phase * sol.leads[s]
                 for s in scn.track.sections}
        assert all(phase[j.ends[0].section] == j.sign * phase[j.ends[1].section]
                   for j in scn.track.joints)
    assert {r["section"] for r in wiring_rows(scn, lay) if r["chosen"]} == free
