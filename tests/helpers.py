"""What many test files share: the checkout's folders and the in-process command-line runner.

Import as ``from helpers import EXAMPLES, run_cli`` (pytest puts this folder on the path).
"""

from __future__ import annotations

import io
from pathlib import Path
from typing import NamedTuple

from rich.console import Console

from optimizer.cli import main

#: The checkout's root, its examples and the test data (the tests run from any folder).
ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "examples"
DATA = Path(__file__).resolve().parent / "data"


def example(name: str) -> str:
    """The path of the bundled example ``name`` (without ``.yaml``), as a string."""
    return str(EXAMPLES / f"{name}.yaml")


class CliRun(NamedTuple):
    """Exit code, standard output and standard error of one in-process run."""

    code: int
    out: str
    err: str


def run_cli(argv: list[str], width: int = 200) -> CliRun:
    """Run ``quartet ARGV`` in this process with plain consoles ``width`` columns wide (no
    colour); a traceback in either stream fails the calling test."""
    out = Console(file=io.StringIO(), width=width, color_system=None)
    err = Console(file=io.StringIO(), width=width, color_system=None)
    code = main(argv, console=out, err=err)
    text_out = out.file.getvalue()  # type: ignore[attr-defined]
    text_err = err.file.getvalue()  # type: ignore[attr-defined]
    assert "Traceback" not in text_out + text_err
    return CliRun(code, text_out, text_err)
