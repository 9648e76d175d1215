"""The ``railfault`` command line.

Sub-commands
------------
``check FILE [--json] [--step 0.5m]``
    Static checks of a layout (polarity, reversing coverage, gaps, phasing,
    train length, coordination) and the circuit checks (fault-current map,
    trip windows, rail voltage).
``faultmap FILE [--json] [--step 0.5m] [--coin 0.01ohm]``
    The prospective short-circuit current at every point of every district.
``run FILE [--json] [--events] [--until T]``
    Play the scenario in the event engine: episodes, margins, device summary.
``schema``
    Print the JSON Schema of the scenario format.

Exit status, whatever the flags: 0 pass, 1 fail, 2 the input could not be read
or used (a mistake of the file, an option out of range, a report that cannot be
written where ``-o`` says; each located and explained, no traceback), 3 a defect
of railfault (the traceback with ``RAILFAULT_DEBUG=1``). Each sub-command lives in
a module of :mod:`sim.commands` and calls the library API (:mod:`sim.api`); this
module builds the parser from them and maps what goes wrong to an exit status.
"""
from __future__ import annotations

import argparse
import os
import sys
import traceback
from typing import NoReturn, Optional, Sequence

from sim.commands import COMMANDS
from sim.commands.check import check_result, render_check  # noqa: F401  (re-exported)
from sim.commands.common import (CAUTION, EXIT_FAIL, EXIT_INPUT, EXIT_INTERNAL,  # noqa: F401
                                 EXIT_PASS, print_problems, say)
from sim.errors import OutputError, RailfaultError, ScenarioError
from sim.textfmt import escape


class _Parser(argparse.ArgumentParser):
    """argparse, with its error messages escaped: they repeat the arguments given."""

    def error(self, message: str) -> NoReturn:
        self.print_usage(sys.stderr)
        self.exit(EXIT_INPUT, f"{self.prog}: error: {escape(message)}\n")


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(
        prog="railfault",
        description="Simulate a model-railroad layout's shorts, protection devices and "
                    "auto-reversing before it is built.",
        epilog="Exit status: 0 pass, 1 fail, 2 the input could not be read or used, "
               "3 a defect of railfault.")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for command in COMMANDS:
        command.register(sub)
    return p


def main(argv: Optional[Sequence[str]] = None) -> int:
    """Entry point of the ``railfault`` console script; returns the exit status."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse: 2 on a usage error, 0 on --help
        return int(exc.code or 0)
    try:
        return args.func(args)
    except ScenarioError as exc:
        print_problems(exc.problems)
        return EXIT_INPUT
    except OutputError as exc:  # -o names a place the report cannot or must not go
        say(str(exc))
        return EXIT_INPUT
    except RailfaultError as exc:  # a layout that cannot be built, ...
        say(f"the input could not be used: {exc}")
        return EXIT_INPUT
    except KeyboardInterrupt:
        say("interrupted")
        return 130
    except Exception as exc:  # a defect of ours: say so plainly, no traceback by default
        if os.environ.get("RAILFAULT_DEBUG"):
            say("internal error: a defect of railfault; the traceback follows.",
                traceback.format_exc().rstrip("\n").split("\n"))
        else:
            say(f"internal error ({type(exc).__name__}: {exc}). This is a defect of "
                f"railfault, not of your file; set RAILFAULT_DEBUG=1 to see the traceback.")
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
