"""``railfault faultmap FILE [--json] [--step 0.5m] [--coin 0.01ohm]``: the coin test everywhere."""
from __future__ import annotations

import json

from sim.commands.common import (CAUTION, EXIT_FAIL, EXIT_PASS, FAULT_HEADERS, add_common,
                                 emit, fault_row, quantity_arg)
from sim.textfmt import table as _table
from sim.verdict import decide, sort_findings

def cmd_faultmap(args) -> int:
    from sim.circuit.faultmap import fault_map
    from sim.layout import build_layout
    from sim.scenario import load

    scn = load(args.file)
    layout = build_layout(scn)
    fmap = fault_map(scn, layout, step_m=args.step, r_coin_ohm=args.coin)
    rows = [dict(r) for r in fmap.rows]
    findings = [f.as_dict() for f in sort_findings(fmap.findings)]
    verdict = decide(fmap.findings)
    if args.json:
        text = json.dumps({"format": "railfault-faultmap/1", "verdict": verdict,
                           "step_m": args.step, "coin_ohm": args.coin,
                           "findings": findings, "fault_current": rows}, indent=2)
    else:
        table = _table(FAULT_HEADERS, [fault_row(r) for r in rows])
        parts = [f"railfault faultmap: {scn.title}  (coin {args.coin:g} ohm, step {args.step:g} m)",
                 "", table, ""]
        if findings:
            parts += ["Findings", _table(["severity", "code", "where", "message"],
                                         [[f["severity"].upper(), f["code"], f["where"], f["message"]]
                                          for f in findings]), ""]
        parts.append("Verdict: PASS - every point trips its devices." if verdict == "pass"
                     else "Verdict: FAIL - some shorts would not trip (see above).")
        parts += ["", CAUTION]
        text = "\n".join(parts)
    emit(text, args.output)
    return EXIT_PASS if verdict == "pass" else EXIT_FAIL




def register(sub) -> None:
    f = sub.add_parser("faultmap", help="prospective short-circuit current everywhere")
    add_common(f, "print the fault-current map as JSON")
    f.add_argument("--step", type=quantity_arg("length"), default=0.5,
                   help="largest distance between points (default 0.5 m)")
    f.add_argument("--coin", type=quantity_arg("resistance"), default=0.01,
                   help="resistance of the short (default 0.01 ohm)")
    f.set_defaults(func=cmd_faultmap)
