"""``railfault check FILE [--json] [--step 0.5m]``: static and circuit checks of a layout."""
from __future__ import annotations

import json

from sim.commands.common import (CAUTION, EXIT_FAIL, EXIT_PASS, FAULT_HEADERS, add_common,
                                 emit, fault_row, quantity_arg)
from sim.textfmt import table as _table

def check_result(path: str, step_m: float = 0.5) -> dict:
    """Load ``path`` and run every static and circuit check; the contract's JSON object."""
    from sim.scenario import load

    return check_result_of(load(path), step_m=step_m)


def check_result_of(scn, step_m: float = 0.5, layout=None) -> dict:
    """:func:`check_result` of a loaded scenario (``layout``: its layout, if built)."""
    from sim.checks import run_checks
    from sim.circuit import check_findings
    from sim.layout import build_layout

    layout = layout if layout is not None else build_layout(scn)
    report = run_checks(scn, layout)
    circuit_findings, rows = check_findings(scn, layout, step_m=step_m)
    findings = list(report.findings) + list(circuit_findings)
    order = {"error": 0, "warning": 1, "info": 2}
    findings.sort(key=lambda f: (order.get(f.severity, 3), f.code, f.where))
    verdict = "fail" if any(f.severity == "error" for f in findings) else "pass"
    return {
        "format": "railfault-check/1",
        "scenario": {"title": scn.title, "path": scn.path, "sha256": scn.sha256},
        "verdict": verdict,
        "findings": [f.as_dict() for f in findings],
        "reversing": [dict(r) for r in report.reversing],
        "fault_current": [dict(r) for r in rows],
    }


def render_check(res: dict) -> str:
    """Human-readable report of :func:`check_result`."""
    out = [f"railfault check: {res['scenario']['title']}  ({res['scenario']['path']})", ""]
    counts = {s: sum(1 for f in res["findings"] if f["severity"] == s)
              for s in ("error", "warning", "info")}
    if res["findings"]:
        rows = [[f["severity"].upper(), f["code"], f["where"], f["message"], f.get("fix", "")]
                for f in res["findings"]]
        out += ["Findings", _table(["severity", "code", "where", "message", "smallest fix"], rows), ""]
    if res["reversing"]:
        rows = [[" -> ".join(r["cycle"]), ", ".join(r["covered_by"]) or "NOT COVERED"]
                for r in res["reversing"]]
        out += ["Reversing cycles", _table(["cycle of sections", "reversing section(s)"], rows), ""]
    if res["fault_current"]:
        weakest: dict = {}
        def weakness(r: dict) -> tuple:  # a miss first, then the least current per trip level
            return (r["ok"], r["current_a"] / r["trip_a"] if r["trip_a"] else 0.0,
                    r.get("prospective_a", r["current_a"]))

        for r in res["fault_current"]:
            cur = weakest.get(r["section"])
            if cur is None or weakness(r) < weakness(cur):
                weakest[r["section"]] = r
        rows = [fault_row(r) for _, r in sorted(weakest.items())]
        out += ["Weakest coin-test short per section",
                _table(FAULT_HEADERS, rows), ""]
    out.append(f"{counts['error']} error(s), {counts['warning']} warning(s), {counts['info']} note(s).")
    out.append("Verdict: PASS - no errors found." if res["verdict"] == "pass"
               else "Verdict: FAIL - the layout has errors (see above).")
    out += ["", CAUTION]
    return "\n".join(out)


def cmd_check(args) -> int:
    res = check_result(args.file, step_m=args.step)
    text = json.dumps(res, indent=2) if args.json else render_check(res)
    emit(text, args.output)
    return EXIT_PASS if res["verdict"] == "pass" else EXIT_FAIL




def register(sub) -> None:
    c = sub.add_parser("check", help="static and circuit checks of a layout")
    add_common(c, "print the railfault-check/1 JSON object")
    c.add_argument("--step", type=quantity_arg("length"), default=0.5,
                   help="largest distance between coin-test points (default 0.5 m)")
    c.set_defaults(func=cmd_check)
