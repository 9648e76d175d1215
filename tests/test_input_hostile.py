"""Hostile files: control characters shown escaped everywhere (JSON exact), alias bombs
refused while reading, names anchored at their end, a missing top-level key located."""
from __future__ import annotations

import json
import signal

import pytest

from sim import yamlnodes
from sim.cli import main
from sim.errors import ScenarioError
from sim.scenario import load, loads
from sim.textfmt import escape, escape_lines, table
from tests.test_scenario_errors import MINIMAL  # the smallest useful file


#: Erase the screen, home the cursor, print a green forged verdict, reorder the line.
FORGERY = "\x1b[2J\x1b[1;1H\x1b[32mVerdict: PASS\x1b[0m\r\u202e"


# ------------------------------------------------------------------ escaping
@pytest.mark.parametrize("raw, shown", [
    ("east\x1b[2J", "east\\x1b[2J"),
    ("a\nb\rc\td", "a\\nb\\rc\\td"),
    ("\x00\x07\x7f\x9b", "\\x00\\x07\\x7f\\x9b"),          # C0, DEL and the C1 CSI
    ("left\u202eright\u2066x\u200f", "left\\u202eright\\u2066x\\u200f"),  # UAX #9 controls
    ("line\u2028sep", "line\\u2028sep"),
    ("ohm Ω, µs, café", "ohm Ω, µs, café"),                # printable text stays as it is
])
def test_escape_shows_every_control_character(raw, shown):
    assert escape(raw) == shown
    assert escape(escape(raw)) == shown                    # escaping twice changes nothing


def test_escape_lines_keeps_the_line_breaks_only():
    assert escape_lines("a\x1b[1A\nb\r\n") == "a\\x1b[1A\nb\\r\n"


def test_table_cells_are_escaped_and_stay_aligned():
    text = table(["name", "x"], [["ev\x1b[2Kil\nname", "1"], ["ok", "2"]])
    assert "\x1b" not in text and "ev\\x1b[2Kil\\nname" in text
    widths = {len(line.split("  ")[0]) for line in text.splitlines()[2:]}
    assert len(text.splitlines()) == 4 and len(widths) == 2


