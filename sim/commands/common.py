"""What every sub-command shares: the cautions, exit codes, output, quantity arguments.

A sub-command is a module of :mod:`sim.commands` with a ``register(sub)`` function
that adds its parser to the ``railfault`` sub-parsers and sets ``func``;
:data:`sim.commands.COMMANDS` lists them in the order ``--help`` shows them. A
command calls the library API (:mod:`sim.api`) and prints; it holds no rule of
its own.

Output
------
- Human-readable text goes through :func:`sim.textfmt.escape_lines`: a control
  character from a scenario (a name, a title) is shown escaped, never obeyed by
  the terminal. JSON is written exact (the encoder escapes control characters).
- ``-o PATH`` is checked before any work (:func:`check_output`): a directory, a
  path under a file, a place without write permission, a device or pipe, or the
  scenario file itself are refused as a usable-input error (exit 2), and the
  report is written whole or not at all (:func:`write_atomic`).
- A reader that goes away (``railfault run FILE | head -1``) does not change the
  exit status: the verdict's status stands (:func:`emit`).
"""
from __future__ import annotations

import argparse
import os
import stat
import sys
import tempfile
from typing import Callable, Optional, Sequence

from sim.errors import OutputError, Problem
from sim.textfmt import escape, escape_lines

#: Printed under every human-readable report.
CAUTION = (
    "Caution: a simulation does not replace a physical short test (a coin across the rails) "
    "at every point of every district. A short that does not trip can overheat rails, wire "
    "and plastic and start a fire. Mains wiring of power supplies follows local electrical "
    "codes and, where they require it, a licensed electrician; wire and fuse sizes follow "
    "those codes, not this tool."
)

#: Exit statuses, whatever the flags: pass, fail, unusable input, a defect of railfault.
EXIT_PASS, EXIT_FAIL, EXIT_INPUT, EXIT_INTERNAL = 0, 1, 2, 3


def exit_status(verdict: str) -> int:
    """The exit status of a verdict."""
    return EXIT_PASS if verdict == "pass" else EXIT_FAIL


def until_within(scn, until_s: Optional[float], durations_s: Sequence[float] = ()) -> None:
    """Refuse ``--until`` beyond the scenario's ``duration`` (and beyond every one of
    ``durations_s``, a compare's cases): exit 2, at the file's ``duration`` key."""
    from sim.errors import ScenarioError
    from sim.timebase import T_TOL_S

    if until_s is None:
        return
    longest = max([scn.duration_s, *durations_s])
    if until_s <= longest + T_TOL_S:
        return
    line, col = scn.locations.get(("duration",), (None, None))
    raise ScenarioError([Problem(
        scn.path, "duration",
        f"--until {until_s:g} s is beyond the scenario's duration of {longest:g} s: the run "
        f"stops at its duration; give --until {longest:g} s or less, or lengthen duration",
        line, col)])


def quantity_arg(dimension: str) -> Callable[[str], float]:
    """An argparse type turning ``"0.5m"`` / ``"250 mm"`` into an SI float, within the
    plausible range of its option (:func:`option_kind`)."""

    def parse(text: str) -> float:
        from sim import units

        kind = option_kind(dimension)
        try:
            value = units.parse_quantity(text, kind.dim)
        except units.QuantityError as exc:
            raise argparse.ArgumentTypeError(str(exc)) from None
        refusal = kind.refusal(value, text)
        if refusal:
            raise argparse.ArgumentTypeError(refusal)
        return value

    return parse


def option_kind(dimension: str):
    """The quantity an option takes, with its range: ``--step`` (a length), ``--until``
    (a time: the range of a run's duration), ``--coin`` (a resistance: that of a short)."""
    from sim import schema as S
    from sim import units as U

    if dimension == "length":
        return S.Quantity(U.LENGTH, S.Range(U.LENGTH, "1 cm", "1 km",
                                            why="a coin test every centimetre is finer than "
                                                "any feeder; a section is at most 1 km"))
    if dimension == "time":
        return S.Quantity(U.TIME, S.RANGE_RUN)
    if dimension == "resistance":
        return S.Quantity(U.RESISTANCE, S.RANGE_R_LOAD)
    raise ValueError(f"no option takes {dimension!r}")


