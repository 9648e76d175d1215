"""Good-path loading: the demo layout, unit conversions, defaults, the frozen model.

Unit conversions are SI definitions (The International System of Units, SI
brochure, 9th edition, BIPM 2019): the prefixes m = 1e-3, u (micro) = 1e-6, and
mm2 = (1e-3 m)^2 = 1e-6 m2; the minute (60 s) is a non-SI unit accepted for use
with the SI (SI brochure, table 8); the inch is exactly 0.0254 m (international
yard and pound agreement, 1959).
"""
from __future__ import annotations

import dataclasses
import hashlib
import math
import re
from pathlib import Path

import pytest

from sim import model as M
from sim import schema as S
from sim import units as U
from sim.errors import ScenarioError
from sim.scenario import load, loads

ROOT = Path(__file__).resolve().parents[1]
# A frozen copy of the first demo layout, so that editing the bundled demo does not
# change these hand-checked values.
DEMO = ROOT / "tests" / "scenarios" / "load" / "loader-reference.yaml"

MINIMAL = """\
format: railfault/1
duration: 10 s
supplies:
  psu: {voltage: 15 V}
boosters:
  east: {supply: psu}
track:
  sections:
    main: {length: 4 m, feed: east}
"""


@pytest.fixture(scope="module")
def demo() -> M.Scenario:
    return load(DEMO)


def _line_of(pattern: str) -> int:
    """1-based line of the first line of the demo file matching ``pattern``."""
    for n, line in enumerate(DEMO.read_text(encoding="utf-8").splitlines(), 1):
        if re.search(pattern, line):
            return n
    raise AssertionError(pattern)


# ------------------------------------------------------------- unit conversions
@pytest.mark.parametrize("text, dim, si", [
    ("0.1 ms", U.TIME, 1e-4),            # SI brochure, BIPM: milli = 1e-3
    ("100 us", U.TIME, 1e-4),            # micro = 1e-6
    ("2.5 ms", U.TIME, 2.5e-3),
    ("1 min", U.TIME, 60.0),             # SI brochure table 8: 1 min = 60 s
    ("5.0 mm2", U.AREA, 5e-6),           # (1e-3 m)^2
    ("1.9 mm2", U.AREA, 1.9e-6),
    ("1.9 mm^2", U.AREA, 1.9e-6),
    ("250 mm", U.LENGTH, 0.25),
    ("230 mm", U.LENGTH, 0.23),
    ("18 m", U.LENGTH, 18.0),
    ("2 in", U.LENGTH, 0.0508),          # 1 in = 0.0254 m exactly (1959 agreement)
    ("0.3 m/s", U.SPEED, 0.3),
    ("4 A", U.CURRENT, 4.0),
    ("250 mA", U.CURRENT, 0.25),
    ("0.05 ohm", U.RESISTANCE, 0.05),
    ("50 mohm", U.RESISTANCE, 0.05),
    ("3 mΩ", U.RESISTANCE, 3e-3),
    ("0.02 ohm/m", U.RESISTANCE_PER_LENGTH, 0.02),
    ("1000 uF", U.CAPACITANCE, 1e-3),
    ("16 V", U.VOLTAGE, 16.0),
    ("1.2", U.DIMENSIONLESS, 1.2),
])
def test_quantity_to_si(text, dim, si):
    assert U.parse_quantity(text, dim) == pytest.approx(si, rel=1e-12)


def test_decimal_prefixes_round_once():
    # 0.1 ms is the double nearest to 1e-4, not 0.1 * 0.001 (= 1.0000000000000002e-4).
    assert U.parse_quantity("0.1 ms", U.TIME) == 1e-4
    assert U.parse_quantity("0.3 mm", U.LENGTH) == 3e-4


@pytest.mark.parametrize("text, gauge", [
    ("14 AWG", 14.0), ("40 AWG", 40.0), ("0 AWG", 0.0), ("1/0 AWG", 0.0), ("00 AWG", -1.0),
    ("2/0 AWG", -1.0), ("0000 AWG", -3.0), ("4/0 awg", -3.0),
])
def test_awg_numbers(text, gauge):
    # ASTM B258 formula d = 0.127 mm * 92^((36 - n)/39) numbers 0000 as n = -3.
    assert U.parse_awg(text) == gauge


