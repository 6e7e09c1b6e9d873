"""Writing output files safely: atomic replacement, no overwrite without consent, and CSV cells
that a spreadsheet will not run as formulas.

Only the command line writes files; it does so through :func:`write_text` and
:func:`write_bytes`, so a half-written file never replaces a good one and nothing of the user's
is overwritten unless ``force`` is given.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from .errors import QuartetError

__all__ = ["OutputError", "escape_csv_cell", "write_bytes", "write_text"]

#: Leading characters a spreadsheet reads as the start of a formula (CSV injection).
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


class OutputError(QuartetError, OSError):
    """An output file could not be written, or exists and ``--force`` was not given."""


def escape_csv_cell(text: str) -> str:
    """Prefix a cell that begins with ``=``, ``+``, ``-``, ``@``, tab or carriage return with a
    single quote, so that spreadsheets show it as text instead of evaluating it (the usual
    defence against CSV formula injection)."""
    return "'" + text if text.startswith(FORMULA_STARTS) else text


def write_bytes(path: str | os.PathLike[str], data: bytes, *, force: bool = False) -> Path:
    """Write ``data`` to ``path`` atomically: into a temporary file in the same folder, flushed
    and synced, then renamed over the target. An existing file is left untouched unless
    ``force``; a missing folder or a failed write raises :class:`OutputError` naming the path."""
    target = Path(path)
    if target.exists() and not force:
        raise OutputError(f"{target}: already exists; give --force to replace it")
    if target.exists() and target.is_dir():
        raise OutputError(f"{target}: is a folder, expected a file name")
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"{target}: folder {folder} does not exist")
    handle, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.replace(temporary, target)
    except OSError as exc:
        Path(temporary).unlink(missing_ok=True)
        raise OutputError(f"{target}: cannot write ({exc.strerror or exc})") from None
    return target


def write_text(path: str | os.PathLike[str], text: str, *, force: bool = False) -> Path:
    """:func:`write_bytes` for UTF-8 text."""
    return write_bytes(path, text.encode("utf-8"), force=force)
