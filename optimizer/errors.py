"""The exceptions Quartet raises.

Every error the package raises derives from :class:`QuartetError`; each subclass also derives
from the builtin that fits (``ValueError``), so callers may catch either. Messages are built
from structured fields and say what was found, what was expected and where::

    QuartetError
    ├── UnitError(ValueError)          a token of engineering notation that does not parse
    ├── ModelError(ValueError)         a domain object built with an impossible field value
    ├── SpecError(ValueError)          a spec file problem, with file, line and key path
    ├── CatalogError(ValueError)       a catalog problem, with file, row and column
    ├── DesignError(ValueError)        a user's design (part strings, ids, mapping) is wrong
    └── SimulatorError                 the ngspice cross-check could not run or did not solve
"""

from __future__ import annotations

#: Longest piece of the user's own text quoted in a message.
QUOTE_CHARS = 60


def quote(text: object) -> str:
    """``repr`` of the user's ``text``, cut to its first line and QUOTE_CHARS characters (the
    full length is named when it was cut), so a message stays one readable line."""
    whole = str(text)
    lines = whole.splitlines()
    line = lines[0] if lines else whole
    cut = line if len(line) <= QUOTE_CHARS else line[: QUOTE_CHARS - 1] + "…"
    if cut == whole:
        return repr(text)
    return f"{cut!r} (cut; {len(whole):,} characters in all)"


class QuartetError(Exception):
    """Base class of every error raised by Quartet."""


class UnitError(QuartetError, ValueError):
    """A token of engineering notation could not be read as the expected quantity."""

    def __init__(self, token: object, expected: str, reason: str = "") -> None:
        self.token = token
        self.expected = expected
        self.reason = reason
        detail = f" ({reason})" if reason else ""
        super().__init__(f"cannot read {quote(token)}{detail}: expected {expected}")


class ModelError(QuartetError, ValueError):
    """A domain object was given a field value that is physically impossible."""

    def __init__(self, owner: str, field: str, message: str) -> None:
        self.owner = owner
        self.field = field
        self.message = message
        super().__init__(f"{owner}: {field}: {message}")


def _where(path: str | None, line: int | None) -> str:
    if path is None:
        return ""
    if line is None:
        return f"{path}: "
    return f"{path}:{line}: "


class SpecError(QuartetError, ValueError):
    """A problem in a spec file, located by file, line and key path (``signal.common_mode``)."""

    def __init__(
        self, message: str, *, path: str | None = None, key: str = "", line: int | None = None
    ) -> None:
        self.path = path
        self.key = key
        self.line = line
        self.message = message
        at = f"{key}: " if key else ""
        super().__init__(f"{_where(path, line)}{at}{message}")


class CatalogError(QuartetError, ValueError):
    """A problem in a catalog file, located by file, row (1-based, as an editor shows it) and
    column."""

    def __init__(
        self,
        message: str,
        *,
        path: str | None = None,
        row: int | None = None,
        column: str = "",
    ) -> None:
        self.path = path
        self.row = row
        self.column = column
        self.message = message
        #: The separate problems this error lists (itself alone unless it combines several).
        self.problems: tuple[CatalogError, ...] = (self,)
        loc = _where(path, row)
        at = f"column '{column}': " if column else ""
        super().__init__(f"{loc}{at}{message}")


class DesignError(QuartetError, ValueError):
    """A user-supplied design is malformed: bad part string, unknown part id, bad mapping."""


class SimulatorError(QuartetError):
    """The circuit simulator (ngspice) is missing, failed, or did not solve the circuit exactly
    (a singular matrix, gmin or source stepping, a missing result). Used only by
    :mod:`optimizer.spice`, never by the analysis or the solver."""
