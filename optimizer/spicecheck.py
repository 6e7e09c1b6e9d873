"""Cross-check of a design's gains by the circuit simulator: the differential gain, the
common-mode gain and the CMRR that ngspice finds for the design's circuit, beside the closed
form of :mod:`optimizer.analysis.transfer` with the same impedances and amplifier model.

One simulator run holds two tagged copies of the circuit (:func:`netlist.multi_circuit_netlist`)
with VREF = 0: ``dm`` with V1 = −½ V, V2 = +½ V, whose output is Adm = (k2 − k1)/2 per volt of
V2 − V1; ``cm`` with V1 = V2 = 1 V, whose output is Acm = k1 + k2 (superposition; the circuit is
linear).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .analysis.transfer import coefficients, common_mode_gain, differential_gain
from .design import Design
from .netlist import DiffAmpCircuit, multi_circuit_netlist, node_name
from .spec import Spec
from .spice import run_ngspice

__all__ = ["GainComparison", "relative_difference", "simulate_gains"]


@dataclass(frozen=True)
class GainComparison:
    """Simulated and analysed gains (dimensionless; CMRR in dB) of one design."""

    simulated_differential: float
    simulated_common_mode: float
    analysed_differential: float
    analysed_common_mode: float

    @property
    def simulated_cmrr_db(self) -> float:
        return _cmrr_db(self.simulated_differential, self.simulated_common_mode)

    @property
    def analysed_cmrr_db(self) -> float:
        return _cmrr_db(self.analysed_differential, self.analysed_common_mode)


def _cmrr_db(adm: float, acm: float) -> float:
    """CMRR = 20·log10|Adm/Acm| in dB (``inf`` when Acm = 0)."""
    if acm == 0.0:
        return math.inf
    return 20.0 * math.log10(abs(adm / acm))


def relative_difference(simulated: float, analysed: float) -> float:
    """|simulated − analysed| / |analysed| (0 when equal; ``inf`` when analysed is 0 and they
    differ)."""
    if simulated == analysed:
        return 0.0
    if analysed == 0.0 or not math.isfinite(analysed):
        return math.inf
    return abs(simulated - analysed) / abs(analysed)


def simulate_gains(
    design: Design, spec: Spec, *, cmrr_sign: float = 1.0, executable: str = "ngspice"
) -> GainComparison:
    """Run ngspice on the design (the spec's maximum source and REF impedances and its
    amplifier's minimum open-loop gain and CMRR, as :func:`netlist.design_netlist` uses) and
    return the simulated gains beside the closed form. Raises
    :class:`optimizer.spice.SimulatorError` when the simulator fails."""
    r1, r2, r3, r4 = design.resistances_ohm
    rs = spec.signal.source.max_ohm
    rref = spec.reference.impedance_max_ohm
    gain_ol = spec.amplifier.open_loop_gain
    amp_cmrr = spec.amplifier.cmrr_ratio

    def circuit(v1: float, v2: float) -> DiffAmpCircuit:
        return DiffAmpCircuit(
            r1_ohm=r1, r2_ohm=r2, r3_ohm=r3, r4_ohm=r4, rs1_ohm=rs, rs3_ohm=rs, rref_ohm=rref,
            open_loop_gain=gain_ol, amp_cmrr=amp_cmrr, cmrr_sign=cmrr_sign,
            v1_v=v1, v2_v=v2, vref_v=0.0,
        )  # fmt: skip

    netlist = multi_circuit_netlist(
        [("dm", circuit(-0.5, 0.5)), ("cm", circuit(1.0, 1.0))],
        title="Quartet gain cross-check",
    )
    dm, cm = node_name("out", "dm"), node_name("out", "cm")
    values = run_ngspice(netlist, [dm, cm], executable=executable)
    k = coefficients(r1, r2, r3, r4, rs, rs, rref, gain_ol, amp_cmrr, cmrr_sign)
    return GainComparison(
        simulated_differential=values[dm],
        simulated_common_mode=values[cm],
        analysed_differential=float(differential_gain(k)),
        analysed_common_mode=float(common_mode_gain(k)),
    )
