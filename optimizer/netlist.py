"""SPICE netlists of the four-resistor difference amplifier (pure: every function returns text).

The circuit is the one of :mod:`optimizer.analysis.transfer`: V1 drives R1 through its source
impedance RS1, V2 drives R3 through RS3, VREF drives R4 through RREF; R2 is the feedback
resistor. A source impedance of exactly zero is not a tiny resistor: the element is left out
and the source drives the resistor directly, so the netlist solves the same equations as the
closed form.

The amplifier is modelled exactly as the analysis models it,
``Vout = A·[(V+ - V-) + s·(V+ + V-)/(2·CMRR)]``, with linear voltage-controlled voltage
sources (SPICE ``E`` elements; every SPICE accepts them and ngspice stamps them straight into
its linear system, no iteration):

* node ``x`` carries the bracket: ``EDM x m inp inn 1`` gives ``V+ - V-``; when CMRR is finite
  ``ECP m n inp 0 ε`` and ``ECN n 0 inn 0 ε`` stack ``ε·V+`` and ``ε·V-`` on it, with
  ``ε = s/(2·CMRR)`` (the same double the analysis computes);
* finite ``A``: ``EAMP out 0 x 0 A``, i.e. ``Vout = A·V(x)``;
* ideal ``A = ∞``: ``EAMP out 0 out x 1``, i.e. ``V(out) = V(out) - V(x)``. That is a nullor:
  the source takes whatever output current makes ``V(x) = 0`` exactly, which is the limit of the
  closed form for ``A → ∞``. No "very large gain" stands in for infinity.

Numbers are printed as Python's shortest round-trip decimal (``repr``), so the simulator reads
back the same doubles the analysis used; comments give the values in engineering notation. The
text is ASCII only and holds no date, so the same inputs always give the same netlist.

Netlists either end in a ``.control`` block that runs an operating point, prints ``v(out)``
and quits (``ngspice -b file.cir`` runs them as they are), or hold the circuit alone
(``analysis="none"``) for :func:`optimizer.spice.run_ngspice`, which adds its own control
block. :func:`multi_circuit_netlist` puts many tagged copies of the circuit in one netlist so
one simulator run checks many cases.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from enum import Enum
from typing import Literal

from .analysis.transfer import coefficients
from .design import POSITIONS, Design, Placement
from .errors import ModelError
from .parts import NetworkPart
from .spec import Spec
from .units import format_quantity

__all__ = [
    "AmplifierModel",
    "DiffAmpCircuit",
    "circuit_lines",
    "design_netlist",
    "difference_amp_netlist",
    "multi_circuit_netlist",
    "node_name",
    "spice_number",
]

Analysis = Literal["op", "none"]

_LABEL_HELP = (
    "* Labels: R1 input to the inverting node, R2 feedback, "
    "R3 input to the non-inverting node, R4 non-inverting node to REF; G = R2/R1"
)
_MODEL_HELP = "* Amplifier: Vout = A*[(V+ - V-) + s*(V+ + V-)/(2*CMRR)]"


class AmplifierModel(str, Enum):
    """Which amplifier :func:`design_netlist` puts in the netlist (names of our own)."""

    DATASHEET = "datasheet"  # the spec amplifier's open-loop gain and CMRR (minimums)
    IDEAL = "ideal"  # A = inf and CMRR = inf: a nullor


def spice_number(value: float) -> str:
    """A finite float as the shortest decimal that reads back as the same double (``repr``):
    ``4990.0 -> "4990.0"``, ``1e-07 -> "1e-07"``. SPICE reads these as plain numbers (no scale
    suffix is ever printed, so ``M`` can never be misread as milli)."""
    number = float(value)
    if not math.isfinite(number):
        raise ModelError("netlist", "number", f"expected a finite number, got {value!r}")
    return repr(number)


def _ascii(text: str) -> str:
    """One line of comment text: no line breaks, non-ASCII characters escaped."""
    flat = " ".join(str(text).split())
    return flat.encode("ascii", "backslashreplace").decode("ascii")


def _ohm(value: float) -> str:
    return format_quantity(value, "ohm", digits=6)


@dataclass(frozen=True)
class DiffAmpCircuit:
    """One difference amplifier with its sources, as :func:`circuit_lines` writes it.

    Resistances in ohms (R1..R4 above zero; RS1, RS3, RREF zero or more, zero meaning a direct
    connection); ``open_loop_gain`` and ``amp_cmrr`` as ratios above zero (``inf`` for ideal);
    ``cmrr_sign`` ±1; source voltages in volts. ``part_labels`` maps ``"R1"``..``"R4"`` to a
    comment (part id, package) written above each resistor.
    """

    r1_ohm: float
    r2_ohm: float
    r3_ohm: float
    r4_ohm: float
    rs1_ohm: float = 0.0
    rs3_ohm: float = 0.0
    rref_ohm: float = 0.0
    open_loop_gain: float = math.inf
    amp_cmrr: float = math.inf
    cmrr_sign: float = 1.0
    v1_v: float = 0.0
    v2_v: float = 0.0
    vref_v: float = 0.0
    part_labels: Mapping[str, str] | None = None

    def __post_init__(self) -> None:
        owner = "netlist"
        for name in ("r1_ohm", "r2_ohm", "r3_ohm", "r4_ohm"):
            value = _real(owner, name, getattr(self, name))
            if not math.isfinite(value) or value <= 0.0:
                raise ModelError(
                    owner, name, f"expected a finite resistance above zero, got {value!r}"
                )
        for name in ("rs1_ohm", "rs3_ohm", "rref_ohm"):
            value = _real(owner, name, getattr(self, name))
            if not math.isfinite(value) or value < 0.0:
                raise ModelError(
                    owner, name, f"expected a finite resistance of zero or more, got {value!r}"
                )
        for name in ("open_loop_gain", "amp_cmrr"):
            value = _real(owner, name, getattr(self, name))
            if math.isnan(value) or value <= 0.0:
                raise ModelError(
                    owner, name, f"expected a ratio above zero (inf for ideal), got {value!r}"
                )
        sign = _real(owner, "cmrr_sign", self.cmrr_sign)
        if sign not in (1.0, -1.0):
            raise ModelError(owner, "cmrr_sign", f"expected +1 or -1, got {self.cmrr_sign!r}")
        for name in ("v1_v", "v2_v", "vref_v"):
            value = _real(owner, name, getattr(self, name))
            if not math.isfinite(value):
                raise ModelError(owner, name, f"expected a finite voltage, got {value!r}")
        if self.part_labels is not None:
            unknown = sorted(set(self.part_labels) - set(POSITIONS))
            if unknown:
                raise ModelError(
                    owner, "part_labels", f"expected keys among R1, R2, R3, R4, got {unknown}"
                )

    @property
    def epsilon(self) -> float:
        """ε = s/(2·CMRR): the amplifier's common-mode error per volt of (V+ + V-)/1, as the
        analysis computes it (``transfer.coefficients``); 0 for an ideal CMRR."""
        return float(self.cmrr_sign) / (2.0 * float(self.amp_cmrr))


def _real(owner: str, name: str, value: object) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ModelError(owner, name, f"expected a number, got {value!r}")
    return float(value)


def node_name(node: str, tag: str = "") -> str:
    """The node ``node`` of the copy tagged ``tag`` (``"out"`` → ``"c7_out"``; untagged: as is).
    ngspice folds names to lower case; Quartet writes them lower case to begin with."""
    return f"{tag}_{node}".lower() if tag else node.lower()


def _check_tag(tag: str) -> None:
    if tag and not (tag.isascii() and tag.replace("_", "").isalnum()):
        raise ModelError("netlist", "tag", f"expected letters, digits and '_' only, got {tag!r}")


def circuit_lines(circuit: DiffAmpCircuit, tag: str = "") -> list[str]:
    """The element lines (with comments) of one difference amplifier and its sources.

    Nodes: ``in1``, ``in2``, ``ref`` (the ideal sources), ``s1``, ``s3``, ``sref`` (behind the
    source impedances, present only when that impedance is above zero), ``inn``, ``inp``,
    ``out``, and ``x``, ``m``, ``n`` inside the amplifier model (module docstring). With a
    ``tag`` every node is prefixed ``<tag>_`` and every element suffixed ``_<tag>``, so tagged
    copies coexist in one netlist; the output is then :func:`node_name` ``("out", tag)``.
    """
    _check_tag(tag)

    def node(name: str) -> str:
        return node_name(name, tag)

    def elem(name: str) -> str:
        return f"{name}_{tag}" if tag else name

    c = circuit
    lines: list[str] = []
    if tag:
        lines.append(f"* ---- copy {tag} ----")
    lines.append("* Sources (ideal voltage sources; source impedances as resistors, zero = direct)")
    lines.append(f"{elem('V1')} {node('in1')} 0 DC {spice_number(c.v1_v)}")
    lines.append(f"{elem('V2')} {node('in2')} 0 DC {spice_number(c.v2_v)}")
    lines.append(f"{elem('VREF')} {node('ref')} 0 DC {spice_number(c.vref_v)}")

    def behind(source_node: str, impedance: float, res_name: str, inner: str) -> str:
        if impedance > 0.0:
            lines.append(f"* {res_name} = {_ohm(impedance)}")
            lines.append(
                f"{elem(res_name)} {node(source_node)} {node(inner)} {spice_number(impedance)}"
            )
            return node(inner)
        lines.append(f"* {res_name} = 0: the source drives the resistor directly")
        return node(source_node)

    a1 = behind("in1", c.rs1_ohm, "RS1", "s1")
    a3 = behind("in2", c.rs3_ohm, "RS3", "s3")
    aref = behind("ref", c.rref_ohm, "RREF", "sref")

    resistors = (
        ("R1", a1, node("inn"), c.r1_ohm),
        ("R2", node("inn"), node("out"), c.r2_ohm),
        ("R3", a3, node("inp"), c.r3_ohm),
        ("R4", node("inp"), aref, c.r4_ohm),
    )
    labels = c.part_labels or {}
    for name, plus, minus, value in resistors:
        label = labels.get(name)
        note = f" {_ascii(label)}" if label else ""
        lines.append(f"* {name} {_ohm(value)}{note}")
        lines.append(f"{elem(name)} {plus} {minus} {spice_number(value)}")

    eps = c.epsilon
    a_text = "inf (ideal)" if math.isinf(c.open_loop_gain) else spice_number(c.open_loop_gain)
    cmrr_text = "inf (ideal)" if math.isinf(c.amp_cmrr) else spice_number(c.amp_cmrr)
    lines.append(
        f"* Amplifier: A = {a_text}, CMRR = {cmrr_text}, s = {int(float(c.cmrr_sign)):+d}; "
        "V(x) = (V+ - V-) + eps*(V+ + V-), eps = s/(2*CMRR)"
    )
    if eps != 0.0:
        lines.append(f"{elem('EDM')} {node('x')} {node('m')} {node('inp')} {node('inn')} 1")
        lines.append(f"{elem('ECP')} {node('m')} {node('n')} {node('inp')} 0 {spice_number(eps)}")
        lines.append(f"{elem('ECN')} {node('n')} 0 {node('inn')} 0 {spice_number(eps)}")
    else:
        lines.append(f"{elem('EDM')} {node('x')} 0 {node('inp')} {node('inn')} 1")
    if math.isinf(c.open_loop_gain):
        lines.append("* A = inf: nullor, V(out) = V(out) - V(x) forces V(x) = 0 exactly")
        lines.append(f"{elem('EAMP')} {node('out')} 0 {node('out')} {node('x')} 1")
    else:
        lines.append("* Vout = A*V(x)")
        lines.append(
            f"{elem('EAMP')} {node('out')} 0 {node('x')} 0 {spice_number(c.open_loop_gain)}"
        )
    return lines


def _title_line(title: str) -> str:
    text = _ascii(title) or "Quartet difference amplifier"
    return text


def _op_control(probe: str) -> list[str]:
    return [
        "* Operating point; prints the output voltage (ngspice -b runs this file as it is)",
        ".control",
        "set numdgt=12",
        "op",
        f"print v({probe})",
        "quit",
        ".endc",
    ]


def multi_circuit_netlist(
    circuits: Iterable[tuple[str, DiffAmpCircuit]],
    *,
    title: str = "Quartet difference amplifiers",
    analysis: Analysis = "none",
) -> str:
    """One netlist holding a tagged copy of each ``(tag, circuit)``; tags must be unique.
    ``analysis="op"`` adds a control block that prints every copy's output; ``"none"`` leaves
    the circuit alone for :func:`optimizer.spice.run_ngspice`."""
    body: list[str] = []
    tags: list[str] = []
    for tag, circuit in circuits:
        if not tag:
            raise ModelError("netlist", "tag", "every copy in a multi-circuit netlist needs a tag")
        if tag.lower() in tags:
            raise ModelError("netlist", "tag", f"tag {tag!r} is used twice")
        tags.append(tag.lower())
        body.extend(circuit_lines(circuit, tag))
    if not tags:
        raise ModelError("netlist", "circuits", "expected at least one circuit")
    lines = [_title_line(title), _LABEL_HELP, _MODEL_HELP, *body]
    if analysis == "op":
        lines += [
            ".control",
            "set numdgt=12",
            "op",
            *(f"print v({node_name('out', tag)})" for tag in tags),
            "quit",
            ".endc",
        ]
    elif analysis != "none":
        raise ModelError("netlist", "analysis", f"expected 'op' or 'none', got {analysis!r}")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def difference_amp_netlist(
    r1: float,
    r2: float,
    r3: float,
    r4: float,
    *,
    rs1: float = 0.0,
    rs3: float = 0.0,
    rref: float = 0.0,
    open_loop_gain: float = math.inf,
    amp_cmrr: float = math.inf,
    cmrr_sign: float = 1,
    v1: float = 0.0,
    v2: float = 0.0,
    vref: float = 0.0,
    title: str = "Quartet difference amplifier",
    part_labels: Mapping[str, str] | None = None,
    analysis: Analysis = "op",
    comments: Iterable[str] = (),
) -> str:
    """A netlist of one difference amplifier (ohms, ratios, volts; module docstring for the
    model). ``analysis="op"``: ends in a control block that runs the operating point and prints
    ``v(out)``; ``"none"``: the circuit alone. ``comments`` are extra lines written under the
    title as SPICE comments."""
    circuit = DiffAmpCircuit(
        r1_ohm=r1,
        r2_ohm=r2,
        r3_ohm=r3,
        r4_ohm=r4,
        rs1_ohm=rs1,
        rs3_ohm=rs3,
        rref_ohm=rref,
        open_loop_gain=open_loop_gain,
        amp_cmrr=amp_cmrr,
        cmrr_sign=cmrr_sign,
        v1_v=v1,
        v2_v=v2,
        vref_v=vref,
        part_labels=part_labels,
    )
    lines = [_title_line(title), *(f"* {_ascii(c)}" for c in comments), _LABEL_HELP, _MODEL_HELP]
    lines += circuit_lines(circuit)
    if analysis == "op":
        lines += _op_control("out")
    elif analysis != "none":
        raise ModelError("netlist", "analysis", f"expected 'op' or 'none', got {analysis!r}")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def _placement_label(placement: Placement) -> str:
    part = placement.part
    if isinstance(part, NetworkPart):
        assert placement.element is not None
        where = f"element {placement.element + 1} of {part.elements}"
        return f"{part.part_id} {where} (package {placement.package + 1})"
    return part.part_id


def _midpoint(low: float, high: float) -> float:
    return low + (high - low) / 2.0


def design_netlist(
    design: Design,
    spec: Spec,
    amplifier_model: AmplifierModel | str = AmplifierModel.DATASHEET,
    *,
    common_mode_v: float | None = None,
    differential_v: float | None = None,
    ref_v: float | None = None,
    cmrr_sign: float = 1,
    cautions: Iterable[str] = (),
) -> str:
    """A netlist of ``design`` in the spec's circuit, runnable as it is with ``ngspice -b``.

    Both source impedances and the REF impedance sit at the spec's maximum values. The
    amplifier is the spec's (its minimum open-loop gain and CMRR, common-mode error sign
    ``cmrr_sign``) or ideal. The operating point is V1 = Vcm - Vd/2, V2 = Vcm + Vd/2, VREF =
    ``ref_v``, by default Vcm at the middle of the common-mode range, Vd the most positive
    differential input (the range's maximum, not its largest magnitude), VREF the middle of the
    REF range. The comments list the parts, the conditions and the output the closed form
    predicts (``transfer.coefficients``), then each of ``cautions`` (the caller passes
    ``analysis.safety.safety_cautions(spec)``) as a ``* Caution:`` line.
    """
    try:
        model = AmplifierModel(amplifier_model)
    except ValueError:
        valid = ", ".join(m.value for m in AmplifierModel)
        raise ModelError(
            "netlist", "amplifier_model", f"expected one of {valid}, got {amplifier_model!r}"
        ) from None
    if isinstance(cmrr_sign, bool) or cmrr_sign not in (1, -1):
        raise ModelError("netlist", "cmrr_sign", f"expected +1 or -1, got {cmrr_sign!r}")
    signal = spec.signal
    vcm = (
        _midpoint(signal.common_mode_min_v, signal.common_mode_max_v)
        if common_mode_v is None
        else common_mode_v
    )
    vd = signal.differential_max_v if differential_v is None else differential_v
    vr = (
        _midpoint(spec.reference.voltage_min_v, spec.reference.voltage_max_v)
        if ref_v is None
        else ref_v
    )
    v1, v2 = vcm - vd / 2.0, vcm + vd / 2.0
    if model is AmplifierModel.DATASHEET:
        gain_ol, cmrr = spec.amplifier.open_loop_gain, spec.amplifier.cmrr_ratio
        amp_text = (
            f"{spec.amplifier.name}: open-loop gain {spec.amplifier.open_loop_gain_db:g} dB, "
            f"CMRR {spec.amplifier.cmrr_db:g} dB (minimums), s = {int(cmrr_sign):+d}"
        )
    else:
        gain_ol, cmrr = math.inf, math.inf
        amp_text = "ideal (A = inf, CMRR = inf)"
    rs = signal.source.max_ohm
    rref = spec.reference.impedance_max_ohm
    r1, r2, r3, r4 = design.resistances_ohm
    k = coefficients(r1, r2, r3, r4, rs, rs, rref, gain_ol, cmrr, cmrr_sign)
    predicted = float(k.k1) * v1 + float(k.k2) * v2 + float(k.kref) * vr
    labels = {p.position: _placement_label(p) for p in design.placements}
    comments = [
        f"Topology: {design.topology.value}; {design.placement_count} placement(s)",
        f"Nominal gain G = R2/R1 = {design.nominal_gain:.9g} (asked {spec.requirements.gain:g})",
        f"Amplifier: {amp_text}",
        f"Source impedance {_ohm(rs)} per leg, REF impedance {_ohm(rref)} (spec maximums)",
        f"Operating point: Vcm = {vcm:g} V, Vd = V2 - V1 = {vd:g} V, VREF = {vr:g} V",
        f"Closed form (Quartet transfer.coefficients): Vout = {predicted:.12g} V",
    ]
    comments += [f"Caution: {text}" for text in cautions]
    return difference_amp_netlist(
        r1,
        r2,
        r3,
        r4,
        rs1=rs,
        rs3=rs,
        rref=rref,
        open_loop_gain=gain_ol,
        amp_cmrr=cmrr,
        cmrr_sign=cmrr_sign,
        v1=v1,
        v2=v2,
        vref=vr,
        title=f"Quartet difference amplifier, G = {design.nominal_gain:.6g}",
        part_labels=labels,
        analysis="op",
        comments=comments,
    )
