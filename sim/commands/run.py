"""``railfault run FILE [--json] [--events] [--until T] [--budget N]``: play the scenario in the event engine.

A thin layer over :func:`sim.api.run`: parse, call, print.
"""
from __future__ import annotations

import json

from sim.commands.common import (CAUTION, add_common, check_output, emit, exit_status,
                                 quantity_arg, until_within)


def _positive_int(text: str) -> int:
    import argparse

    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number of events, got {text!r}") from None
    if n < 1:
        raise argparse.ArgumentTypeError(f"expected at least 1 event, got {text!r}")
    return n


def cmd_run(args) -> int:
    from sim import api
    from sim.world.render import render_text

    check_output(args.output, [args.file])
    scn = api.load(args.file)
    until_within(scn, args.until)
    result = api.run(scn, until_s=args.until, keep_events=args.events,
                     event_budget=args.budget)
    if args.json:
        emit(json.dumps(result.as_dict(), indent=2), args.output, json=True)
    else:
        emit(mark_partial(render_text(result), result.t_end_s, result.duration_s)
             + "\n\n" + CAUTION, args.output)
    return exit_status(result.verdict)


def mark_partial(text: str, t_end_s: float, duration_s: float) -> str:
    """``text`` with a line under its verdict saying the run is partial, when it stopped
    (``--until``) before the scenario's duration: its verdict covers that part only."""
    from sim.timebase import T_TOL_S

    if t_end_s >= duration_s - T_TOL_S:
        return text
    lines = text.split("\n")
    at = next((i for i, ln in enumerate(lines) if ln.startswith("Verdict: ")), None)
    note = (f"Partial run: stopped by --until at {t_end_s:.3f} s of the scenario's "
            f"{duration_s:.3f} s; this verdict covers only the first {t_end_s:.3f} s "
            f"(what happens later is not judged).")
    if at is None:
        return note + "\n" + text
    lines.insert(at + 1, note)
    return "\n".join(lines)


def register(sub) -> None:
    r = sub.add_parser("run", help="play the scenario in the event simulator")
    add_common(r, "print the railfault-result/1 JSON object")
    r.add_argument("--events", action="store_true", help="keep and print every event")
    r.add_argument("--until", type=quantity_arg("time"), default=None,
                   help="stop at this time (default: the scenario's duration)")
    r.add_argument("--budget", type=_positive_int, default=None, metavar="N",
                   help="most engine events the run may take (default 250,000); a run that "
                        "reaches it stops there with a finding and cannot pass")
    r.set_defaults(func=cmd_run)
