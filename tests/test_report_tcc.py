"""The time-current charts equal the device models.

Check values: IEC 60255-151 / IEEE C37.112 operate times at TMS 1 (the curve
table of tests/test_devices_curves.py), IEC 60255-149 thermal trip times (the
examples of tests/test_devices_thermal.py), the sampled-sensing rule
``n = ceil(t / Ts)`` (DEVELOPERS.md, Sampled sensing), hand derivations written
beside each value. Beside the published values, every sampled point of a curve
is compared with the trip instant of a fresh device machine of the engine
(``sim.devices``) driven at that current: the chart is the model.
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from sim.timebase import T_TOL_S

from sim.checks.coordination import reversing_margins
from sim.circuit.faultmap import fault_map
from sim.circuit.windows import trip_windows
from sim.devices import make_device
from sim.layout import build_layout
from sim.report import tcc
from sim.scenario import load

ROOT = Path(__file__).resolve().parent.parent
CURVES = ROOT / "tests" / "scenarios" / "report" / "curves.yaml"
DEMO = ROOT / "scenarios" / "cinder-ridge.yaml"


def _charts(path):
    scn = load(path)
    layout = build_layout(scn)
    fm = fault_map(scn, layout)
    return scn, layout, fm, tcc.build_charts(scn, layout, fm, trip_windows(scn, fm))


@pytest.fixture(scope="module")
def curves():
    return _charts(CURVES)


@pytest.fixture(scope="module")
def demo():
    return _charts(DEMO)


def _curve(charts, device, kind):
    for ch in charts:
        for c in ch.curves:
            if c.device == device and c.kind == kind:
                return ch, c
    raise AssertionError(f"no {kind} curve of {device}")


def _at(curve, i_a):
    """The chart's curve at ``i_a`` by log-log interpolation between its points."""
    return math.exp(np.interp(math.log(i_a), np.log(curve.i_a), np.log(curve.t_s)))


def _machine_time(scn, name, i_a, t0_s=0.0):
    """When a fresh machine of the engine trips (first deadline) at a steady current."""
    m = make_device(scn, name, np.random.default_rng(0))
    m.observe(t0_s, i_a)
    d = m.next_deadline()
    return math.inf if d is None else d - t0_s


@pytest.mark.parametrize("device,multiple,t_s", [
    ("slow", 2, 13.5), ("slow", 10, 1.5),                        # IEC very inverse, TMS 1
    ("std", 2, 10.029), ("std", 10, 2.971), ("std", 20, 2.267),  # IEC standard inverse
])
def test_inverse_time_curves_give_the_iec_60255_151_values(curves, device, multiple, t_s):
    scn, _, _, charts = curves
    _, c = _curve(charts, device, "trip")
    i_a = 2.0 * multiple                      # Is = 2 A in the scenario
    assert tcc.trip_band(scn.device(device), i_a)[0] == pytest.approx(t_s, abs=6e-4)
    # the drawn curve, between its sampled points (64 a decade), within 1 %
    assert _at(c, i_a) == pytest.approx(t_s, rel=0.01)


@pytest.mark.parametrize("device,kind", [("slow", "trip"), ("std", "trip"), ("grid", "trip"),
                                         ("capped", "trip")])
def test_every_sampled_point_is_the_machines_trip_time(curves, device, kind):
    scn, _, _, charts = curves
    _, c = _curve(charts, device, kind)
    dev = scn.device(device)
    checked = 0
    for i_a, t_lo, t_hi in zip(c.i_a, c.t_lo_s, c.t_hi_s):
        t = _machine_time(scn, device, float(i_a), t0_s=0.123456)
        if not math.isfinite(t_hi):
            assert not math.isfinite(t)
            continue
        # the machine's instant lies in the band (equal to it for continuous sensing)
        assert t_lo - 1e-9 <= t <= t_hi + 1e-9, (i_a, t, t_lo, t_hi)
        if dev.sense.period_s is None:
            assert t == pytest.approx(float(t_hi), abs=T_TOL_S)     # the machines' 1 ns grid
        checked += 1
    assert checked > 20


def test_sampled_band_is_n_minus_one_to_n_periods(curves):
    # grid: 2 ms on a 100 us grid -> n = ceil(2 ms / 0.1 ms) = 20 samples: the trip
    # falls (n - 1) Ts = 1.9 ms to n Ts = 2.0 ms after the onset (DEVELOPERS.md)
    scn, _, _, charts = curves
    _, c = _curve(charts, "grid", "trip")
    k = int(np.argmin(np.abs(c.i_a - 10.0)))
    assert c.t_lo_s[k] == pytest.approx(1.9e-3, abs=1e-12)
    assert c.t_hi_s[k] == pytest.approx(2.0e-3, abs=1e-12)
    assert c.sampled
    # under the 3 A threshold: never
    assert not np.isfinite(c.t_s[c.i_a < 3.0]).any()


