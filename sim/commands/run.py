"""``railfault run FILE [--json] [--events] [--until T] [--budget N]``: play the scenario in the event engine.

A thin layer over :func:`sim.api.run`: parse, call, print.
"""
from __future__ import annotations

import json

from sim.commands.common import (CAUTION, add_common, check_output, emit, exit_status,
                                 quantity_arg)


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
    result = api.run(api.load(args.file), until_s=args.until, keep_events=args.events,
                     event_budget=args.budget)
    if args.json:
        emit(json.dumps(result.as_dict(), indent=2), args.output, json=True)
    else:
        emit(render_text(result) + "\n\n" + CAUTION, args.output)
    return exit_status(result.verdict)


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
