"""The bad-input corpus of tests/data/bad/ (cases.yaml): every case runs ``spec validate``,
``catalog validate``, ``check`` or ``pick`` through ``main`` and must end with the exit code and
the message fragment the case names, with no traceback and nothing of the corpus changed.

The expected fragments are Quartet's own messages; the facts behind them are the inputs
themselves (a FIFO and a folder are not regular files, POSIX ``<sys/stat.h>``; a file with a
UTF-16 byte-order mark, ``FF FE``, is UTF-16 text, Unicode Standard §23.8; byte 0xE9 is not
valid UTF-8 as a start byte, RFC 3629 §3, and is ``é`` in Latin-1, ISO/IEC 8859-1).
"""

from __future__ import annotations

import hashlib
import io
import os
from pathlib import Path
from typing import Any

import pytest
import yaml
from helpers import ROOT
from rich.console import Console

from optimizer.cli import main

DATA = ROOT / "tests" / "data" / "bad"
MOTOR = ROOT / "examples" / "motor_shunt.yaml"
CASES: list[dict[str, Any]] = yaml.safe_load((DATA / "cases.yaml").read_text(encoding="utf-8"))


def _digest() -> dict[str, str]:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in sorted(DATA.iterdir())}


def _argv(case: dict[str, Any], tmp: Path) -> list[str]:
    text = " ".join(case["argv"])
    if "{fifo}" in text:
        os.mkfifo(tmp / "pipe")
        os.mkfifo(tmp / "pipe.csv")
    if "{big}" in text:
        big = tmp / "big.yaml"
        big.write_text("# " + "x" * (11 * 1024 * 1024) + "\n", encoding="utf-8")
    values = {"data": str(DATA), "tmp": str(tmp), "fifo": str(tmp / "pipe"), "motor": str(MOTOR)}
    values["big"] = str(tmp / "big.yaml")
    return [str(a).format(**values) for a in case["argv"]]


@pytest.mark.parametrize("case", CASES, ids=[c["name"] for c in CASES])
def test_bad_input(case: dict[str, Any], tmp_path: Path) -> None:
    before = _digest()
    out = Console(file=io.StringIO(), width=400, color_system=None)
    err = Console(file=io.StringIO(), width=400, color_system=None)
    code = main(_argv(case, tmp_path), console=out, err=err)
    text = out.file.getvalue() + err.file.getvalue()  # type: ignore[attr-defined]
    assert "Traceback" not in text
    assert case["message"] in " ".join(text.split()), text[-2000:]
    assert code == case["exit"], text[-2000:]
    assert _digest() == before  # nothing of the corpus was written to
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        p.name for p in tmp_path.iterdir() if p.name in ("pipe", "pipe.csv", "big.yaml")
    )
