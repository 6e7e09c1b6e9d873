"""The exhaustive reference enumerator: every design a spec allows from a catalog, verified by
the exact check, cheapest first. It is the oracle the CP-SAT pick is tested against.

This is an independent code path: it does not use the solver's linear model, its option
table, its discrete value/class factoring or its search (``optimizer.solve.model``,
``options``, ``discrete``, ``search``, ``environment``). It uses only the definitions the pick
must agree with: :func:`optimizer.verify.verify` ("meets the spec"), :func:`optimizer.cost.
design_cost` ("cost") and the :class:`~optimizer.design.Design` model of topologies.

What "every design the spec allows" means here:

* discrete parts whose value lies inside the spec's resistance window
  ``[resistance_min_ohm, resistance_max_ohm]`` (relative allowance :data:`WINDOW_SLACK` for
  values written in engineering notation) and, with stock policy ``only``, in house stock;
* networks whose every element value lies inside the same window (and, with ``only``, in
  stock); two-element networks fill a pair of positions, four-element networks all four;
* every allowed topology: ``four_discrete`` (any part at any position, repeats allowed),
  ``quad_network`` (every element order), ``equal_pairs`` (R1, R3) + (R2, R4) and
  ``divider_pairs`` (R1, R2) + (R3, R4) (each pair from any dual in either order; the same
  dual may be used twice, as package 0 and package 1), ``pair_plus_discrete`` (one dual, in
  either order, on any two of the four positions, any discrete parts on the other two);
* element orders that put the same values at the same positions are the same design
  electrically (every element of a package has the same bounds), so only the first such
  order (in ``itertools.permutations`` order) is kept.

:func:`reference_search` sorts by ``(cost.total, stable key)`` and verifies in that order
until ``top`` designs pass; for an infeasible spec it verifies every design. Designs are
skipped without a full verification only where :func:`optimizer.verify.verify` must fail, and
only when the verifier *is* ``verify``: a corner bound on the worst-case CMRR and gain error
(:func:`_screen`, worst-case basis) and verify's own input-impedance and noise checks run
first (:func:`fails_a_check`). Catalogs whose design count exceeds :data:`MAX_DESIGNS` are
refused with :class:`TooManyDesigns`.

Pure: no printing, no files.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..analysis.balance import common_mode_error, rejection_db
from ..analysis.checks import Outcome, check_input_impedance, check_output_noise
from ..analysis.environment import amplifier_corners, environment_from_spec
from ..analysis.transfer import coefficients, common_mode_gain, differential_gain
from ..analysis.variation import resistances, variation_from_design, vertex_values
from ..catalog import Catalog
from ..cost import CostBreakdown, design_cost
from ..design import Design, Placement, Topology
from ..errors import ModelError, QuartetError
from ..parts import DiscretePart, NetworkPart
from ..spec import CmrrBasis, Spec, StockPolicy
from ..verify import verify
from .verdict import Verdict, Verifier

__all__ = [
    "MAX_DESIGNS",
    "WINDOW_SLACK",
    "ReferenceResult",
    "Screened",
    "TooManyDesigns",
    "allowed_discrete",
    "allowed_networks",
    "design_count",
    "enumerate_designs",
    "fails_a_check",
    "reference_pick",
    "reference_search",
    "screen_designs",
]

#: Largest number of designs the enumerator accepts (beyond it the run would take hours).
MAX_DESIGNS = 500_000
#: Relative allowance at the ends of the resistance window (a value written "100" that reads
#: back as 99.99999999 Ω still counts as 100 Ω).
WINDOW_SLACK = 1e-9
#: Margins by which the corner bound of :func:`_screen` must miss a limit before a
#: design is skipped: far above float64 rounding of the same arithmetic, far below any limit
#: a spec can state.
CMRR_MARGIN_DB = 1e-7
GAIN_MARGIN = 1e-9
#: Corner evaluations per chunk of the vectorised bound (keeps memory near 100 MB).
_CHUNK_EVALUATIONS = 1_500_000

# Sign of each position (R1..R4) at the corners that push x = (R3'+R4')/R4'·R2/(R1'+R2) up
# and the differential gain up (optimizer.analysis.worstcase: x rises with R2, R3 and falls
# with R1, R4; Adm rises with R2, R4 and falls with R1, R3); the opposite corners push down.
_PATTERNS = np.array(
    [
        [-1.0, 1.0, 1.0, -1.0],
        [1.0, -1.0, -1.0, 1.0],
        [-1.0, 1.0, -1.0, 1.0],
        [1.0, -1.0, 1.0, -1.0],
    ]
)


class TooManyDesigns(QuartetError, ValueError):
    """The catalog allows more designs than the reference enumerator will try."""

    def __init__(self, count: int, limit: int, detail: str) -> None:
        self.count = count
        self.limit = limit
        super().__init__(
            f"reference enumeration refused: the spec allows {count:,} designs from this catalog "
            f"({detail}), more than the limit of {limit:,}; narrow the resistance window, the "
            "topologies or the catalog"
        )


# ---------------------------------------------------------------------------------------------
# What the spec allows
# ---------------------------------------------------------------------------------------------


def _in_window(ohms: float, spec: Spec) -> bool:
    """``ohms`` inside the spec's resistance window (ends included, :data:`WINDOW_SLACK`)."""
    prefs = spec.preferences
    return (
        prefs.resistance_min_ohm * (1.0 - WINDOW_SLACK)
        <= ohms
        <= prefs.resistance_max_ohm * (1.0 + WINDOW_SLACK)
    )


