"""Polarity balance on hand-built layouts and on random signed graphs.

Reference: F. Harary, "On the notion of balance of a signed graph", Michigan
Math. J. 2 (1953) 143-146 -- a signed graph is balanced iff every cycle has an
even number of negative edges. The property tests compare our breadth-first
colouring with that definition, checked independently by the parity of every
cycle of a networkx cycle basis (and, for the shortest cycle, by enumerating
every simple cycle with networkx).
"""
import networkx as nx
from hypothesis import given, settings
from hypothesis import strategies as st

from sim.checks import run_checks
from sim.checks.polarity import (check_polarity, is_balanced, reversing_cycles,
                                 sections_on_unbalanced_cycles, shortest_unbalanced_cycle)
from sim.layout import build_layout
from tests.builders import ScenarioBuilder


def codes(findings):
    return [f.code for f in findings]


# ------------------------------------------------------------ hand-built
def figure_eight():
    """A figure-eight: north loop, diamond route A, south loop, diamond route B.

    The south loop is drawn the other way round (its a end at the far side), so
    two joints are crossed (dia-a.b~south.b, south.a~dia-b.a): an even number,
    balanced.
    """
    b = ScenarioBuilder()
    b.booster("main")
    for n in ("north", "dia-a", "south", "dia-b"):
        b.section(n, 3.0, "main")
    b.joint("north.b", "dia-a.a")
    b.joint("dia-a.b", "south.b")     # crossed (-1)
    b.joint("south.a", "dia-b.a")     # crossed (-1)
    b.joint("dia-b.b", "north.a")
    return b


def test_figure_eight_is_balanced():
    scn = figure_eight().build()
    lay = build_layout(scn)
    assert is_balanced(lay.graph)
    assert check_polarity(scn, lay) == []
    assert run_checks(scn, lay).reversing == []


def balloon(reverser: bool):
    b = ScenarioBuilder()
    b.booster("east")
    if reverser:
        b.reverser("loop-ctl", feed="east")
    b.line(["main", "throat"], feed="east", length_m=2.0)
    b.section("loop", 6.0, "loop-ctl" if reverser else "east")
    b.joint("throat.b", "loop.a", "both")
    b.joint("throat.b", "loop.b", "both")      # crossed: the loop closes on itself
    return b


def test_single_reversing_loop_needs_a_reversing_section():
    scn = balloon(reverser=False).build()
    lay = build_layout(scn)
    fs = check_polarity(scn, lay)
    assert codes(fs) == ["RF-POL-001"]
    f = fs[0]
    assert f.severity == "error"
    assert "throat > loop > throat" in f.message
    assert "1 crossed joint (throat.b~loop.b)" in f.message
    # the suggested section is the longest of the loop, located with its line
    line = scn.locations[("track", "sections", "loop")][0]
    assert f.where == f"track.sections.loop (line {line})"
    assert "loop (6 m)" in f.fix


def test_single_reversing_loop_with_reverser_is_covered():
    scn = balloon(reverser=True).build()
    lay = build_layout(scn)
    assert "RF-POL-001" not in codes(check_polarity(scn, lay))
    rep = run_checks(scn, lay)
    assert rep.reversing == [{"cycle": ["throat", "loop"], "covered_by": ["loop"]}]


def wye(reverser: bool, big_loop: bool = False):
    b = ScenarioBuilder()
    b.booster("west")
    if reverser:
        b.reverser("tail-ctl", feed="west")
    for n in ("main", "base", "west", "east", "out"):
        b.section(n, 2.0, "west")
    b.section("tail", 1.5, "tail-ctl" if reverser else "west")
    b.joint("main.b", "base.a")
    b.joint("main.b", "west.a")
    b.joint("base.b", "out.a")
    b.joint("east.b", "out.a")
    b.joint("tail.a", "west.b", "both")
    b.joint("tail.a", "east.a", "both")    # crossed: the wye's odd joint
    if big_loop:
        # a long balanced oval hung off main.a and out.b, sharing the wye's base
        b.line(["o1", "o2", "o3", "o4", "o5"], feed="west")
        b.joint("out.b", "o1.a")
        b.joint("o5.b", "main.a")
    return b


def test_wye_is_found_and_the_shortest_cycle_is_the_wye_itself():
    scn = wye(reverser=False, big_loop=True).build()
    lay = build_layout(scn)
    (f,) = check_polarity(scn, lay)
    assert f.code == "RF-POL-001"
    # the shortest unbalanced cycle has 6 sections; the one round the oval would be longer
    cycle = f.message.split("unbalanced loop ")[1].split(":")[0].split(" > ")
    assert len(cycle) == 7 and cycle[0] == cycle[-1]
    assert set(cycle) == {"main", "base", "west", "east", "out", "tail"}
    assert "tail.a~east.a" in f.message


