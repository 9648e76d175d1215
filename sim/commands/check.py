"""``railfault check FILE [--json] [--step 0.5m]``: static and circuit checks of a layout.

A thin layer over :func:`sim.api.check`: parse, call, print.
"""
from __future__ import annotations

import json

from sim.commands.common import (CAUTION, FAULT_HEADERS, add_common, check_output, emit,
                                 exit_status, fault_row, quantity_arg)
from sim.textfmt import table as _table


def check_result(path: str, step_m: float = 0.5) -> dict:
    """Load ``path`` and run every static and circuit check; the contract's JSON object."""
    from sim import api

    return api.check(api.load(path), step_m=step_m).as_dict()


def check_result_of(scn, step_m: float = 0.5) -> dict:
    """:func:`check_result` of a loaded scenario."""
    from sim import api

    return api.check(scn, step_m=step_m).as_dict()


def _wiring_table(rows: list) -> str:
    """The wiring sheet: per section and feeder, the device, where, and terminal -> rail."""
    from sim.checks.wiring import RAILS, TERMINALS

    out = []
    count: dict = {}
    for r in rows:
        n = count[r["section"]] = count.get(r["section"], 0) + 1
        rails = RAILS[r["leads"]]
        out.append([r["section"], str(n), r["device"], f"{r['at_m']:.2f} m from a",
                    f"{TERMINALS[0]} -> {rails[0]}", f"{TERMINALS[1]} -> {rails[1]}",
                    r["leads"] + (" (chosen)" if r["chosen"] else " (as built)")])
    return _table(["section", "feeder", "device", "at", "terminal", "terminal", "leads"], out)


def render_check(res: dict) -> str:
    """Human-readable report of a ``railfault-check/1`` object (:func:`check_result`)."""
    out = [f"railfault check: {res['scenario']['title']}  ({res['scenario']['path']})", ""]
    causes = [f for f in res["findings"] if not f.get("because")]
    follow = [f for f in res["findings"] if f.get("because")]
    counts = {s: sum(1 for f in causes if f["severity"] == s)
              for s in ("error", "warning", "info")}
    if causes:
        rows = [[f["severity"].upper(), f["code"], f["where"], f["message"], f.get("fix", "")]
                for f in causes]
        out += ["Findings", _table(["severity", "code", "where", "message", "smallest fix"], rows), ""]
    if follow:
        rows = [[f["severity"].upper(), f["code"], f["where"], f["because"]] for f in follow]
        out += ["Follow only from a finding above (mend that one first; --json has their text)",
                _table(["severity", "code", "where", "because of"], rows), ""]
    if res["reversing"]:
        rows = [[" -> ".join(r["cycle"]), ", ".join(r["covered_by"]) or "NOT COVERED"]
                for r in res["reversing"]]
        out += ["Reversing cycles", _table(["cycle of sections", "reversing section(s)"], rows), ""]
    if res.get("wiring"):
        out += ["Wiring sheet (rails named as seen from the section's a end towards its b end)",
                _wiring_table(res["wiring"]), ""]
    if res["fault_current"]:
        weakest: dict = {}
        nearest: dict = {}      # the first device of a section's chain: the rows' order
        for r in res["fault_current"]:
            nearest.setdefault(r["section"], r["device"])

        def weakness(r: dict) -> tuple:
            # a miss first, then the nearest device (the one that should act), then the
            # least current per trip level
            return (r["ok"], r["device"] != nearest[r["section"]],
                    r["current_a"] / r["trip_a"] if r["trip_a"] else 0.0,
                    r.get("prospective_a", r["current_a"]))

        for r in res["fault_current"]:
            cur = weakest.get(r["section"])
            if cur is None or weakness(r) < weakness(cur):
                weakest[r["section"]] = r
        rows = [fault_row(r) for _, r in sorted(weakest.items())]
        out += ["Weakest coin-test short per section"
                + (f": {res['coin_test']['text']}" if res.get("coin_test") else ""),
                _table(FAULT_HEADERS, rows), ""]
    more = f" ({len(follow)} more follow from them)" if follow else ""
    out.append(f"{counts['error']} error(s), {counts['warning']} warning(s), "
               f"{counts['info']} note(s){more}.")
    out.append("Verdict: PASS - no errors found." if res["verdict"] == "pass"
               else "Verdict: FAIL - the layout has errors (see above).")
    out += ["", CAUTION]
    return "\n".join(out)


def cmd_check(args) -> int:
    from sim import api

    check_output(args.output, [args.file])
    res = api.check(api.load(args.file), step_m=args.step).as_dict()
    if args.json:
        emit(json.dumps(res, indent=2), args.output, json=True)
    else:
        emit(render_check(res), args.output)
    return exit_status(res["verdict"])


def register(sub) -> None:
    c = sub.add_parser("check", help="static and circuit checks of a layout")
    add_common(c, "print the railfault-check/1 JSON object")
    c.add_argument("--step", type=quantity_arg("length"), default=0.5,
                   help="largest distance between coin-test points (default 0.5 m)")
    c.set_defaults(func=cmd_check)
