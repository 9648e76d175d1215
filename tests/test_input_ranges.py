"""Plausible ranges and resolvable values: every quantity of the format has a range for the
trade, declared once (sim/schema.py), refused outside it with the range in the message, and
shown in the format reference and the JSON Schema; counts are bounded."""
from __future__ import annotations

import math
import re
from pathlib import Path

import pytest

from sim import schema as S
from sim import units as U
from sim.errors import ScenarioError
from sim.scenario import loads
from sim.timebase import T_MIN_S
from tests.test_scenario_errors import MINIMAL  # the smallest useful file

README = Path(__file__).resolve().parents[1] / "scenarios" / "README.md"



def problems(text: str):
    with pytest.raises(ScenarioError) as info:
        loads(text, "t.yaml")
    return info.value.problems


def only(text: str):
    found = problems(text)
    assert len(found) == 1, [str(p) for p in found]
    return found[0]


def _fields(kind, seen=None):
    """Every (record, key, field) reachable from ``kind``."""
    seen = [] if seen is None else seen
    if isinstance(kind, S.Record):
        if any(kind is r for r in seen):
            return
        seen.append(kind)
        for key, f in kind.fields.items():
            yield kind, key, f
            yield from _fields(f.kind, seen)
    elif isinstance(kind, (S.Seq, S.Names)):
        yield from _fields(kind.item, seen)
    elif isinstance(kind, S.Either):
        for _t, k in kind.options:
            yield from _fields(k, seen)


def _quantities():
    for rec, key, f in _fields(S.TOP):
        kind = f.kind.item if isinstance(f.kind, S.Seq) else f.kind
        if isinstance(kind, S.Gauge):
            kind = kind.per_metre()
        if isinstance(kind, S.Quantity):
            yield rec, key, kind


# ------------------------------------------------------------ the declarations
def test_every_quantity_of_the_format_has_a_range_with_a_reason():
    found = list(_quantities())
    assert len(found) > 50
    for rec, key, kind in found:
        r = kind.range
        assert isinstance(r, S.Range), f"{rec.what}.{key}"
        assert 0 < r.lo < r.hi < math.inf, f"{rec.what}.{key}"
        assert r.why, f"{rec.what}.{key}"


def test_every_time_range_stays_above_the_engine_resolution():
    # sim.timebase: instants on a 1 ns grid; the smallest interval a file may give is
    # T_MIN_S = 1 us (a thousand grid steps)
    for rec, key, kind in _quantities():
        if kind.dim is U.TIME:
            assert kind.range.lo >= T_MIN_S, f"{rec.what}.{key}"


def test_every_integer_count_of_the_format_is_bounded():
    for rec, key, f in _fields(S.TOP):
        if isinstance(f.kind, S.Number) and f.kind.integer and key not in ("feeder",):
            assert f.kind.maximum is not None, f"{rec.what}.{key}"


def test_defaults_lie_in_their_ranges():
    # every default is converted through its kind: the minimal file loads with all of them
    scn = loads(MINIMAL)
    assert scn.boosters["east"].restart.cap_s == 10.0


def test_wire_range_admits_every_gauge_the_loader_reads():
    # ASTM B258 diameters with IEC 60028 copper (1/58 ohm mm2/m): 0000 AWG (11.68 mm,
    # 107.2 mm2) is 0.161 mohm/m, 40 AWG (0.0799 mm) 3.44 ohm/m; the per-metre range
    # of the format must admit both, as a wire may be written either way
    from sim.circuit.conductors import awg_r_per_m_ohm

    thick, thin = awg_r_per_m_ohm(U.AWG_MIN), awg_r_per_m_ohm(U.AWG_MAX)
    assert thick == pytest.approx(1 / 58 / (math.pi / 4 * 11.684 ** 2) , rel=1e-3)  # ohm/m
    assert thin == pytest.approx(3.44, rel=1e-2)
    assert S.RANGE_R_PER_M.lo < thick and thin < S.RANGE_R_PER_M.hi


def test_voltage_range_admits_the_nmra_s91_track_voltages():
    # NMRA S-9.1 (2020) table 3: 8.5 V minimum and 22 V maximum peak track voltage
    assert S.RANGE_VOLTAGE.lo <= 8.5 and 22.0 <= S.RANGE_VOLTAGE.hi


