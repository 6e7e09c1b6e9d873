"""The canonical battery: plain specs a user would write first, each with its purpose beside it.

The specs and the catalogs they draw on (used by ``tests/solve/test_battery.py``,
``tests/solve/test_classquads.py`` and the benchmark). Each entry is ``(purpose, fields, catalog)``:
``fields`` fill :data:`SPEC` (defaults in :func:`spec_text`), ``catalog`` names the parts the
spec draws on (:data:`CATALOGS`). Every scenario is our own invention (demo data); no number
here is a check value: the checks compare the pick with the independent reference search.
"""

from __future__ import annotations

import functools

from helpers import ROOT

from optimizer.catalog import Catalog, builtin_catalog, catalog_from_parts, load_catalogs
from optimizer.parts import DiscretePart, NetworkPart

#: The spec file of a battery entry (YAML, README "The spec file").
SPEC = """quartet_spec: 1
title: "battery"
amplifier: {{cmrr: {amp_cmrr}, open_loop_gain: {aol}, gbw: 10 MHz, slew_rate: 5 V/us,
            offset_voltage: 0 V, bias_current: 0 A, voltage_noise: 10 nV/rtHz,
            current_noise: 0.1 pA/rtHz, input_range: {{from_negative: 0 V, from_positive: 0 V}},
            output_swing: {{from_negative: 0 V, from_positive: 0 V}}}}
rails: {{positive: 15 V, negative: -15 V}}
signal: {{differential: {{min: -{vd} V, max: {vd} V}}, common_mode: {{min: -5 V, max: 5 V}},
          max_frequency: 1 kHz{source}}}
reference: {{voltage: 0 V{ref}}}
requirements: {{gain: {gain}, gain_accuracy: {acc} %, cmrr_floor: {floor} dB,
               temperature: {{min: {tmin} °C, max: {tmax} °C}}{life}{req}}}
preferences: {{topologies: [{topologies}]{prefs}}}
"""

#: The four kinds the exact frontier serves, and all five.
BUILT = "four_discrete, quad_network, equal_pairs, divider_pairs"
ALL = BUILT + ", pair_plus_discrete"
FIVE_YEARS = ", operating_life: 43800 h"
TEN_YEARS = ", operating_life: 87600 h"
STOCK_FILES = ("examples/house_stock.csv", "examples/house_stock_networks.yaml")

#: Where a battery spec takes its parts: the built-in catalog; the built-in catalog with the
#: invented house stock of ``examples/``; a small catalog for the yield basis, where every
#: design runs the Monte Carlo (see ``tests/solve/test_battery.py``, ``small_catalog``).
CATALOGS = ("builtin", "stock", "small")