def test_wye_with_reverser_on_the_tail_is_covered():
    scn = wye(reverser=True).build()
    lay = build_layout(scn)
    assert "RF-POL-001" not in codes(check_polarity(scn, lay))
    (cyc,) = reversing_cycles(scn, lay)
    assert cyc["covered_by"] == ["tail"] and len(cyc["cycle"]) == 6


def dogbone(crossover: bool, reverser_on_crossover: bool = False):
    """A loop-ended main line: up track u1..u4 and down track d1..d4 (both a->b
    from west to east), a loop at each end. Travelling round: u1..u4, east loop,
    d4..d1 backwards, west loop: two crossed joints, a folded oval, balanced.
    The crossover x runs from u3.b to d4.a."""
    b = ScenarioBuilder()
    b.booster("main")
    if reverser_on_crossover:
        b.reverser("x-ctl", feed="main")
    b.line(["u1", "u2", "u3", "u4"], feed="main", length_m=3.0)
    b.line(["d1", "d2", "d3", "d4"], feed="main", length_m=3.0)
    b.section("east-loop", 4.0, "main")
    b.section("west-loop", 4.0, "main")
    b.joint("u4.b", "east-loop.a")
    b.joint("east-loop.b", "d4.b")          # crossed
    b.joint("d1.a", "west-loop.a")          # crossed
    b.joint("west-loop.b", "u1.a")
    if crossover:
        b.section("x", 1.0, "x-ctl" if reverser_on_crossover else "main")
        g = "both" if reverser_on_crossover else "none"
        b.joint("u3.b", "x.a", g)
        b.joint("x.b", "d4.a", g)
    return b


def test_loop_ended_main_line_without_crossover_is_balanced():
    scn = dogbone(crossover=False).build()
    assert check_polarity(scn, build_layout(scn)) == []


def test_crossover_on_a_loop_ended_main_line_hides_a_reversing_loop():
    scn = dogbone(crossover=True).build()
    lay = build_layout(scn)
    (f,) = check_polarity(scn, lay)
    assert f.code == "RF-POL-001" and "x" in f.message.split(":")[0].split(" > ")
    # by hand: east of the crossover u3 > x > d4 > east-loop > u4 > u3, 5 sections and
    # one crossed joint; west of it x > d4 > d3 > d2 > d1 > west-loop > u1 > u2 > u3,
    # 9 sections, also one crossed joint (d1.a~west-loop.a). The shortest is the east one.
    cycle = f.message.split("unbalanced loop ")[1].split(":")[0].split(" > ")[:-1]
    assert sorted(cycle) == sorted(["x", "d4", "east-loop", "u4", "u3"])
    assert "1 crossed joint (east-loop.b~d4.b)" in f.message
    assert "x" in sections_on_unbalanced_cycles(lay)


def test_crossover_fed_by_a_reverser_covers_both_loops():
    scn = dogbone(crossover=True, reverser_on_crossover=True).build()
    lay = build_layout(scn)
    assert "RF-POL-001" not in codes(check_polarity(scn, lay))
    rep = run_checks(scn, lay)
    assert rep.reversing and all(c["covered_by"] == ["x"] for c in rep.reversing)


def turntable(reverser: bool):
    """Bridge section whose two ends both join each approach track's end."""
    b = ScenarioBuilder()
    b.booster("yard")
    if reverser:
        b.reverser("bridge-ctl", feed="yard")
    b.section("lead", 2.0, "yard")
    b.section("stall", 1.0, "yard")
    b.section("bridge", 0.4, "bridge-ctl" if reverser else "yard")
    g = "both" if reverser else "none"
    b.joint("lead.b", "bridge.a", g)
    b.joint("lead.b", "bridge.b", g)      # the bridge turned half round: crossed
    b.joint("stall.a", "bridge.b", g)
    b.joint("stall.a", "bridge.a", g)     # crossed
    return b


def test_turntable_needs_a_reversing_bridge():
    scn = turntable(reverser=False).build()
    lay = build_layout(scn)
    (f,) = check_polarity(scn, lay)
    assert f.code == "RF-POL-001"
    cycle = f.message.split("unbalanced loop ")[1].split(":")[0].split(" > ")
    assert len(cycle) == 3 and "bridge" in cycle        # a 2-cycle of parallel joints
    scn = turntable(reverser=True).build()
    lay = build_layout(scn)
    assert "RF-POL-001" not in codes(check_polarity(scn, lay))
    assert all(c["covered_by"] == ["bridge"] for c in reversing_cycles(scn, lay))


