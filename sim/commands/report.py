"""``railfault report FILE [-o reports/NAME/] [--sweep STORE]``: the timing-margin report.

Checks, maps and runs the scenario (:func:`sim.report.build`) and writes one
folder (:func:`sim.report.write`, complete or absent): ``index.html`` (one
self-contained page), ``report.md``, the JSON results, a CSV per table and a
PNG per figure. With ``--sweep STORE`` the page has a sweep section, from a
store that ``railfault sweep FILE --store STORE`` made from this very file
(:func:`sim.report.sweep.read_store`; another file's store is refused). Exit 0
when check and run pass, 1 when either fails, 2 when the input, the store or
the output folder cannot be used (nothing is written then).
"""
from __future__ import annotations

import os
import sys

from sim.commands.common import CAUTION, EXIT_FAIL, EXIT_PASS, quantity_arg


def default_output(path: str) -> str:
    """``reports/NAME/`` for a scenario file ``.../NAME.yaml``."""
    stem = os.path.splitext(os.path.basename(path))[0] or "report"
    return os.path.join("reports", stem)


def cmd_report(args) -> int:
    from sim.errors import OutputError
    from sim.report import build, write
    from sim.report.output import check_target
    from sim.report.sweep import read_store
    from sim.scenario import load

    out = args.output or default_output(args.file)
    check_target(out)
    if os.path.abspath(out) == os.path.abspath(os.path.dirname(os.path.abspath(args.file))):
        raise OutputError(f"{out}: is the folder of the scenario itself; give a folder of "
                          f"its own for the report")
    scn = load(args.file)
    sweep = read_store(args.sweep, scn) if args.sweep is not None else None
    rep = build(scn, step_m=args.step, detail=args.detail, sweep=sweep)
    write(rep, out)
    word = "PASS" if rep.verdict == "pass" else "FAIL"
    lines = [f"railfault report: {rep.title}",
             f"Verdict: {word} (checks {rep.check_verdict.upper()}, simulation "
             f"{rep.run_verdict.upper()})"]
    lines += [f"  {h}" for h in rep.headline[:5]]
    lines += [f"  railfault check: {f.severity} {f.code} {f.where}"
              for f in rep.check_headline[:5]]
    if rep.sweep is not None:
        lines.append(f"Sweep: {rep.sweep.lines[0]}")
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
                   help="add the sweep section from a store made by railfault sweep FILE "
                        "--store STORE (the same file)")
    r.set_defaults(func=cmd_report)
