"""Bad input: every mistake is a located ScenarioError problem, never another exception."""
from __future__ import annotations

import re
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sim import scenario as scenario_module
from sim.errors import Problem, ScenarioError
from sim.scenario import load, loads
from sim.yamlnodes import MAX_FILE_BYTES

BAD = Path(__file__).resolve().parent / "scenarios" / "bad"

MINIMAL = """\
format: railfault/1
duration: 10 s
supplies:
  psu: {voltage: 15 V}
boosters:
  east:
    supply: psu
    trip: {above: 5 A, after: 2 ms}
track:
  sections:
    main: {length: 4 m, feed: east}
"""


def problems(text: str, path: str = "t.yaml") -> tuple[Problem, ...]:
    with pytest.raises(ScenarioError) as info:
        loads(text, path)
    assert info.value.problems, "a ScenarioError carries at least one problem"
    return info.value.problems


def only(text: str) -> Problem:
    found = problems(text)
    assert len(found) == 1, [str(p) for p in found]
    return found[0]


def test_minimal_is_valid():
    assert loads(MINIMAL).boosters["east"].trip.t_after_s == 0.002


# ------------------------------------------------------------------ YAML level
def test_malformed_yaml_is_located():
    p = only(MINIMAL + "faults: [{at: 1 s, short: {section: main, at: 1 m}\n")
    assert p.message.startswith("not valid YAML")
    assert p.line == 13 and p.file == "t.yaml"


def test_bad_indentation():
    p = only("format: railfault/1\nduration: 10 s\n  supplies: x\n")
    assert "not valid YAML" in p.message and p.line == 3


def test_duplicate_key():
    text = MINIMAL.replace("    trip: {above", "    supply: psu\n    trip: {above")
    p = only(text)
    assert p.message == "duplicate key 'supply' (first at line 7)"
    assert (p.path, p.line, p.column) == ("boosters.east.supply", 8, 5)


def test_python_tag_is_refused_and_never_run(tmp_path):
    marker = tmp_path / "ran"
    text = MINIMAL.replace("duration: 10 s",
                           f"duration: !!python/object/apply:os.system [\"touch {marker}\"]")
    p = only(text)
    assert "the tag !!python/object/apply:os.system is not allowed" in p.message
    assert (p.path, p.line, p.column) == ("duration", 2, 11)
    assert not marker.exists()


def test_python_tag_fixture_file():
    with pytest.raises(ScenarioError) as info:
        load(BAD / "python-tag.yaml")
    (p,) = info.value.problems
    assert "!!python/object/apply:os.system" in p.message and p.line == 2


@pytest.mark.parametrize("value, shown", [
    ("!include other.yaml", "!include"),
    ("!!binary aGVsbG8=", "!!binary"),
    ("!!set {a, b}", "!!set"),
    ("!!python/name:os.system", "!!python/name:os.system"),
])
def test_other_tags_are_refused(value, shown):
    p = only(MINIMAL.replace("title", "") + f"title: {value}\n")
    assert f"the tag {shown} is not allowed" in p.message and p.path == "title"


def test_merge_keys_and_recursive_aliases_are_refused():
    p = only(MINIMAL + "x: &a {<<: {y: 1}}\n")
    assert "merge keys" in p.message
    p = only(MINIMAL + "x: &a [*a]\n")
    assert "an alias refers to a value that contains it" in p.message


def test_alias_expansion_is_bounded():
    text = "a: &a [x, x, x, x, x, x, x, x, x, x]\n"
    for i in range(1, 8):
        prev = chr(ord("a") + i - 1)
        name = chr(ord("a") + i)
        text += f"{name}: &{name} [" + ", ".join([f"*{prev}"] * 10) + "]\n"
    found = problems("format: railfault/1\n" + text)
    assert any("too many values" in p.message for p in found)


@pytest.mark.parametrize("depth", [41, 100_000])
def test_deep_nesting_is_refused_before_composing(depth):
    p = only("format: railfault/1\nx: " + "[" * depth + "]" * depth + "\n")
    assert p.message == "nested deeper than 40 levels" and p.line == 2


def test_control_character_is_located():
    p = only(MINIMAL + "title: a\x07b\n")
    assert "U+0007 is not allowed" in p.message and (p.line, p.column) == (12, 9)


