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
    "file_kind",
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