def _allowed_rows(spec: Spec, catalog: Catalog) -> NDArray[np.int64]:
    """Row positions of the discrete parts the spec allows (vectorised: a catalog of a million
    rows is counted without building a part object)."""
    prefs = spec.preferences
    frame = catalog.discrete
    values = frame["resistance_ohm"].to_numpy(dtype=float)
    keep = (values >= prefs.resistance_min_ohm * (1.0 - WINDOW_SLACK)) & (
        values <= prefs.resistance_max_ohm * (1.0 + WINDOW_SLACK)
    )
    if prefs.stock is StockPolicy.ONLY:
        keep &= frame["stock_qty"].to_numpy() > 0
    return np.flatnonzero(keep).astype(np.int64)


def allowed_discrete(spec: Spec, catalog: Catalog) -> list[DiscretePart]:
    """Discrete parts the spec allows: inside the resistance window and, with stock policy
    ``only``, in stock. Catalog order."""
    return catalog.discrete_parts(int(i) for i in _allowed_rows(spec, catalog))


def allowed_networks(spec: Spec, catalog: Catalog) -> list[NetworkPart]:
    """Networks the spec allows: every element inside the resistance window and, with stock
    policy ``only``, in stock. Catalog order."""
    only = spec.preferences.stock is StockPolicy.ONLY
    return [
        n
        for n in catalog.networks
        if all(_in_window(v, spec) for v in n.values_ohm) and (n.in_stock or not only)
    ]


@dataclass(frozen=True)
class _Option:
    """One way to fill ``positions`` (0-based, ascending) with one part: a discrete part
    (``elements`` None) or elements of a network, ``elements[j]`` at ``positions[j]``."""

    part: DiscretePart | NetworkPart
    positions: tuple[int, ...]
    elements: tuple[int, ...] | None = None


def _network_options(network: NetworkPart, positions: tuple[int, ...]) -> list[_Option]:
    """Every element order of ``network`` on ``positions``, one per distinct value layout."""
    seen: set[tuple[float, ...]] = set()
    options: list[_Option] = []
    for order in itertools.permutations(range(network.elements), len(positions)):
        layout = tuple(network.values_ohm[e] for e in order)
        if layout in seen:
            continue
        seen.add(layout)
        options.append(_Option(network, positions, tuple(order)))
    return options


@dataclass(frozen=True)
class _Family:
    """Designs of one shape: the product of one option per slot (slots cover R1..R4 exactly)."""

    topology: Topology
    slots: tuple[tuple[_Option, ...], ...]

    @property
    def count(self) -> int:
        return math.prod(len(s) for s in self.slots)


PAIR_SHAPES = tuple(itertools.combinations(range(4), 2))


def _layouts(network: NetworkPart, size: int) -> int:
    """How many distinct value layouts ``network`` has on ``size`` positions."""
    return len(
        {
            tuple(network.values_ohm[e] for e in o)
            for o in itertools.permutations(range(network.elements), size)
        }
    )


