"""The report page opened in a real browser: headless Chromium (Debian's ``chromium``).

Offline and without a browser download: the page is loaded from disk; console
messages are read from Chromium's log on standard error (``--enable-logging=stderr``:
every console message and every blocked load or script is logged as ``CONSOLE``).
Under CI (``CI`` set) a missing chromium fails the tests; elsewhere they are skipped.
"""
from __future__ import annotations

import os
import shutil
import subprocess
from html.parser import HTMLParser

import pytest

from sim.report import write
from tests.report_helpers import REPORT_SCENARIOS, demo_report, report_of

SECTIONS = ["Layout diagram", "Coordination pairs", "Time-current charts",
            "Sequence of operation", "Current traces", "Fault-current map",
            "Findings and fixes", "Settings sheet", "Wiring sheet and gap list",
            "Assumptions and defaults", "Files and limits"]


def _chromium() -> str:
    exe = shutil.which("chromium")
    if exe is None:
        if os.environ.get("CI"):
            pytest.fail("chromium is not installed (CI installs it: apt-get install chromium)")
        pytest.skip("chromium is not installed (apt-get install chromium)")
    return exe


def _run(url: str, tmp, *extra) -> subprocess.CompletedProcess:
    cmd = [_chromium(), "--headless", "--no-sandbox", "--disable-gpu",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           "--no-first-run", f"--user-data-dir={tmp / 'profile'}", "--enable-logging=stderr",
           "--v=0", "--hide-scrollbars", *extra, url]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=180)


class _Dom(HTMLParser):
    """Headings, text of the first h1, tags seen, and SVGs with their title and desc."""

    def __init__(self):
        super().__init__()
        self.stack: list = []
        self.h2: list = []
        self.h1 = ""
        self.tags: dict = {}
        self.svgs = 0
        self.svg_labelled = 0
        self._text = ""

    def handle_starttag(self, tag, attrs):
        self.tags[tag] = self.tags.get(tag, 0) + 1
        self.stack.append(tag)
        if tag in ("h1", "h2"):
            self._text = ""
        if tag == "svg":
            self.svgs += 1
        if tag in ("title", "desc") and "svg" in self.stack[:-1]:
            self.svg_labelled += 1

    def handle_endtag(self, tag):
        if tag == "h2":
            self.h2.append(self._text.strip())
        if tag == "h1" and not self.h1:
            self.h1 = self._text.strip()
        while self.stack:
            if self.stack.pop() == tag:
                break

    def handle_data(self, data):
        self._text += data


@pytest.fixture(scope="module")
def demo_page(tmp_path_factory):
    out = tmp_path_factory.mktemp("page") / "cinder-ridge"
    rep = demo_report()
    write(rep, str(out))
    return rep, out


def test_page_loads_offline_with_no_console_message_and_every_section(demo_page, tmp_path):
    rep, out = demo_page
    r = _run((out / "index.html").as_uri(), tmp_path, "--dump-dom")
    assert r.returncode == 0, r.stderr[-2000:]
    assert "CONSOLE" not in r.stderr, [ln for ln in r.stderr.splitlines() if "CONSOLE" in ln]
    dom = _Dom()
    dom.feed(r.stdout)
    assert dom.h2 == SECTIONS
    assert dom.h1.startswith("✓ PASS")
    assert dom.svgs == len(rep.figures) and dom.svg_labelled == 2 * len(rep.figures)
    for tag in ("script", "img", "link", "iframe", "object"):
        assert tag not in dom.tags


def test_screenshot_of_the_first_screen(demo_page, tmp_path):
    from PIL import Image

    _, out = demo_page
    shot = tmp_path / "first-screen.png"
    r = _run((out / "index.html").as_uri(), tmp_path, f"--screenshot={shot}",
             "--window-size=1280,900")
    assert r.returncode == 0 and shot.is_file(), r.stderr[-2000:]
    img = Image.open(shot).convert("L")
    assert img.size == (1280, 900)
    lo, hi = img.getextrema()
    assert hi - lo > 200                       # not a blank page: text on white


def test_markup_in_the_scenario_shows_as_text(tmp_path):
    rep = report_of(str(REPORT_SCENARIOS / "hostile.yaml"))
    out = tmp_path / "hostile"
    write(rep, str(out))
    r = _run((out / "index.html").as_uri(), tmp_path, "--dump-dom")
    assert r.returncode == 0
    assert "CONSOLE" not in r.stderr          # no script ran, none was even blocked
    dom = _Dom()
    dom.feed(r.stdout)
    assert "script" not in dom.tags and "b" not in dom.tags
    assert "<script>alert(1)</script> & <b>bold</b>" in dom.h1
