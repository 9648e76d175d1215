"""Building device machines from the scenario model."""
import numpy as np
import pytest

from sim.devices import (BoosterDevice, BreakerDevice, ReverserDevice, SupplyDevice,
                         make_device, make_devices)
from sim.model import (Booster, Breaker, Feed, Rail, Reverser, Scenario, Sense, Supply,
                       Track, frozen_map)


def scenario():
    return Scenario(
        format="railfault/1", title="factory test", seed=3, duration_s=1.0,
        supplies=frozen_map({"psu": Supply("psu", 16.0, i_limit_a=12.0)}),
        boosters=frozen_map({
            "b1": Booster("b1", "psu", sense=Sense(period_s=1e-4)),
            "b2": Booster("b2", "psu", sense=Sense(period_s=1e-4, phase=0.25)),
            "b3": Booster("b3", "psu")}),
        breakers=frozen_map({"cb": Breaker("cb", Feed("b1"), sense=Sense(period_s=5e-5))}),
        reversers=frozen_map({"rv": Reverser("rv", Feed("cb"), 1.5, 1e-4, 5e-4)}),
        track=Track(Rail(), 0.05, frozen_map({}), ()))


def test_kinds_and_phases():
    scn = scenario()
    devs = make_devices(scn, np.random.default_rng(11))
    assert isinstance(devs["psu"], SupplyDevice)
    assert isinstance(devs["b1"], BoosterDevice) and isinstance(devs["cb"], BreakerDevice)
    assert isinstance(devs["rv"], ReverserDevice)
    # one rng.random() per sampled device with no phase, in file order: b1, cb
    ref = np.random.default_rng(11)
    assert devs["b1"].phase == ref.random()
    assert devs["cb"].phase == ref.random()
    assert devs["b2"].phase == 0.25 and devs["b3"].phase == 0.0 and devs["rv"].phase == 0.0
    with pytest.raises(KeyError):
        make_device(scn, "nowhere", np.random.default_rng(0))


def test_drawn_phase_moves_the_trip_on_the_grid():
    # phase p: samples at (k + p) * 100 us; onset 0 -> first sample p * 100 us,
    # trip after n = 20 samples: (p + 19) * 100 us (sensing rule, domain.md), an
    # instant on the run's 1 ns grid (sim.timebase: within half a grid step)
    scn = scenario()
    dev = make_device(scn, "b1", np.random.default_rng(5))
    p = np.random.default_rng(5).random()
    dev.observe(0.0, 9.0)
    assert dev.next_deadline() == pytest.approx((p + 19) * 1e-4, abs=0.5e-9)
    assert dev.next_deadline() == round(dev.next_deadline(), 9)


def test_demo_layout_builds():
    from pathlib import Path

    from sim.scenario import load
    scn = load(Path(__file__).resolve().parents[1] / "scenarios" / "cinder-ridge.yaml")
    devs = make_devices(scn, np.random.default_rng(scn.seed))
    assert set(devs) == set(scn.supplies) | set(scn.boosters) | set(scn.breakers) | set(scn.reversers)
    assert all(d.closed for d in devs.values())
