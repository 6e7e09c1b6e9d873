"""Shared fixtures, and the ``optimizer`` package for a source tree used without installing."""

from __future__ import annotations

import importlib.util
import os
import shutil
import sys
from pathlib import Path

import pytest

# The tests import whatever ``import optimizer`` resolves to (an install, plain or editable).
# In a checkout with only the dependencies installed, plain ``pytest`` (unlike
# ``python -m pytest`` run from the root) has no path to the source tree: add it last, so an
# installed package still comes first.
if importlib.util.find_spec("optimizer") is None:
    sys.path.append(str(Path(__file__).resolve().parent.parent))


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
