"""``railfault faultmap FILE [--json] [--step 0.5m] [--coin 0.01ohm]``: the coin test everywhere.

A thin layer over :func:`sim.api.faultmap`: parse, call, print.
"""
from __future__ import annotations

import json

from sim.commands.common import (CAUTION, FAULT_HEADERS, add_common, check_output, emit,
                                 exit_status, fault_row, quantity_arg)
from sim.textfmt import table as _table


def render_faultmap(res) -> str:
    """Human-readable report of a :class:`sim.api.FaultMapResult`."""
    d = res.as_dict()
    parts = [f"railfault faultmap: {res.scenario.title}  (coin {res.coin_ohm:g} ohm, step "
             f"{res.step_m:g} m)", res.sampling, "", _table(FAULT_HEADERS, [fault_row(r) for r in
                                                               d["fault_current"]]), ""]
    if d["findings"]:
        parts += ["Findings", _table(["severity", "code", "where", "message"],
                                     [[f["severity"].upper(), f["code"], f["where"], f["message"]]
                                      for f in d["findings"]]), ""]
    parts.append("Verdict: PASS - every point trips its devices." if res.verdict == "pass"
                 else "Verdict: FAIL - some shorts would not be cleared by the devices "
                      "nearest them (see above).")
    parts += ["", CAUTION]
    return "\n".join(parts)


def cmd_faultmap(args) -> int:
    from sim import api

    check_output(args.output, [args.file])
    res = api.faultmap(api.load(args.file), step_m=args.step, coin_ohm=args.coin)
    if args.json:
        emit(json.dumps(res.as_dict(), indent=2), args.output, json=True)
    else:
        emit(render_faultmap(res), args.output)
    return exit_status(res.verdict)


def register(sub) -> None:
    f = sub.add_parser("faultmap", help="prospective short-circuit current everywhere")
    add_common(f, "print the fault-current map as JSON")
    f.add_argument("--step", type=quantity_arg("length"), default=0.5,
                   help="largest distance between points (default 0.5 m)")
    f.add_argument("--coin", type=quantity_arg("resistance"), default=0.01,
                   help="resistance of the short (default 0.01 ohm)")
    f.set_defaults(func=cmd_faultmap)
