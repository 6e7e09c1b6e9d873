"""Reading the user's input files within bounds: regular files only, a size limit per kind of
file, a nesting limit for YAML, and the user's text quoted back at most one short line long.

A device, FIFO or socket is refused before anything is read from it (it is opened without
blocking and examined with ``fstat``), so ``/dev/urandom`` or a pipe nobody writes to cannot
hang a run; a file over its limit is refused after reading one byte more than the limit.
"""

from __future__ import annotations

import os
import stat
from collections.abc import Callable

import yaml

from .errors import QUOTE_CHARS, quote

__all__ = [
    "CATALOG_MAX_BYTES",
    "MAX_DEPTH",
    "QUOTE_CHARS",
    "SPEC_MAX_BYTES",
    "YamlTrouble",
    "compose_yaml",
    "file_kind",
    "is_file",
    "quote",
    "read_bounded",
    "yaml_too_deep",
]

#: Largest spec file (bytes): a spec is a page of settings; 10 MB leaves room for comments.
SPEC_MAX_BYTES = 10 * 1024 * 1024
#: Largest catalog file (bytes): a house-stock export of about a million rows.
CATALOG_MAX_BYTES = 200 * 1024 * 1024
#: Deepest nesting of YAML mappings and lists (a spec needs 4 levels, a catalog 3).
MAX_DEPTH = 32


def file_kind(mode: int) -> str:
    """What a file of ``st_mode`` ``mode`` is, in words (for messages that refuse it)."""
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe)"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def read_bounded(
    path: str,
    limit: int,
    fail: Callable[[str], Exception],
    what: str,
    *,
    missing: str = "cannot open the file: no such file",
    folder: str = "cannot open the file: it is a folder",
) -> bytes:
    """The bytes of the regular file ``path``, at most ``limit`` of them. Every problem raises
    ``fail(message)``: missing (``missing``), a folder (``folder``) or anything but a regular
    file, unreadable, or larger than ``limit`` (``what`` names the kind of file)."""
    if os.path.isdir(path):
        raise fail(folder)
    try:
        handle = os.open(path, os.O_RDONLY | os.O_NONBLOCK)
    except FileNotFoundError:
        raise fail(missing) from None
    except IsADirectoryError:
        raise fail(folder) from None
    except OSError as exc:
        raise fail(f"cannot open the file: {exc.strerror or exc}") from None
    try:
        mode = os.fstat(handle).st_mode
        if not stat.S_ISREG(mode):
            raise fail(f"cannot read the file: it is {file_kind(mode)}; expected a regular file")
        chunks: list[bytes] = []
        size = 0
        while size <= limit:
            chunk = os.read(handle, min(1 << 20, limit + 1 - size))
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    except OSError as exc:
        raise fail(f"cannot read the file: {exc.strerror or exc}") from None
    finally:
        os.close(handle)
    if size > limit:
        raise fail(f"the file is larger than {limit // (1024 * 1024)} MB, the limit for a {what}")
    return b"".join(chunks)


def yaml_too_deep(text: str, limit: int = MAX_DEPTH) -> int | None:
    """The 1-based line where mappings and lists in ``text`` first nest deeper than ``limit``,
    or None. Reads YAML events only (no recursion, whatever the depth); a syntax error after
    the limit is not reached is left for the real reader to report."""
    # The pure-Python parser yields events lazily (libyaml scans far ahead first).
    depth = 0
    try:
        for event in yaml.parse(text, Loader=yaml.SafeLoader):
            if isinstance(event, yaml.CollectionStartEvent):
                depth += 1
                if depth > limit:
                    mark = event.start_mark
                    return 1 if mark is None else int(mark.line) + 1
            elif isinstance(event, yaml.CollectionEndEvent):
                depth -= 1
    except yaml.YAMLError:
        return None
    return None


class YamlTrouble(ValueError):
    """Why :func:`compose_yaml` could not read a text: a message and the 1-based line (or
    None); each reader turns it into its own located error."""

    def __init__(self, message: str, line: int | None) -> None:
        super().__init__(message)
        self.message = message
        self.line = line


def _yaml_message(text: str, exc: yaml.YAMLError) -> tuple[str, int | None]:
    """The message and line of a PyYAML error, in PyYAML's own words."""
    if isinstance(exc, yaml.reader.ReaderError):  # a character YAML does not allow
        where = text[: exc.position].count("\n") + 1
        return f"character #x{exc.character:04x} is not allowed", where
    mark = getattr(exc, "problem_mark", None) or getattr(exc, "context_mark", None)
    line = None if mark is None else int(mark.line) + 1
    problem = getattr(exc, "problem", None)
    context = getattr(exc, "context", None)
    if problem is None:
        return str(exc), line
    if context and str(problem).startswith("but "):
        return f"{context}, {problem}", line  # "expected a single document ..., but found ..."
    return str(problem) + (f" ({context})" if context else ""), line


def compose_yaml(text: str, what: str, needs: int) -> yaml.Node | None:
    """The node tree of ``text`` by PyYAML's safe composer (every node keeps its line; no
    Python object is built), None for an empty document. ``text`` nesting deeper than
    :data:`MAX_DEPTH` is refused first (``what`` and the ``needs`` levels it has name the
    file in the message); raises :class:`YamlTrouble`."""
    deep = yaml_too_deep(text)
    if deep is not None:
        raise YamlTrouble(
            f"mappings and lists nest deeper than {MAX_DEPTH} levels; {what} needs {needs}", deep
        )
    try:
        node: yaml.Node | None = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.YAMLError as exc:
        message, line = _yaml_message(text, exc)
        raise YamlTrouble(f"not valid YAML: {message}", line) from None
    return node


def is_file(path: os.PathLike[str] | str) -> bool:
    """True when ``path`` names a regular file (symlinks followed). A name the system cannot
    even look up (too long, a NUL byte, no permission on a folder) is no file: False, never an
    OSError."""
    try:
        return stat.S_ISREG(os.stat(path).st_mode)
    except (OSError, ValueError):
        return False
