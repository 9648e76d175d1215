"""The event engine against the plain fixed-step reference (tests/fixedstep.py).

The reference re-implements the device logic independently and steps a clock;
the two must agree on outcomes (the same device events, in the same order,
with the same counts) and on event times within one step. Every setting in
these scenarios is a multiple of the step, so each event lands on the step
grid; trains stopping on keep-alive and going on again (``stop`` / ``go``) are
compared like device events, per train. The thermal replica's crossings do not
land on the grid, so for it each interval between consecutive events must
agree within one step (the error of a stepped crossing then does not carry
into the next one).
"""
import pytest

from sim.scenario import load
from sim.world import run
from fixedstep import RefResult, simulate

from pathlib import Path

HERE = Path(__file__).parent / "scenarios" / "run"
KINDS = {"trip", "thermal_trip", "thermal_resume", "swap_start", "swapped", "restart",
         "reclose", "dropout", "off", "on", "give_up", "stop", "go"}

CASES = [  # scenario, simulated time (s), step (s)
    ("race-plus", 0.8, 1e-5),
    ("race-minus", 0.8, 1e-5),
    ("long-train", 2.62, 1e-5),
    ("backoff", 9.0, 1e-4),
    ("hiccup", 3.0, 1e-4),
    ("thermal", 3.0, 1e-4),
    # trains with draw and keep-alives: stops, goes and inrush pulses (the reference
    # steps each train's front distance; the engine re-plans its closed-form motion)
    ("inrush", 3.0, 1e-4),
    ("stall", 8.0, 1e-4),
    # the trust rules' scenarios: a swap that moves the short and a trip after it, a
    # zero-ohm supply, an inverse-time trip, and a locomotive without keep-alive that
    # stops on the bridge it reached (the reference steps onto it)
    ("one-swap", 2.62, 1e-5),
    ("zero-ohm-supply", 2.0, 1e-4),
    ("slow-trip", 3.0, 1e-4),
    ("stop-on-bridge", 1.1, 1e-4),
]


def _per_device(events):
    out: dict = {}
    for t, dev, ev in events:
        if ev in KINDS:
            out.setdefault(dev, []).append((ev, t))
    return out


def _engine(scn, t_end):
    res = run(scn, until_s=t_end, keep_events=True)
    return res, _per_device([(e.t_s, e.device, e.event) for e in res.events])


@pytest.mark.parametrize("name,t_end,dt", CASES)
def test_engine_matches_fixed_step_reference(name, t_end, dt):
    scn = load(HERE / f"{name}.yaml")
    res, eng = _engine(scn, t_end)
    ref: RefResult = simulate(scn, t_end_s=t_end, dt_s=dt)
    refd = _per_device(ref.events)
    assert eng, "the scenario must make devices act"
    assert set(eng) == set(refd)
    for dev in eng:
        kinds_e = [k for k, _ in eng[dev]]
        kinds_r = [k for k, _ in refd[dev]]
        assert kinds_e == kinds_r, dev                      # same outcome, same order
        te = [t for _, t in eng[dev]]
        tr = [t for _, t in refd[dev]]
        if name == "thermal":
            ie = [b - a for a, b in zip([0.0] + te, te)]
            ir = [b - a for a, b in zip([0.0] + tr, tr)]
            assert ie == pytest.approx(ir, abs=dt + 1e-9), dev
        else:
            assert te == pytest.approx(tr, abs=dt + 1e-9), dev
    for dev, d in res.devices.items():
        r = ref.devices[dev]
        assert (d.trips, d.swaps, d.restarts) == (r["trips"], r["swaps"], r["restarts"]), dev


def test_reference_sees_the_hand_derived_race():
    # The reference alone, against the hand derivation of race-plus.yaml:
    # swap_start at 0.7505 s, swapped at 0.7515 s, and no trip of east.
    ref = simulate(load(HERE / "race-plus.yaml"), t_end_s=0.8, dt_s=1e-5)
    assert ref.times("rev", "swap_start") == pytest.approx([0.7505], abs=1e-5)
    assert ref.times("rev", "swapped") == pytest.approx([0.7515], abs=1e-5)
    assert ref.times("east", "trip") == []
