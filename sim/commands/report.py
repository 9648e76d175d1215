"""``railfault report FILE [-o reports/NAME/] [--sweep STORE]``: the timing-margin report.

Checks, maps and runs the scenario (:func:`sim.report.build`) and writes one
folder (:func:`sim.report.write`, complete or absent): ``index.html`` (one
self-contained page), ``report.md``, the JSON results, a CSV per table and a
PNG per figure. Exit 0 when check and run pass, 1 when either fails, 2 when
the input or the output folder cannot be used.
"""
from __future__ import annotations

import os
import sys

from sim.commands.common import CAUTION, EXIT_FAIL, EXIT_INPUT, EXIT_PASS, quantity_arg

#: Why ``--sweep`` is refused in this version (the sweep store is not part of it yet).
SWEEP_UNAVAILABLE = (
    "railfault report: --sweep is not available in this version: the sweep store it reads "
    "(written by 'railfault sweep') is not part of railfault yet. Run the report without "
    "--sweep.\n")


def default_output(path: str) -> str:
    """``reports/NAME/`` for a scenario file ``.../NAME.yaml``."""
    stem = os.path.splitext(os.path.basename(path))[0] or "report"
    return os.path.join("reports", stem)


def cmd_report(args) -> int:
    from sim.report import build, write
    from sim.report.output import OutputError, check_target
    from sim.scenario import load

    if args.sweep is not None:
        sys.stderr.write(SWEEP_UNAVAILABLE)
        return EXIT_INPUT
    out = args.output or default_output(args.file)
    try:
        check_target(out)
        if os.path.abspath(out) == os.path.abspath(os.path.dirname(os.path.abspath(args.file))):
            raise OutputError(f"{out}: is the folder of the scenario itself")
    except OutputError as exc:
        sys.stderr.write(f"railfault report: {exc}\n")
        return EXIT_INPUT
    scn = load(args.file)
    rep = build(scn, step_m=args.step, detail=args.detail)
    try:
        write(rep, out)
    except OutputError as exc:
        sys.stderr.write(f"railfault report: {exc}\n")
        return EXIT_INPUT
    word = "PASS" if rep.verdict == "pass" else "FAIL"
    lines = [f"railfault report: {rep.title}",
             f"Verdict: {word} (checks {rep.check_verdict.upper()}, simulation "
             f"{rep.run_verdict.upper()})"]
    lines += [f"  {h}" for h in rep.headline[:5]]
    lines += [f"Written: {os.path.join(out, 'index.html')} (with report.md, "
              f"{len(rep.tables)} CSV tables and {len(rep.figures)} figures as PNG)", "",
              CAUTION]
    sys.stdout.write("\n".join(lines) + "\n")
    return EXIT_PASS if rep.verdict == "pass" else EXIT_FAIL


def _count(text: str) -> int:
    import argparse

    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if n < 0:
        raise argparse.ArgumentTypeError(f"expected 0 or more, got {n}")
    return n


def register(sub) -> None:
    r = sub.add_parser("report", help="one HTML page (with Markdown, CSV and PNG beside it): "
                                      "checks, fault map, charts and the run")
    r.add_argument("file", metavar="FILE", help="scenario file (YAML, format railfault/1)")
    r.add_argument("-o", "--output", metavar="FOLDER",
                   help="folder to write (default reports/NAME/); written whole, or not at all")
    r.add_argument("--step", type=quantity_arg("length"), default=0.5,
                   help="largest distance between coin-test points (default 0.5 m)")
    r.add_argument("--detail", type=_count, default=6,
                   help="episodes drawn in detail, the worst first (default 6)")
    r.add_argument("--sweep", metavar="STORE", default=None,
                   help="add the charts of a sweep store (not available in this version)")
    r.set_defaults(func=cmd_report)