def test_empty_file_and_not_a_mapping():
    assert "the file is empty" in only("").message
    assert "a scenario is a mapping" in only("- a\n- b\n").message


# ---------------------------------------------------------------- file level
def test_missing_file(tmp_path):
    with pytest.raises(ScenarioError) as info:
        load(tmp_path / "nope.yaml")
    (p,) = info.value.problems
    assert p.message == "no such file" and p.file.endswith("nope.yaml")


def test_not_utf8_names_the_byte_offset(tmp_path):
    raw = MINIMAL.encode()
    raw = raw.replace(b"title", b"") + b"title: caf\xe9\n"   # Latin-1, not UTF-8
    offset = raw.index(b"\xe9")
    f = tmp_path / "latin1.yaml"
    f.write_bytes(raw)
    with pytest.raises(ScenarioError) as info:
        load(f)
    (p,) = info.value.problems
    assert f"byte offset {offset}" in p.message and "not UTF-8" in p.message
    assert "0xe9" in p.message
    assert (p.line, p.column) == (12, 11)


def test_over_the_size_limit(tmp_path):
    assert MAX_FILE_BYTES == 2 * 1024 * 1024          # 2 MiB, the stated limit
    f = tmp_path / "big.yaml"
    f.write_bytes(MINIMAL.encode() + b"#" * MAX_FILE_BYTES)
    with pytest.raises(ScenarioError) as info:
        load(f)
    (p,) = info.value.problems
    assert "larger than the limit of 2097152 bytes (2 MiB)" in p.message
    with pytest.raises(ScenarioError) as info:
        loads(MINIMAL + "#" * MAX_FILE_BYTES)
    assert "2 MiB" in info.value.problems[0].message


def test_a_file_just_under_the_limit_loads(tmp_path):
    body = MINIMAL.encode()
    f = tmp_path / "fits.yaml"
    f.write_bytes(body + b"#" * (MAX_FILE_BYTES - len(body) - 1) + b"\n")
    assert load(f).duration_s == 10.0


# -------------------------------------------------------------- format and keys
def test_format_required_and_checked():
    p = only(MINIMAL.replace("format: railfault/1\n", ""))
    assert "required key 'format' is missing" in p.message
    p = only(MINIMAL.replace("railfault/1", "railfault/2"))
    assert p.message == ('unsupported format "railfault/2": this version of railfault reads '
                         '`format: railfault/1` only')
    assert (p.path, p.line) == ("format", 1)


def test_unknown_key_with_suggestion():
    p = only(MINIMAL.replace("    trip:", "    output_resistence: 0.04 ohm\n    trip:"))
    assert p.message == "unknown key 'output_resistence'; did you mean 'output_resistance'?"
    assert (p.path, p.line, p.column) == ("boosters.east.output_resistence", 8, 5)
    p = only(MINIMAL + "rolling_stok: {}\n")
    assert "did you mean 'rolling_stock'?" in p.message


def test_unknown_key_without_a_near_miss_lists_the_keys():
    p = only(MINIMAL.replace("{voltage: 15 V}", "{voltage: 15 V, zzz: 1}"))
    assert p.message.startswith("unknown key 'zzz' (allowed here: voltage, resistance,")


def test_missing_required_keys_are_located_at_their_record():
    p = only(MINIMAL.replace("    supply: psu\n", ""))
    assert p.message == "required key 'supply' is missing (the name of a supply)"
    assert (p.path, p.line) == ("boosters.east", 6)
    found = problems(MINIMAL + "reversers:\n  rv: {feed: east}\n")
    assert {p.message for p in found} == {
        "required key 'sense' is missing (a mapping (reversing detection and sensing))",
        "required key 'swap_time' is missing (a time (s), 0 or 1 us to 1 h)"}
    p = only(MINIMAL.replace("duration: 10 s", "duration:"))
    assert p.message.startswith("required key 'duration' has no value")


def test_names_must_not_hold_dots_or_spaces():
    p = only(MINIMAL + "    east.main: {length: 2 m}\n")
    assert p.path == "track.sections.east.main" and "is not usable as a name" in p.message