def _write(tmp_path, text: str, name: str = "s.yaml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return str(path)


def test_a_forged_title_is_shown_escaped_by_check_and_run(tmp_path, capsys):
    path = _write(tmp_path, MINIMAL + f"title: {json.dumps(FORGERY)}\n")
    for cmd in ("check", "run", "faultmap"):
        assert main([cmd, path]) in (0, 1)
        out = capsys.readouterr().out
        assert "\x1b" not in out and "\r" not in out and "\u202e" not in out, cmd
        assert "\\x1b[2J\\x1b[1;1H\\x1b[32mVerdict: PASS\\x1b[0m\\r\\u202e" in out, cmd


def test_json_keeps_the_title_exact(tmp_path, capsys):
    path = _write(tmp_path, MINIMAL + f"title: {json.dumps(FORGERY)}\n")
    assert main(["check", path, "--json"]) == 0
    out = capsys.readouterr().out
    assert "\x1b" not in out                               # the JSON encoder escapes it
    assert json.loads(out)["scenario"]["title"] == FORGERY  # and the value is exact


def test_a_forged_name_in_an_error_is_shown_escaped(tmp_path, capsys):
    text = MINIMAL.replace("  east:\n", f"  {json.dumps('east' + FORGERY)}:\n")
    path = _write(tmp_path, text)
    assert main(["check", path]) == 2
    err = capsys.readouterr().err
    assert "\x1b" not in err and "\r" not in err and "\u202e" not in err
    assert "boosters.east\\x1b[2J" in err and "is not usable as a name" in err
    assert len(err.splitlines()) == 3         # headline and two problems, one line each


def test_a_forged_argument_is_shown_escaped(capsys):
    assert main(["check", "x.yaml", "--step", "1\x1b[2J m"]) == 2
    assert main(["check", "x.yaml", "--bogus\x1b[2J"]) == 2
    err = capsys.readouterr().err
    assert "\x1b" not in err
    assert 'cannot read the unit "\\x1b[2J m"' in err
    assert "unrecognized arguments: --bogus\\x1b[2J" in err


def test_a_long_value_is_cut_in_messages():
    p = problems(MINIMAL.replace("supply: psu\n", f"supply: psu\n    phase: {'w' * 3000}\n"))[0]
    assert p.path == "boosters.east.phase"
    assert len(p.message) < 200 and f'got "{"w" * 60}... (3000 characters)"' in p.message


# ---------------------------------------------------------------- alias bombs
def _bomb(aliases: int) -> str:
    """A ten-value list, then a list of ``aliases`` aliases to it (about 4 bytes each)."""
    return ("format: railfault/1\nx: &a [1, 2, 3, 4, 5, 6, 7, 8, 9, 10]\ny: ["
            + ", ".join(["*a"] * aliases) + "]\n")


def test_an_alias_bomb_is_refused_while_reading(monkeypatch):
    text = _bomb(250_000)                          # a 1 MB file: 2.75 million values
    assert len(text) > 1_000_000
    # the composer (which would build the node tree) is never reached ...
    monkeypatch.setattr(yamlnodes._Loader, "get_single_node",
                        lambda self: pytest.fail("the composer was reached"))
    found = problems(text)
    (p,) = found
    assert p.message == ("too many values (more than 200000 once every alias is expanded): "
                         "use fewer aliases")
    # ... and reading stopped at the alias that crossed the bound: 11 values per alias,
    # 11 before them, so the alias 18,181 (1-based) crosses 200,000 at column
    # len("y: [") + 18180 * len("*a, ") + 1
    assert (p.line, p.column) == (3, 4 + 18_180 * 4 + 1)


def test_an_alias_bomb_is_refused_in_under_a_second(tmp_path):
    # a guard against the minute it took before (measured here: about 0.03 s)
    path = _write(tmp_path, _bomb(250_000))

    def late(signum, frame):
        raise TimeoutError("the alias bomb took more than a second")

    old = signal.signal(signal.SIGALRM, late)
    signal.setitimer(signal.ITIMER_REAL, 1.0)
    try:
        with pytest.raises(ScenarioError):
            load(path)
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


def test_one_long_text_used_through_many_aliases_is_bounded():
    # 400,000 characters used 1,000 times would be 400 million characters to check
    text = MINIMAL + f"title: &t {'x' * 400_000}\nz: [" + ", ".join(["*t"] * 1000) + "]\n"
    (p,) = problems(text)
    assert p.message.startswith("too much text (more than 2097152 characters once every "
                                "alias is expanded)")


def test_a_file_without_aliases_is_counted_the_same_way():
    text = "format: railfault/1\nx: [" + ", ".join(["1"] * 200_001) + "]\n"
    (p,) = problems(text)
    assert p.message == "too many values (more than 200000)"


# -------------------------------------------------------------- name anchoring
@pytest.mark.parametrize("old, new, path", [
    ("    main: {length: 4 m, feed: east}", '    "main\\n": {length: 4 m, feed: east}',
     "track.sections.main\n"),
    ("  east:\n", '  "east\\n":\n', "boosters.east\n"),
])
def test_a_name_ending_in_a_newline_is_refused(old, new, path):
    found = problems(MINIMAL.replace(old, new))
    p = next(p for p in found if p.path == path)
    assert "is not usable as a name" in p.message


def test_a_joint_end_ending_in_a_newline_is_refused():
    text = MINIMAL + '  joints:\n    - {ends: ["main.b\\n", main.a], gaps: none}\n'
    (p,) = problems(text)
    assert p.path == "track.joints[0].ends[0]" and "a section end like" in p.message


def test_a_consist_entry_ending_in_a_newline_is_read_without_it():
    text = MINIMAL + ("rolling_stock:\n  c: {length: 200 mm, axles: [20 mm, 180 mm]}\n"
                      "trains:\n  t: {consist: [\"c x 2\\n\"], start: {section: main, at: 3 m,"
                      " heading: b}, route: [main], speed: 0.1 m/s}\n")
    assert loads(text).trains["t"].consist == ("c", "c")   # white space around an entry


# ------------------------------------------------------- missing top-level keys
def test_a_missing_top_level_key_is_located_at_the_document():
    found = problems("# a comment\n\nformat: railfault/1\nseed: 1\n")
    assert {p.message.split(" (")[0] for p in found} == {
        "required key 'duration' is missing", "required key 'supplies' is missing",
        "required key 'boosters' is missing", "required key 'track' is missing"}
    assert {(p.line, p.column) for p in found} == {(3, 1)}   # the document's first key
    assert all(str(p).startswith("t.yaml:3:1: ") for p in found)


def problems(text: str):
    with pytest.raises(ScenarioError) as info:
        loads(text, "t.yaml")
    return info.value.problems
