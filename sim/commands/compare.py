"""``railfault compare FILE [--json]``: the base and every case of ``cases:`` side by side."""
from __future__ import annotations

import json

from sim.commands.common import (CAUTION, EXIT_FAIL, EXIT_PASS, add_common, emit, quantity_arg,
                                 until_within)


def cmd_compare(args) -> int:
    from sim.errors import Problem, ScenarioError
    from sim.scenario import load
    from sim.whatif import compare

    scn = load(args.file)
    if not scn.cases:
        raise ScenarioError([Problem(scn.path, "cases", "nothing to compare: this file has no "
                                     "cases block (see scenarios/README.md, Cases)")])
    until_within(scn, args.until, [c.duration_s for c in scn.cases.values()])
    res = compare(scn, until_s=args.until)
    if args.json:
        text = json.dumps(res.as_dict(), indent=2)
    else:
        text = res.text() + "\n\n" + CAUTION
    emit(text, args.output)
    return EXIT_PASS if res.passed else EXIT_FAIL


def register(sub) -> None:
    c = sub.add_parser("compare", help="run the base and every case of the file side by side")
    add_common(c, "print the railfault-compare/1 JSON object")
    c.add_argument("--until", type=quantity_arg("time"), default=None,
                   help="stop every run at this time (default: each one's duration)")
    c.set_defaults(func=cmd_compare)