@pytest.mark.parametrize("old, new, path, message", [
    ("boosters:\n  east:", "boosters: [east]\nx:\n  east:", "boosters",
     "expected a mapping of names to boosters, got a list"),
    ("duration: 10 s", "duration: [10 s]", "duration", "expected a time (s), got a list"),
    ("duration: 10 s", "duration: 10 s\nseed: seven", "seed",
     'expected an integer (without a unit), got "seven"'),
    ("duration: 10 s", "duration: 10 s\nseed: 1.5", "seed", "expected an integer, got 1.5"),
    ("{voltage: 15 V}", "15 V", "supplies.psu", 'expected a mapping (supply), got "15 V"'),
    ("supply: psu", "supply: psu\n    reverse_on_short: 1", "boosters.east.reverse_on_short",
     "expected true or false, got 1"),
])
def test_wrong_type(old, new, path, message):
    found = [p for p in problems(MINIMAL.replace(old, new)) if p.path == path]
    assert found and found[0].message == message


def test_wrong_dimension():
    p = only(MINIMAL.replace("after: 2 ms", "after: 2 A"))
    assert p.message.startswith('expected a time (s), got "2 A"')
    assert (p.path, p.line) == ("boosters.east.trip.after", 8)
    assert str(p).startswith("t.yaml:8:")
    assert "boosters.east.trip.after" in str(p)


@pytest.mark.parametrize("old, new, message", [
    ("after: 2 ms", "after: 2", 'expected a time (s), got 2: write the unit, e.g. "2 s"'),
    ("after: 2 ms", "after: 2 blorps", 'unknown unit "blorps"'),
    ("after: 2 ms", "after: 14 AWG", '(a wire gauge)'),
    ("after: 2 ms", "after: 2 ms ms ms s m", "expected a time (s)"),
    ("after: 2 ms", "after: 9**9**9 s", "cannot read the unit"),
])
def test_unusable_quantities(old, new, message):
    p = only(MINIMAL.replace(old, new))
    assert message in p.message and p.path == "boosters.east.trip.after"


@pytest.mark.parametrize("old, new, path, message", [
    ("length: 4 m", "length: 0 m", "track.sections.main.length",
     'must be greater than 0 m, got "0 m" (zero)'),
    ("length: 4 m", "length: -4 m", "track.sections.main.length",
     'must be greater than 0 m, got "-4 m" (negative)'),
    ("duration: 10 s", "duration: 0 s", "duration", 'must be greater than 0 s, got "0 s" (zero)'),
    ("after: 2 ms", "after: -2 ms", "boosters.east.trip.after",
     'must not be negative, got "-2 ms"'),
    ("15 V", "-15 V", "supplies.psu.voltage", "(negative)"),
])
def test_zero_and_negative(old, new, path, message):
    p = only(MINIMAL.replace(old, new))
    assert p.path == path and message in p.message


def test_zero_allowed_where_documented():
    # trip.after, dead_time, swap_time, sense.after and reverse_after may be 0
    # (scenarios/README.md lists them as ">= 0 (0 allowed)").
    text = MINIMAL.replace("after: 2 ms", "after: 0 s") + """\
reversers:
  rv: {feed: east, sense: {above: 1 A, after: 0 s}, swap_time: 0 s, dead_time: 0 ms}
"""
    scn = loads(text)
    assert scn.boosters["east"].trip.t_after_s == 0.0
    assert scn.reversers["rv"].t_dead_s == 0.0 and scn.reversers["rv"].t_swap_s == 0.0


@pytest.mark.parametrize("old, new, path, values", [
    ("supply: psu", "supply: psu\n    phase: upside-down", "boosters.east.phase",
     "normal, inverted"),
    ("{voltage: 15 V}", "{voltage: 15 V, on_limit: fold}", "supplies.psu.on_limit",
     "constant-current, hiccup, latch"),
    ("feed: east}", "feed: east, leads: crossed}", "track.sections.main.leads",
     "normal, swapped"),
    ("supply: psu", "supply: psu\n    restart: {policy: forever}",
     "boosters.east.restart.policy", "manual, retry, backoff"),
    ("supply: psu", "supply: psu\n    thermal: {rated: 2 A, tau: 10 s, law: cubic}",
     "boosters.east.thermal.law", "square, linear"),
    ("after: 2 ms}", "after: 2 ms, curve: iec-inverse}", "boosters.east.trip.curve",
     "iec-standard-inverse, iec-very-inverse"),
])
def test_enumerations_list_the_allowed_values(old, new, path, values):
    p = only(MINIMAL.replace(old, new))
    assert p.path == path and f"expected one of {values}" in p.message


