"""The environment of a design: the non-part variables at their extremes.

The temperature at the ends of the operating range; the source impedances ``Rs1`` (in series
with R1) and ``Rs3`` (in series with R3), each in ``[min, max]`` with ``|Rs1 − Rs3| ≤
imbalance`` (a polygon: :func:`source_vertices` lists its vertices); the REF drive impedance
``Rref ∈ [min, max]``; the amplifier's CMRR at its minimum with either sign; the open-loop gain
at its minimum or infinite (a datasheet gives a minimum). docs/explanation.md, "How parts vary".
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import ModelError
from ..spec import SourceImpedance, Spec

__all__ = [
    "IDEAL_ENVIRONMENT",
    "REFERENCE_TEMPERATURE_C",
    "AmplifierCorners",
    "Environment",
    "amplifier_corners",
    "dominant_vertices",
    "environment_from_spec",
    "source_vertices",
    "temperature_offset_k",
]

Array = NDArray[np.float64]


#: A source-impedance vertex ``(Rs1, Rs3)`` in ohms.
Vertex = tuple[float, float]


#: Temperature at which tolerances are specified (°C); ΔT is measured from here.
REFERENCE_TEMPERATURE_C = 25.0


def temperature_offset_k(temperature_c: ArrayLike) -> Array:
    """ΔT = T − 25 °C in kelvin: the tempco acts on the offset from the temperature at which
    the tolerance is specified."""
    return np.asarray(temperature_c, dtype=float) - REFERENCE_TEMPERATURE_C


def source_vertices(min_ohm: float, max_ohm: float, imbalance_ohm: float) -> Array:
    """Vertices ``(Rs1, Rs3)`` in ohms of the source-impedance polygon
    ``{min ≤ Rs1 ≤ max, min ≤ Rs3 ≤ max, |Rs1 − Rs3| ≤ imbalance}``.

    The square ``[min, max]²`` cut by the band ``|Rs1 − Rs3| ≤ imbalance`` is a hexagon when
    ``0 < imbalance < max − min``, the whole square when the imbalance is at least the span,
    and the diagonal segment when the imbalance is zero (plane geometry). Duplicates are
    removed, order is kept. Returns an array of shape ``(k, 2)``, ``1 ≤ k ≤ 6``.
    """
    lo, hi, imb = float(min_ohm), float(max_ohm), float(imbalance_ohm)
    if (
        not (math.isfinite(lo) and math.isfinite(hi) and math.isfinite(imb))
        or lo < 0.0
        or hi < lo
        or imb < 0.0
    ):
        raise ModelError(
            "source impedance",
            "range",
            f"expected 0 ≤ min ≤ max and imbalance ≥ 0, got {lo!r}, {hi!r}, {imb!r}",
        )
    span = hi - lo
    if imb >= span:
        points = [(lo, lo), (lo, hi), (hi, hi), (hi, lo)]
    else:
        points = [
            (lo, lo),
            (lo, lo + imb),
            (hi - imb, hi),
            (hi, hi),
            (hi, hi - imb),
            (lo + imb, lo),
        ]
    unique: list[tuple[float, float]] = []
    for point in points:
        if point not in unique:
            unique.append(point)
    return np.array(unique, dtype=float)


def dominant_vertices(
    vertices: tuple[tuple[float, float], ...], rs1_way: float, rs3_way: float
) -> tuple[Vertex, ...]:
    """The vertices ``(Rs1, Rs3)`` (ohms) that no other vertex beats in both coordinates,
    where ``rs1_way`` and ``rs3_way`` (±1) say which way each should move (+1: larger).

    ``w`` beats ``v`` when ``w ≠ v``, ``rs1_way·(w₁ − v₁) ≥ 0`` and ``rs3_way·(w₃ − v₃) ≥ 0``.
    A quantity that never falls as ``Rs1`` moves ``rs1_way`` and ``Rs3`` moves ``rs3_way`` is
    at least as large at ``w`` as at ``v``, so its largest value over the vertices lies at one
    of those returned (the Pareto set; order of first appearance, duplicates dropped)."""
    unique: list[Vertex] = []
    for rs1, rs3 in vertices:
        point = (float(rs1), float(rs3))
        if point not in unique:
            unique.append(point)

    def beaten(v: Vertex) -> bool:
        return any(
            w != v and rs1_way * (w[0] - v[0]) >= 0.0 and rs3_way * (w[1] - v[1]) >= 0.0
            for w in unique
        )

    return tuple(v for v in unique if not beaten(v))


@dataclass(frozen=True)
class Environment:
    """The non-part variables at their extremes.

    ``temperatures_c``: ends of the operating range (°C); ``source_ohm``: vertices
    ``(Rs1, Rs3)`` of the source-impedance polygon (ohms); ``ref_ohm``: ends of the REF
    impedance range (ohms); ``amp_cmrr``: the amplifier's minimum CMRR (ratio of 1 or more,
    ``inf`` ideal); ``open_loop_gain``: its minimum open-loop gain (ratio, ``inf`` ideal)."""

    temperatures_c: tuple[float, ...] = (REFERENCE_TEMPERATURE_C,)
    source_ohm: tuple[tuple[float, float], ...] = ((0.0, 0.0),)
    ref_ohm: tuple[float, ...] = (0.0,)
    amp_cmrr: float = math.inf
    open_loop_gain: float = math.inf

    def __post_init__(self) -> None:
        if not self.temperatures_c or not all(
            math.isfinite(t) and t > -273.15 for t in self.temperatures_c
        ):
            raise ModelError(
                "environment",
                "temperatures",
                f"expected finite temperatures, got {self.temperatures_c!r}",
            )
        if not self.source_ohm or any(
            len(v) != 2 or not all(math.isfinite(x) and x >= 0.0 for x in v)
            for v in self.source_ohm
        ):
            raise ModelError(
                "environment", "source", f"expected (Rs1, Rs3) pairs ≥ 0, got {self.source_ohm!r}"
            )
        if not self.ref_ohm or not all(math.isfinite(x) and x >= 0.0 for x in self.ref_ohm):
            raise ModelError(
                "environment", "reference", f"expected impedances ≥ 0, got {self.ref_ohm!r}"
            )
        if math.isnan(self.amp_cmrr) or self.amp_cmrr < 1.0:
            # An amplifier's CMRR is a level above 0 dB (parts.Amplifier); the sign arguments
            # of the worst case and the Monte Carlo need |ε| = 1/(2·CMRR) < 1.
            raise ModelError(
                "environment",
                "amp_cmrr",
                f"expected a ratio of 1 (0 dB) or more, got {self.amp_cmrr!r}",
            )
        if math.isnan(self.open_loop_gain) or self.open_loop_gain <= 0.0:
            raise ModelError(
                "environment",
                "open_loop_gain",
                f"expected a ratio above zero, got {self.open_loop_gain!r}",
            )

    @property
    def has_impedance(self) -> bool:
        """True when any source or REF impedance is non-zero (the error is then no longer
        invariant under a common scale of the resistors)."""
        return any(x > 0.0 for v in self.source_ohm for x in v) or any(
            x > 0.0 for x in self.ref_ohm
        )

    @property
    def delta_t_k(self) -> tuple[float, ...]:
        return tuple(float(temperature_offset_k(t)) for t in self.temperatures_c)


#: 25 °C only, no source or REF impedance, ideal amplifier.
IDEAL_ENVIRONMENT = Environment()


def _unique(values: tuple[float, ...]) -> tuple[float, ...]:
    out: list[float] = []
    for v in values:
        if v not in out:
            out.append(v)
    return tuple(out)


def environment_from_spec(spec: Spec) -> Environment:
    """The :class:`Environment` of a spec: temperature range ends, source-impedance polygon
    vertices, REF impedance range ends, the amplifier's minimum CMRR and open-loop gain."""
    req = spec.requirements
    source: SourceImpedance = spec.signal.source
    vertices = source_vertices(source.min_ohm, source.max_ohm, source.imbalance_ohm)
    return Environment(
        temperatures_c=_unique((req.temp_min_c, req.temp_max_c)),
        source_ohm=tuple((float(a), float(b)) for a, b in vertices),
        ref_ohm=_unique((spec.reference.impedance_min_ohm, spec.reference.impedance_max_ohm)),
        amp_cmrr=spec.amplifier.cmrr_ratio,
        open_loop_gain=spec.amplifier.open_loop_gain,
    )


@dataclass(frozen=True)
class AmplifierCorners:
    """The amplifier corners: minimum CMRR with sign ±1, open-loop gain at its minimum and
    at infinity (all ``(k,)`` arrays, ``k ≤ 4``)."""

    cmrr: Array
    sign: Array
    open_loop_gain: Array

    @property
    def count(self) -> int:
        return int(self.cmrr.shape[0])


def amplifier_corners(environment: Environment) -> AmplifierCorners:
    """Amplifier corners: the CMRR sign is unknown (both), the open-loop gain is a minimum
    (``A_min`` and ``inf``); ideal quantities give a single corner."""
    signs = [1.0, -1.0] if math.isfinite(environment.amp_cmrr) else [1.0]
    gains = (
        [environment.open_loop_gain, math.inf]
        if math.isfinite(environment.open_loop_gain)
        else [math.inf]
    )
    sign = np.repeat(np.array(signs), len(gains))
    gain = np.tile(np.array(gains), len(signs))
    return AmplifierCorners(np.full(sign.shape, environment.amp_cmrr), sign, gain)