# ------------------------------------------------------------------ demo layout
def test_demo_loads_with_si_values(demo):
    assert demo.format == "railfault/1"
    assert demo.seed == 7
    assert demo.duration_s == 90.0
    assert demo.t_margin_required_s == pytest.approx(5e-4)           # "0.5 ms"
    psu = demo.supplies["psu-main"]
    assert (psu.v_emf_v, psu.r_ohm, psu.i_limit_a) == (16.0, 0.05, 12.0)
    assert (psu.on_limit, psu.t_off_s, psu.t_limit_s) == ("hiccup", 1.0, 0.0)
    west = demo.boosters["west"]
    assert west.sense.period_s == pytest.approx(1e-4)                   # "100 us"
    assert west.sense.full_scale_a == 20.0 and west.sense.phase is None
    assert west.trip == M.Trip(5.0, pytest.approx(4e-3))                # "4 ms"
    assert west.thermal == M.Thermal(4.0, 20.0, "square", 1.2, 0.6)
    assert west.restart.policy == "backoff" and west.restart.cap_s == 10.0
    assert demo.boosters["east"].thermal is None
    cb = demo.breakers["loop-cb"]
    assert cb.feed == M.Feed("east", M.Wire(length_m=4.0, awg=14.0))
    assert (cb.restart.policy, cb.restart.tries, cb.restart.every_s) == ("retry", 3, 0.5)
    rev = demo.reversers["wye-tail-ctl"]
    assert rev.sense_above_a == 1.5
    assert rev.t_sense_s == 1e-4                                        # "0.1 ms"
    assert rev.t_swap_s == 5e-4 and rev.t_dead_s == pytest.approx(2e-4)
    assert rev.t_hold_off_s == pytest.approx(0.05)
    assert rev.t_clear_s == pytest.approx(6e-4)


def test_demo_track_and_trains(demo):
    track = demo.track
    assert track.rail == M.Rail("nickel-silver", pytest.approx(5e-6), None)   # "5.0 mm2"
    assert track.r_wheel_contact_ohm == 0.05
    assert len(track.sections) == 8 and len(track.joints) == 9
    mw = track.sections["main-west"]
    assert mw.length_m == 12.0 and mw.feed == "west" and mw.leads is None  # absent: the tool chooses
    assert [f.at_m for f in mw.feeders] == [1.0, 6.0, 11.0]
    assert mw.feeders[0].wire == M.Wire(length_m=pytest.approx(0.4), awg=20.0)
    j = track.joints[2]
    assert (str(j.ends[0]), str(j.ends[1]), j.gaps, j.index) == \
        ("wye-base.b", "main-east.a", "both", 2)
    assert j.sign == +1 and track.joints[8].sign == -1       # b-a straight, b-b crossed
    mogul = demo.rolling_stock["mogul"]
    assert mogul.length_m == 0.25                                       # "250 mm"
    assert mogul.axles_m == pytest.approx((0.03, 0.06, 0.09, 0.12, 0.18, 0.22))
    assert mogul.pickup == (0, 1, 2, 3, 4, 5) and mogul.draw_a == 0.6
    coach = demo.rolling_stock["coach"]
    assert coach.pickup == (0, 3) and coach.r_join_ohm == 120.0
    assert demo.rolling_stock["gondola"].metal_wheels is True
    local = demo.trains["balloon-local"]
    assert local.consist == ("mogul", "coach", "coach", "coach")        # "coach x 3"
    assert local.start == M.Start("main-west", 4.0, "b")
    assert local.speed_mps == 0.3 and local.depart_s == 2.0
    turn = demo.trains["wye-turn"]
    assert turn.route[3] == M.Reversal(5.0)
    assert turn.route[:3] == ("main-west", "leg-west", "wye-tail")
    f = demo.faults[0]
    assert (f.kind, f.section, f.at_m, f.r_ohm, f.lasts_s, f.at_s) == \
        ("short", "main-east", 7.0, 0.01, 2.0, 60.0)


