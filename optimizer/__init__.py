"""Quartet: picks the cheapest resistor set for an op-amp difference amplifier.

Labels: R1 input to the inverting node, R2 feedback, R3 input to the non-inverting node,
R4 non-inverting node to REF; G = R2/R1.
"""

from __future__ import annotations

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

__all__ = [
    "POSITIONS",
    "Amplifier",
    "CatalogError",
    "Design",
    "DesignError",
    "DiscretePart",
    "ModelError",
    "NetworkPart",
    "Placement",
    "QuartetError",
    "RailSpan",
    "SpecError",
    "Technology",
    "Topology",
    "UnitError",
    "__version__",
]
