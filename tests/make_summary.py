"""Key figures of every bundled scenario, as stored in tests/scenarios/summary/.

``python tests/make_summary.py`` rewrites the stored summaries after a deliberate change
of a bundled scenario or of the model; review the diff before committing it. The test
``tests/test_bundled_scenarios.py`` compares a fresh run with them.
"""
from __future__ import annotations

import json
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from sim.cli import check_result  # noqa: E402
from sim.scenario import load  # noqa: E402
from sim.world import run  # noqa: E402

SUMMARY_DIR = ROOT / "tests" / "scenarios" / "summary"


def summarise(path: Path) -> dict:
    """Verdicts, finding codes, episodes with outcomes and margins, device counters."""
    chk = check_result(str(path))
    res = run(load(path)).as_dict()
    return {
        "check": {"verdict": chk["verdict"],
                  "errors": sorted(f["code"] for f in chk["findings"] if f["severity"] == "error"),
                  "reversing": sorted(sorted(r["covered_by"]) for r in chk["reversing"])},
        "run": {"verdict": res["verdict"],
                "episodes": [{k: e[k] for k in ("kind", "where", "outcome", "acted",
                                                "start_s", "margin_s")}
                             for e in res["episodes"]],
                "devices": {n: {k: d[k] for k in ("trips", "swaps", "restarts")}
                            for n, d in sorted(res["devices"].items())}},
    }


def main() -> None:
    SUMMARY_DIR.mkdir(parents=True, exist_ok=True)
    for path in sorted((ROOT / "scenarios").glob("*.yaml")):
        out = SUMMARY_DIR / (path.stem + ".json")
        out.write_text(json.dumps(summarise(path), indent=1) + "\n", encoding="utf-8")
        print(f"wrote {out.relative_to(ROOT)}")


if __name__ == "__main__":
    main()
