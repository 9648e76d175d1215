"""``railfault run FILE [--json] [--events] [--until T]``: play the scenario in the event engine."""
from __future__ import annotations

import json

from sim.commands.common import CAUTION, EXIT_FAIL, EXIT_PASS, add_common, emit, quantity_arg

def cmd_run(args) -> int:
    from sim.scenario import load
    from sim.world import run
    from sim.world.render import render_text

    scn = load(args.file)
    result = run(scn, until_s=args.until, keep_events=args.events)
    if args.json:
        text = json.dumps(result.as_dict(), indent=2)
    else:
        text = render_text(result) + "\n\n" + CAUTION
    emit(text, args.output)
    return EXIT_PASS if result.verdict == "pass" else EXIT_FAIL




def register(sub) -> None:
    r = sub.add_parser("run", help="play the scenario in the event simulator")
    add_common(r, "print the railfault-result/1 JSON object")
    r.add_argument("--events", action="store_true", help="keep and print every event")
    r.add_argument("--until", type=quantity_arg("time"), default=None,
                   help="stop at this time (default: the scenario's duration)")
    r.set_defaults(func=cmd_run)
