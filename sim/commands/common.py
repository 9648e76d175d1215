"""What every sub-command shares: the cautions, exit codes, atomic output, quantity arguments.

A sub-command is a module of :mod:`sim.commands` with a ``register(sub)`` function
that adds its parser to the ``railfault`` sub-parsers and sets ``func``;
:data:`sim.commands.COMMANDS` lists them in the order ``--help`` shows them.
"""
from __future__ import annotations

import argparse
import os
import sys
import tempfile
from typing import Callable, Optional, Sequence

from sim.errors import Problem

#: Printed under every human-readable report.
CAUTION = (
    "Caution: a simulation does not replace a physical short test (a coin across the rails) "
    "at every point of every district. A short that does not trip can overheat rails, wire "
    "and plastic and start a fire. Mains wiring of power supplies follows local electrical "
    "codes and, where they require it, a licensed electrician; wire and fuse sizes follow "
    "those codes, not this tool."
)

EXIT_PASS, EXIT_FAIL, EXIT_INPUT, EXIT_INTERNAL = 0, 1, 2, 3


def quantity_arg(dimension: str) -> Callable[[str], float]:
    """An argparse type turning ``"0.5m"`` / ``"250 mm"`` into an SI float."""

    def parse(text: str) -> float:
        from sim import units

        dim = {"length": units.LENGTH, "time": units.TIME, "resistance": units.RESISTANCE}[dimension]
        try:
            value = units.parse_quantity(text, dim)
        except units.QuantityError as exc:
            raise argparse.ArgumentTypeError(str(exc)) from None
        if value <= 0:
            raise argparse.ArgumentTypeError(f"expected {dim.label} above zero, got {text!r}")
        return value

    return parse


def write_atomic(path: str, text: str) -> None:
    """Write ``text`` to ``path`` through a temporary file in the same folder."""
    folder = os.path.dirname(os.path.abspath(path)) or "."
    os.makedirs(folder, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=folder, prefix=".railfault-", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def emit(text: str, output: Optional[str]) -> None:
    if output:
        write_atomic(output, text)
    else:
        sys.stdout.write(text)
        if not text.endswith("\n"):
            sys.stdout.write("\n")


def print_problems(problems: Sequence[Problem]) -> None:
    n = len(problems)
    sys.stderr.write(f"railfault: the input could not be used ({n} problem{'s' if n != 1 else ''}):\n")
    for p in problems:
        sys.stderr.write(f"  {p}\n")


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