def test_yaml_booleans_in_an_enumeration_get_a_hint():
    p = only(MINIMAL.replace("feed: east}", "feed: east, leads: no}"))
    assert "quote the word" in p.message


# ---------------------------------------------------------------- references
def test_missing_reference_with_suggestion():
    p = only(MINIMAL.replace("supply: psu", "supply: pus"))
    assert p.message == "'pus' is not defined: expected the name of a supply; did you mean 'psu'?"
    assert (p.path, p.line) == ("boosters.east.supply", 7)


def test_reference_of_the_wrong_kind():
    p = only(MINIMAL.replace("feed: east}", "feed: psu}"))
    assert p.message == "'psu' is a supply, expected a booster, breaker or reverser"


def test_feed_cycle_is_reported_by_names():
    with pytest.raises(ScenarioError) as info:
        load(BAD / "feed-cycle.yaml")
    (p,) = info.value.problems
    assert "feed cycle cb-a <- cb-b <- cb-a" in p.message
    assert "'cb-a' is fed by 'cb-b', 'cb-b' is fed by 'cb-a'" in p.message
    assert (p.path, p.line) == ("breakers.cb-a.feed", 8)


def test_three_device_cycle_reported_once():
    text = MINIMAL + """\
breakers:
  a: {feed: b}
  b: {feed: c}
  c: {feed: a}
  d: {feed: a}
"""
    cycles = [p for p in problems(text) if "feed cycle" in p.message]
    assert len(cycles) == 1 and "a <- b <- c <- a" in cycles[0].message


def test_duplicate_names_across_tables():
    text = MINIMAL + "    east: {length: 2 m}\n"
    p = only(text)
    assert p.message.startswith("the name 'east' is already used by the booster at line 6")
    assert p.path == "track.sections.east"


@pytest.mark.parametrize("extra, path, message", [
    ("  joints:\n    - {ends: [main.b, nowhere.a]}\n", "track.joints[0].ends[1]",
     "'nowhere' in 'nowhere.a' is not a section of this file"),
    ("  joints:\n    - {ends: [main.b, main.b]}\n", "track.joints[0].ends",
     "a joint joins two different ends"),
    ("  joints:\n    - {ends: [main.b, main.c]}\n", "track.joints[0].ends[1]",
     "expected a section end like 'east-main.b'"),
    ("faults:\n  - {at: 1 s, short: {section: main, at: 5 m}}\n", "faults[0].short.at",
     "at 5 m is beyond the length of section 'main' (4 m)"),
    ("faults:\n  - {at: 1 s, open: {section: main, feeder: 1}}\n", "faults[0].open.feeder",
     "feeder 1 does not exist: section 'main' has 1 feeder(s)"),
    ("faults:\n  - {at: 11 s, short: {section: main, at: 1 m}}\n", "faults[0].at",
     "after the end of the run"),
    ("faults:\n  - {at: 1 s}\n", "faults[0]", "give exactly one of short, open"),
    ("faults:\n  - {at: 1 s, open: {section: main, feeder: 0}, lasts: 1 s}\n",
     "faults[0].lasts", "'lasts' applies only to a short"),
    ("actions:\n  - {at: 1 s, reset: main}\n", "actions[0].reset",
     "'main' is a section, expected a supply, booster, breaker or reverser"),
])
def test_track_fault_and_action_references(extra, path, message):
    text = MINIMAL + extra if not extra.startswith("  joints") else MINIMAL + extra
    found = [p for p in problems(text) if p.path == path]
    assert found and message in found[0].message, [str(p) for p in problems(text)]


TRAIN = """\
rolling_stock:
  loco: {length: 150 mm, axles: [20 mm, 130 mm], pickup: all, draw: 0.5 A}
trains:
  t: {consist: [loco], start: {section: main, at: 1 m, heading: b}, route: [main],
      speed: 0.3 m/s}
"""