def test_demo_provenance_and_locations(demo):
    assert demo.path == str(DEMO)
    assert demo.sha256 == hashlib.sha256(DEMO.read_bytes()).hexdigest()
    line = _line_of(r"^  east:")
    trip_line = line + 5
    assert demo.locations[("boosters", "east")] == (line, 3)
    assert demo.locations[("boosters", "east", "trip", "after")][0] == trip_line
    assert demo.where("boosters", "east", "trip", "after") == \
        f"boosters.east.trip.after (line {trip_line})"
    assert demo.locations[("track", "joints", 3)][0] == _line_of(r"leg-east.b, main-east.a")
    assert ("track", "sections", "balloon", "length") in demo.locations


def test_model_is_frozen(demo):
    with pytest.raises(dataclasses.FrozenInstanceError):
        demo.boosters["east"].r_out_ohm = 1.0  # type: ignore[misc]
    with pytest.raises(TypeError):
        demo.boosters["new"] = demo.boosters["east"]  # type: ignore[index]


def test_upstream_chain(demo):
    assert demo.upstream("balloon") == ("balloon-ctl", "loop-cb", "east", "psu-main")
    assert demo.booster_of("wye-tail") == "west"


# --------------------------------------------------------------------- defaults
def test_defaults_filled():
    scn = loads(MINIMAL)
    b = scn.boosters["east"]
    assert b.r_out_ohm == 0.04 and b.phase == M.NORMAL
    assert b.trip == M.Trip(5.0, 0.002)
    assert b.restart == M.Restart()
    assert b.sense == M.Sense() and math.isinf(b.sense.full_scale_a)
    assert b.v_undervoltage_v == 7.0 and b.reverse_on_short is False
    s = scn.supplies["psu"]
    assert s.r_ohm == 0.05 and math.isinf(s.i_limit_a) and s.on_limit == "constant-current"
    main = scn.track.sections["main"]
    assert main.feeders == (M.Feeder(2.0, M.Wire()),)         # one feeder at mid-length
    assert scn.track.rail == M.Rail("nickel-silver", 1.9e-6, None)
    assert scn.track.gap_width_m == 0.8e-3 and scn.track.contact_length_m == 1e-3
    assert scn.title == "" and scn.seed == 0 and scn.samples == 0
    assert dict(scn.rolling_stock) == {} and scn.faults == () and dict(scn.vary) == {}
    assert scn.path == "<string>" and len(scn.sha256) == 64


def _model_default(cls, name):
    f = {x.name: x for x in dataclasses.fields(cls)}[name]
    return f.default_factory() if f.default is dataclasses.MISSING else f.default


@pytest.mark.parametrize("record, key, cls, attr", [
    (S.SUPPLY, "resistance", M.Supply, "r_ohm"),
    (S.SUPPLY, "on_limit", M.Supply, "on_limit"),
    (S.SUPPLY, "off_time", M.Supply, "t_off_s"),
    (S.SUPPLY, "limit_after", M.Supply, "t_limit_s"),
    (S.BOOSTER, "output_resistance", M.Booster, "r_out_ohm"),
    (S.BOOSTER, "undervoltage", M.Booster, "v_undervoltage_v"),
    (S.BREAKER, "on_resistance", M.Breaker, "r_on_ohm"),
    (S.REVERSER, "dead_time", M.Reverser, "t_dead_s"),
    (S.REVERSER, "hold_off", M.Reverser, "t_hold_off_s"),
    (S.REVERSER, "on_resistance", M.Reverser, "r_on_ohm"),
    (S.REVERSE, "swap_time", M.Booster, "t_swap_s"),
    (S.REVERSE, "hold_off", M.Booster, "t_hold_off_s"),
    (S.THERMAL, "trip_at", M.Thermal, "trip_at"),
    (S.THERMAL, "resume_at", M.Thermal, "resume_at"),
    (S.RESTART, "every", M.Restart, "every_s"),
    (S.RESTART, "first", M.Restart, "first_s"),
    (S.RESTART, "factor", M.Restart, "factor"),
    (S.RESTART, "cap", M.Restart, "cap_s"),
    (S.TRACK, "gap_width", M.Track, "gap_width_m"),
    (S.TRACK, "contact_length", M.Track, "contact_length_m"),
    (S.VEHICLE, "charge_resistance", M.Vehicle, "r_charge_ohm"),
    (S.VEHICLE, "capacitance", M.Vehicle, "c_keep_alive_f"),
])
def test_format_defaults_agree_with_model(record, key, cls, attr):
    """The defaults of the file format and of the model are one set of figures."""
    cx = S.Context(lambda path, msg: pytest.fail(f"{path}: {msg}"))
    out = record.fields[key].kind.convert(cx, record.fields[key].default, (key,))
    assert out == pytest.approx(_model_default(cls, attr)) if not isinstance(out, str) \
        else out == _model_default(cls, attr)


