"""The corners of a design's resistors and its passive environment, flattened into arrays:
every part vertex at each temperature of the range (``analysis.variation.vertex_values``)
times every source-impedance vertex and REF impedance end, for the exact worst case
(``analysis.worstcase``)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..errors import ModelError
from .environment import Environment, temperature_offset_k
from .variation import Variation, resistances, vertex_values

__all__ = ["PassiveCorners", "passive_corners"]

Array = NDArray[np.float64]


@dataclass(frozen=True)
class PassiveCorners:
    """Every corner of the resistors and the passive environment, flattened: ``r`` is
    ``(N, 4)`` ohms, ``rs1``, ``rs3``, ``rref`` and ``temperature_c`` are ``(N,)``."""

    r: Array
    rs1: Array
    rs3: Array
    rref: Array
    temperature_c: Array

    @property
    def count(self) -> int:
        return int(self.r.shape[0])


def passive_corners(variation: Variation, environment: Environment) -> PassiveCorners:
    """The product of the part vertices at each temperature (:func:`vertex_values`) with the
    source-impedance vertices and the REF impedance ends. Raises :class:`ModelError` when a
    corner resistance is zero or negative (bounds too wide for the temperature range)."""
    source = np.array(environment.source_ohm, dtype=float)
    ref = np.array(environment.ref_ohm, dtype=float)
    blocks: list[tuple[Array, float]] = []
    for temperature in environment.temperatures_c:
        dt = float(temperature_offset_k(temperature))
        r = resistances(variation, vertex_values(variation, dt), dt)
        if np.any(r <= 0.0):
            raise ModelError(
                "variation",
                "range",
                f"at {temperature:g} °C tolerance, tempco and drift together reach -100 %: "
                "a resistance would be zero or negative",
            )
        blocks.append((r, temperature))
    # Corner order: temperature, then part vertex, then source vertex, then REF end.
    env_count = source.shape[0] * ref.shape[0]
    counts = [r.shape[0] for r, _ in blocks]
    shape = (sum(counts), source.shape[0], ref.shape[0])
    return PassiveCorners(
        np.repeat(np.concatenate([r for r, _ in blocks]), env_count, axis=0),
        np.broadcast_to(source[None, :, 0, None], shape).reshape(-1),
        np.broadcast_to(source[None, :, 1, None], shape).reshape(-1),
        np.broadcast_to(ref[None, None, :], shape).reshape(-1),
        np.repeat([t for _, t in blocks], [n * env_count for n in counts]).astype(float),
    )