@pytest.mark.parametrize("old, new, path, message", [
    ("consist: [loco]", "consist: [loco, hoper x 3]", "trains.t.consist[1]",
     "'hoper' is not defined: expected the name of a vehicle"),
    ("consist: [loco]", "consist: [loco x 0]", "trains.t.consist[0]",
     "the count must be at least 1"),
    ("route: [main]", "route: [main, mian]", "trains.t.route[1]",
     "did you mean 'main'?"),
    ("at: 1 m, heading", "at: 4.5 m, heading", "trains.t.start.at",
     "at 4.5 m is beyond the length of section 'main' (4 m)"),
    ("heading: b", "heading: c", "trains.t.start.heading", "expected one of a, b"),
    ("axles: [20 mm, 130 mm]", "axles: [20 mm, 160 mm]", "rolling_stock.loco.axles[1]",
     "axle at 160 mm is beyond the vehicle's length of 150 mm"),
    ("axles: [20 mm, 130 mm]", "axles: [130 mm, 20 mm]", "rolling_stock.loco.axles",
     "axle positions must increase"),
    ("pickup: all", "pickup: [0, 2]", "rolling_stock.loco.pickup[1]",
     "axle index 2 does not exist"),
    ("pickup: all", "pickup: none", "rolling_stock.loco.draw",
     "a vehicle that draws current needs pickup"),
])
def test_rolling_stock_and_train_rules(old, new, path, message):
    text = MINIMAL + TRAIN.replace(old, new)
    found = [p for p in problems(text) if p.path == path]
    assert found and message in found[0].message, [str(p) for p in problems(text)]


@pytest.mark.parametrize("extra, message", [
    ("    restart: {policy: manual, tries: 3}\n", "'tries' does not apply to policy manual"),
    ("    restart: {policy: retry, cap: 3 s}\n", "'cap' does not apply to policy retry"),
    ("    restart: {policy: backoff, first: 2 s, cap: 1 s}\n", "must not be below first"),
    ("    thermal: {rated: 2 A, tau: 10 s, trip_at: 1.0, resume_at: 1.1}\n",
     "must be below trip_at"),
    ("    reverse: {swap_time: 1 ms}\n", "apply only with reverse_on_short: true"),
    ("    wire: {wire: 14 AWG}\n", "a wire needs the length of the run"),
    ("    wire: {wire: 41 AWG, length: 1 m}\n", "from 0000 to 40 AWG"),
    ("    sense: {phase: 1.0}\n", "must be less than 1"),
])
def test_rules_between_keys(extra, message):
    text = MINIMAL.replace("    supply: psu\n", "    supply: psu\n" + extra)
    found = problems(text)
    assert any(message in p.message for p in found), [str(p) for p in found]


@pytest.mark.parametrize("vary, message", [
    ("  boosters.east.trip.afterr: [1 ms]", "is not in this file; did you mean 'after'?"),
    ("  boosters.west.trip.after: [1 ms]", "'boosters.west' is not in this file"),
    ("  boosters.east.phase: [normal]", "vary samples quantities and numbers only"),
    ("  boosters.east.trip.after: {uniform: [2 ms, 1 ms]}", "needs low below high"),
    ("  boosters.east.trip.after: {uniform: [1 A, 2 A]}", 'expected a time (s), got "1 A"'),
    ("  boosters.east.trip.after: {normal: [1 ms, 0 ms]}", "must be greater than 0 s"),
    ("  boosters.east.trip.after: uniform", "the word 'uniform' alone samples a sense phase"),
    ("  boosters.east.trip.after: {gauss: [1 ms, 1 ms]}", "unknown sampler 'gauss'"),
    ("  boosters..east: [1]", "not a key path"),
])
def test_vary_is_validated(vary, message):
    found = problems(MINIMAL + "vary:\n" + vary + "\n")
    assert any(message in p.message for p in found), [str(p) for p in found]


# -------------------------------------------------------------- all of them
def test_ten_mistakes_are_all_reported_with_lines():
    path = BAD / "ten-mistakes.yaml"
    expected = [n for n, line in enumerate(path.read_text().splitlines(), 1)
                if re.search(r"# mistake \d+", line)]
    assert len(expected) == 10
    with pytest.raises(ScenarioError) as info:
        load(path)
    found = info.value.problems
    assert [p.line for p in found] == expected, "\n".join(map(str, found))
    assert all(p.file == str(path) and p.column is not None for p in found)
    messages = "\n".join(p.message for p in found)
    for needle in ('expected a voltage (V), got "16 A"', "did you mean 'output_resistance'?",
                   'got "sideways"', 'must not be negative, got "-2 ms"',
                   'must be greater than 0 m, got "0 m"', "'nowhere' is not defined",
                   'got "two"', 'expected a speed (m/s), got "0.3 m"',
                   "did you mean 'main'?", "'psu-x' is not defined"):
        assert needle in messages
    text = str(info.value)
    assert text.count("\n") == 9 and "ten-mistakes.yaml:7:" in text


