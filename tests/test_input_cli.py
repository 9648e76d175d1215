"""Output, paths and exit codes: 0 pass, 1 fail, 2 unusable input (with the reason), 3 a
defect of railfault, whatever the flags; -o refused where it cannot or must not write; a
closed pipe keeps the verdict's status; a FIFO is refused instead of blocking."""
from __future__ import annotations

import io
import os
import subprocess
import sys
from pathlib import Path

import pytest

from sim import scenario as scenario_module
from sim.cli import main

ROOT = Path(__file__).resolve().parents[1]
PASSING = ROOT / "scenarios" / "cinder-ridge.yaml"                  # check and run: pass
FAILING = ROOT / "tests" / "scenarios" / "run" / "fight.yaml"      # check and run: fail
BAD = ROOT / "tests" / "scenarios" / "bad" / "ten-mistakes.yaml"   # unusable input


def cli(*args: str, cwd=ROOT, **kw) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "sim.cli", *args], capture_output=True,
                          text=True, cwd=cwd, timeout=120, **kw)


# --------------------------------------------------------------- exit codes
FLAGS = ([], ["--json"], ["-o", "{out}"], ["--json", "-o", "{out}"])


@pytest.mark.parametrize("flags", FLAGS, ids=lambda f: " ".join(f) or "plain")
@pytest.mark.parametrize("cmd", ["check", "run"])
def test_exit_codes_whatever_the_flags(cmd, flags, tmp_path, capsys):
    out = str(tmp_path / "report")
    args = [a.replace("{out}", out) for a in flags]
    assert main([cmd, str(PASSING), *args]) == 0
    assert main([cmd, str(FAILING), *args]) == 1
    assert main([cmd, str(BAD), *args]) == 2
    captured = capsys.readouterr()
    assert "ten-mistakes.yaml:7:9: supplies.psu.voltage" in captured.err


@pytest.mark.parametrize("flags", FLAGS, ids=lambda f: " ".join(f) or "plain")
def test_a_defect_is_exit_3_whatever_the_flags(flags, tmp_path, monkeypatch, capsys):
    out = tmp_path / "report"
    args = [a.replace("{out}", str(out)) for a in flags]

    def broken(*a, **k):
        raise RuntimeError("a defect planted by the test")

    monkeypatch.setattr("sim.api.check", broken)
    assert main(["check", str(PASSING), *args]) == 3
    err = capsys.readouterr().err
    assert "internal error (RuntimeError: a defect planted by the test)" in err
    assert "Traceback" not in err and not out.exists()
    monkeypatch.setenv("RAILFAULT_DEBUG", "1")
    assert main(["check", str(PASSING), *args]) == 3          # the traceback, still 3
    err = capsys.readouterr().err
    assert "Traceback (most recent call last)" in err and "def broken" not in err
    assert "RuntimeError: a defect planted by the test" in err


def test_a_crash_of_the_loader_is_exit_3_not_an_input_error(monkeypatch, capsys):
    def boom(self):
        raise ZeroDivisionError("planted")

    monkeypatch.setattr(scenario_module._Checker, "section_rules", boom)
    assert main(["check", str(PASSING)]) == 3
    err = capsys.readouterr().err
    assert "internal error (ZeroDivisionError: planted)" in err
    assert "could not be used" not in err


def test_an_option_out_of_its_range_is_exit_2_with_the_range(capsys):
    assert main(["check", str(PASSING), "--step", "1 nm"]) == 2
    assert main(["run", str(PASSING), "--until", "1e9 s"]) == 2
    err = capsys.readouterr().err
    assert "the range is 1 cm to 1 km" in err and "must be at most 24 h" in err