# ---------------------------------------------------------- property tests
@st.composite
def signed_multigraphs(draw):
    n = draw(st.integers(1, 7))
    m = draw(st.integers(0, 11))
    g = nx.MultiGraph()
    g.add_nodes_from(range(n))
    for k in range(m):
        u = draw(st.integers(0, n - 1))
        w = draw(st.integers(0, n - 1))
        g.add_edge(u, w, key=k, sign=draw(st.sampled_from((1, -1))))
    return g


def subdivided(g):
    """Each edge gets a midpoint node: a simple graph with the same cycles.

    A midpoint remembers its edge's sign; a cycle's parity is the count of
    negative midpoints on it. Self-loops and parallel edges become ordinary
    cycles (a self-loop would need two midpoints: it is handled separately).
    """
    h = nx.Graph()
    h.add_nodes_from(("v", v) for v in g)
    for u, w, k, s in g.edges(keys=True, data="sign"):
        if u == w:
            continue
        h.add_edge(("v", u), ("e", k, s))
        h.add_edge(("e", k, s), ("v", w))
    return h


def basis_balanced(g) -> bool:
    """Independent check: every cycle of a cycle basis has an even count of -1 edges.

    A balanced graph has all cycles even; cycle parity is additive over the
    cycle space (GF(2)), so checking a basis is enough.
    """
    if any(u == w and s < 0 for u, w, s in g.edges(data="sign")):
        return False
    for cyc in nx.cycle_basis(subdivided(g)):
        neg = sum(1 for node in cyc if node[0] == "e" and node[2] < 0)
        if neg % 2:
            return False
    return True


def odd_cycle_lengths(g):
    """Lengths (in edges of g) of every unbalanced simple cycle, by enumeration."""
    out = []
    for u, w, s in g.edges(data="sign"):
        if u == w and s < 0:
            out.append(1)
    for cyc in nx.simple_cycles(subdivided(g)):
        edges = [node for node in cyc if node[0] == "e"]
        if sum(1 for e in edges if e[2] < 0) % 2:
            out.append(len(edges))
    return out


@settings(max_examples=300, deadline=None)
@given(signed_multigraphs())
def test_balance_agrees_with_cycle_basis_parity(g):
    assert is_balanced(g) == basis_balanced(g)


@settings(max_examples=200, deadline=None)
@given(signed_multigraphs())
def test_shortest_unbalanced_cycle_is_a_shortest_odd_simple_cycle(g):
    res = shortest_unbalanced_cycle(g)
    lengths = odd_cycle_lengths(g)
    if not lengths:
        assert res is None
        return
    nodes, keys = res
    assert len(keys) == min(lengths)
    assert len(set(nodes)) == len(nodes)                 # simple: no node twice
    assert len(set(keys)) == len(keys)
    signs = {k: s for _, _, k, s in g.edges(keys=True, data="sign")}
    assert sum(1 for k in keys if signs[k] < 0) % 2 == 1  # odd
    for i, k in enumerate(keys):                          # consecutive nodes joined by k
        u, w = nodes[i], nodes[(i + 1) % len(nodes)]
        assert g.has_edge(u, w, key=k)


@settings(max_examples=150, deadline=None)
@given(signed_multigraphs())
def test_sections_on_unbalanced_cycles_match_enumeration(g):
    from types import SimpleNamespace
    expect = set()
    for u, w, s in g.edges(data="sign"):
        if u == w and s < 0:
            expect.add(u)
    for cyc in nx.simple_cycles(subdivided(g)):
        edges = [node for node in cyc if node[0] == "e"]
        if sum(1 for e in edges if e[2] < 0) % 2:
            expect.update(node[1] for node in cyc if node[0] == "v")
    fake = SimpleNamespace(graph=g, cache={})
    assert sections_on_unbalanced_cycles(fake) == expect


def test_loop_wholly_inside_one_reverser_district_is_an_error():
    # throat and loop both on loop-ctl: the crossed joint closes a loop that flips as
    # one piece, so reversing cannot mend it
    b = ScenarioBuilder()
    b.booster("east")
    b.reverser("loop-ctl", feed="east")
    b.section("main", 2.0, "east")
    b.section("throat", 2.0, "loop-ctl")
    b.section("loop", 6.0, "loop-ctl")
    b.joint("main.b", "throat.a", "both")
    b.joint("throat.b", "loop.a")
    b.joint("throat.b", "loop.b")
    scn = b.build()
    fs = check_polarity(scn, build_layout(scn))
    assert [f.code for f in fs if f.severity == "error"] == ["RF-POL-003"]
    assert "lies wholly in the district of loop-ctl" in fs[0].message
