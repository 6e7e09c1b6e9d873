"""Every command the README and the manual (docs/) show runs as shown.

The command lines are taken from the fenced code blocks (``quartet …``, with ``\\``
continuations and an optional ``$`` prompt); lines with placeholders (``SPEC``, ``PATH``,
``[…]``) are forms, not commands, and are left out. Each runs in this process from a fresh
folder holding a copy of ``examples/`` (so the files it writes land there) and must end with
exit code 0, or 1 where the example is meant to meet nothing; a bad-input exit (2) or a
traceback means the documentation is wrong.
"""

from __future__ import annotations

import re
import shlex
import shutil
from pathlib import Path

import pytest
from helpers import ROOT, run_cli

DOCUMENTS = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
#: Words that mark a line as a form with placeholders rather than a command to run.
PLACEHOLDER = re.compile(r"\b(SPEC|PATH|FILE|N|S|PENALTY)\b|\[|…")


def _commands(document: Path) -> list[tuple[int, str]]:
    """``(line, command)`` of each ``quartet`` command in the fenced blocks of ``document``."""
    found: list[tuple[int, str]] = []
    fenced = False
    pending: list[str] = []
    start = 0
    for number, raw in enumerate(document.read_text(encoding="utf-8").splitlines(), 1):
        if raw.startswith("```"):
            fenced = not fenced
            continue
        if not fenced:
            continue
        line = raw.strip().removeprefix("$ ").strip()
        if pending:
            pending.append(line.rstrip("\\").strip())
        elif line.startswith("quartet "):
            pending, start = [line.rstrip("\\").strip()], number
        else:
            continue
        if not line.endswith("\\"):
            command = " ".join(pending)
            pending = []
            if not PLACEHOLDER.search(command):
                found.append((start, command))
    return found


CASES = [(doc, line, command) for doc in DOCUMENTS for line, command in _commands(doc)]


def test_the_documents_show_commands() -> None:
    """The collector works: the README's first command is among the cases."""
    assert any(c == "quartet spec validate examples/motor_shunt.yaml" for _, _, c in CASES)


@pytest.mark.parametrize(
    ("document", "line", "command"),
    CASES,
    ids=[f"{d.name}:{n}" for d, n, _ in CASES],
)
def test_a_documented_command_runs(
    document: Path, line: int, command: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    argv = shlex.split(command)[1:]
    if "--verify-spice" in argv and shutil.which("ngspice") is None:
        pytest.skip("ngspice not installed (the cross-check runs under CI)")
    shutil.copytree(ROOT / "examples", tmp_path / "examples")
    monkeypatch.chdir(tmp_path)
    code, out, err = run_cli(argv)
    assert code in (0, 1), f"{document.name}:{line}: {command}\n{out[-1500:]}{err[-1500:]}"