# ------------------------------------------------------------------ -o
def test_output_to_a_directory_is_exit_2_with_the_reason(tmp_path, capsys):
    assert main(["check", str(PASSING), "-o", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert f"cannot write the report to {tmp_path}: it is a directory" in err
    assert list(tmp_path.iterdir()) == []


def test_output_under_a_file_is_exit_2_with_the_reason(tmp_path, capsys):
    afile = tmp_path / "notes.txt"
    afile.write_text("keep me\n")
    assert main(["run", str(PASSING), "-o", str(afile / "deeper" / "r.txt")]) == 2
    err = capsys.readouterr().err
    assert f"{afile} is a file, not a folder" in err
    assert afile.read_text() == "keep me\n"


def test_output_where_nothing_can_be_written_is_exit_2(tmp_path, capsys, monkeypatch):
    # no write permission: refused before any work (os.access), or - when the check
    # passes but the write fails - at the write, and nothing is left behind
    monkeypatch.setattr(os, "access", lambda path, mode: False)
    assert main(["check", str(PASSING), "-o", str(tmp_path / "r.txt")]) == 2
    assert f"no permission to write in {tmp_path}" in capsys.readouterr().err
    monkeypatch.undo()

    def denied(*a, **k):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr("tempfile.mkstemp", denied)
    assert main(["check", str(PASSING), "-o", str(tmp_path / "r.txt")]) == 2
    assert "cannot write the report to" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []


def test_output_to_a_device_is_refused(capsys):
    assert main(["schema", "-o", os.devnull]) == 2
    assert "it is a character device, not a regular file" in capsys.readouterr().err


@pytest.mark.parametrize("how", ["same path", "relative path", "symbolic link", "hard link"])
def test_output_naming_the_scenario_itself_is_refused(how, tmp_path, capsys, monkeypatch):
    scn = tmp_path / "layout.yaml"
    scn.write_bytes(PASSING.read_bytes())
    before = scn.read_bytes()
    target = {"same path": str(scn), "relative path": "layout.yaml",
              "symbolic link": str(tmp_path / "link.yaml"),
              "hard link": str(tmp_path / "hard.yaml")}[how]
    if how == "symbolic link":
        os.symlink(scn, target)
    if how == "hard link":
        os.link(scn, target)
    monkeypatch.chdir(tmp_path)
    for cmd in ("check", "run", "faultmap"):
        assert main([cmd, str(scn), "-o", target]) == 2
        assert "it is the scenario file itself, which the report would overwrite" in \
            capsys.readouterr().err
    assert scn.read_bytes() == before


def test_output_is_written_whole(tmp_path):
    out = tmp_path / "new" / "folder" / "r.json"          # missing folders are made
    assert main(["check", str(PASSING), "--json", "-o", str(out)]) == 0
    assert out.read_text(encoding="utf-8").startswith('{\n  "format": "railfault-check/1"')
    assert [p.name for p in out.parent.iterdir()] == ["r.json"]   # no temporary left


# ------------------------------------------------------------- a closed pipe
class _ClosedPipe(io.StringIO):
    def write(self, s):
        raise BrokenPipeError(32, "Broken pipe")


@pytest.mark.parametrize("cmd, path, code", [("run", FAILING, 1), ("run", PASSING, 0),
                                             ("check", FAILING, 1), ("check", PASSING, 0)])
def test_a_closed_pipe_keeps_the_verdicts_status(cmd, path, code, monkeypatch):
    monkeypatch.setattr(sys, "stdout", _ClosedPipe())
    assert main([cmd, str(path)]) == code


def test_run_into_a_closed_pipe_exits_with_the_verdict():
    # `railfault run FAILING | true`: the reader has gone before railfault writes
    for path, code in ((FAILING, 1), (PASSING, 0)):
        read_end, write_end = os.pipe()
        os.close(read_end)
        try:
            p = subprocess.run([sys.executable, "-m", "sim.cli", "run", str(path)],
                               stdout=write_end, stderr=subprocess.PIPE, cwd=ROOT, timeout=120)
        finally:
            os.close(write_end)
        assert p.returncode == code, p.stderr
        assert b"Exception ignored" not in p.stderr and b"Traceback" not in p.stderr


# ------------------------------------------------------- not a regular file
def test_a_fifo_as_the_scenario_is_refused_not_waited_on(tmp_path):
    fifo = tmp_path / "layout.yaml"
    os.mkfifo(fifo)
    p = cli("check", str(fifo))         # before: blocked for ever (here: the timeout)
    assert p.returncode == 2
    assert f"{fifo}: is a named pipe (FIFO), not a regular file" in p.stderr


@pytest.mark.parametrize("path, what", [("/dev/zero", "a character device"),
                                        ("/tmp", "a directory")])
def test_other_non_regular_files_are_refused(path, what, capsys):
    if not os.path.exists(path):
        pytest.skip(f"{path} does not exist here")
    assert main(["check", path]) == 2
    assert f"{what}" in capsys.readouterr().err


# --------------------------------------------------------------- --until
RACE = ROOT / "tests" / "scenarios" / "checks" / "coordination-race.yaml"   # duration: 10 s


def test_until_beyond_the_duration_is_refused_at_the_duration_key(capsys):
    # the file's duration is 10 s (its line 9): --until 500 s cannot be simulated as asked
    assert main(["run", str(RACE), "--until", "500 s"]) == 2
    err = capsys.readouterr().err
    assert "coordination-race.yaml:9:1: duration: --until 500 s is beyond the scenario's " \
           "duration of 10 s" in err
    assert "Traceback" not in err


def test_a_partial_run_says_so_beside_its_verdict(capsys):
    # --until 2 s of a 10 s scenario: the verdict covers 2 of 10 s and says so on the next line
    main(["run", str(RACE), "--until", "2 s"])
    out = capsys.readouterr().out.splitlines()
    at = next(i for i, ln in enumerate(out) if ln.startswith("Verdict: "))
    assert out[at + 1].startswith("Partial run: stopped by --until at 2.000 s of the "
                                  "scenario's 10.000 s")
    # the whole duration (--until 10 s) is no partial run
    main(["run", str(RACE), "--until", "10 s"])
    assert "Partial run" not in capsys.readouterr().out
