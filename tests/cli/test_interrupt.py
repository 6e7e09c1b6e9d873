"""SIGINT and SIGTERM at several moments of a run: the exit code is 128 + the signal number
(130, 143: the shell convention for a process ended by a signal, POSIX ``wait`` status and
bash's "128+n" rule), the message says "interrupted", and no output file is written or damaged.

Each case runs the installed ``quartet`` command in a fresh process from an empty folder.
``QUARTET_STAGES`` makes it print ``quartet-stage: NAME`` markers to standard error (and wait at
the named stage); the test sends the signal after the marker, so no fixed sleep guesses where
the run is. No timing is asserted beyond generous timeouts.
"""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from helpers import ROOT

ADC = str(ROOT / "examples" / "adc_driver.yaml")
MOTOR = str(ROOT / "examples" / "motor_shunt.yaml")
CHECK = ["check", MOTOR, "--r1", "1k", "--r2", "20k", "--r3", "1k", "--r4", "20k"]
CHECK += ["--tolerance", "0.1%", "--tempco", "25ppm/K"]
QUARTET = shutil.which("quartet", path=os.path.dirname(sys.executable))
OLD = "the user's own file\n"

pytestmark = pytest.mark.skipif(QUARTET is None, reason="the quartet command is not installed")


def _run_until(
    argv: list[str], folder: Path, marker: str, signum: int, *, pause: str = "", after: float = 0
) -> tuple[int, str]:
    """Start quartet, wait for ``quartet-stage: marker``, wait ``after`` seconds, send ``signum``;
    the exit code and all of standard error."""
    env = {**os.environ, "QUARTET_STAGES": pause or "1", "COLUMNS": "120"}
    assert QUARTET is not None
    with subprocess.Popen(
        [QUARTET, *argv], cwd=folder, env=env, stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE, text=True,
    ) as process:  # fmt: skip
        assert process.stderr is not None
        seen = []
        for line in process.stderr:
            seen.append(line)
            if line.strip() == f"quartet-stage: {marker}":
                break
        else:
            process.wait(timeout=60)
            pytest.fail(f"the run ended before stage {marker}: {''.join(seen)}")
        time.sleep(after)
        sent = time.monotonic()
        process.send_signal(signum)
        rest = process.stderr.read()
        code = process.wait(timeout=60)
    assert time.monotonic() - sent < 20.0, "the run did not stop promptly"
    return code, "".join(seen) + rest


@pytest.fixture(scope="module")
def long_search(tmp_path_factory: pytest.TempPathFactory) -> str:
    """The ADC driver with four discrete parts only: its yield-basis search goes to CP-SAT and
    runs for many seconds (about 26 s to its proof), so a signal sent seconds into the search
    stage still finds it searching. (The full example now proves its optimum in about a
    second, before such a signal arrives.)"""
    text = Path(ADC).read_text(encoding="utf-8")
    assert "\npreferences:\n" in text
    text = text.replace("\npreferences:\n", "\npreferences:\n  topologies: [four_discrete]\n")
    path = tmp_path_factory.mktemp("spec") / "adc_discrete.yaml"
    path.write_text(text, encoding="utf-8")
    return str(path)


def _outputs(folder: Path) -> dict[str, str]:
    return {p.name: p.read_text(encoding="utf-8") for p in sorted(folder.iterdir())}


@pytest.mark.parametrize(
    ("command", "marker", "pause", "after", "signum"),
    [
        ("pick", "catalog", "", 0.0, signal.SIGINT),
        ("pick", "search", "", 0.0, signal.SIGINT),  # the model build
        ("pick", "search", "", 2.5, signal.SIGINT),  # the CP-SAT search
        ("pick", "search", "", 2.5, signal.SIGTERM),
        ("pick", "writing", "writing", 0.2, signal.SIGINT),
        ("check", "monte-carlo", "monte-carlo", 0.2, signal.SIGINT),
        ("check", "writing", "writing", 0.2, signal.SIGTERM),
    ],
)
def test_a_signal_stops_the_run_and_writes_nothing(
    tmp_path: Path,
    long_search: str,
    command: str,
    marker: str,
    pause: str,
    after: float,
    signum: int,
) -> None:
    (tmp_path / "b.csv").write_text(OLD, encoding="utf-8")
    # The writing case needs a pick that ends by itself: the motor example, one design; the
    # others one that is still searching when the signal comes.
    quick = marker == "writing"
    pick = [MOTOR, "--top", "1"] if quick else [long_search, "--time-limit", "60"]
    argv = pick if command == "pick" else CHECK[1:]
    argv = [command, *argv, "--bom", "b.csv", "--report", "r.md", "--force"]
    code, err = _run_until(argv, tmp_path, marker, signum, pause=pause, after=after)
    assert code == 128 + signum
    assert "interrupted" in err
    assert "Traceback" not in err
    # The old file is as it was, the new one was not made, and no temporary is left behind.
    assert _outputs(tmp_path) == {"b.csv": OLD}


def test_write_partial_keeps_the_best_design_found_so_far(tmp_path: Path, long_search: str) -> None:
    argv = ["pick", long_search, "--time-limit", "60", "--bom", "b.csv", "--write-partial"]
    # "designs": the first design has passed the exact check (the search goes on after it: about
    # 20 s more for this spec)
    code, err = _run_until(argv, tmp_path, "designs", signal.SIGINT, after=0.2)
    assert code == 130
    assert "interrupted: the search was stopped; the files above hold the best design" in " ".join(
        err.split()
    )
    assert _outputs(tmp_path)["b.csv"].startswith("positions,part_id,kind,")


@pytest.mark.parametrize(
    ("marker", "pause", "after", "signum"),
    [
        ("search", "", 1.0, signal.SIGINT),  # between and during the floors' searches
        ("search", "", 1.0, signal.SIGTERM),
        ("writing", "writing", 0.2, signal.SIGINT),  # the plot made, not yet written
    ],
)
def test_a_signal_stops_a_sweep_and_writes_no_plot(
    tmp_path: Path, marker: str, pause: str, after: float, signum: int
) -> None:
    pytest.importorskip("matplotlib")
    (tmp_path / "b.png").write_text(OLD, encoding="utf-8")
    # The writing case needs a sweep that ends by itself: the motor example, three floors.
    floors = ["--cmrr", "60:64:2"] if marker == "writing" else ["--cmrr", "60:110:1"]
    spec = MOTOR if marker == "writing" else ADC
    argv = ["sweep", spec, *floors, "--plot", "b.png", "--force"]
    code, err = _run_until(argv, tmp_path, marker, signum, pause=pause, after=after)
    assert code == 128 + signum
    assert "interrupted" in err
    assert "Traceback" not in err
    assert _outputs(tmp_path) == {"b.png": OLD}
