"""Writing output files safely: regular files only, every path checked before any work, atomic
replacement, no overwrite without consent, the file mode a user expects, and CSV cells that a
spreadsheet will not run as formulas.

Only the command line writes files; it checks every output path with :func:`check_outputs`
before it reads anything else, then writes through :func:`write_all` (or :func:`write_bytes`
for one file). A half-written file never replaces a good one; a device, FIFO, socket or folder
is never written, ``--force`` or not; nothing of the user's is overwritten unless ``force``; an
input of the run is never an output. New files get the mode the umask gives (``0666 & ~umask``);
a replaced file keeps its mode (and, for root, its owner).
"""

from __future__ import annotations

import os
import stat
import tempfile
from collections.abc import Callable, Sequence
from pathlib import Path

from . import interrupt
from .errors import QuartetError
from .inputs import file_kind

__all__ = [
    "STDOUT",
    "OutputError",
    "check_output",
    "check_outputs",
    "escape_csv_cell",
    "write_all",
    "write_bytes",
    "write_text",
]

#: Leading characters a spreadsheet reads as the start of a formula (CSV injection).
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")

#: The output name that means standard output.
STDOUT = "-"


class OutputError(QuartetError, OSError):
    """An output path is not allowed (not a regular file, exists without ``--force``, folder
    missing or not writable, named twice, an input of the run) or a write failed."""


def escape_csv_cell(text: str) -> str:
    """Prefix a cell that begins with ``=``, ``+``, ``-``, ``@``, tab or carriage return with a
    single quote, so that spreadsheets show it as text instead of evaluating it (the usual
    defence against CSV formula injection)."""
    return "'" + text if text.startswith(FORMULA_STARTS) else text


def _not_regular(path: Path, what: str) -> OutputError:
    return OutputError(
        f"{path}: is {what}, not a regular file; outputs go to regular files "
        f"(or {STDOUT} for standard output)"
    )


def _existing(path: Path) -> os.stat_result | None:
    """The status of the file ``path`` names (through symlinks), None when nothing is there;
    raises :class:`OutputError` for anything but a regular file."""
    try:
        link = path.lstat()
    except FileNotFoundError:
        return None
    except OSError as exc:
        raise OutputError(f"{path}: cannot be examined ({exc.strerror or exc})") from None
    if not stat.S_ISLNK(link.st_mode):
        if not stat.S_ISREG(link.st_mode):
            raise _not_regular(path, file_kind(link.st_mode))
        return link
    try:
        target = path.stat()
    except OSError:
        raise OutputError(f"{path}: is a symlink to a missing file; name the file itself") from None
    if not stat.S_ISREG(target.st_mode):
        raise _not_regular(path, f"a symlink to {file_kind(target.st_mode)}")
    return target


def check_output(path: str | os.PathLike[str], *, force: bool = False) -> None:
    """Raise :class:`OutputError` unless ``path`` may be written: it is a regular file (or a
    symlink to one) or does not exist yet; it exists only with ``force``; its folder exists and
    a file can be created there (tried with a temporary file, removed at once)."""
    target = Path(path)
    existing = _existing(target)
    if existing is not None and not force:
        raise OutputError(f"{target}: already exists; give --force to replace it")
    real = Path(os.path.realpath(target))
    folder = real.parent
    shown = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"{target}: folder {shown} does not exist")
    try:
        handle, probe = tempfile.mkstemp(prefix=f".{real.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise OutputError(
            f"{target}: cannot create a file in folder {shown} ({exc.strerror or exc})"
        ) from None
    os.close(handle)
    os.unlink(probe)


def _identity(path: str) -> tuple[str, tuple[int, int] | None]:
    real = os.path.realpath(path)
    try:
        status = os.stat(real)
    except OSError:
        return real, None
    return real, (status.st_dev, status.st_ino)


