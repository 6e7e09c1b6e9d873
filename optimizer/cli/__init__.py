"""The ``quartet`` command line: a thin layer that parses arguments, calls the library and
prints through Rich. It is the only package that talks to the terminal.

One module per command (``catalogs`` for ``catalog`` and ``spec``, ``check``, ``pick``,
``sweep``, ``board``), the pieces they share in ``options`` (exit codes, value converters, one
builder per shared option) and ``outputs`` (export files, notes, progress), and ``main``.

Exit codes: 0 success; 1 a requirement not met or nothing feasible; 2 bad input; 3 the time
limit ended the search with a best design found (not proven optimal); 130 / 143 interrupted by
SIGINT / SIGTERM (128 + the signal number).
"""

from __future__ import annotations

from .main import build_parser, main, main_entry
from .options import EXIT_BAD_INPUT, EXIT_NOT_MET, EXIT_OK, EXIT_TIME_LIMIT

__all__ = [
    "EXIT_BAD_INPUT",
    "EXIT_NOT_MET",
    "EXIT_OK",
    "EXIT_TIME_LIMIT",
    "build_parser",
    "main",
    "main_entry",
]