BATTERY: list[tuple[str, dict[str, object], str]] = [
    # -- gains and floors, room temperature, ideal amplifier, no source impedance -------------
    ("G = 2, 50 dB, room, discrete only", dict(gain=2, floor=50, topologies="four_discrete"), "builtin"),
    ("G = 2, 50 dB, every topology", dict(gain=2, floor=50, topologies=ALL), "builtin"),
    ("awkward gain 3.3, 56 dB, discrete", dict(gain=3.3, floor=56, topologies="four_discrete"), "builtin"),
    ("awkward attenuation 0.47, 50 dB, discrete", dict(gain=0.47, floor=50, topologies="four_discrete"), "builtin"),
    ("attenuation 0.1, 60 dB, built kinds", dict(gain=0.1, floor=60, topologies=BUILT), "builtin"),
    ("attenuation 0.1, 46 dB, discrete", dict(gain=0.1, floor=46, topologies="four_discrete"), "builtin"),
    ("G = 200, 70 dB, small signal, built kinds", dict(gain=200, floor=70, vd=0.05, topologies=BUILT), "builtin"),
    ("G = 200, 40 dB, discrete", dict(gain=200, floor=40, vd=0.05, topologies="four_discrete"), "builtin"),
    ("G = 100, 86 dB, built kinds", dict(gain=100, floor=86, vd=0.1, topologies=BUILT), "builtin"),
    ("G = 5, 66 dB, discrete", dict(gain=5, floor=66, topologies="four_discrete"), "builtin"),
    ("G = 1, 40 dB: the loosest floor, discrete", dict(gain=1, floor=40, topologies="four_discrete"), "builtin"),
    # -- each topology alone ----------------------------------------------------------------
    ("G = 1, 76 dB, quad only", dict(gain=1, floor=76, topologies="quad_network"), "builtin"),
    ("G = 2, 50 dB, quad only", dict(gain=2, floor=50, topologies="quad_network"), "builtin"),
    ("G = 1, 70 dB, equal pairs only", dict(gain=1, floor=70, topologies="equal_pairs"), "builtin"),
    ("G = 10, 62 dB, divider pairs only", dict(gain=10, floor=62, topologies="divider_pairs"), "builtin"),
    ("G = 2, 56 dB, one dual and two discrete only", dict(gain=2, floor=56, topologies="pair_plus_discrete"), "builtin"),
    # -- floors nothing reaches ---------------------------------------------------------------
    ("G = 1, 80 dB, quad only: nothing reaches it", dict(gain=1, floor=80, topologies="quad_network"), "builtin"),
    ("G = 1, 110 dB, built kinds: nothing the catalog holds", dict(gain=1, floor=110, topologies=BUILT), "builtin"),
    ("G = 10, 100 dB, discrete: nothing", dict(gain=10, floor=100, topologies="four_discrete"), "builtin"),
    # -- temperature and life -----------------------------------------------------------------
    ("G = 20, 60 dB, industrial, 5 years, built kinds",
     dict(gain=20, floor=60, tmin=-20, tmax=85, life=FIVE_YEARS, topologies=BUILT), "builtin"),
    ("G = 1, 60 dB, industrial, 10 years, discrete",
     dict(gain=1, floor=60, tmin=-20, tmax=85, life=TEN_YEARS, topologies="four_discrete"), "builtin"),
    ("G = 10, 66 dB, automotive, 5 years, built kinds",
     dict(gain=10, floor=66, tmin=-40, tmax=125, life=FIVE_YEARS, topologies=BUILT), "builtin"),
    ("G = 5, 40 dB, automotive, discrete",
     dict(gain=5, floor=40, tmin=-40, tmax=125, topologies="four_discrete"), "builtin"),
    ("G = 2, 56 dB, 5 years one-sided drift, discrete",
     dict(gain=2, floor=56, life=FIVE_YEARS, req=", drift_model: one_sided", topologies="four_discrete"), "builtin"),
    ("G = 2, 50 dB, hot only (50 to 85 °C), discrete",
     dict(gain=2, floor=50, tmin=50, tmax=85, topologies="four_discrete"), "builtin"),
    ("G = 2, 56 dB, industrial, same-lot tracking, discrete",
     dict(gain=2, floor=56, tmin=-20, tmax=85, prefs=", same_lot_tracking: true", topologies="four_discrete"), "builtin"),
    # -- gain accuracy ---------------------------------------------------------------------------
    ("G = 10, 60 dB, 0.1 % gain accuracy, discrete", dict(gain=10, floor=60, acc=0.1, topologies="four_discrete"), "builtin"),
    ("G = 1, 70 dB, 0.05 % gain accuracy, built kinds", dict(gain=1, floor=70, acc=0.05, topologies=BUILT), "builtin"),
    # -- the amplifier --------------------------------------------------------------------------
    ("finite amplifier CMRR 90 dB, 70 dB floor, built kinds",
     dict(gain=2, floor=70, amp_cmrr="90 dB", aol="100 dB", topologies=BUILT), "builtin"),
    ("finite amplifier CMRR 80 dB, 60 dB floor, discrete",
     dict(gain=10, floor=60, amp_cmrr="80 dB", aol="90 dB", topologies="four_discrete"), "builtin"),
    ("amplifier CMRR 60 dB under a 66 dB floor: nothing",
     dict(gain=2, floor=66, amp_cmrr="60 dB", aol="100 dB", topologies=BUILT), "builtin"),
    # -- source and REF impedance -------------------------------------------------------------
    ("source impedance with imbalance, G = 10, 60 dB, discrete",
     dict(gain=10, floor=60, topologies="four_discrete", source=", source_impedance: {min: 10, max: 100, imbalance: 20}"), "builtin"),
    ("balanced source impedance, G = 1, 60 dB, built kinds",
     dict(gain=1, floor=60, topologies=BUILT, source=", source_impedance: {min: 50, max: 50, imbalance: 0}"), "builtin"),
    ("source imbalance, G = 10, 60 dB, quad only",
     dict(gain=10, floor=60, topologies="quad_network", source=", source_impedance: {min: 0, max: 20, imbalance: 5}"), "builtin"),
    ("REF impedance, G = 2, 60 dB, built kinds", dict(gain=2, floor=60, topologies=BUILT, ref=", impedance: {min: 0, max: 5}"), "builtin"),
    ("REF impedance, G = 1, 50 dB, discrete", dict(gain=1, floor=50, topologies="four_discrete", ref=", impedance: {min: 10, max: 20}"), "builtin"),
    # -- costs ------------------------------------------------------------------------------------
    ("line and placement costs, G = 2, 50 dB, discrete",
     dict(gain=2, floor=50, topologies="four_discrete", prefs=", line_cost: 0.5, placement_cost: 0.1"), "builtin"),
    ("line cost, G = 5, 56 dB, built kinds", dict(gain=5, floor=56, topologies=BUILT, prefs=", line_cost: 2"), "builtin"),
    ("placement cost, G = 1, 66 dB, built kinds", dict(gain=1, floor=66, topologies=BUILT, prefs=", placement_cost: 1.5"), "builtin"),
    ("narrow resistance window 1k to 100k, G = 5, 60 dB, discrete",
     dict(gain=5, floor=60, topologies="four_discrete", prefs=", resistance_range: {min: 1k, max: 100k}"), "builtin"),
    # -- house stock ------------------------------------------------------------------------------
    ("stock prefer, G = 20, 56 dB, discrete",
     dict(gain=20, floor=56, topologies="four_discrete", prefs=", stock: prefer, stock_penalty: 2"), "stock"),
    ("stock prefer, G = 10, 60 dB, built kinds, line cost",
     dict(gain=10, floor=60, topologies=BUILT, prefs=", stock: prefer, stock_penalty: 0.5, line_cost: 0.2"), "stock"),
    ("stock only, G = 20, 50 dB, every topology", dict(gain=20, floor=50, topologies=ALL, prefs=", stock: only"), "stock"),
    ("stock only, G = 1, 90 dB: nothing in stock", dict(gain=1, floor=90, topologies=BUILT, prefs=", stock: only"), "stock"),
    # -- the yield basis (small catalog: every design runs the Monte Carlo) ----------------------
    ("yield 99 %, G = 2, 46 dB, discrete", dict(gain=2, floor=46, topologies="four_discrete", req=", cmrr_basis: yield, yield: 99 %", prefs=", monte_carlo: {samples: 2000}"), "small"),
    ("yield 99 %, G = 2, 56 dB, every topology", dict(gain=2, floor=56, topologies=ALL, req=", cmrr_basis: yield, yield: 99 %", prefs=", monte_carlo: {samples: 2000}"), "small"),
]  # fmt: skip