def check_outputs(paths: Sequence[str], *, force: bool = False, inputs: Sequence[str] = ()) -> None:
    """:func:`check_output` for each of ``paths``, and also: no file named for two outputs, at
    most one output on standard output (``-``), no output that is one of ``inputs``."""
    seen: dict[object, str] = {}
    taken: dict[object, str] = {}
    for name in inputs:
        real, inode = _identity(name)
        taken[real] = name
        if inode is not None:
            taken[inode] = name
    for path in paths:
        if path == STDOUT:
            if STDOUT in seen:
                raise OutputError(
                    f"{STDOUT}: standard output named for two outputs; send one export there "
                    "and the others to files"
                )
            seen[STDOUT] = path
            continue
        real, inode = _identity(path)
        for key in (real, inode):
            if key is None:
                continue
            if key in seen:
                raise OutputError(f"{path}: named for two outputs; give each output its own file")
            if key in taken:
                raise OutputError(
                    f"{path}: is an input of this run ({taken[key]}); choose another output file"
                )
        seen[real] = path
        if inode is not None:
            seen[inode] = path
        check_output(path, force=force)


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


class _Staged:
    """One output written to a temporary file beside its target, waiting to be renamed."""

    def __init__(self, path: str | os.PathLike[str], data: bytes, force: bool) -> None:
        self.shown = Path(path)
        existing = _existing(self.shown)
        if existing is not None and not force:
            raise OutputError(f"{self.shown}: already exists; give --force to replace it")
        self.target = Path(os.path.realpath(self.shown))
        folder = self.target.parent
        if not folder.is_dir():
            shown = self.shown.parent if str(self.shown.parent) else Path(".")
            raise OutputError(f"{self.shown}: folder {shown} does not exist")
        try:
            handle, temporary = tempfile.mkstemp(
                prefix=f".{self.target.name}.", suffix=".tmp", dir=folder
            )
        except OSError as exc:
            raise OutputError(f"{self.shown}: cannot write ({exc.strerror or exc})") from None
        self.temporary = Path(temporary)
        try:
            with os.fdopen(handle, "wb") as stream:
                if existing is None:
                    os.fchmod(stream.fileno(), 0o666 & ~_umask())
                else:
                    os.fchmod(stream.fileno(), stat.S_IMODE(existing.st_mode))
                    if os.geteuid() == 0:
                        os.fchown(stream.fileno(), existing.st_uid, existing.st_gid)
                stream.write(data)
                stream.flush()
                os.fsync(stream.fileno())
        except OSError as exc:
            self.discard()
            raise OutputError(f"{self.shown}: cannot write ({exc.strerror or exc})") from None
        except BaseException:
            self.discard()
            raise

    def discard(self) -> None:
        self.temporary.unlink(missing_ok=True)

    def commit(self) -> None:
        try:
            os.replace(self.temporary, self.target)
        except OSError as exc:
            self.discard()
            raise OutputError(f"{self.shown}: cannot write ({exc.strerror or exc})") from None


def write_all(
    outputs: Sequence[tuple[str | os.PathLike[str], bytes]],
    *,
    force: bool = False,
    staged: Callable[[], None] | None = None,
) -> list[Path]:
    """Write every ``(path, data)`` as one step: each into a temporary file beside its target
    first; only when all are written are they renamed into place (an interrupt does not cut the
    renames in two). A failure or an interrupt before the renames leaves every target as it was
    and no temporary file behind. ``staged`` is called between the two steps. Returns the paths
    as given."""
    pending: list[_Staged] = []
    try:
        for path, data in outputs:
            interrupt.check()
            pending.append(_Staged(path, data, force))
        if staged is not None:
            staged()
        interrupt.check()
        with interrupt.deferred():
            for item in pending:
                item.commit()
        pending = []
    finally:
        for item in pending:
            item.discard()
    return [Path(path) for path, _ in outputs]


def write_bytes(path: str | os.PathLike[str], data: bytes, *, force: bool = False) -> Path:
    """Write ``data`` to ``path`` atomically: into a temporary file in the same folder, flushed
    and synced, then renamed over the target (for a symlink, over the file it names). An
    existing file is left untouched unless ``force``; anything but a regular file, a missing
    folder or a failed write raises :class:`OutputError` naming the path."""
    return write_all([(path, data)], force=force)[0]


def write_text(path: str | os.PathLike[str], text: str, *, force: bool = False) -> Path:
    """:func:`write_bytes` for UTF-8 text."""
    return write_bytes(path, text.encode("utf-8"), force=force)