def test_trip_defaults_agree_with_model():
    for record, cls in ((S.BOOSTER, M.Booster), (S.BREAKER, M.Breaker),
                        (S.REVERSER, M.Reverser)):
        cx = S.Context(lambda path, msg: pytest.fail(msg))
        t = record.fields["trip"].kind.convert(cx, record.fields["trip"].default, ())
        assert M.Trip(t["above"], t["after"]) == _model_default(cls, "trip")


# --------------------------------------------------------------- optional forms
def test_optional_forms():
    text = MINIMAL.replace("{voltage: 15 V}", "{voltage: 15 V, on_limit: latch, "
                                              "limit_after: 20 ms}")
    text = text.replace("  east: {supply: psu}\n", """\
  east:
    supply: psu
    phase: inverted
    reverse_on_short: true
    reverse: {above: 6 A, after: 0.2 ms, swap_time: 0.3 ms}
    undervoltage: 8 V
    wire: {wire: 0000 AWG, length: 2 m}
    trip: {above: 5 A, after: 1 ms, curve: iec-very-inverse, tms: 0.1}
breakers:
  cb: {feed: east, sense: {period: 50 us, phase: 0.25}}
reversers:
  rv:
    feed: {from: cb, wire: 0.0083 ohm/m, length: 1 m}
    sense: {above: 1 A, after: 0 s}
    swap_time: 0 s
""").replace("main: {length: 4 m, feed: east}", """\
main: {length: 4 m, feed: east, leads: swapped,
           feeders: [{at: 0 m}, {at: 4 m, wire: 22 AWG, length: 30 cm}]}
    joined: {length: 1 m}
    tail: {length: 2 m, feed: rv}
  rail: {resistance: 0.02 ohm/m}
  joints:
    - {ends: [main.b, joined.a], gaps: one, rail: right}
    - {ends: [joined.b, tail.b]}
rolling_stock:
  loco: {length: 150 mm, axles: [20 mm, 130 mm], pickup: all, draw: 0.5 A,
         capacitance: 1000 uF, charge_resistance: 22 ohm}
  car: {length: 100 mm, axles: [10 mm, 90 mm], pickup: [1], wheels: metal}
trains:
  t: {consist: [loco, car x 2], start: {section: main, at: 3 m, heading: b},
      route: [main, joined, tail, {reverse_after: 0 s}, joined], speed: 30 cm/s}
faults:
  - {at: 1 s, open: {section: main, feeder: 1}}
  - {at: 2 s, short: {section: tail, at: 2 m}, resistance: 0.1 ohm}
actions:
  - {at: 3 s, reset: rv}
vary:
  boosters.east.sense.phase: uniform
  reversers.rv.swap_time: {uniform: [0.2 ms, 1 ms]}
  trains.t.speed: {normal: [0.3 m/s, 0.05 m/s]}
  track.sections.main.feeders[1].at: [1 m, 2 m]
  boosters.east.trip.tms: {choice: [0.1, 0.2]}
samples: 50
""")
    scn = loads(text, "forms.yaml")
    east = scn.boosters["east"]
    assert east.phase == M.INVERTED and east.reverse_on_short
    assert (east.sense_reverse_a, east.t_sense_reverse_s) == (6.0, pytest.approx(2e-4))
    assert east.t_swap_s == pytest.approx(3e-4) and east.t_hold_off_s == pytest.approx(0.05)
    assert east.wire == M.Wire(length_m=2.0, awg=-3.0) and east.v_undervoltage_v == 8.0
    assert east.trip == M.Trip(5.0, 1e-3, "iec-very-inverse", 0.1)
    assert scn.supplies["psu"].t_limit_s == pytest.approx(0.02)
    assert scn.breakers["cb"].sense == M.Sense(period_s=pytest.approx(5e-5), phase=0.25)
    rv = scn.reversers["rv"]
    assert rv.feed == M.Feed("cb", M.Wire(length_m=1.0, r_per_m_ohm=0.0083))
    assert rv.t_sense_s == 0.0 and rv.t_swap_s == 0.0
    main = scn.track.sections["main"]
    assert main.leads == M.INVERTED
    assert main.feeders == (M.Feeder(0.0), M.Feeder(4.0, M.Wire(pytest.approx(0.3), 22.0)))
    assert scn.track.sections["joined"].feed is None
    assert scn.track.sections["joined"].feeders == ()
    assert scn.track.rail == M.Rail(None, None, 0.02)
    assert (scn.track.joints[0].gaps, scn.track.joints[0].rail) == ("one", "right")
    assert scn.track.joints[1].sign == -1
    loco, car = scn.rolling_stock["loco"], scn.rolling_stock["car"]
    assert loco.c_keep_alive_f == pytest.approx(1e-3) and loco.r_charge_ohm == 22.0
    assert car.pickup == (1,) and car.metal_wheels
    t = scn.trains["t"]
    assert t.consist == ("loco", "car", "car") and t.speed_mps == pytest.approx(0.3)
    assert t.route[3] == M.Reversal(0.0)
    assert scn.faults[0] == M.Fault(at_s=1.0, kind="open", section="main", feeder=1)
    assert scn.faults[1].r_ohm == 0.1 and scn.faults[1].lasts_s is None
    assert scn.actions == (M.Action(3.0, "reset", "rv"),)
    v = scn.vary
    assert v["boosters.east.sense.phase"]["sampler"] == "uniform"
    assert v["boosters.east.sense.phase"]["values"] == (0.0, 1.0)
    assert v["reversers.rv.swap_time"]["values"] == pytest.approx((2e-4, 1e-3))
    assert v["reversers.rv.swap_time"]["path"] == ("reversers", "rv", "swap_time")
    assert v["trains.t.speed"]["sampler"] == "normal"
    assert v["trains.t.speed"]["values"] == pytest.approx((0.3, 0.05))
    assert v["track.sections.main.feeders[1].at"]["sampler"] == "grid"
    assert v["track.sections.main.feeders[1].at"]["path"] == \
        ("track", "sections", "main", "feeders", 1, "at")
    assert v["boosters.east.trip.tms"]["values"] == (0.1, 0.2)
    assert scn.samples == 50


def test_bom_and_load_from_path(tmp_path):
    p = tmp_path / "bom.yaml"
    p.write_bytes(b"\xef\xbb\xbf" + MINIMAL.encode())
    scn = load(p)
    assert scn.path == str(p) and scn.duration_s == 10.0
    assert loads("\ufeff" + MINIMAL).duration_s == 10.0


def test_null_optional_tables_are_empty():
    scn = loads(MINIMAL + "breakers:\nfaults:\n")
    assert dict(scn.breakers) == {} and scn.faults == ()


def test_errors_are_sorted_by_line():
    with pytest.raises(ScenarioError) as info:
        loads(MINIMAL.replace("10 s", "10 A").replace("15 V", "15 s"))
    lines = [p.line for p in info.value.problems]
    assert lines == sorted(lines) and len(lines) == 2
