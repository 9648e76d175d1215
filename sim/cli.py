"""The ``railfault`` command line.

Sub-commands
------------
``check FILE [--json] [--step 0.5m]``
    Static checks of a layout (polarity, reversing coverage, gaps, phasing,
    train length, coordination) and the circuit checks (fault-current map,
    trip windows, rail voltage). Exit 0 pass, 1 fail, 2 unreadable input.
``faultmap FILE [--json] [--step 0.5m] [--coin 0.01ohm]``
    The prospective short-circuit current at every point of every district.
``run FILE [--json] [--events] [--until T]``
    Play the scenario in the event engine: episodes, margins, device summary.
``schema``
    Print the JSON Schema of the scenario format.

Every sub-command that writes a file (``--output``) writes it only once the
whole result exists (a temporary file renamed into place), so a failure never
leaves half a report behind.
"""
from __future__ import annotations

import argparse
import json
import os
import sys
import tempfile
from typing import Callable, Optional, Sequence

from sim.errors import Problem, ScenarioError
from sim.textfmt import table as _table

#: Printed under every human-readable report.
CAUTION = (
    "Caution: a simulation does not replace a physical short test (a coin across the rails) "
    "at every point of every district. A short that does not trip can overheat rails, wire "
    "and plastic and start a fire. Mains wiring of power supplies follows local electrical "
    "codes and, where they require it, a licensed electrician; wire and fuse sizes follow "
    "those codes, not this tool."
)

EXIT_PASS, EXIT_FAIL, EXIT_INPUT, EXIT_INTERNAL = 0, 1, 2, 3


# ----------------------------------------------------------------- helpers
def _quantity_arg(dimension: str) -> Callable[[str], float]:
    """An argparse type turning ``"0.5m"`` / ``"250 mm"`` into an SI float."""

    def parse(text: str) -> float:
        from sim import units

        dim = {"length": units.LENGTH, "time": units.TIME, "resistance": units.RESISTANCE}[dimension]
        try:
            value = units.parse_quantity(text, dim)
        except units.QuantityError as exc:
            raise argparse.ArgumentTypeError(str(exc)) from None
        if value <= 0:
            raise argparse.ArgumentTypeError(f"expected {dim.label} above zero, got {text!r}")
        return value

    return parse