# --------------------------------------------------- refused, with the range
@pytest.mark.parametrize("old, new, path, fragments", [
    # below what the engine resolves: the reason and the smallest accepted value
    ("duration: 10 s", "duration: 1e-320 s", "duration",
     ['"1e-320 s" is shorter than the engine resolves', "the smallest accepted interval is "
      "1 us", "1 ns grid"]),
    ("after: 2 ms}", "after: 1 ns}", "boosters.east.trip.after",
     ["shorter than the engine resolves", "smallest accepted interval is 1 us (or 0 s for "
      "none)"]),
    ("{voltage: 15 V}", "{voltage: 15 V, on_limit: hiccup, off_time: 1e-320 s}",
     "supplies.psu.off_time", ["smallest accepted interval is 1 us"]),
    ("supply: psu", "supply: psu\n    restart: {policy: retry, every: 1 ns}",
     "boosters.east.restart.every", ["smallest accepted interval is 1 us"]),
    ("supply: psu", "supply: psu\n    restart: {policy: backoff, first: 0.5 ns}",
     "boosters.east.restart.first", ["smallest accepted interval is 1 us"]),
    ("supply: psu", "supply: psu\n    thermal: {rated: 2 A, tau: 1e-9 s}",
     "boosters.east.thermal.tau", ["smallest accepted interval is 1 us"]),
    ("supply: psu", "supply: psu\n    sense: {period: 100 ns}",
     "boosters.east.sense.period", ["smallest accepted interval is 1 us"]),
    ("after: 2 ms}", "after: 1e-400 s}", "boosters.east.trip.after",   # below any float
     ["shorter than the engine resolves"]),
    # outside the trade's range: the range and its reason
    ("{voltage: 15 V}", "{voltage: 1e20 V}", "supplies.psu.voltage",
     ['must be at most 120 V, got "1e20 V"', "the range is 1 V to 120 V", "NMRA S-9.1"]),
    ("{voltage: 15 V}", "{voltage: 15 V, resistance: 5e-324 ohm}", "supplies.psu.resistance",
     ["must be at least 0.1 mohm (or 0)", "the range is 0 or 0.1 mohm to 1 kohm"]),
    ("sections:", "rail: {resistance: 1e-6 ohm/m}\n  sections:", "track.rail.resistance",
     ["must be at least 0.1 mohm/m", "ASTM B258"]),
    ("length: 4 m", "length: 1e300 m", "track.sections.main.length",
     ['must be at most 1 km, got "1e300 m"', "the range is 1 cm to 1 km"]),
    ("above: 5 A", "above: 5 kA", "boosters.east.trip.above", ["must be at most 1 kA"]),
    ("duration: 10 s", "duration: 2 d", "duration", ["must be at most 24 h"]),
    ("length: 4 m", "length: 4 m, feeders: [{at: 1 m, wire: 1e-9 ohm/m, length: 1 m}]",
     "track.sections.main.feeders[0].wire", ["must be at least 0.1 mohm/m"]),
    ("duration: 10 s", "duration: 10 s\nseed: 9007199254740993", "seed",
     ["must be at most 9,007,199,254,740,992", "2^53"]),
    ("after: 2 ms}", "after: 2 ms, curve: iec-very-inverse, tms: 0.001}",
     "boosters.east.trip.tms", ["must be at least 0.01", "from memory"]),
    ("after: 2 ms}", "after: 1e99999999 s}", "boosters.east.trip.after", ["not a finite value"]),
])
def test_out_of_range_values_are_refused_with_the_range(old, new, path, fragments):
    text = MINIMAL.replace(old, new)
    assert text != MINIMAL
    p = only(text)
    assert p.path == path and p.line is not None
    for frag in fragments:
        assert frag in p.message, p.message


def test_the_line_of_a_refused_value_is_its_own():
    p = only(MINIMAL.replace("{voltage: 15 V}", "{voltage: 1e20 V}"))
    assert (p.line, p.column) == (4, 9)          # the key of the value
    assert str(p).startswith("t.yaml:4:9: supplies.psu.voltage: must be at most 120 V")


