"""The search's progress display (issue 11, item 4): on a terminal ``quartet pick`` shows a
progress line on standard error while it searches; piped, it shows none.

The terminal case runs the CLI in a child process whose standard error is a pseudo-terminal
(the standard library's ``pty`` module, POSIX), with standard output on a pipe; the piped case
puts both on pipes. Each test checks the exit code and the text that reached standard error.
"""

from __future__ import annotations

import itertools
import os
import select
import subprocess
import sys
import time

import pytest
from helpers import ROOT

from optimizer.catalog import load_catalogs
from optimizer.solve.search import SearchProgress, pick
from optimizer.specfile import load_spec
from optimizer.verify import verify

SPEC = ROOT / "examples" / "mains_monitor.yaml"
#: Exit codes of a proven search and of one the time limit ended (README "Exit codes").
DONE = (0, 3)


def _child_env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    env["TERM"] = "xterm"
    env.pop("QUARTET_STAGES", None)
    return env


def _command() -> list[str]:
    return [sys.executable, "-m", "optimizer", "pick", str(SPEC), "--top", "3"]


@pytest.mark.skipif(not hasattr(os, "openpty"), reason="needs a POSIX pseudo-terminal")
def test_a_terminal_shows_the_search_progress_on_stderr() -> None:
    master, slave = os.openpty()
    try:
        child = subprocess.Popen(
            _command(),
            stdin=subprocess.DEVNULL,
            stdout=subprocess.PIPE,
            stderr=slave,
            env=_child_env(),
            cwd=ROOT,
        )
        os.close(slave)
        seen = b""
        deadline = time.monotonic() + 120.0
        while time.monotonic() < deadline:
            ready, _, _ = select.select([master], [], [], 0.2)
            if ready:
                try:
                    chunk = os.read(master, 65536)
                except OSError:  # the child closed its end
                    break
                if not chunk:
                    break
                seen += chunk
            elif child.poll() is not None:
                break
        out, _ = child.communicate(timeout=120.0)
    finally:
        os.close(master)
    assert child.returncode in DONE, seen.decode("utf-8", "replace")
    assert b"searching" in seen, seen.decode("utf-8", "replace")
    assert b"searching" not in out  # the ranking on standard output carries no progress
    assert out.strip()  # the result itself still goes to standard output


def test_a_pipe_gets_no_progress() -> None:
    done = subprocess.run(
        _command(),
        stdin=subprocess.DEVNULL,
        capture_output=True,
        env=_child_env(),
        cwd=ROOT,
        timeout=120.0,
        check=False,
    )
    assert done.returncode in DONE, done.stderr.decode("utf-8", "replace")
    assert b"searching" not in done.stderr
    assert b"searching" not in done.stdout


def test_the_search_reports_its_progress() -> None:
    """The library side: ``pick`` calls the progress callback while it searches, with counts
    that never decrease and never exceed the exact checks it made."""
    spec = load_spec(str(SPEC))
    catalog = load_catalogs(list(spec.preferences.catalogs), spec.preferences.use_builtin_catalogs)
    reports: list[SearchProgress] = []
    result = pick(spec, catalog, verify, top=3, progress=reports.append)
    assert reports
    assert all(
        a.checked <= b.checked and a.passed <= b.passed for a, b in itertools.pairwise(reports)
    )
    assert all(r.passed <= r.checked for r in reports)
    assert reports[-1].checked <= result.solves  # one exact check per candidate at most
    assert all(r.time_limit_s > 0.0 and r.elapsed_s >= 0.0 for r in reports)