def test_full_scale_clamps_the_reading(curves):
    # capped: IEC very inverse, Is 2 A, TMS 0.1, full scale 20 A. At 50 A the ADC reads
    # 20 A = 10 x: 0.1 * 13.5 / (10 - 1) = 0.15 s (derived by hand), the same as at 20 A.
    scn, _, _, charts = curves
    ch, c = _curve(charts, "capped", "trip")
    assert tcc.trip_band(scn.device("capped"), 50.0)[0] == pytest.approx(0.15)
    big = c.i_a > 20.0 * 1.01
    assert big.any() and np.allclose(c.t_s[big], 0.15)
    assert any(v.kind == "full-scale" and v.i_a == 20.0 for v in ch.verticals)


@pytest.mark.parametrize("i_a,t_s", [(2.0, 172.61), (1.5, 352.67), (3.0, 70.67)])
def test_thermal_cold_curve_gives_the_iec_60255_149_values(curves, i_a, t_s):
    # main: rated 1 A, tau 600 s, trip at theta 1: cold curve t = tau ln(I^2 / (I^2 - 1))
    # (the IEC 60255-149 examples of tests/test_devices_thermal.py)
    scn, _, _, charts = curves
    _, c = _curve(charts, "main", "thermal-cold")
    assert tcc.thermal_time(scn.boosters["main"].thermal, i_a, 0.0) == pytest.approx(t_s,
                                                                                    abs=0.006)
    assert _at(c, i_a) == pytest.approx(t_s, rel=0.01)
    # trip at theta 1 = the hot state itself: no hot curve is drawn
    assert not any(x.device == "main" and x.kind == "thermal-hot"
                   for ch in charts for x in ch.curves)


def test_thermal_hot_curve_and_the_machine(curves):
    # warm: rated 4 A, tau 30 s, trip at 1.2. At 5 A (1.25 x): cold 30 ln(1.5625 / 0.3625)
    # = 43.83 s (tests/test_devices_thermal.py); hot from theta 1: 30 ln((1.5625 - 1) /
    # (1.5625 - 1.2)) = 13.18 s (derived by hand from the same closed form).
    scn, _, _, charts = curves
    _, cold = _curve(charts, "warm", "thermal-cold")
    _, hot = _curve(charts, "warm", "thermal-hot")
    assert tcc.thermal_time(scn.boosters["warm"].thermal, 5.0, 0.0) == pytest.approx(43.83,
                                                                                    abs=0.005)
    assert tcc.thermal_time(scn.boosters["warm"].thermal, 5.0, 1.0) == pytest.approx(
        30.0 * math.log(0.5625 / 0.3625))
    assert _at(cold, 5.0) == pytest.approx(43.83, rel=0.01)
    assert _at(hot, 5.0) == pytest.approx(13.18, rel=0.01)
    # every cold point below the 8 A trip is the booster machine's thermal trip instant
    for i_a, t in zip(cold.i_a, cold.t_s):
        if 4.0 < i_a < 8.0 and math.isfinite(t):
            assert _machine_time(scn, "warm", float(i_a)) == pytest.approx(float(t), rel=1e-9)


def test_reversers_time_to_clear_and_the_interval(demo):
    # wye-tail-ctl: continuous sensing, 0.1 ms sense + 0.5 ms swap = 0.6 ms over 1.5 A
    # (the demo's settings); west trips 4 ms on a 100 us grid: earliest (40 - 1) x 0.1 ms
    # = 3.9 ms, so the interval is 3.9 - 0.6 = +3.3 ms, the static margin of check.
    scn, layout, _, charts = demo
    ch, c = _curve(charts, "wye-tail-ctl", "clear")
    assert np.allclose(c.t_s[c.i_a > 1.5 * 1.001], 0.6e-3)
    assert not np.isfinite(c.t_s[c.i_a < 1.5]).any()
    (iv,) = [iv for iv in ch.intervals if iv.down == "wye-tail-ctl" and iv.up == "west"]
    assert iv.margin_s == pytest.approx(3.3e-3, abs=1e-12)
    assert iv.margin_s == pytest.approx(reversing_margins(scn, layout)["wye-tail-ctl"]["west"])
    # every sampled point of the clear curve is the reverser machine's swap instant
    for i_a, t in zip(c.i_a, c.t_s):
        m = make_device(scn, "wye-tail-ctl", np.random.default_rng(0))
        m.observe(0.0, float(i_a))
        swapped = None
        for _ in range(4):
            d = m.next_deadline()
            if d is None:
                break
            evs = m.advance(d)
            hit = [e.t_s for e in evs if e.event == "swapped"]
            if hit:
                swapped = hit[0]
                break
        assert (swapped is None) == (not math.isfinite(t))
        if swapped is not None:
            assert swapped == pytest.approx(float(t), abs=1e-12)


def test_fault_current_verticals_come_from_the_fault_map(demo):
    scn, _, fm, charts = demo
    ch, _ = _curve(charts, "balloon-ctl", "clear")
    pro = [p.device_i_a[p.chain.index("balloon-ctl")] for p in fm.points
           if "balloon-ctl" in p.chain]
    marks = {v.kind: v.i_a for v in ch.verticals}
    assert marks["fault-min"] == pytest.approx(min(pro))
    assert marks["fault-max"] == pytest.approx(max(pro))
    assert marks["limit"] == 15.0                        # psu-main's current limit
    # paths: one per reversing section (the breaker and boosters are inside them)
    assert sorted(c.path[0] for c in charts) == ["balloon-ctl", "wye-tail-ctl"]