def _counts(spec: Spec, catalog: Catalog) -> dict[Topology, int]:
    """Designs per allowed topology (only counting: nothing is built)."""
    d = len(_allowed_rows(spec, catalog))
    networks = allowed_networks(spec, catalog)
    pairs = sum(_layouts(n, 2) for n in networks if n.elements == 2)
    quads = sum(_layouts(n, 4) for n in networks if n.elements == 4)
    every = {
        Topology.DISCRETE: d**4,
        Topology.QUAD: quads,
        Topology.EQUAL_PAIRS: pairs**2,
        Topology.DIVIDER_PAIRS: pairs**2,
        Topology.PAIR_PLUS_DISCRETE: len(PAIR_SHAPES) * pairs * d**2,
    }
    return {t: every[t] for t in Topology if t in spec.preferences.topologies}


def design_count(spec: Spec, catalog: Catalog) -> int:
    """How many designs :func:`enumerate_designs` yields for ``spec`` and ``catalog``."""
    return sum(_counts(spec, catalog).values())


def _checked_families(
    spec: Spec, catalog: Catalog, max_designs: int = MAX_DESIGNS
) -> list[_Family]:
    """The families of designs, after refusing more than ``max_designs`` of them."""
    counts = _counts(spec, catalog)
    total = sum(counts.values())
    if total > max_designs:
        detail = ", ".join(f"{t.value} {n:,}" for t, n in counts.items() if n)
        raise TooManyDesigns(total, max_designs, detail)
    topologies = set(spec.preferences.topologies)
    discrete = allowed_discrete(spec, catalog)
    networks = allowed_networks(spec, catalog)
    duals = [n for n in networks if n.elements == 2]
    quads = [n for n in networks if n.elements == 4]

    def singles(position: int) -> tuple[_Option, ...]:
        return tuple(_Option(p, (position,)) for p in discrete)

    def pairs(shape: tuple[int, ...]) -> tuple[_Option, ...]:
        return tuple(o for n in duals for o in _network_options(n, shape))

    families: list[_Family] = []
    for topology in Topology:  # a fixed order, whatever the order in the spec
        if topology not in topologies:
            continue
        if topology is Topology.DISCRETE:
            families.append(_Family(topology, tuple(singles(i) for i in range(4))))
        elif topology is Topology.QUAD:
            options = tuple(o for n in quads for o in _network_options(n, (0, 1, 2, 3)))
            families.append(_Family(topology, (options,)))
        elif topology is Topology.EQUAL_PAIRS:
            families.append(_Family(topology, (pairs((0, 2)), pairs((1, 3)))))
        elif topology is Topology.DIVIDER_PAIRS:
            families.append(_Family(topology, (pairs((0, 1)), pairs((2, 3)))))
        else:
            for shape in PAIR_SHAPES:
                rest = [i for i in range(4) if i not in shape]
                families.append(
                    _Family(topology, (pairs(shape), singles(rest[0]), singles(rest[1])))
                )
    families = [f for f in families if f.count > 0]
    assert sum(f.count for f in families) == total
    return families


def _design(options: Sequence[_Option]) -> Design:
    """The design made of ``options`` (one per slot). Network packages are numbered per part
    in the order of their first position, so a dual used twice is package 0 then 1."""
    slots: dict[int, Placement] = {}
    used: dict[str, int] = {}
    for option in sorted(options, key=lambda o: o.positions[0]):
        if option.elements is None:
            position = option.positions[0]
            slots[position] = Placement(f"R{position + 1}", option.part)
            continue
        package = used.get(option.part.part_id, 0)
        used[option.part.part_id] = package + 1
        for position, element in zip(option.positions, option.elements, strict=True):
            slots[position] = Placement(f"R{position + 1}", option.part, element, package)
    return Design((slots[0], slots[1], slots[2], slots[3]))


def enumerate_designs(spec: Spec, catalog: Catalog) -> Iterator[Design]:
    """Every design ``spec`` allows from ``catalog`` (module docstring), each once, by topology
    in :class:`Topology` order. Raises :class:`TooManyDesigns` beyond :data:`MAX_DESIGNS`."""
    for family in _checked_families(spec, catalog):
        for combination in itertools.product(*family.slots):
            yield _design(combination)


# ---------------------------------------------------------------------------------------------
# Designs that must fail the exact check
# ---------------------------------------------------------------------------------------------


_IDEAL = DiscretePart("ideal-filler", 1.0, 0.0, 0.0, "ideal", 1.0, 1.0, 0.0)


