"""Regenerate the golden SVG of tests/test_report_files.py (review the change first).

    python -m tests.make_report_golden
"""
import matplotlib

from tests.test_report_files import GOLDEN, GOLDEN_MATPLOTLIB, _golden_svg

if __name__ == "__main__":
    GOLDEN.parent.mkdir(parents=True, exist_ok=True)
    GOLDEN.write_text(_golden_svg(), encoding="utf-8")
    GOLDEN_MATPLOTLIB.write_text(matplotlib.__version__ + "\n", encoding="utf-8")
    print(f"wrote {GOLDEN}")
