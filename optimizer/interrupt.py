"""Stopping a run cleanly on SIGINT (Ctrl-C) or SIGTERM.

One process-wide cancellation token. The command line arms it with :func:`armed`; from then on
a signal

* sets the token (:func:`cancelled` turns true and stays true),
* stops every running CP-SAT search: solvers registered with :func:`watch` get
  ``stop_search()`` from a watcher thread, which runs even while the main thread is inside the
  solver's C++ code (the signal reaches it through :func:`signal.set_wakeup_fd`), and again
  every :data:`RESTOP_S` seconds while a solver lives, so a search that starts after the signal
  stops too,
* raises :class:`Interrupted` in the main thread at the next Python instruction, except inside
  a :func:`winding_down` block (the search, which returns what it found so far once the token is
  set) or a :func:`deferred` block (renaming finished output files into place), where the
  exception waits for :func:`check`.

The solver side needs two things: pass each ``CpSolver`` to :func:`watch` before it solves (this
also turns off CP-SAT's own SIGINT handler, which would otherwise take the signal away from
Python), and treat :func:`cancelled` as "the time is up" before each model build and each solve.
The analysis and the solver never install handlers or print; only the command line arms this.
"""

from __future__ import annotations

import os
import select
import signal
import threading
import weakref
from collections.abc import Iterator
from contextlib import contextmanager
from types import FrameType
from typing import Protocol

__all__ = [
    "Interrupted",
    "armed",
    "cancel",
    "cancelled",
    "check",
    "deferred",
    "reset",
    "signal_number",
    "watch",
    "winding_down",
]

#: Seconds between repeated ``stop_search()`` calls while the token is set.
RESTOP_S = 0.05

#: The signals that cancel a run.
SIGNALS = (signal.SIGINT, signal.SIGTERM)


class Stoppable(Protocol):
    """A search that can be stopped from another thread (``ortools`` ``CpSolver``)."""

    def stop_search(self) -> None: ...


class Interrupted(Exception):
    """The run was cancelled by a signal; ``exit_code`` is 128 + the signal number (130 for
    SIGINT, 143 for SIGTERM), as shells report a process ended by that signal."""

    def __init__(self, signum: int, detail: str = "") -> None:
        self.signum = signum or signal.SIGINT
        self.exit_code = 128 + self.signum
        self.detail = detail
        name = signal.Signals(self.signum).name
        super().__init__(f"interrupted by {name}" + (f": {detail}" if detail else ""))


class _Token:
    def __init__(self) -> None:
        self.event = threading.Event()
        self.signum = 0
        self.lock = threading.Lock()
        self.solvers: weakref.WeakSet[Stoppable] = weakref.WeakSet()
        self.quiet = 0  # depth of winding_down / deferred blocks


_TOKEN = _Token()


def cancelled() -> bool:
    """True once a signal (or :func:`cancel`) has cancelled the run."""
    return _TOKEN.event.is_set()


def signal_number() -> int:
    """The signal that cancelled the run (0 when none did)."""
    return _TOKEN.signum


def check() -> None:
    """Raise :class:`Interrupted` when the run has been cancelled."""
    if _TOKEN.event.is_set():
        raise Interrupted(_TOKEN.signum)


def cancel(signum: int = signal.SIGINT) -> None:
    """Cancel the run as the signal ``signum`` would, and stop every watched solver."""
    with _TOKEN.lock:
        if not _TOKEN.event.is_set():
            _TOKEN.signum = signum
            _TOKEN.event.set()
        solvers = list(_TOKEN.solvers)
    for solver in solvers:
        solver.stop_search()


def reset() -> None:
    """Clear the token (for a new run in the same process, as tests do)."""
    with _TOKEN.lock:
        _TOKEN.event.clear()
        _TOKEN.signum = 0


def watch(solver: Stoppable) -> None:
    """Stop ``solver`` when the run is cancelled (at once if it already is). Turns off the
    solver's own SIGINT handling when it has the ortools parameter ``catch_sigint_signal``."""
    parameters = getattr(solver, "parameters", None)
    if parameters is not None and hasattr(parameters, "catch_sigint_signal"):
        parameters.catch_sigint_signal = False
    with _TOKEN.lock:
        _TOKEN.solvers.add(solver)
    if cancelled():
        solver.stop_search()


@contextmanager
def winding_down() -> Iterator[None]:
    """A block that ends by itself soon after a cancellation (the search: it checks
    :func:`cancelled`); a signal inside it does not raise. :func:`check` after the block."""
    _TOKEN.quiet += 1
    try:
        yield
    finally:
        _TOKEN.quiet -= 1


#: A block that must not be cut in two (renaming written files into place): same as
#: :func:`winding_down`.
deferred = winding_down


def _on_signal(signum: int, frame: FrameType | None) -> None:
    cancel(signum)
    if _TOKEN.quiet == 0:
        raise Interrupted(signum)


def _watcher(read_fd: int) -> None:
    """Wake on each signal byte and stop the watched solvers; while the token stays set, stop
    them again every :data:`RESTOP_S` seconds (a solver that starts after the signal). Returns
    when the write end of the pipe is closed."""
    while True:
        timeout = RESTOP_S if _TOKEN.event.is_set() else None
        ready, _, _ = select.select([read_fd], [], [], timeout)
        if ready:
            data = os.read(read_fd, 64)
            if not data:
                return
            cancel(data[-1])
        elif _TOKEN.event.is_set():
            for solver in list(_TOKEN.solvers):
                solver.stop_search()


@contextmanager
def armed() -> Iterator[None]:
    """Install the SIGINT and SIGTERM handlers and the watcher thread for the block (main thread
    only; elsewhere the block runs unarmed). The previous handlers come back afterwards."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    read_fd, write_fd = os.pipe()
    os.set_blocking(write_fd, False)
    previous = {s: signal.getsignal(s) for s in SIGNALS}
    old_fd = signal.set_wakeup_fd(write_fd, warn_on_full_buffer=False)
    thread = threading.Thread(
        target=_watcher, args=(read_fd,), name="quartet-interrupt", daemon=True
    )
    thread.start()
    try:
        for s in SIGNALS:
            signal.signal(s, _on_signal)
        yield
    finally:
        for s, handler in previous.items():
            signal.signal(s, handler)
        signal.set_wakeup_fd(old_fd)
        os.close(write_fd)  # the watcher reads end-of-file and returns
        thread.join(timeout=1.0)
        os.close(read_fd)