#: Plain yield-basis specs over the whole built-in catalog, four discrete parts only (the
#: class-quadruple search, ``optimizer.solve.classquads``); no reference runs here (each of its
#: designs would need a Monte Carlo): the pick must prove its ten, every one passing the exact
#: check (``tests/solve/test_classquads.py``; the benchmark's ``yield`` section times them).
YIELD_SAMPLES = ", monte_carlo: {samples: 2000}"
YIELD_99 = ", cmrr_basis: yield, yield: 99 %"
YIELD_BUILTIN: list[tuple[str, dict[str, object]]] = [
    ("yield, G = 2, 50 dB, room", dict(gain=2, floor=50)),
    ("yield, G = 10, 60 dB, industrial", dict(gain=10, floor=60, tmin=-20, tmax=85)),
    ("yield, awkward gain 3.3, 56 dB, room", dict(gain=3.3, floor=56)),
    ("yield, attenuation 0.47, 50 dB, automotive", dict(gain=0.47, floor=50, tmin=-40, tmax=125)),
    ("yield, G = 100, 70 dB, small signal", dict(gain=100, floor=70, vd=0.1)),
    ("yield, G = 1, 46 dB, automotive (CP-SAT: 60 s, 124.4 unproven)",
     dict(gain=1, floor=46, tmin=-40, tmax=125)),
    ("yield, G = 2, 56 dB, industrial, 5 years", dict(gain=2, floor=56, tmin=-20, tmax=85, life=FIVE_YEARS)),
    ("yield, G = 10, 44 dB, industrial: the loose floor, 1 % gain (was none in 60 s)",
     dict(gain=10, floor=44, tmin=-20, tmax=85)),
    ("yield, G = 5, 44 dB, industrial (was 37 s)", dict(gain=5, floor=44, tmin=-20, tmax=85)),
    ("yield, G = 100, 50 dB, industrial, small signal (was none in 20 s)",
     dict(gain=100, floor=50, tmin=-20, tmax=85, vd=0.05)),
    ("yield, G = 100, 40 dB, industrial: the balance admits a factor of e in R4/R3 (was 47-59 s)",
     dict(gain=100, floor=40, tmin=-20, tmax=85, vd=0.05)),
    ("yield, G = 1, 46 dB, automotive, input impedance 50 kΩ (CP-SAT: none in 60 s)",
     dict(gain=1, floor=46, tmin=-40, tmax=125, req=YIELD_99 + ", min_input_impedance: 50k")),
    ("yield, G = 2, 50 dB, automotive, 20 kΩ and 6 µV noise (CP-SAT: 34.4 unproven)",
     dict(gain=2, floor=50, tmin=-40, tmax=125,
          req=YIELD_99 + ", min_input_impedance: 20k, output_noise: {max: 6 uV}")),
]  # fmt: skip