def _option_corners(option: _Option, spec: Spec, delta_t_k: float) -> NDArray[np.float64]:
    """Resistances (K, len(positions)) of the option's positions at the part-variable corners
    the worst case evaluates at ``ΔT = delta_t_k``: the option placed in a design whose other
    positions hold an ideal part, through the worst case's own ``variation_from_design``,
    ``vertex_values`` and ``resistances``. A position's corner values depend only on its own
    part (and package), so they are the values the worst case uses in any design holding
    this option."""
    fill = list(option.positions)
    others = [i for i in range(4) if i not in fill]
    placements: dict[int, Placement] = {i: Placement(f"R{i + 1}", _IDEAL) for i in others}
    if option.elements is None:
        placements[fill[0]] = Placement(f"R{fill[0] + 1}", option.part)
    else:
        for position, element in zip(fill, option.elements, strict=True):
            placements[position] = Placement(f"R{position + 1}", option.part, element, 0)
    design = Design((placements[0], placements[1], placements[2], placements[3]))
    variation = variation_from_design(
        design, spec.requirements.life_s, False, spec.requirements.drift_model
    )
    r = resistances(variation, vertex_values(variation, delta_t_k), delta_t_k)
    return np.unique(r[:, fill], axis=0)


def _corner_bounds(
    family: _Family, combos: NDArray[np.int64], spec: Spec
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """For each design (row of ``combos``: option index per slot) the largest common-mode error
    and the smallest and largest |Adm| over a *subset* of the corners the exact worst case
    evaluates: at both ends of the temperature range, every source-impedance vertex, REF
    impedance end and amplifier corner; every corner of each network package; and, for the
    discrete positions, the four sign patterns of :data:`_PATTERNS` (one sign per part, as in
    ``vertex_values``)."""
    environment = environment_from_spec(spec)
    source = np.array(environment.source_ohm, dtype=float)
    ref = np.array(environment.ref_ohm, dtype=float)
    rs1 = np.repeat(source[:, 0], ref.size)[:, None]
    rs3 = np.repeat(source[:, 1], ref.size)[:, None]
    rref = np.tile(ref, source.shape[0])[:, None]
    amp = amplifier_corners(environment)
    n = combos.shape[0]
    cm_max = np.zeros(n)
    gain_min = np.full(n, np.inf)
    gain_max = np.zeros(n)
    discrete_slots = [s for s, opts in enumerate(family.slots) if opts[0].elements is None]
    network_slots = [s for s, opts in enumerate(family.slots) if opts[0].elements is not None]
    for dt in environment.delta_t_k:
        # Network slots: every corner row of every option, padded to one row count per slot.
        tables: dict[int, NDArray[np.float64]] = {}
        for s in network_slots:
            rows = [_option_corners(o, spec, dt) for o in family.slots[s]]
            k = max(r.shape[0] for r in rows)
            tables[s] = np.stack(
                [np.concatenate([r, np.repeat(r[:1], k - r.shape[0], axis=0)]) for r in rows]
            )
        # Discrete slots: the low and high corner value of each part.
        ends: dict[int, NDArray[np.float64]] = {}
        for s in discrete_slots:
            values = [_option_corners(o, spec, dt)[:, 0] for o in family.slots[s]]
            ends[s] = np.array([[v.min(), v.max()] for v in values])
        patterns = _PATTERNS.shape[0] if discrete_slots else 1
        axes = [np.arange(patterns)] + [np.arange(tables[s].shape[1]) for s in network_slots]
        grid = [g.ravel() for g in np.meshgrid(*axes, indexing="ij")]
        m = grid[0].size
        per_design = m * rs1.shape[0] * amp.count
        step = max(1, _CHUNK_EVALUATIONS // per_design)
        for start in range(0, n, step):
            rows_ = combos[start : start + step]
            r = np.empty((rows_.shape[0], m, 4))
            for s in discrete_slots:
                position = family.slots[s][0].positions[0]
                high = _PATTERNS[grid[0], position] > 0.0
                pair = ends[s][rows_[:, s]]  # (c, 2)
                r[:, :, position] = np.where(high[None, :], pair[:, 1:2], pair[:, 0:1])
            for j, s in enumerate(network_slots):
                chosen = tables[s][rows_[:, s]]  # (c, K, len(positions))
                picked = chosen[:, grid[1 + j], :]  # (c, m, len(positions))
                for col, position in enumerate(family.slots[s][0].positions):
                    r[:, :, position] = picked[:, :, col]
            col4 = (slice(None), slice(None), None, None)
            k = coefficients(
                r[:, :, 0][col4], r[:, :, 1][col4], r[:, :, 2][col4], r[:, :, 3][col4],
                rs1[None, None], rs3[None, None], rref[None, None],
                amp.open_loop_gain[None, None, None, :], amp.cmrr[None, None, None, :],
                amp.sign[None, None, None, :],
            )  # fmt: skip
            adm = differential_gain(k)
            cm = common_mode_error(common_mode_gain(k), adm)
            gain = np.abs(adm)
            block = slice(start, start + rows_.shape[0])
            cm_max[block] = np.maximum(cm_max[block], cm.max(axis=(1, 2, 3)))
            gain_min[block] = np.minimum(gain_min[block], gain.min(axis=(1, 2, 3)))
            gain_max[block] = np.maximum(gain_max[block], gain.max(axis=(1, 2, 3)))
    return cm_max, gain_min, gain_max


def _screen(
    family: _Family, combos: NDArray[np.int64], spec: Spec
) -> tuple[NDArray[np.bool_], NDArray[np.float64], NDArray[np.float64]]:
    """For each design (row of ``combos``): whether :func:`optimizer.verify.verify` must reject
    it on the worst-case basis, the corner bound on its worst-case CMRR (dB; the worst case is
    at or below it) and the corner bound on its worst-case gain error (the worst case is at or
    above it).

    Why a design marked failing fails ``verify``: on the worst-case basis ``verify`` fails a
    design whose worst-case CMRR is below the floor or whose worst-case gain error exceeds the
    accuracy (``cmrr_margin``, ``gain_margin``). The worst case (``analysis.worstcase``) takes
    the largest common-mode error and the extremes of |Adm| over *all* its corners (temperature
    ends x part-variable vertices x source vertices x REF ends x amplifier corners), and its
    scale search can only add points. :func:`_corner_bounds` evaluates a subset of exactly
    those corners, with the worst case's own functions for the corner resistances and the
    transfer, so its largest error is no larger and its |Adm| range no wider than the worst
    case's. A design whose subset already misses the floor or the accuracy (by the margins
    :data:`CMRR_MARGIN_DB` and :data:`GAIN_MARGIN`, far above float rounding) therefore fails
    ``verify``. Not used on the yield basis (the Monte Carlo's normal draws are unbounded) nor
    with same-lot tracking (shared tempcos change the corner set)."""
    req = spec.requirements
    cm_max, gain_min, gain_max = _corner_bounds(family, combos, spec)
    with np.errstate(divide="ignore"):
        cmrr_db = np.asarray(rejection_db(cm_max), dtype=float)
    gain_error = np.maximum(gain_max / req.gain - 1.0, 1.0 - gain_min / req.gain)
    limit = req.gain_accuracy * (1.0 + GAIN_MARGIN) + GAIN_MARGIN
    failing = (cmrr_db < req.cmrr_floor_db - CMRR_MARGIN_DB) | (gain_error > limit)
    return failing, cmrr_db, gain_error


def _combos(family: _Family) -> NDArray[np.int64]:
    """Every design of ``family`` as a row of option indices, one per slot."""
    sizes = [len(s) for s in family.slots]
    rows = list(itertools.product(*(range(k) for k in sizes)))
    return np.array(rows, dtype=np.int64).reshape(len(rows), len(sizes))


@dataclass(frozen=True)
class Screened:
    """A design with its corner bounds (:func:`_screen`): ``cmrr_db_bound`` (the worst-case CMRR
    is at or below it), ``gain_error_bound`` (the worst-case gain error is at or above it) and
    ``failing`` (the bounds already miss the spec: ``verify`` must reject it)."""

    design: Design
    cmrr_db_bound: float
    gain_error_bound: float
    failing: bool


def screen_designs(spec: Spec, catalog: Catalog) -> Iterator[Screened]:
    """Every design of :func:`enumerate_designs` with its corner bounds (worst-case basis; the
    bounds ignore ``Requirements.cmrr_basis``)."""
    for family in _checked_families(spec, catalog):
        combos = _combos(family)
        failing, cmrr_db, gain_error = _screen(family, combos, spec)
        for row, fail, level, error in zip(combos, failing, cmrr_db, gain_error, strict=True):
            design = _design([family.slots[s][int(i)] for s, i in enumerate(row)])
            yield Screened(design, float(level), float(error), bool(fail))


def fails_a_check(design: Design, spec: Spec) -> bool:
    """Whether the input-impedance or output-noise check fails: ``verify`` runs both (through
    ``run_checks``) on the same design and spec and fails every design for which a check with
    a requirement (a limit that is not NaN) does not pass, so this is a cheaper first stage of
    ``verify`` (about a tenth of its time) and never rejects a design ``verify`` accepts."""
    results: tuple[Outcome, ...] = (
        *check_input_impedance(design, spec),
        check_output_noise(design, spec),
    )
    return any(not r.passed and not math.isnan(r.limit) for r in results)


# ---------------------------------------------------------------------------------------------
# The reference pick
# ---------------------------------------------------------------------------------------------


def _stable_key(design: Design) -> tuple[tuple[str, int, int], ...]:
    """Tie-break among designs of equal cost: part ids, elements and packages R1..R4."""
    return tuple(
        (p.part.part_id, -1 if p.element is None else p.element, p.package)
        for p in design.placements
    )


@dataclass(frozen=True)
class ReferenceResult:
    """The outcome of :func:`reference_search`.

    ``ranked``: (cost, design, verdict) of the cheapest passing designs, best first;
    ``designs``: designs the spec allows; ``skipped``: designs the corner bound
    (:func:`_screen`) excluded; ``prechecked``: designs :func:`fails_a_check` excluded;
    ``verified``: designs verified; ``rejected``: of those, the ones that failed."""

    ranked: tuple[tuple[CostBreakdown, Design, Verdict], ...]
    designs: int
    skipped: int
    prechecked: int
    verified: int
    rejected: int


def reference_search(
    spec: Spec,
    catalog: Catalog,
    verifier: Verifier = verify,
    top: int = 1,
    *,
    prune: bool | None = None,
    max_designs: int = MAX_DESIGNS,
) -> ReferenceResult:
    """The ``top`` cheapest designs from ``catalog`` that pass ``verifier``, found by trying
    every design ``spec`` allows in order of (cost, stable key).

    ``prune`` (default: when ``verifier`` is :func:`optimizer.verify.verify`) skips designs
    ``verify`` must reject: on the worst-case basis without same-lot tracking those whose
    corner bound misses the CMRR floor or the gain accuracy (:func:`_screen`), and on any basis
    those that fail the input-impedance or noise check (:func:`fails_a_check`), before the
    full verification. ``prune=False`` verifies every design. More than ``max_designs`` designs
    raise :class:`TooManyDesigns` (the benchmark raises the limit to time larger catalogs)."""
    if isinstance(top, bool) or not isinstance(top, int) or top < 1:
        raise ModelError(
            "reference search", "top", f"expected a whole number of 1 or more, got {top!r}"
        )
    families = _checked_families(spec, catalog, max_designs)
    if prune is None:
        prune = verifier is verify
    elif prune and verifier is not verify:
        raise ModelError(
            "reference search", "prune", "the screens are implied only by optimizer.verify.verify"
        )
    bound = (
        prune
        and spec.requirements.cmrr_basis is CmrrBasis.WORST_CASE
        and not spec.preferences.same_lot_tracking
    )
    total = 0
    skipped = 0
    candidates: list[tuple[float, tuple[tuple[str, int, int], ...], CostBreakdown, Design]] = []
    for family in families:
        combos = _combos(family)
        total += combos.shape[0]
        if bound:
            failing = _screen(family, combos, spec)[0]
            skipped += int(failing.sum())
            combos = combos[~failing]
        for row in combos:
            design = _design([family.slots[s][int(i)] for s, i in enumerate(row)])
            cost = design_cost(design, spec.preferences)
            candidates.append((cost.total, _stable_key(design), cost, design))
    candidates.sort(key=lambda c: (c[0], c[1]))
    ranked: list[tuple[CostBreakdown, Design, Verdict]] = []
    prechecked = 0
    verified = 0
    for _, _, cost, design in candidates:
        if prune and fails_a_check(design, spec):
            prechecked += 1
            continue
        verdict = verifier(design, spec)
        verified += 1
        if verdict.passed:
            ranked.append((cost, design, verdict))
            if len(ranked) >= top:
                break
    return ReferenceResult(
        tuple(ranked), total, skipped, prechecked, verified, verified - len(ranked)
    )


def reference_pick(
    spec: Spec, catalog: Catalog, verifier: Verifier = verify, top: int = 1
) -> list[tuple[CostBreakdown, Design]]:
    """The ``top`` cheapest passing designs as (cost, design), sorted by (cost.total, stable
    key); empty when no design passes. See :func:`reference_search`."""
    result = reference_search(spec, catalog, verifier, top)
    return [(cost, design) for cost, design, _ in result.ranked]