# --------------------------------------------------------- nothing else escapes
def test_a_crash_of_the_loader_stays_a_defect_with_where_it_was(monkeypatch):
    # a defect of ours is not a mistake of the file: it is not dressed as a
    # ScenarioError (which the CLI would report as bad input, exit 2); it keeps its
    # type and carries a note of where the loader was
    def boom(self):
        self.doc.current = ("boosters", "east")
        raise ZeroDivisionError("division by zero")

    monkeypatch.setattr(scenario_module._Checker, "section_rules", boom)
    with pytest.raises(ZeroDivisionError) as info:
        loads(MINIMAL, "x.yaml")
    assert info.value.__notes__ == ["railfault: while loading x.yaml at boosters.east (line 6)"]


def test_non_text_argument():
    with pytest.raises(ScenarioError):
        loads(b"format: railfault/1")  # type: ignore[arg-type]


_yamlish = st.text(alphabet=st.sampled_from(list("ab:-{}[], \n\t'\"!&*#|>%@`?0123456789.ms")),
                   max_size=80)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_yamlish)
def test_only_scenario_errors_escape(text):
    try:
        loads("format: railfault/1\n" + text)
    except ScenarioError as exc:
        assert all(isinstance(p, Problem) for p in exc.problems)


@settings(max_examples=200, deadline=None)
@given(st.integers(min_value=0, max_value=len(MINIMAL) - 1), st.text(max_size=6))
def test_mutated_minimal_only_scenario_errors(pos, junk):
    try:
        loads(MINIMAL[:pos] + junk + MINIMAL[pos:])
    except ScenarioError as exc:
        assert exc.problems


@pytest.mark.parametrize("value, path, message", [
    # "amps" is read as a speed by the units library (attometre per second): not
    # "(a speed)" alone, but what was meant
    ("14 amps", "supplies.psu.current_limit",
     'expected a current (A), got "14 amps": "amps" reads as a speed, not as a current; '
     'did you mean "14 A"?'),
    # an unknown capitalised unit: its lower-case spelling is a resistance
    ("0.05 Ohm", "supplies.psu.resistance",
     'expected a resistance (ohm), got "0.05 Ohm": unknown unit "Ohm"; did you mean '
     '"0.05 ohm"?'),
    # a known unit of another dimension is not lower-cased into a guess (mA is not "ma")
    ("1 mA", "boosters.east.trip.after", 'expected a time (s), got "1 mA" (a current)'),
])
def test_unit_suggestions(value, path, message):
    key = path.split(".")[-1]
    text = {"current_limit": MINIMAL.replace("{voltage: 15 V}",
                                             f"{{voltage: 15 V, current_limit: {value}}}"),
            "resistance": MINIMAL.replace("{voltage: 15 V}",
                                          f"{{voltage: 15 V, resistance: {value}}}"),
            "after": MINIMAL.replace("after: 2 ms", f"after: {value}")}[key]
    p = only(text)
    assert (p.path, p.message) == (path, message)


def test_every_error_block_is_reported_at_once():
    # three mistakes in one file: a vary path naming a train that is not there, and two
    # bad cases (an unknown key, a time given for a current). All three in one run, the
    # base one once (the cases repeat it "in case ..." and those copies are left out).
    text = MINIMAL + """\
cases:
  slow: {boosters.east.trip.aftr: 6 ms}
  small: {supplies.psu.current_limit: 5 ms}
vary:
  trains.limted.speed: {normal: [0.4 m/s, 0.05 m/s]}
"""
    found = problems(text)
    assert [(p.path, p.line) for p in found] == [
        ("cases.slow.boosters.east.trip.aftr", 13),
        ("cases.small.supplies.psu.current_limit", 14),
        ("vary.trains.limted.speed", 16)]
    assert "did you mean 'after'" in found[0].message
    assert found[1].message == 'expected a current (A), got "5 ms" (a time)'
    assert not any(p.message.startswith("in case") for p in found)
