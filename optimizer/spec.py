"""The requirement: what the difference amplifier must do, as frozen dataclasses in SI units.

``optimizer.specfile`` reads these from a YAML spec file; the analysis and the solver take them
as they are. Temperatures are in °C; everything else SI (V, Ω, Hz, s, fractions).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from enum import Enum

from .design import Topology
from .errors import ModelError
from .parts import Amplifier
from .units import exceeds

#: Most Monte-Carlo builds of one run. The run keeps two float64 figures per build for its
#: percentiles (16 bytes) beside chunked work arrays; measured peak memory of ``quartet check``
#: at 10,000,000 builds: about 280 MB.
MAX_SAMPLES = 10_000_000

__all__ = [
    "CmrrBasis",
    "Distribution",
    "DriftModel",
    "Objective",
    "Preferences",
    "Rails",
    "Reference",
    "Requirements",
    "Signal",
    "SourceImpedance",
    "Spec",
    "StockPolicy",
]


def _finite(owner: str, name: str, value: float) -> None:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise ModelError(owner, name, f"expected a finite number, got {value!r}")


def _ordered(owner: str, low_name: str, low: float, high_name: str, high: float) -> None:
    _finite(owner, low_name, low)
    _finite(owner, high_name, high)
    if exceeds(low, high):  # equal within rounding counts as equal (units.NUMBER_REL_TOL)
        raise ModelError(owner, low_name, f"{low_name} {low:g} is above {high_name} {high:g}")


@dataclass(frozen=True)
class Rails:
    """Supply rails in volts: ``negative_v`` < ``positive_v`` (single supply: negative_v = 0)."""

    positive_v: float
    negative_v: float = 0.0

    def __post_init__(self) -> None:
        _finite("rails", "positive", self.positive_v)
        _finite("rails", "negative", self.negative_v)
        if self.negative_v >= self.positive_v:
            raise ModelError(
                "rails",
                "negative",
                f"{self.negative_v:g} V is not below positive {self.positive_v:g} V",
            )


@dataclass(frozen=True)
class SourceImpedance:
    """Source impedance of each input leg: each leg lies in [min_ohm, max_ohm] and the two legs
    differ by at most ``imbalance_ohm``."""

    min_ohm: float = 0.0
    max_ohm: float = 0.0
    imbalance_ohm: float = 0.0

    def __post_init__(self) -> None:
        _ordered("source impedance", "min", self.min_ohm, "max", self.max_ohm)
        if self.min_ohm < 0.0:
            raise ModelError(
                "source impedance", "min", f"expected zero or more, got {self.min_ohm:g}"
            )
        _finite("source impedance", "imbalance", self.imbalance_ohm)
        if self.imbalance_ohm < 0.0:
            raise ModelError(
                "source impedance",
                "imbalance",
                f"expected zero or more, got {self.imbalance_ohm:g}",
            )


@dataclass(frozen=True)
class Signal:
    """The input signal: differential range V2 − V1, common-mode range, highest frequency (Hz)
    and the source impedance. ``ac_rms`` marks the common-mode as an AC (mains) quantity whose
    range is given as peak values; it only affects the safety caution."""

    differential_min_v: float
    differential_max_v: float
    common_mode_min_v: float
    common_mode_max_v: float
    max_frequency_hz: float
    source: SourceImpedance = field(default_factory=SourceImpedance)
    ac: bool = False

    def __post_init__(self) -> None:
        _ordered(
            "signal",
            "differential min",
            self.differential_min_v,
            "differential max",
            self.differential_max_v,
        )
        _ordered(
            "signal",
            "common_mode min",
            self.common_mode_min_v,
            "common_mode max",
            self.common_mode_max_v,
        )
        _finite("signal", "max_frequency", self.max_frequency_hz)
        if self.max_frequency_hz <= 0.0:
            raise ModelError(
                "signal", "max_frequency", f"expected above zero, got {self.max_frequency_hz:g}"
            )


@dataclass(frozen=True)
class Reference:
    """The REF pin drive: voltage range in volts and source impedance range in ohms."""

    voltage_min_v: float = 0.0
    voltage_max_v: float = 0.0
    impedance_min_ohm: float = 0.0
    impedance_max_ohm: float = 0.0

    def __post_init__(self) -> None:
        _ordered("reference", "voltage min", self.voltage_min_v, "voltage max", self.voltage_max_v)
        _ordered(
            "reference",
            "impedance min",
            self.impedance_min_ohm,
            "impedance max",
            self.impedance_max_ohm,
        )
        if self.impedance_min_ohm < 0.0:
            raise ModelError(
                "reference",
                "impedance min",
                f"expected zero or more, got {self.impedance_min_ohm:g}",
            )


class CmrrBasis(str, Enum):
    """How the CMRR floor is judged: over every corner, or as a production yield."""

    WORST_CASE = "worst_case"
    YIELD = "yield"


class DriftModel(str, Enum):
    """How a part's life drift ``d`` may move it (names of our own).

    ``SYMMETRIC``: ``d ∈ [−D, D]``, either way, independently for every part (a zero-mean
    normal in the Monte Carlo). ``ONE_SIDED``: ``d ∈ [0, D]``: load-life drift of film
    resistors is mostly one-signed and similar between parts of one kind (common practice, from
    memory), so it moves the gain more than the balance; the Monte Carlo draws it as a
    component shared by the parts of one kind plus an individual one
    (:data:`optimizer.analysis.drift.DRIFT_SHARED_VARIANCE`). The ratio drift of a network's
    elements is a mismatch and stays symmetric in both models."""

    SYMMETRIC = "symmetric"
    ONE_SIDED = "one_sided"


@dataclass(frozen=True)
class Requirements:
    """What the amplifier must achieve.

    ``gain_accuracy`` is the allowed relative gain error (0.001 = ±0.1 %) over temperature and
    life; ``cmrr_floor_db`` the CMRR floor; ``yield_target`` the fraction of builds that must
    meet both when ``cmrr_basis`` is ``YIELD``; ``life_s`` the operating life (seconds) for
    drift; ``min_input_impedance_ohm`` a floor on the differential and common-mode input
    impedance; ``max_output_noise_v_rms`` a ceiling on the output noise in the band
    [``noise_band_low_hz``, ``noise_band_high_hz``]; ``drift_model`` how life drift moves the
    parts (:class:`DriftModel`).
    """

    gain: float
    gain_accuracy: float
    cmrr_floor_db: float
    temp_min_c: float = 25.0
    temp_max_c: float = 25.0
    cmrr_basis: CmrrBasis = CmrrBasis.WORST_CASE
    yield_target: float = 0.999
    life_s: float = 0.0
    min_input_impedance_ohm: float = 0.0
    max_output_noise_v_rms: float | None = None
    noise_band_low_hz: float = 0.1
    noise_band_high_hz: float | None = None
    drift_model: DriftModel = DriftModel.SYMMETRIC

    def __post_init__(self) -> None:
        owner = "requirements"
        if not isinstance(self.drift_model, DriftModel):
            raise ModelError(
                owner,
                "drift_model",
                f"expected one of {', '.join(m.value for m in DriftModel)}, "
                f"got {self.drift_model!r}",
            )
        _finite(owner, "gain", self.gain)
        if self.gain <= 0.0:
            raise ModelError(owner, "gain", f"expected a gain above zero, got {self.gain:g}")
        _finite(owner, "gain_accuracy", self.gain_accuracy)
        if not 0.0 < self.gain_accuracy < 1.0:
            raise ModelError(
                owner,
                "gain_accuracy",
                f"expected a fraction between 0 and 100 %, got {self.gain_accuracy:g}",
            )
        _finite(owner, "cmrr_floor", self.cmrr_floor_db)
        _ordered(owner, "temperature min", self.temp_min_c, "temperature max", self.temp_max_c)
        if self.temp_min_c < -273.15:
            raise ModelError(owner, "temperature min", "below absolute zero")
        _finite(owner, "yield", self.yield_target)
        if not 0.0 < self.yield_target < 1.0:
            raise ModelError(
                owner,
                "yield",
                f"expected a fraction between 0 and 100 % (exclusive), got {self.yield_target:g}",
            )
        _finite(owner, "life", self.life_s)
        if self.life_s < 0.0:
            raise ModelError(owner, "life", "expected zero or more")
        _finite(owner, "min_input_impedance", self.min_input_impedance_ohm)
        if self.min_input_impedance_ohm < 0.0:
            raise ModelError(owner, "min_input_impedance", "expected zero or more")
        if self.max_output_noise_v_rms is not None:
            _finite(owner, "max_output_noise", self.max_output_noise_v_rms)
            if self.max_output_noise_v_rms <= 0.0:
                raise ModelError(owner, "max_output_noise", "expected above zero")
        if self.noise_band_high_hz is not None:
            _ordered(
                owner,
                "noise band low",
                self.noise_band_low_hz,
                "noise band high",
                self.noise_band_high_hz,
            )
        if self.noise_band_low_hz <= 0.0:
            raise ModelError(owner, "noise band low", "expected above zero")


class StockPolicy(str, Enum):
    """Whether house stock limits or steers the pick."""

    ANY = "any"
    ONLY = "only"
    PREFER = "prefer"


class Objective(str, Enum):
    """What the pick minimises or maximises (names of our own)."""

    COST = "lowest_cost"
    CMRR_MARGIN = "most_cmrr_margin"
    PLACEMENTS = "fewest_placements"


class Distribution(str, Enum):
    """Distribution of a part's value inside its tolerance for Monte Carlo."""

    UNIFORM = "uniform"
    NORMAL = "normal"


