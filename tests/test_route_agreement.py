"""The trains' route steps carry the joints and sections of the layout's route follower.

``sim.world.geometry.resolve_route`` (the moving trains) turns the legs of
``sim.layout.Layout.route_path`` (the static checks) into steps; a reversal splits the
layout's leg in two and is one step of its own on the trains' side. This test holds the
conversion to the same joints and sections on every train of every bundled and test
scenario (the route follower itself is checked in ``test_layout.py``).
"""
from __future__ import annotations

from pathlib import Path

import pytest

from sim.errors import ScenarioError
from sim.layout import build_layout
from sim.scenario import load
from sim.world.geometry import resolve_route

ROOT = Path(__file__).resolve().parents[1]
FILES = sorted(ROOT.glob("scenarios/*.yaml")) + sorted(ROOT.glob("tests/scenarios/**/*.yaml"))


def _scenarios_with_trains():
    for path in FILES:
        try:
            scn = load(path)
            layout = build_layout(scn)
        except ScenarioError:
            continue  # the deliberately broken fixtures
        if scn.trains:
            yield path, scn, layout


CASES = list(_scenarios_with_trains())


def test_there_are_trains_to_compare():
    assert sum(len(scn.trains) for _, scn, _ in CASES) >= 5


@pytest.mark.parametrize("path,scn,layout", CASES, ids=[p.stem for p, _, _ in CASES])
def test_both_route_followers_cross_the_same_joints(path, scn, layout):
    for name, train in scn.trains.items():
        legs = layout.route_path(train)
        steps = resolve_route(scn, train)
        joints_layout = [leg.joint_in.index for leg in legs if leg.joint_in is not None]
        joints_trains = [st.joint.index for st in steps if st.joint is not None]
        assert joints_layout == joints_trains, name
        sections_layout = [leg.section for leg in legs]
        sections_trains = [st.section for st in steps if st.reversal is None]
        # a reversal splits the layout's leg in two; the trains' geometry keeps one step
        assert [s for i, s in enumerate(sections_layout)
                if i == 0 or legs[i].reversal is None] == sections_trains, name
