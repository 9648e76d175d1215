"""Conductor resistance against published tables."""
from __future__ import annotations

import math

import pytest

from sim.circuit.conductors import (awg_diameter_m, awg_r_per_m_ohm, bridge_r_ohm,
                                    rail_r_per_m_ohm, wire_r_ohm)
from sim.circuit.inrush import inrush, time_above_s
from sim.circuit.materials import material
from sim.model import Rail, Track, Vehicle, Wire

FT_PER_1000_M = 304.8  # 1000 ft in metres (exact by definition of the foot)

# HyperPhysics "Wire gauges" table (data after Floyd, Electric Circuit Fundamentals),
# ohm per 1000 ft of solid copper at 20 C.
HYPERPHYSICS_OHM_PER_1000FT = {
    10: 0.9989, 12: 1.588, 14: 2.525, 16: 4.016, 18: 6.385, 20: 10.15, 22: 16.14,
    24: 25.67, 26: 40.81,
}


@pytest.mark.parametrize("awg,table", sorted(HYPERPHYSICS_OHM_PER_1000FT.items()))
def test_awg_resistance_matches_hyperphysics(awg, table):
    computed = awg_r_per_m_ohm(awg) * FT_PER_1000_M
    assert computed == pytest.approx(table, rel=3e-3)


def test_awg_diameter_astm_b258_fixed_points():
    # ASTM B258 defines 36 AWG as 0.005 in (0.127 mm) and 0000 AWG as 0.46 in.
    assert awg_diameter_m(36) == pytest.approx(0.127e-3, rel=1e-12)
    assert awg_diameter_m(-3) == pytest.approx(0.46 * 25.4e-3, rel=1e-12)


def test_copper_temperature_coefficient_iec60028():
    # IEC 60028: alpha = 0.00393 /K, so +50 K raises resistance by 19.65 %.
    assert awg_r_per_m_ohm(14, 70.0) / awg_r_per_m_ohm(14, 20.0) == pytest.approx(1.1965)


def test_wire_pair_counts_both_conductors():
    w = Wire(length_m=3.0, awg=14)
    assert wire_r_ohm(w) == pytest.approx(2 * 3.0 * awg_r_per_m_ohm(14))
    assert wire_r_ohm(Wire(length_m=2.0, r_per_m_ohm=0.01)) == pytest.approx(0.04)
    assert wire_r_ohm(Wire()) == 0.0


def test_rail_resistance_from_material_and_area():
    # CDA: C26000 brass 6.16 micro-ohm cm; R/L = rho / A for a 5 mm^2 rail.
    r = rail_r_per_m_ohm(Rail(material="brass", area_m2=5e-6))
    assert r == pytest.approx(6.16e-8 / 5e-6)
    # nickel silver CuNi18Zn20 0.303 ohm mm^2/m (manufacturer data sheet, secondary)
    assert rail_r_per_m_ohm(Rail(material="nickel-silver", area_m2=1.9e-6)) == pytest.approx(
        0.303 / 1.9)
    assert rail_r_per_m_ohm(Rail(material=None, area_m2=None, r_per_m_ohm=0.02)) == 0.02
    assert material("copper").rho_ohm_m == pytest.approx(0.017241e-6, rel=1e-4)  # IEC 60028
    with pytest.raises(KeyError):
        material("unobtainium")


def test_bridge_counts_two_wheel_contacts():
    track = Track(Rail(), 0.05, {}, ())
    assert bridge_r_ohm(track, 120.0) == pytest.approx(120.1)


def test_inrush_rc_charging():
    # First-order RC charging (hand-derived): i(0) = V/R, tau = R C.
    v = Vehicle("x", 0.2, (0.0,), draw_a=0.5, c_keep_alive_f=0.01, r_charge_ohm=20.0)
    i_peak, tau = inrush(v, 15.0)
    assert i_peak == pytest.approx(0.75)
    assert tau == pytest.approx(0.2)
    # i(t) = 0.5 + 0.75 exp(-t/0.2) falls to 1.0 A at t = 0.2 ln(0.75/0.5)
    assert time_above_s(0.5, 0.75, 0.2, 1.0) == pytest.approx(0.2 * math.log(1.5))
    assert time_above_s(1.2, 0.75, 0.2, 1.0) == math.inf
    assert time_above_s(0.1, 0.75, 0.2, 1.0) == 0.0
