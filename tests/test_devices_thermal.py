"""Thermal replica, IEC 60255-149 (tau dθ/dt = (I/Ir)^2 - θ; linear law I/Ir).

Sources beside each value: references.md (IEC 60255-149 cold/hot curves,
computed examples with tau 600 s, k IB 1), and hand derivations from the
closed form t = tau ln((x - θ0) / (x - θ1)). Trip at 120 % and resume at 60 %
are usual settings (common practice).
"""
import math

import pytest

from sim.devices import BoosterDevice
from sim.devices.thermal import (ThermalReplica, cool_time_s, theta_at, time_to_level_s,
                                 trip_time_s)
from sim.model import Booster, Thermal, Trip


def test_cold_curve_at_125_percent():
    # cold curve of IEC 60255-149: t = tau ln(I^2 / (I^2 - 1.2 Ir^2)), tau 30 s,
    # I = 1.25 Ir, trip at 1.2: 30 ln(1.5625 / 0.3625) = 43.83 s
    s = Thermal(i_rated_a=4.0, tau_s=30.0, trip_at=1.2, resume_at=0.6)
    assert trip_time_s(5.0, 0.0, s) == pytest.approx(43.83, abs=0.005)


@pytest.mark.parametrize("i, theta0, t_s", [
    (2.0, 0.0, 172.61),          # references.md: I = 2 cold
    (2.0, 0.81, 36.85),          # references.md: I = 2 hot with Ip = 0.9 (θ0 = 0.81)
    (1.5, 0.0, 352.67),          # references.md: I = 1.5 cold
    (3.0, 0.0, 70.67),           # references.md: I = 3 cold
])
def test_iec_60255_149_examples(i, theta0, t_s):
    # tau 600 s, k IB = 1 -> trip level θ = 1 with Ir = IB = 1 A
    s = Thermal(i_rated_a=1.0, tau_s=600.0, trip_at=1.0, resume_at=0.5)
    assert trip_time_s(i, theta0, s) == pytest.approx(t_s, abs=0.006)


def test_never_trips_below_the_trip_level_and_trips_at_once_above_it():
    s = Thermal(1.0, 30.0)
    assert math.isinf(trip_time_s(1.09, 0.0, s))     # 1.09^2 = 1.188 < 1.2
    assert trip_time_s(0.0, 1.3, s) == 0.0


def test_cooling_from_trip_to_resume_takes_tau_ln2():
    # no current: θ = θ0 exp(-t/tau); 1.2 -> 0.6 after tau ln 2 (hand derivation)
    s = Thermal(1.0, 30.0, trip_at=1.2, resume_at=0.6)
    assert cool_time_s(1.2, s) == pytest.approx(30.0 * math.log(2.0))
    assert theta_at(1.2, 0.0, 30.0 * math.log(2.0), s) == pytest.approx(0.6)


def test_linear_law_steady_states_and_trip():
    # linear law: steady state θ = I/Ir: half rated reads 50 %, three quarters
    # 75 % (common practice); 1.25 x trips at 1.2 after tau ln(1.25 / 0.05).
    s = Thermal(4.0, 20.0, law="linear", trip_at=1.2, resume_at=0.6)
    assert theta_at(0.0, 2.0, 50 * 20.0, s) == pytest.approx(0.50, abs=1e-12)
    assert theta_at(0.0, 3.0, 50 * 20.0, s) == pytest.approx(0.75, abs=1e-12)
    assert trip_time_s(5.0, 0.0, s) == pytest.approx(20.0 * math.log(25.0))
    # square law at three quarters: 0.5625 (hand: 0.75^2)
    sq = Thermal(4.0, 20.0)
    assert theta_at(0.0, 3.0, 50 * 20.0, sq) == pytest.approx(0.5625, abs=1e-12)


def test_replica_piecewise_equals_one_step():
    # θ after 10 s then 15 s equals θ after 25 s at the same current (closed form)
    s = Thermal(1.0, 30.0)
    r = ThermalReplica(s)
    r.update(0.0, 1.5)
    r.update(10.0, 1.5)
    assert r.theta_now(25.0) == pytest.approx(theta_at(0.0, 1.5, 25.0, s))
    assert time_to_level_s(0.0, 1.2, 1.0, s) == math.inf


def test_booster_thermal_trip_and_resume_exact_instants():
    # rated 2 A, 2.5 A = 1.25 x, tau 30 s: thermal_trip at 43.83 s (cold curve above);
    # with the output open (0 A) it cools 1.2 -> 0.6 in tau ln 2 = 20.79 s.
    m = Booster("east", "psu", trip=Trip(5.0, 0.002),
                thermal=Thermal(2.0, 30.0, "square", 1.2, 0.6))
    b = BoosterDevice(m)
    b.observe(0.0, 2.5)
    t_trip = b.next_deadline()
    assert t_trip == pytest.approx(30.0 * math.log(1.5625 / 0.3625))
    ev = b.advance(t_trip)
    assert [e.event for e in ev] == ["thermal_trip"] and not b.closed
    assert ev[0].data["theta"] == pytest.approx(1.2)
    b.observe(t_trip, 0.0)                     # the engine sees the output open
    t_res = b.next_deadline()
    assert t_res - t_trip == pytest.approx(30.0 * math.log(2.0))
    ev = b.advance(t_res)
    assert [e.event for e in ev] == ["thermal_resume"] and b.closed
    # hot start from 0.6: 30 ln((1.5625 - 0.6) / 0.3625) (hot curve, same formula)
    b.observe(t_res, 2.5)
    assert b.next_deadline() - t_res == pytest.approx(30.0 * math.log(0.9625 / 0.3625))
    assert b.theta_max == pytest.approx(1.2)
