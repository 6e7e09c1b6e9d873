"""Shared fixtures."""

from __future__ import annotations

import os
import shutil

import pytest


@pytest.fixture(scope="session")
def ngspice() -> str:
    """Path of the ngspice executable (Debian package ``ngspice``).

    Under CI (``CI=true``) the simulator checks must run: a missing ngspice fails the test
    with a clear message. Elsewhere the test is skipped when ngspice is not installed.
    """
    path = shutil.which("ngspice")
    if path is not None:
        return path
    if os.environ.get("CI", "").strip().lower() == "true":
        pytest.fail(
            "CI=true but ngspice is not on PATH: the ngspice cross-checks must run under CI; "
            "install the Debian package 'ngspice' (.ci/run does: apt-get install -y ngspice)",
            pytrace=False,
        )
    pytest.skip(
        "ngspice not installed (Debian package 'ngspice'); these checks always run under CI"
    )
