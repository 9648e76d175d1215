"""Fixtures shared by the test files."""
from __future__ import annotations

import os
import shutil

import pytest


@pytest.fixture(scope="session")
def ngspice():
    """The ngspice executable (a general-purpose circuit simulator, the outside
    reference of the circuit tests). Skipped when missing, unless CI is set:
    then a missing ngspice fails."""
    exe = shutil.which("ngspice")
    if exe is None:
        if os.environ.get("CI"):
            pytest.fail("ngspice is required in CI (Debian package ngspice)")
        pytest.skip("ngspice not installed")
    return exe