def _write_atomic(path: str, text: str) -> None:
    """Write ``text`` to ``path`` through a temporary file in the same folder."""
    folder = os.path.dirname(os.path.abspath(path)) or "."
    os.makedirs(folder, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=folder, prefix=".railfault-", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def _emit(text: str, output: Optional[str]) -> None:
    if output:
        _write_atomic(output, text)
    else:
        sys.stdout.write(text)
        if not text.endswith("\n"):
            sys.stdout.write("\n")


def _print_problems(problems: Sequence[Problem]) -> None:
    n = len(problems)
    sys.stderr.write(f"railfault: the input could not be used ({n} problem{'s' if n != 1 else ''}):\n")
    for p in problems:
        sys.stderr.write(f"  {p}\n")


FAULT_HEADERS = ["section", "at", "device", "prospective", "with supply limit", "trip above",
                 "result"]


def _fault_row(r: dict) -> list[str]:
    """One fault-current row for people: the point, the device, what flows, whether it trips."""
    pro = r.get("prospective_a", r["current_a"])
    return [r["section"], f"{r['at_m']:.2f} m", r["device"], f"{pro:.2f} A",
            f"{r['current_a']:.2f} A", f"{r['trip_a']:.2f} A",
            "trips" if r["ok"] else "DOES NOT TRIP"]


# ------------------------------------------------------------------- check
def check_result(path: str, step_m: float = 0.5) -> dict:
    """Load ``path`` and run every static and circuit check; the contract's JSON object."""
    from sim.checks import run_checks
    from sim.circuit import check_findings
    from sim.layout import build_layout
    from sim.scenario import load

    scn = load(path)
    layout = build_layout(scn)
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
        rows = [_fault_row(r) for _, r in sorted(weakest.items())]
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
    _emit(text, args.output)
    return EXIT_PASS if res["verdict"] == "pass" else EXIT_FAIL


# ---------------------------------------------------------------- faultmap
def cmd_faultmap(args) -> int:
    from sim.circuit.faultmap import fault_map
    from sim.layout import build_layout
    from sim.scenario import load

    scn = load(args.file)
    layout = build_layout(scn)
    fmap = fault_map(scn, layout, step_m=args.step, r_coin_ohm=args.coin)
    rows = [dict(r) for r in fmap.rows]
    findings = [f.as_dict() for f in fmap.findings]
    verdict = "fail" if any(f["severity"] == "error" for f in findings) else "pass"
    if args.json:
        text = json.dumps({"format": "railfault-faultmap/1", "verdict": verdict,
                           "step_m": args.step, "coin_ohm": args.coin,
                           "findings": findings, "fault_current": rows}, indent=2)
    else:
        table = _table(FAULT_HEADERS, [_fault_row(r) for r in rows])
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
    _emit(text, args.output)
    return EXIT_PASS if verdict == "pass" else EXIT_FAIL


# --------------------------------------------------------------------- run
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
    _emit(text, args.output)
    return EXIT_PASS if result.verdict == "pass" else EXIT_FAIL


# ------------------------------------------------------------------ schema
def cmd_schema(args) -> int:
    from sim.schema import json_schema

    _emit(json.dumps(json_schema(), indent=2), args.output)
    return EXIT_PASS


# -------------------------------------------------------------------- main
def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="railfault",
        description="Simulate a model-railroad layout's shorts, protection devices and "
                    "auto-reversing before it is built.",
        epilog="Exit status: 0 pass, 1 fail, 2 the input could not be read or used.")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def common(sp, json_help: str) -> None:
        sp.add_argument("file", metavar="FILE", help="scenario file (YAML, format railfault/1)")
        sp.add_argument("--json", action="store_true", help=json_help)
        sp.add_argument("-o", "--output", metavar="PATH",
                        help="write the report to PATH (written whole, or not at all)")

    c = sub.add_parser("check", help="static and circuit checks of a layout")
    common(c, "print the railfault-check/1 JSON object")
    c.add_argument("--step", type=_quantity_arg("length"), default=0.5,
                   help="largest distance between coin-test points (default 0.5 m)")
    c.set_defaults(func=cmd_check)

    f = sub.add_parser("faultmap", help="prospective short-circuit current everywhere")
    common(f, "print the fault-current map as JSON")
    f.add_argument("--step", type=_quantity_arg("length"), default=0.5,
                   help="largest distance between points (default 0.5 m)")
    f.add_argument("--coin", type=_quantity_arg("resistance"), default=0.01,
                   help="resistance of the short (default 0.01 ohm)")
    f.set_defaults(func=cmd_faultmap)

    r = sub.add_parser("run", help="play the scenario in the event simulator")
    common(r, "print the railfault-result/1 JSON object")
    r.add_argument("--events", action="store_true", help="keep and print every event")
    r.add_argument("--until", type=_quantity_arg("time"), default=None,
                   help="stop at this time (default: the scenario's duration)")
    r.set_defaults(func=cmd_run)

    s = sub.add_parser("schema", help="print the JSON Schema of the scenario format")
    s.add_argument("-o", "--output", metavar="PATH", help="write the schema to PATH")
    s.set_defaults(func=cmd_schema)
    return p


def main(argv: Optional[Sequence[str]] = None) -> int:
    """Entry point of the ``railfault`` console script; returns the exit status."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse: 2 on a usage error, 0 on --help
        return int(exc.code or 0)
    try:
        return args.func(args)
    except ScenarioError as exc:
        _print_problems(exc.problems)
        return EXIT_INPUT
    except BrokenPipeError:
        return EXIT_PASS
    except KeyboardInterrupt:
        sys.stderr.write("railfault: interrupted\n")
        return 130
    except Exception as exc:  # a defect of ours: say so plainly, no traceback by default
        if os.environ.get("RAILFAULT_DEBUG"):
            raise
        sys.stderr.write(
            f"railfault: internal error ({type(exc).__name__}: {exc}). This is a defect of "
            "railfault, not of your file; set RAILFAULT_DEBUG=1 to see the traceback.\n")
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
