"""The device machines sit below the world and its results.

``sim/devices`` holds pure state machines and the event record they report; the
engine (``sim.world``), the result module (``sim.trace``), the diagnosis, the
report and the what-if layer are built on them and must not be imported by them
(a design rule of the project, DEVELOPERS.md "Modules"). Read from the source
with ``ast`` (importing ``sim`` loads its public API, which imports everything).
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

DEVICES = Path(__file__).resolve().parents[1] / "sim" / "devices"
ABOVE = ("sim.trace", "sim.world", "sim.diagnose", "sim.report", "sim.whatif", "sim.api",
         "sim.cli", "sim.commands", "sim.checks")


def imported_modules(path: Path) -> set[str]:
    names = set()
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            names.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and not node.level:
            names.add(node.module)
    return names


@pytest.mark.parametrize("path", sorted(DEVICES.glob("*.py")), ids=lambda p: p.name)
def test_device_modules_do_not_import_the_layers_above(path):
    bad = sorted(m for m in imported_modules(path)
                 if any(m == a or m.startswith(a + ".") for a in ABOVE))
    assert not bad, f"{path.name} imports {bad}"


def test_the_scan_sees_imports():
    # the scan finds an import of the result module where there is one
    src = DEVICES.parent / "world" / "engine.py"
    assert any(m.startswith("sim.trace") for m in imported_modules(src))
