"""The ``railfault`` command line.

Sub-commands
------------
``check FILE [--json] [--step 0.5m]``
    Static checks of a layout (polarity, reversing coverage, gaps, phasing,
    train length, coordination) and the circuit checks (fault-current map,
    trip windows, rail voltage). Exit 0 pass, 1 fail, 2 unreadable input.
``faultmap FILE [--json] [--step 0.5m] [--coin 0.01ohm]``
    The prospective short-circuit current at every point of every district.
``run FILE [--json] [--events] [--until T]``
    Play the scenario in the event engine: episodes, margins, device summary.
``schema``
    Print the JSON Schema of the scenario format.

Every sub-command that writes a file (``--output``) writes it only once the
whole result exists (a temporary file renamed into place), so a failure never
leaves half a report behind. Each sub-command lives in a module of
:mod:`sim.commands`; this module builds the parser from them and maps what
goes wrong to an exit status.
"""
from __future__ import annotations

import argparse
import os
import sys
from typing import Optional, Sequence

from sim.commands import COMMANDS
from sim.commands.check import check_result, render_check  # noqa: F401  (re-exported)
from sim.commands.common import (CAUTION, EXIT_FAIL, EXIT_INPUT, EXIT_INTERNAL,  # noqa: F401
                                 EXIT_PASS, print_problems)
from sim.errors import ScenarioError


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
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
    except BrokenPipeError:
        return EXIT_PASS
    except KeyboardInterrupt:
        sys.stderr.write("railfault: interrupted\n")
        return 130
    except Exception as exc:  # a defect of ours: say so plainly, no traceback by default
        if os.environ.get("RAILFAULT_DEBUG"):
            raise
        sys.stderr.write(
            f"railfault: internal error ({type(exc).__name__}: {exc}). This is a defect of "
            "railfault, not of your file; set RAILFAULT_DEBUG=1 to see the traceback.\n")
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