def yield_fields(fields: dict[str, object]) -> dict[str, object]:
    """A :data:`YIELD_BUILTIN` entry's fields with the yield basis, 2,000 builds and four
    discrete parts filled in."""
    return {"topologies": "four_discrete", "req": YIELD_99, "prefs": YIELD_SAMPLES, **fields}


def spec_text(fields: dict[str, object]) -> str:
    """The spec text of one battery entry: :data:`SPEC` with the defaults filled in (ideal
    amplifier, ±1 V differential but at most ±5 V of output, 1 % gain accuracy, 25 °C)."""
    values: dict[str, object] = dict(amp_cmrr="ideal", aol="ideal", source="", ref="", acc=1,
                                     tmin=25, tmax=25, life="", req="", prefs="")  # fmt: skip
    values.update(fields)
    if "vd" not in fields:  # keep the output inside the ±15 V rails with room to spare
        values["vd"] = round(min(1.0, 5.0 / float(str(values["gain"]))), 4)
    return SPEC.format(**values)


def small_catalog() -> Catalog:
    """Invented parts for the yield-basis specs (demo data): three grades at 10 k and 20 k, a
    gain-2 quad and a 10 k/20 k dual. Every one of its designs is checked by the Monte Carlo,
    so it must stay small (6⁴ discrete designs)."""
    grades = [("A", 0.01, 100e-6, 1.0), ("B", 0.005, 50e-6, 2.5), ("C", 0.001, 25e-6, 6.0)]
    discrete = [
        DiscretePart(f"SM-{g}-{int(v / 1000)}K", v, t, tc, "0603", 0.1, 75.0, cost)
        for g, t, tc, cost in grades
        for v in (10e3, 20e3)
    ]
    networks = [
        NetworkPart("SMN-Q2", (10e3, 20e3, 10e3, 20e3), 0.005, 0.001, 25e-6, 5e-6, 0.1, 80.0, 9.0),
        NetworkPart("SMN-D2", (10e3, 20e3), 0.005, 0.001, 25e-6, 5e-6, 0.1, 80.0, 5.0),
    ]
    return catalog_from_parts(discrete, networks, source="battery-small")


@functools.cache
def catalog(kind: str) -> Catalog:
    """The catalog a battery entry names (:data:`CATALOGS`), built once."""
    if kind == "builtin":
        return builtin_catalog()
    if kind == "stock":
        return load_catalogs([str(ROOT / f) for f in STOCK_FILES])
    return small_catalog()
