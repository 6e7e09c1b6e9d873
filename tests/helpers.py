"""What many test files share: the checkout's folders, the in-process command-line runner and
the text of a spec with an ideal amplifier.

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


def ideal_spec_text(
    requirements: str,
    *,
    title: str | None = None,
    label: str | None = None,
    differential_v: float = 0.1,
) -> str:
    """A spec file's text where the handbook formula holds as it stands: an ideal amplifier
    (infinite CMRR and open-loop gain, no offset, bias or input-range limits; ``label`` its
    name), ±15 V rails, a ±``differential_v`` differential signal on ±1 V of common mode up to
    1 kHz, REF at 0 V, no source or REF impedance, and ``requirements`` (the section's lines,
    each indented two spaces, ending in a newline). Demo values of our own."""
    head = "quartet_spec: 1\n" + (f'title: "{title}"\n' if title is not None else "")
    name = f'  label: "{label}"\n' if label is not None else ""
    return (
        head + "amplifier:\n" + name + "  cmrr: ideal\n"
        "  open_loop_gain: ideal\n"
        "  gbw: 10 MHz\n"
        "  slew_rate: 10 V/us\n"
        "  offset_voltage: 0 V\n"
        "  bias_current: 0 A\n"
        "  voltage_noise: 10 nV/rtHz\n"
        "  current_noise: 0 A/rtHz\n"
        "  input_range: {from_negative: 0 V, from_positive: 0 V}\n"
        "  output_swing: {from_negative: 0 V, from_positive: 0 V}\n"
        "rails: {positive: 15 V, negative: -15 V}\n"
        "signal:\n"
        f"  differential: {{min: -{differential_v:g} V, max: {differential_v:g} V}}\n"
        "  common_mode: {min: -1 V, max: 1 V}\n"
        "  max_frequency: 1 kHz\n"
        "reference:\n"
        "  voltage: 0 V\n"
        "requirements:\n" + requirements
    )
