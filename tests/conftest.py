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


#: Tests that take seconds each: the exhaustive references (oracle, battery, relaxation), the
#: fuzzing, the wheel build, the signal tests and the benchmark smoke runs. They carry the
#: ``slow`` marker, so ``pytest -m "not slow"`` is the quick loop while editing; plain
#: ``pytest`` (the README's command, what CI runs) runs everything. Entries are node-id
#: prefixes: a file, or a file and a test function.
SLOW = (
    "tests/solve/test_oracle.py",
    "tests/test_fuzz.py",
    "tests/cli/test_interrupt.py",
    "tests/test_benchmark_smoke.py",
    "tests/test_docs.py",
    "tests/board/test_board_search.py",
    "tests/solve/test_battery.py",
    "tests/solve/test_frontier.py::test_top_k_costs_match_the_exhaustive_reference",
    "tests/solve/test_frontier.py::test_network_specs_match_the_reference_over_the_builtin_catalog",
    "tests/solve/test_frontier.py::test_screen_is_a_relaxation_and_exact_for_independent_parts",
    "tests/solve/test_frontier.py::test_plain_specs_find_the_cheap_designs",
    "tests/catalog/test_catalog.py::test_wheel_install_carries_the_builtin_catalog",
    "tests/solve/test_frontier.py::test_yield_network_specs_match_the_reference_over_the_builtin_catalog",
    "tests/solve/test_classquads.py::test_plain_yield_specs_are_proven_over_the_builtin_catalog",
    "tests/solve/test_classquads.py::test_the_pick_matches_the_independent_reference",
)


def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    """Mark the tests of :data:`SLOW` ``slow`` (node ids are taken relative to the checkout
    root, whatever folder pytest runs from)."""
    root = Path(__file__).resolve().parent.parent
    for item in items:
        try:
            node = Path(item.path).resolve().relative_to(root).as_posix()
        except ValueError:
            continue
        name = item.name.split("[", 1)[0]
        if any(node == s or f"{node}::{name}" == s for s in SLOW):
            item.add_marker(pytest.mark.slow)
