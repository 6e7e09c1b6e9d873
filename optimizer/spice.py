"""Running ngspice on a netlist and reading back operating-point voltages.

This is the one module that starts a subprocess. The analysis and the solver never use it; the
ngspice cross-check tests and the export code do. ngspice is the Debian package ``ngspice``
(``apt-get install ngspice``).

:func:`run_ngspice` writes the netlist into a fresh temporary directory, puts a control block
of its own right under the title line (``op``, ``write`` of every vector to an ASCII raw file,
``quit``), runs ``ngspice -b -n`` there (batch mode, no user or local ``.spiceinit``) and
reads the raw file. A control block of the netlist's own never runs, because ours quits
first. Any sign that ngspice did not solve the linear circuit directly (a warning or error,
a singular matrix, gmin or source stepping, a transient operating point) raises
:class:`~optimizer.errors.SimulatorError`: those fall-backs add conductances or ramp sources
and would return numbers that look fine and are not exact.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import tempfile
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path

from .errors import SimulatorError

__all__ = [
    "NgspiceRun",
    "ngspice_available",
    "parse_ascii_raw",
    "run_netlist",
    "run_ngspice",
]

_NETLIST_NAME = "quartet_circuit.cir"
_RAW_NAME = "quartet_op.raw"
_INSTALL_HINT = "install the Debian package 'ngspice' (apt-get install ngspice)"
#: Output lines that mean the operating point is not the direct solution of the circuit.
_TROUBLE = re.compile(
    r"error|warning|singular|gmin|source stepping|transient op|fatal|abort", re.IGNORECASE
)


@dataclass(frozen=True)
class NgspiceRun:
    """What one ngspice run printed, and its exit status."""

    stdout: str
    stderr: str
    returncode: int


def ngspice_available(executable: str = "ngspice") -> bool:
    """True when ``executable`` is found on PATH (or is a runnable path)."""
    return shutil.which(executable) is not None


def _trouble_lines(run: NgspiceRun) -> list[str]:
    lines = (run.stdout + "\n" + run.stderr).splitlines()
    # The "Circuit: <title>" line echoes the user's title; it says nothing about the run.
    return [
        line.strip()
        for line in lines
        if _TROUBLE.search(line) and not line.strip().startswith("Circuit:")
    ]


def _tail(text: str, count: int = 12) -> str:
    lines = [line for line in text.strip().splitlines() if line.strip()]
    return "\n".join(lines[-count:])


def run_netlist(
    netlist: str,
    *,
    executable: str = "ngspice",
    timeout_s: float = 60.0,
    workdir: Path | None = None,
) -> NgspiceRun:
    """Run ``ngspice -b -n`` on ``netlist`` exactly as given (in ``workdir`` or a temporary
    directory) and return what it printed. Raises SimulatorError when ngspice is missing,
    cannot start, times out, or reports a warning, an error or a non-direct solution."""
    path = shutil.which(executable)
    if path is None:
        raise SimulatorError(
            f"ngspice not found (looked for {executable!r} on PATH): {_INSTALL_HINT}"
        )
    if not netlist.strip():
        raise SimulatorError("empty netlist: nothing to simulate")
    if workdir is None:
        with tempfile.TemporaryDirectory(prefix="quartet-ngspice-") as tmp:
            return run_netlist(netlist, executable=path, timeout_s=timeout_s, workdir=Path(tmp))
    (workdir / _NETLIST_NAME).write_text(netlist, encoding="ascii", errors="backslashreplace")
    try:
        done = subprocess.run(
            [path, "-b", "-n", _NETLIST_NAME],
            cwd=workdir,
            stdin=subprocess.DEVNULL,
            capture_output=True,
            text=True,
            errors="replace",
            timeout=timeout_s,
            check=False,
        )
    except subprocess.TimeoutExpired as exc:
        raise SimulatorError(f"ngspice did not finish within {timeout_s:g} s") from exc
    except OSError as exc:
        raise SimulatorError(f"ngspice could not be started ({path}): {exc}") from exc
    run = NgspiceRun(stdout=done.stdout, stderr=done.stderr, returncode=done.returncode)
    trouble = _trouble_lines(run)
    if trouble:
        shown = "\n  ".join(trouble[:8])
        raise SimulatorError(
            "ngspice did not solve the circuit cleanly; results would not be exact:\n  " + shown
        )
    return run


_OP_CONTROL = (".control", "set filetype=ascii", "op", f"write {_RAW_NAME}", "quit", ".endc")


def _with_op_control(netlist: str) -> str:
    lines = netlist.splitlines()
    return "\n".join([lines[0], *_OP_CONTROL, *lines[1:]]) + "\n"


def parse_ascii_raw(text: str) -> dict[str, float]:
    """Vector name (lower case, e.g. ``v(out)``, ``i(v1)``) → value from an ngspice ASCII raw
    file holding one real point (an operating point). Raises SimulatorError on any other
    layout."""
    lines = text.splitlines()
    header: dict[str, str] = {}
    index = 0
    while index < len(lines) and not lines[index].startswith("Variables:"):
        key, _, value = lines[index].partition(":")
        header[key.strip().lower()] = value.strip()
        index += 1
    try:
        count = int(header["no. variables"])
        points = int(header["no. points"])
    except (KeyError, ValueError) as exc:
        raise SimulatorError("ngspice raw file: missing 'No. Variables' or 'No. Points'") from exc
    if "real" not in header.get("flags", "") or points != 1:
        raise SimulatorError(
            f"ngspice raw file: expected one real point, got flags {header.get('flags')!r}, "
            f"{points} points"
        )
    names = []
    for line in lines[index + 1 : index + 1 + count]:
        fields = line.split()
        if len(fields) < 2:
            raise SimulatorError(f"ngspice raw file: bad variable line {line!r}")
        names.append(fields[1].lower())
    rest = lines[index + 1 + count :]
    if len(names) != count or not rest or not rest[0].startswith("Values:"):
        raise SimulatorError("ngspice raw file: variable list and 'Values:' do not line up")
    tokens = " ".join(rest[1:]).split()
    if len(tokens) != count + 1 or tokens[0] != "0":
        raise SimulatorError(
            f"ngspice raw file: expected point 0 and {count} values, got {len(tokens)} tokens"
        )
    try:
        values = [float(token) for token in tokens[1:]]
    except ValueError as exc:
        raise SimulatorError(f"ngspice raw file: unreadable value ({exc})") from exc
    return dict(zip(names, values, strict=True))


def _vector_name(probe: str) -> str:
    key = probe.strip().lower()
    return key if "(" in key else f"v({key})"


def run_ngspice(
    netlist: str,
    probes: Iterable[str],
    *,
    executable: str = "ngspice",
    timeout_s: float = 60.0,
) -> dict[str, float]:
    """The DC operating point of ``netlist``: probe → value, in volts for a node name
    (``"out"``, ``"c7_out"``) and amperes for ``"i(<source>)"``. The netlist should be
    self-contained (no ``.include`` of relative paths: it runs in a temporary directory)."""
    wanted = list(probes)
    if not wanted:
        raise SimulatorError("no probes given: name the nodes whose voltages you want")
    if not netlist.strip():
        raise SimulatorError("empty netlist: nothing to simulate")
    with tempfile.TemporaryDirectory(prefix="quartet-ngspice-") as tmp:
        workdir = Path(tmp)
        try:
            run = run_netlist(
                _with_op_control(netlist),
                executable=executable,
                timeout_s=timeout_s,
                workdir=workdir,
            )
        except SimulatorError as exc:
            if "line" not in str(exc):
                raise
            raise SimulatorError(
                f"{exc}\n(ngspice's line numbers include the {len(_OP_CONTROL)} control lines "
                "that run_ngspice puts under the title line)"
            ) from exc
        raw_path = workdir / _RAW_NAME
        if run.returncode != 0 or not raw_path.is_file():
            raise SimulatorError(
                f"ngspice exited with status {run.returncode} and "
                f"{'wrote' if raw_path.is_file() else 'did not write'} the operating point; "
                f"last output:\n{_tail(run.stdout + run.stderr)}"
            )
        vectors = parse_ascii_raw(raw_path.read_text(encoding="ascii", errors="replace"))
    result: dict[str, float] = {}
    missing = []
    for probe in wanted:
        name = _vector_name(probe)
        if name in vectors:
            result[probe] = vectors[name]
        else:
            missing.append(probe)
    if missing:
        known = ", ".join(sorted(vectors)[:12])
        raise SimulatorError(f"ngspice gave no value for {missing}; it has {known}, ...")
    return result
