"""What the search asks of the exact check, defined once for every search.

The words: a design's whole exact check is a ``verify.Verification``; the search's early
answer for a design turned down on its Monte Carlo is a ``verify.Rejection``; one requirement's
or check's result is an ``analysis.checks.Outcome``; a **verdict** is whatever a verifier
returns, of which the searches read only ``passed`` (both of the above are verdicts). The
solver sits below ``verify`` in the layers, so it names the verdict by this protocol."""

from __future__ import annotations

from collections.abc import Callable
from typing import Protocol

from ..design import Design
from ..spec import Spec

__all__ = ["Verdict", "Verifier"]


class Verdict(Protocol):
    """What a verifier returns (``verify.Verification`` and ``verify.Rejection`` are such)."""

    @property
    def passed(self) -> bool: ...


#: The exact check as a search calls it: a design and its spec in, a verdict out.
Verifier = Callable[[Design, Spec], Verdict]