@dataclass(frozen=True)
class Preferences:
    """How to search: topologies, catalogs, stock policy, alternatives, objective, statistics.

    ``resistance_min_ohm``/``resistance_max_ohm`` bound the values the pick considers for any
    position (default 100 Ω … 1 MΩ: inputs well above typical source impedances, feedback
    low enough for bias-current and noise budgets — common practice)."""

    topologies: tuple[Topology, ...] = tuple(Topology)
    catalogs: tuple[str, ...] = ()
    use_builtin_catalogs: bool = True
    stock: StockPolicy = StockPolicy.ANY
    stock_penalty: float = 0.0
    alternatives: int = 10
    objective: Objective = Objective.COST
    cost_cap: float | None = None
    placement_cost: float = 0.0
    line_cost: float = 0.0
    distribution: Distribution = Distribution.NORMAL
    sigma_k: float = 3.0
    samples: int = 100_000
    seed: int = 1
    same_lot_tracking: bool = False
    resistance_min_ohm: float = 100.0
    resistance_max_ohm: float = 1e6

    def __post_init__(self) -> None:
        owner = "preferences"
        _ordered(
            owner,
            "resistance_range min",
            self.resistance_min_ohm,
            "resistance_range max",
            self.resistance_max_ohm,
        )
        if self.resistance_min_ohm <= 0.0:
            raise ModelError(owner, "resistance_range min", "expected above zero")
        if not self.topologies:
            raise ModelError(owner, "topologies", "expected at least one topology")
        if (
            isinstance(self.alternatives, bool)
            or not isinstance(self.alternatives, int)
            or not 1 <= self.alternatives <= 1000
        ):
            raise ModelError(
                owner,
                "alternatives",
                f"expected a whole number from 1 to 1000, got {self.alternatives!r}",
            )
        for name in ("stock_penalty", "placement_cost", "line_cost"):
            value = getattr(self, name)
            _finite(owner, name, value)
            if value < 0.0:
                raise ModelError(owner, name, "expected zero or more")
        if self.cost_cap is not None:
            _finite(owner, "cost_cap", self.cost_cap)
            if self.cost_cap <= 0.0:
                raise ModelError(owner, "cost_cap", "expected above zero")
        _finite(owner, "sigma_k", self.sigma_k)
        if self.sigma_k <= 0.0:
            raise ModelError(owner, "sigma_k", "expected above zero")
        if (
            isinstance(self.samples, bool)
            or not isinstance(self.samples, int)
            or not 100 <= self.samples <= MAX_SAMPLES
        ):
            raise ModelError(
                owner,
                "samples",
                f"expected a whole number from 100 to {MAX_SAMPLES:,}, got {self.samples!r}",
            )
        if isinstance(self.seed, bool) or not isinstance(self.seed, int) or self.seed < 0:
            raise ModelError(
                owner, "seed", f"expected a whole number of zero or more, got {self.seed!r}"
            )

    @property
    def line_penalty(self) -> float:
        """The stock penalty charged per BOM line of a part not in house stock (relative
        units): ``stock_penalty`` with ``stock: prefer``, 0 otherwise (``optimizer.cost``)."""
        return self.stock_penalty if self.stock is StockPolicy.PREFER else 0.0


@dataclass(frozen=True)
class Spec:
    """A whole spec: the amplifier, rails, signal, reference, requirements and preferences.

    ``source_path`` is the file it came from (for messages and relative catalog paths);
    ``title`` the spec file's optional free-text title (for reports)."""

    amplifier: Amplifier
    rails: Rails
    signal: Signal
    reference: Reference
    requirements: Requirements
    preferences: Preferences = field(default_factory=Preferences)
    source_path: str | None = None
    title: str | None = None
    #: Located plausibility warnings from the spec file (a run goes on; shown once).
    warnings: tuple[str, ...] = ()