# --------------------------------------------------------------------- output
def _kind_of(mode: int) -> Optional[str]:
    for test, word in ((stat.S_ISDIR, "a directory"), (stat.S_ISFIFO, "a named pipe (FIFO)"),
                       (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
                       (stat.S_ISSOCK, "a socket")):
        if test(mode):
            return word
    return None if stat.S_ISREG(mode) else "not a regular file"


def check_output(path: Optional[str], inputs: Sequence[str] = ()) -> None:
    """Refuse, before any work, an output path that cannot or must not be written.

    Raises
    ------
    OutputError
        ``path`` is a directory, a device, a pipe or a socket; lies under a file;
        lies in a folder without write permission; or is one of ``inputs`` (the
        scenario would be overwritten by its own report).
    """
    if not path:
        return
    shown = escape(path)
    target = os.path.abspath(path)
    try:
        info = os.stat(target)
    except FileNotFoundError:
        info = None
    except NotADirectoryError:
        info = None  # a path under a file: found below, at the file
    except OSError as exc:
        raise OutputError(f"cannot write the report to {shown}: {exc.strerror or exc}") \
            from None
    if info is not None:
        kind = _kind_of(info.st_mode)
        if kind == "a directory":
            raise OutputError(f"cannot write the report to {shown}: it is a directory; name a "
                              f"file in it")
        if kind is not None:
            raise OutputError(f"cannot write the report to {shown}: it is {kind}, not a "
                              f"regular file (leave -o out to write to standard output)")
        for given in inputs:
            try:
                same = os.path.samefile(target, given)
            except OSError:
                same = False
            if same:
                raise OutputError(f"cannot write the report to {shown}: it is the scenario "
                                  f"file itself, which the report would overwrite")
    folder = os.path.dirname(target)
    while not os.path.exists(folder):
        parent = os.path.dirname(folder)
        if parent == folder:
            break
        folder = parent
    if not os.path.isdir(folder):
        raise OutputError(f"cannot write the report to {shown}: {escape(folder)} is a file, "
                          f"not a folder")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise OutputError(f"cannot write the report to {shown}: no permission to write in "
                          f"{escape(folder)}")


def write_atomic(path: str, text: str) -> None:
    """Write ``text`` to ``path`` through a temporary file in the same folder.

    Missing folders are made. Raises :class:`OutputError` when the file cannot be
    written; nothing is left behind then.
    """
    folder = os.path.dirname(os.path.abspath(path)) or "."
    try:
        os.makedirs(folder, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=".railfault-", suffix=".tmp")
    except OSError as exc:
        raise OutputError(f"cannot write the report to {escape(path)}: "
                          f"{exc.strerror or exc}") from None
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.replace(tmp, path)
    except OSError as exc:
        _unlink(tmp)
        raise OutputError(f"cannot write the report to {escape(path)}: "
                          f"{exc.strerror or exc}") from None
    except BaseException:
        _unlink(tmp)
        raise


def _unlink(path: str) -> None:
    try:
        os.unlink(path)
    except FileNotFoundError:
        pass


def _reader_gone() -> None:
    """Standard output's reader has gone (a closed pipe): send what is left nowhere.

    Python flushes standard output on exit and, failing, would change the exit
    status; pointing the descriptor at the null device keeps the verdict's status
    (the Python documentation's advice on SIGPIPE, module ``signal``).
    """
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        try:
            os.dup2(devnull, sys.stdout.fileno())
        finally:
            os.close(devnull)
    except (OSError, ValueError, AttributeError):
        pass  # no real descriptor (a test's captured stream): nothing to redirect


def emit(text: str, output: Optional[str], json: bool = False) -> None:
    """Write a report to ``output`` (whole, or not at all) or to standard output.

    Human-readable text is escaped line by line (:func:`sim.textfmt.escape_lines`);
    ``json`` text is written as it is. A closed standard output is not an error.
    """
    if not json:
        text = escape_lines(text)
    if not text.endswith("\n"):
        text += "\n"
    if output:
        write_atomic(output, text)
        return
    try:
        sys.stdout.write(text)
        sys.stdout.flush()
    except BrokenPipeError:
        _reader_gone()


def print_problems(problems: Sequence[Problem]) -> None:
    """Every problem of an unusable input on standard error, escaped, one a line."""
    n = len(problems)
    say(f"the input could not be used ({n} problem{'s' if n != 1 else ''}):",
        [str(p) for p in problems])


def say(headline: str, lines: Sequence[str] = ()) -> None:
    """``railfault: headline`` and indented lines on standard error, escaped."""
    text = f"railfault: {escape(headline)}\n" + "".join(f"  {escape(x)}\n" for x in lines)
    try:
        sys.stderr.write(text)
        sys.stderr.flush()
    except (BrokenPipeError, ValueError):
        pass  # nobody reads standard error: the exit status still says it


FAULT_HEADERS = ["section", "at", "device", "prospective", "with supply limit", "trip above",
                 "result"]


def fault_row(r: dict) -> list[str]:
    """One fault-current row for people: the point, the device, what flows, whether it trips."""
    pro = r.get("prospective_a", r["current_a"])
    return [r["section"], f"{r['at_m']:.2f} m", r["device"], f"{pro:.2f} A",
            f"{r['current_a']:.2f} A", f"{r['trip_a']:.2f} A",
            "trips" if r["ok"] else "DOES NOT TRIP"]


def add_common(sp, json_help: str) -> None:
    """The FILE argument, ``--json`` and ``-o/--output`` of a sub-command that reads a scenario."""
    sp.add_argument("file", metavar="FILE", help="scenario file (YAML, format railfault/1)")
    sp.add_argument("--json", action="store_true", help=json_help)
    sp.add_argument("-o", "--output", metavar="PATH",
                    help="write the report to PATH (written whole, or not at all)")