@pytest.mark.parametrize("value", ["1 us", "1 h", "0 s"])
def test_the_edges_of_a_range_are_accepted(value):
    scn = loads(MINIMAL.replace("after: 2 ms", f"after: {value}"))
    assert scn.boosters["east"].trip.t_after_s == U.parse_quantity(value, U.TIME)


def test_zero_is_refused_where_a_range_has_no_zero():
    p = only(MINIMAL.replace("{voltage: 15 V}", "{voltage: 15 V, off_time: 0 s}"))
    assert p.message.startswith('must be greater than 0 s, got "0 s" (zero); the range is '
                                '1 us to 1 h')


# ---------------------------------------------------------------- counts
TRAIN = """\
rolling_stock:
  coach: {length: 200 mm, axles: [20 mm, 180 mm]}
trains:
  t1:
    consist: [coach x COUNT]
    start: {section: main, at: 3.5 m, heading: b}
    route: [main]
    speed: 0.2 m/s
"""


def test_a_consist_of_a_million_million_coaches_is_refused_at_once():
    p = only(MINIMAL + TRAIN.replace("COUNT", "1000000000000"))
    assert p.path == "trains.t1.consist[0]"
    assert "'coach x 1000000000000': at most 1000 vehicles in a train" in p.message


def test_vehicles_per_train_add_up_over_entries():
    p = only(MINIMAL + TRAIN.replace("[coach x COUNT]", "[coach x 600, coach x 401]"))
    assert p.path == "trains.t1.consist" and p.message.startswith("1001 vehicles per train: "
                                                                  "at most 1000")


def test_vehicles_per_file_are_bounded():
    trains = "".join(f"  t{i}:\n    consist: [coach x 1000]\n    start: {{section: main, at: "
                     f"3.5 m, heading: b}}\n    route: [main]\n    speed: 0.2 m/s\n"
                     for i in range(11))
    text = MINIMAL + "rolling_stock:\n  coach: {length: 200 mm, axles: [20 mm, 180 mm]}\n" \
        "trains:\n" + trains
    p = only(text)
    assert p.path == "trains" and "11000 vehicles in all trains: at most 10000" in p.message


def test_axles_per_vehicle_and_name_length_are_bounded():
    axles = ", ".join(f"{i} mm" for i in range(65))
    p = only(MINIMAL + f"rolling_stock:\n  long: {{length: 200 mm, axles: [{axles}]}}\n")
    assert p.path == "rolling_stock.long.axles" and "expected 1 to 64 items, got 65" in p.message
    p = only(MINIMAL + f"    {'n' * 65}: {{length: 1 m}}\n")
    assert "is too long for a name: at most 64 characters" in p.message


def test_total_track_length_is_bounded():
    secs = "".join(f"    s{i}: {{length: 1 km}}\n" for i in range(101))
    p = only(MINIMAL + secs)
    assert p.path == "track.sections" and "add up to 101.004 km of track: at most 100 km" in p.message  # 101 km + 4 m


# ------------------------------------------------- shown in the reference and schema
def test_the_reference_shows_every_table_range_and_count_bound():
    text = README.read_text(encoding="utf-8")
    for heading, rec in S.REFERENCE_SECTIONS:
        assert f"### {heading}\n" in text, heading
        assert S.reference_table(rec) in text, f"the table of {heading} differs: regenerate " \
                                               f"it from sim.schema.reference_table"
    assert S.range_table() in text
    assert S.count_table() in text


def test_the_json_schema_carries_each_range():
    schema = S.json_schema()
    voltage = schema["properties"]["supplies"]["additionalProperties"]["properties"]["voltage"]
    ranged = voltage["anyOf"][0] if "anyOf" in voltage else voltage
    assert ranged["x-range"] == {"unit": "V", "min": 1.0, "max": 120.0, "zero": False,
                                 "why": S.RANGE_VOLTAGE.why}
    assert "1 V to 120 V" in ranged["description"]


def test_the_reference_tables_read_the_declared_kinds():
    # the value column of each key is its kind's own words (range included)
    text = README.read_text(encoding="utf-8")
    rows = re.findall(r"^\| `duration` \| ([^|]+) \|", text, re.M)
    assert rows == [S.TOP.fields["duration"].kind.doc] == ["a time (s), 1 us to 24 h"]
