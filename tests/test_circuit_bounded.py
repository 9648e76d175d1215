"""The coin test on long track and fine steps: sparse, linear in its points, bounded.

Check values: Thevenin's theorem on an end-fed section (V / R with the conductor
resistances of ASTM B258 and IEC 60028, sim/circuit/conductors.py), derived in the
header of tests/scenarios/checks/long-line.yaml.
"""
from __future__ import annotations

import tracemalloc
from pathlib import Path

import pytest

from sim.circuit.conductors import awg_r_per_m_ohm
from sim.circuit.faultmap import MAX_POINTS, fault_map
from sim.commands.check import check_result, render_check
from sim.layout import build_layout
from sim.scenario import load

HERE = Path(__file__).resolve().parent / "scenarios" / "checks"
R_W = 0.4 * awg_r_per_m_ohm(20)          # one 0.4 m conductor of 20 AWG


def coin_a(x_m: float) -> float:
    """Hand: 16 V / (0.05 + 0.04 + 2 R_w + 2 x 0.02 ohm/m x x + 0.01 ohm)."""
    return 16.0 / (0.05 + 0.04 + 2 * R_W + 2 * 0.02 * x_m + 0.01)


def test_long_line_coin_current_by_hand():
    scn = load(HERE / "long-line.yaml")
    fm = fault_map(scn, build_layout(scn), step_m=0.5)
    assert len(fm.points) == 2001 and not fm.bounded
    for p in fm.points[::97] + [fm.points[-1]]:
        assert p.i_coin_a == pytest.approx(coin_a(p.at_m), rel=1e-9)
    assert fm.points[-1].i_coin_a == pytest.approx(0.3987, abs=5e-5)


def test_a_fine_step_is_bounded_and_says_so():
    # 1 km at 1 mm asks for 1,000,001 points: the step is doubled until at most
    # MAX_POINTS remain (1 mm x 2^5 = 32 mm: 31,251 points), and a note says so
    scn = load(HERE / "long-line.yaml")
    lay = build_layout(scn)
    tracemalloc.start()
    fm = fault_map(scn, lay, step_m=1e-3)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert fm.bounded and fm.step_m == pytest.approx(0.032)
    assert len(fm.points) == 31251 <= MAX_POINTS
    # memory is bounded too: a dense matrix of the points would need 2e6^2 x 8 bytes
    assert peak < 200 * 2**20
    note = next(f for f in fm.findings if f.code == "RF-FAULT-005")
    assert note.severity == "info" and "bounded to 50000 points" in note.message
    for p in fm.points[::1000]:
        assert p.i_coin_a == pytest.approx(coin_a(p.at_m), rel=1e-9)


def test_check_states_the_bound():
    res = check_result(str(HERE / "long-line.yaml"), step_m=1e-3)
    assert res["coin_test"]["points"] == 31251 and res["coin_test"]["max_points"] == MAX_POINTS
    assert res["coin_test"]["step_asked_m"] == 1e-3
    assert "31251 coin-test points, at most 0.032 m apart" in render_check(res)
    assert "RF-FAULT-005" in {f["code"] for f in res["findings"]}
