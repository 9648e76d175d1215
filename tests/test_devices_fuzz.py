"""Random drives of the device machines: protocol invariants.

No outside check values here: these are invariants of the protocol
(sim/devices/machine.py) that must hold for every input sequence -- events in
time order and never before the last observation, deadlines never in the past,
an open output after a trip, the same input giving the same log.
"""
from hypothesis import given, settings, strategies as st

from sim.devices import BoosterDevice, ReverserDevice
from sim.devices.events import EVENT_KINDS
from sim.model import Booster, Feed, Restart, Reverser, Sense, Thermal, Trip

settings_st = st.fixed_dictionaries({
    "sampled": st.booleans(),
    "phase": st.floats(0.0, 0.999),
    "curve": st.sampled_from([None, "iec-very-inverse", "ieee-extremely-inverse"]),
    "thermal": st.booleans(),
    "reverse": st.booleans(),
    "policy": st.sampled_from(["manual", "retry", "backoff"]),
    "reverser": st.booleans(),
    "dead_ms": st.sampled_from([0.0, 0.2, 2.0]),
    "hold_ms": st.sampled_from([0.0, 1.0, 50.0]),
})
steps_st = st.lists(st.tuples(st.floats(0.0, 0.02), st.floats(0.0, 30.0),
                              st.sampled_from([None, 5.0, 16.0])), min_size=1, max_size=40)


def build(p):
    sense = Sense(period_s=1e-4 if p["sampled"] else None, full_scale_a=25.0, phase=p["phase"])
    restart = Restart(p["policy"], tries=3, every_s=0.01, first_s=0.01, factor=2, cap_s=0.05)
    if p["reverser"]:
        return ReverserDevice(Reverser("r", Feed("b"), 1.5, 1e-4, 1e-3, t_dead_s=p["dead_ms"] * 1e-3,
                                       t_hold_off_s=p["hold_ms"] * 1e-3, sense=sense,
                                       trip=Trip(4.0, 0.003), restart=restart), p["phase"])
    trip = Trip(5.0, 0.002) if p["curve"] is None else Trip(5.0, 0.001, p["curve"], 0.01)
    return BoosterDevice(Booster("b", "psu", sense=sense, trip=trip, restart=restart,
                                 thermal=Thermal(3.0, 0.05) if p["thermal"] else None,
                                 reverse_on_short=p["reverse"], t_sense_reverse_s=2e-4,
                                 t_swap_s=1e-3, t_hold_off_s=p["hold_ms"] * 1e-3), p["phase"])


def drive(p, steps):
    dev = build(p)
    t, log = 0.0, []
    for dt, i, v in steps:
        t_next = t + dt
        while True:                          # take every deadline up to t_next
            nd = dev.next_deadline()
            if nd is None or nd > t_next:
                break
            assert nd >= dev.t_s - 1e-12
            ev = dev.advance(nd)
            for e in ev:
                assert e.event in EVENT_KINDS and e.t_s >= t - 1e-12
                if e.event in ("trip", "thermal_trip", "dropout"):
                    assert not dev.closed or e is not ev[-1]
            log += [(e.t_s, e.event) for e in ev]
            t = nd
            dev.observe(t, i if dev.closed else 0.0)
        t = t_next
        dev.observe(t, i if dev.closed else 0.0)
        if v is not None and hasattr(dev, "observe_supply_v") and dev.undervoltage:
            dev.observe_supply_v(t, v)
    assert [x[0] for x in log] == sorted(x[0] for x in log)
    return log


@settings(max_examples=150, deadline=None)
@given(p=settings_st, steps=steps_st)
def test_random_drives_keep_the_protocol(p, steps):
    assert drive(p, steps) == drive(p, steps)


def test_every_event_kind_named_in_the_device_sources_is_in_the_contract():
    # the machines make their events without a run-time check of the kind (they are
    # made on every transition); every kind they can name is a literal in their
    # source, so this reads all of them and holds them to EVENT_KINDS
    import ast
    from pathlib import Path

    import sim.devices as pkg

    named = set()
    for path in Path(pkg.__file__).parent.glob("*.py"):
        for node in ast.walk(ast.parse(path.read_text())):
            if not isinstance(node, ast.Call):
                continue
            fn = node.func
            name = fn.attr if isinstance(fn, ast.Attribute) else getattr(fn, "id", "")
            if name == "_event" and len(node.args) >= 2:
                kind = node.args[1]
            elif name == "DeviceEvent" and len(node.args) >= 3:
                kind = node.args[2]
            else:
                continue
            assert isinstance(kind, ast.Constant), f"{path.name}:{node.lineno}: kind not a literal"
            named.add(kind.value)
    assert len(named) >= 12
    assert named <= EVENT_KINDS, named - EVENT_KINDS
