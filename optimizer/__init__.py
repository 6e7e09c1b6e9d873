"""Quartet: picks the cheapest resistor set for an op-amp difference amplifier.

Labels: R1 input to the inverting node, R2 feedback, R3 input to the non-inverting node,
R4 non-inverting node to REF; G = R2/R1.

The public API (:mod:`optimizer.api`): :func:`load_spec`, :func:`load_catalogs`,
:func:`spec_catalogs`, :func:`pick`, :func:`check`, :func:`sweep` and their result types. They
are imported on first use, so ``import optimizer`` stays quick (the solver loads OR-Tools and
the catalog pandas).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from ._version import __version__
from .design import POSITIONS, Design, Placement, Topology
from .errors import (
    CatalogError,
    DesignError,
    ModelError,
    QuartetError,
    SpecError,
    UnitError,
)
from .parts import Amplifier, DiscretePart, NetworkPart, RailSpan, Technology

if TYPE_CHECKING:
    from .api import check, load_catalogs, load_spec, pick, spec_catalogs, sweep
    from .catalog import Catalog
    from .solve.search import Candidate, PickResult
    from .spec import Spec
    from .sweep import SweepResult
    from .verify import Verification

__all__ = [
    "POSITIONS",
    "Amplifier",
    "Candidate",
    "Catalog",
    "CatalogError",
    "Design",
    "DesignError",
    "DiscretePart",
    "ModelError",
    "NetworkPart",
    "PickResult",
    "Placement",
    "QuartetError",
    "RailSpan",
    "Spec",
    "SpecError",
    "SweepResult",
    "Technology",
    "Topology",
    "UnitError",
    "Verification",
    "__version__",
    "check",
    "load_catalogs",
    "load_spec",
    "pick",
    "spec_catalogs",
    "sweep",
]

#: Names imported on first use, and the module each comes from.
_LAZY = {
    "check": "api",
    "load_catalogs": "api",
    "load_spec": "api",
    "pick": "api",
    "spec_catalogs": "api",
    "sweep": "api",
    "PickResult": "api",
    "SweepResult": "api",
    "Verification": "api",
    "Candidate": "solve.search",
    "Catalog": "catalog",
    "Spec": "spec",
}


def __getattr__(name: str) -> Any:
    """The public names of :data:`_LAZY`, imported on first use (PEP 562)."""
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'optimizer' has no attribute {name!r}")
    import importlib

    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value
